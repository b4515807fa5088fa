//! The raster's documented invariants over seeded random designs (including exact
//! coincidences with the grid), and independence of the thread count.

use super::*;

/// A small seeded generator (splitmix64).
struct Rng(u64);

impl Rng {
    fn next(&mut self) -> f64 {
        self.0 = self.0.wrapping_add(0x9e37_79b9_7f4a_7c15);
        let mut z = self.0;
        z = (z ^ (z >> 30)).wrapping_mul(0xbf58_476d_1ce4_e5b9);
        z = (z ^ (z >> 27)).wrapping_mul(0x94d0_49bb_1331_11eb);
        ((z ^ (z >> 31)) >> 11) as f64 / (1u64 << 53) as f64
    }

    fn range(&mut self, a: f64, b: f64) -> f64 {
        a + (b - a) * self.next()
    }
}

/// A random shape inside the box [x0, x0 + s] x [y0, y0 + s]; `snap` puts numbers on the
/// grid of spacing `h` to provoke exact coincidences.
fn random_shape(rng: &mut Rng, x0: f64, y0: f64, s: f64, h: f64, snap: bool, thin: bool) -> Shape {
    let q = |v: f64| if snap { (v / h).round() * h } else { v };
    let kind = (rng.next() * if thin { 6.0 } else { 5.0 }) as usize;
    let (cx, cy) = (q(x0 + 0.5 * s), q(y0 + 0.5 * s));
    match kind {
        0 => {
            let (a, b) = (
                q(x0 + rng.range(0.05, 0.4) * s),
                q(x0 + rng.range(0.6, 0.95) * s),
            );
            let (c, e) = (
                q(y0 + rng.range(0.05, 0.4) * s),
                q(y0 + rng.range(0.6, 0.95) * s),
            );
            Shape::Rect {
                x: [a, b],
                y: [c, e],
                round: if rng.next() < 0.5 {
                    0.0
                } else {
                    0.1 * (b - a).min(e - c)
                },
            }
        }
        1 => Shape::Circle {
            center: [cx, cy],
            radius: q(rng.range(0.1, 0.45) * s).max(0.05 * s),
        },
        2 => {
            let outer = rng.range(0.25, 0.45) * s;
            Shape::Ring {
                center: [cx, cy],
                inner: outer * rng.range(0.2, 0.8),
                outer,
            }
        }
        3 | 4 => {
            // Star-shaped polygon: vertices at increasing angles.
            let n = 3 + (rng.next() * 7.0) as usize;
            let outer: Vec<[f64; 2]> = (0..n)
                .map(|k| {
                    let t = 2.0 * PI * (k as f64 + rng.range(0.1, 0.9)) / n as f64;
                    let r = rng.range(0.2, 0.45) * s;
                    [q(cx + r * t.cos()), q(cy + r * t.sin())]
                })
                .collect();
            let round = if kind == 4 { 0.005 * s } else { 0.0 };
            Shape::Polygon {
                outer,
                holes: vec![],
                round,
                corners: None,
            }
        }
        _ => {
            let n = 2 + (rng.next() * 3.0) as usize;
            Shape::Polyline(
                (0..n)
                    .map(|_| {
                        [
                            q(x0 + rng.range(0.1, 0.9) * s),
                            q(y0 + rng.range(0.1, 0.9) * s),
                        ]
                    })
                    .collect(),
            )
        }
    }
}

/// The documented raster invariants.
fn check_invariants(d: &Design, r: &Raster) {
    let g = &r.grid;
    let eps: Vec<f64> = std::iter::once(d.background.permittivity)
        .chain(d.dielectrics.iter().map(|x| x.permittivity))
        .collect();
    let (lo, hi) = eps
        .iter()
        .fold((f64::INFINITY, 0.0f64), |(a, b), &e| (a.min(e), b.max(e)));
    for w in r.cut_edges.windows(2) {
        assert!(
            (w[0].node, w[0].axis) < (w[1].node, w[1].axis),
            "cut edges sorted and unique"
        );
    }
    let cut: std::collections::HashMap<(u32, Axis), &CutEdge> =
        r.cut_edges.iter().map(|c| ((c.node, c.axis), c)).collect();
    for j in 0..g.ny {
        for i in 0..g.nx {
            let a = g.idx(i, j);
            for (axis, ok, b) in [
                (Axis::X, i + 1 < g.nx, a + 1),
                (Axis::Y, j + 1 < g.ny, a + g.nx),
            ] {
                if !ok {
                    continue;
                }
                let (ca, cb) = (r.conductor[a], r.conductor[b]);
                let Some(c) = cut.get(&(a as u32, axis)) else {
                    assert!(
                        ca == cb,
                        "edge ({i},{j}) {axis:?}: conductors differ but no record"
                    );
                    assert!(
                        ca != NO_CONDUCTOR || r.material[a] == r.material[b],
                        "materials differ but no record"
                    );
                    continue;
                };
                assert_eq!(c.from_a.is_some(), ca == NO_CONDUCTOR, "from_a iff a free");
                assert_eq!(c.from_b.is_some(), cb == NO_CONDUCTOR, "from_b iff b free");
                assert_eq!(
                    c.direct.is_some(),
                    ca != NO_CONDUCTOR && cb != NO_CONDUCTOR && ca != cb
                );
                assert!(
                    ca == NO_CONDUCTOR || ca != cb,
                    "no record between nodes of one conductor"
                );
                for (h, other) in [(c.from_a, cb), (c.from_b, ca)] {
                    let Some(h) = h else { continue };
                    assert!(h.theta > 0.0 && h.theta <= 1.0, "theta {}", h.theta);
                    assert!(
                        h.eps.is_finite()
                            && h.eps >= lo * (1.0 - 1e-12)
                            && h.eps <= hi * (1.0 + 1e-12)
                    );
                    match h.ends_on {
                        None => assert!(h.theta == 1.0 && other == NO_CONDUCTOR),
                        Some(k) => assert!((k as usize) < d.conductors.len()),
                    }
                    if other != NO_CONDUCTOR {
                        assert!(
                            h.ends_on.is_some(),
                            "a free end facing a conductor node must end on a surface"
                        );
                    }
                }
                if let (Some(p), Some(q)) = (c.from_a, c.from_b) {
                    if p.ends_on.is_none() || q.ends_on.is_none() {
                        assert_eq!(p, q, "a free-free stretch is the same from both ends");
                    }
                }
                if let Some(dl) = c.direct {
                    assert!(dl.gap > 0.0 && dl.gap <= 1.0 && dl.eps.is_finite() && dl.eps > 0.0);
                    assert_eq!((dl.a, dl.b), (ca, cb));
                }
            }
        }
    }
    for w in r.node_charge.windows(2) {
        assert!(w[0].0 < w[1].0);
    }
    assert!(r
        .node_charge
        .iter()
        .all(|c| c.1.is_finite() && r.conductor[c.0 as usize] == NO_CONDUCTOR));
    // Nodes clearly inside or outside a solid conductor are classified so.
    for (k, c) in d.conductors.iter().enumerate() {
        let o = crate::geometry::outline(&c.shape).unwrap();
        if o.open {
            continue;
        }
        for i in (0..g.nx).step_by(3) {
            for j in 0..g.ny {
                let (x, y) = (g.x(i), g.y(j));
                // Nodes within SNAP of a surface may have joined the conductor.
                if distance(&o, [x, y]) < super::SNAP * g.dx(0).max(g.dy(0)) {
                    continue;
                }
                let p = g.idx(i, j);
                assert_eq!(
                    r.conductor[p] == k as u16,
                    o.contains([x, y]),
                    "node ({i},{j}) of conductor {k}"
                );
            }
        }
    }
}

/// Distance from a point to an outline, m (for arcs, to the circle where the point faces
/// the arc).
fn distance(o: &crate::geometry::Outline, p: [f64; 2]) -> f64 {
    use crate::geometry::Piece;
    o.pieces()
        .map(|pc| match *pc {
            Piece::Line { a, b } => {
                let d = [b[0] - a[0], b[1] - a[1]];
                let t = (((p[0] - a[0]) * d[0] + (p[1] - a[1]) * d[1])
                    / (d[0] * d[0] + d[1] * d[1]))
                    .clamp(0.0, 1.0);
                (p[0] - a[0] - t * d[0]).hypot(p[1] - a[1] - t * d[1])
            }
            Piece::Arc {
                a,
                b,
                center,
                radius,
                ..
            } => {
                let to_circle = ((p[0] - center[0]).hypot(p[1] - center[1]) - radius).abs();
                let ends = (p[0] - a[0])
                    .hypot(p[1] - a[1])
                    .min((p[0] - b[0]).hypot(p[1] - b[1]));
                if pc.bbox().holds(p, 2.0 * to_circle + 1e-12) {
                    to_circle.min(ends)
                } else {
                    ends
                }
            }
        })
        .fold(f64::INFINITY, f64::min)
}

#[test]
fn invariants_hold_on_random_designs() {
    let mut rng = Rng(0x5eed_0001);
    let mut checked = 0;
    for trial in 0..60 {
        let cell = [0.05, 0.0625, 0.03][trial % 3];
        let snap = trial % 2 == 0;
        let mut d = design([0.0, 3.0], [0.0, 3.0], cell);
        if trial % 5 == 0 {
            d.mode = Mode::Axisymmetric;
            d.sides.left = Side::Axis;
        }
        // Conductors in separate boxes of a 3 x 3 layout; dielectrics anywhere.
        for b in 0..9 {
            if rng.next() < 0.6 {
                let s = random_shape(
                    &mut rng,
                    (b % 3) as f64,
                    (b / 3) as f64,
                    1.0,
                    cell,
                    snap,
                    true,
                );
                d.conductors.push(conductor(&format!("c{b}"), s));
            }
        }
        for _ in 0..3 {
            let (x0, y0) = (rng.range(0.0, 1.5), rng.range(0.0, 1.5));
            let s = random_shape(&mut rng, x0, y0, 1.5, cell, snap, false);
            d.dielectrics.push(dielectric(rng.range(1.5, 9.0), s));
        }
        let s = random_shape(&mut rng, 0.5, 0.5, 2.0, cell, snap, false);
        d.charges.push(region(1e-6, s));
        if validate_design(&d).is_err() {
            continue;
        }
        let g = grid_of(&d);
        let r = rasterize(&d, &g);
        check_invariants(&d, &r);
        checked += 1;
    }
    assert!(checked >= 40, "only {checked} random designs were valid");
}

#[test]
fn degenerate_coincidences_stay_well_formed() {
    let h = 0.125;
    let mut d = design([0.0, 2.0], [0.0, 2.0], h);
    // Circle tangent to node lines at nodes, polygon vertices on nodes, a diamond whose
    // vertices sit on node lines, shapes touching the domain sides, an interface on a row.
    d.conductors.push(conductor(
        "c",
        Shape::Circle {
            center: [0.5, 0.5],
            radius: 0.25,
        },
    ));
    d.conductors.push(conductor(
        "p",
        Shape::Polygon {
            outer: vec![[1.0, 0.25], [1.75, 0.25], [1.25, 0.75]],
            holes: vec![],
            round: 0.0,
            corners: None,
        },
    ));
    d.conductors.push(conductor(
        "diamond",
        Shape::Polygon {
            outer: vec![[0.5, 1.0], [0.75, 1.25], [0.5, 1.5], [0.25, 1.25]],
            holes: vec![],
            round: 0.0,
            corners: None,
        },
    ));
    d.conductors
        .push(conductor("side", rect([1.5, 2.0], [1.5, 2.0])));
    d.conductors.push(conductor(
        "wire",
        Shape::Polyline(vec![[1.0, 1.0], [1.25, 1.25], [1.25, 1.0]]),
    ));
    d.dielectrics
        .push(dielectric(4.0, rect([0.0, 2.0], [0.0, 1.0])));
    d.dielectrics.push(dielectric(
        2.0,
        Shape::Circle {
            center: [1.0, 1.0],
            radius: 0.5,
        },
    ));
    validate_design(&d).unwrap();
    let r = rasterize(&d, &grid_of(&d));
    check_invariants(&d, &r);
    let g = grid_of(&d);
    // The circle's four extreme points are nodes, and they belong to it.
    for (i, j) in [(6, 4), (2, 4), (4, 6), (4, 2)] {
        assert_eq!(r.conductor[g.idx(i, j)], 0);
    }
}

#[test]
fn raster_does_not_depend_on_the_thread_count() {
    let mut rng = Rng(7);
    let mut d = design([0.0, 3.0], [0.0, 3.0], 0.01);
    for b in 0..9 {
        d.conductors.push(conductor(
            &format!("c{b}"),
            random_shape(
                &mut rng,
                (b % 3) as f64,
                (b / 3) as f64,
                1.0,
                0.01,
                false,
                true,
            ),
        ));
    }
    d.dielectrics.push(dielectric(
        3.0,
        Shape::Circle {
            center: [1.5, 1.5],
            radius: 1.2,
        },
    ));
    d.charges.push(region(
        1.0,
        Shape::Circle {
            center: [1.2, 1.7],
            radius: 1.1,
        },
    ));
    let g = grid_of(&d);
    let run = |t: usize| {
        rayon::ThreadPoolBuilder::new()
            .num_threads(t)
            .build()
            .unwrap()
            .install(|| rasterize(&d, &g))
    };
    let (a, b) = (run(1), run(2));
    assert!(a == b);
}
