//! The band search and the band integral against the full-lattice loops they replaced:
//! every node measured with every segment, in node order. Both must give the same bits.

use super::*;
use crate::design::{Conductor, Dielectric, Drive, Shape};
use crate::study::{run, StudyParams};

// The distance as first written: every segment measured with `hypot`.
/// Distance from q to the segment a-b, with the unit vector from the segment to q.
fn to_segment(q: [f64; 2], a: [f64; 2], b: [f64; 2]) -> (f64, [f64; 2]) {
    let (ux, uy) = (b[0] - a[0], b[1] - a[1]);
    let l2 = ux * ux + uy * uy;
    let t = if l2 > 0.0 {
        (((q[0] - a[0]) * ux + (q[1] - a[1]) * uy) / l2).clamp(0.0, 1.0)
    } else {
        0.0
    };
    let (dx, dy) = (q[0] - a[0] - t * ux, q[1] - a[1] - t * uy);
    let d = dx.hypot(dy);
    (
        d,
        if d > 0.0 {
            [dx / d, dy / d]
        } else {
            [0.0, 0.0]
        },
    )
}

/// Distance from q to a closed outline (0 inside), with its gradient.
fn to_outline(q: [f64; 2], pts: &[[f64; 2]]) -> (f64, [f64; 2]) {
    let mut best = (f64::INFINITY, [0.0, 0.0]);
    let mut inside = false;
    for (i, &a) in pts.iter().enumerate() {
        let b = pts[(i + 1) % pts.len()];
        let s = to_segment(q, a, b);
        if s.0 < best.0 {
            best = s;
        }
        if (a[1] > q[1]) != (b[1] > q[1])
            && q[0] < a[0] + (q[1] - a[1]) / (b[1] - a[1]) * (b[0] - a[0])
        {
            inside = !inside;
        }
    }
    if inside {
        (0.0, [0.0, 0.0])
    } else {
        best
    }
}

/// Distance from q to a shape as drawn (rounding ignored: it only takes metal away), 0 on
/// and inside it, with its gradient.
fn to_shape(q: [f64; 2], s: &Shape) -> (f64, [f64; 2]) {
    let radial = |c: [f64; 2], d: f64, sign: f64| {
        let (x, y) = (q[0] - c[0], q[1] - c[1]);
        let r = x.hypot(y);
        if d > 0.0 && r > 0.0 {
            (d, [sign * x / r, sign * y / r])
        } else {
            (0.0, [0.0, 0.0])
        }
    };
    match s {
        Shape::Rect { x, y, .. } => {
            to_outline(q, &[[x[0], y[0]], [x[1], y[0]], [x[1], y[1]], [x[0], y[1]]])
        }
        Shape::Circle { center: c, radius } => {
            let r = (q[0] - c[0]).hypot(q[1] - c[1]);
            radial(*c, r - radius, 1.0)
        }
        Shape::Ring {
            center: c,
            inner,
            outer,
        } => {
            let r = (q[0] - c[0]).hypot(q[1] - c[1]);
            if r < *inner {
                radial(*c, inner - r, -1.0)
            } else {
                radial(*c, r - outer, 1.0)
            }
        }
        Shape::Polygon { outer, .. } => to_outline(q, outer),
        Shape::Polyline(p) => p.windows(2).map(|w| to_segment(q, w[0], w[1])).fold(
            (f64::INFINITY, [0.0, 0.0]),
            |a, b| if b.0 < a.0 { b } else { a },
        ),
    }
}

fn full_distance(shapes: &[Shape], x: f64, y: f64) -> (f64, [f64; 2]) {
    shapes
        .iter()
        .map(|s| to_shape([x, y], s))
        .fold(
            (f64::INFINITY, [0.0, 0.0]),
            |a, b| if b.0 < a.0 { b } else { a },
        )
}

/// The weight's (inner, outer) by the loops over every node.
fn full_weight(field: &FieldEval, design: &Design, k: usize) -> Result<(f64, f64), NoBand> {
    let shapes: Vec<Shape> = design.conductors[k].shapes().cloned().collect();
    let op = field.op;
    let mut material = None;
    for l in op.links.iter().filter(|l| l.target as usize == k) {
        let m = field.raster.material[l.node as usize];
        if *material.get_or_insert(m) != m {
            return Err(NoBand::Interface);
        }
    }
    let material = material.ok_or(NoBand::NoGap)?;
    let obs = obstacles(field, design, k, material);
    let g = &op.grid;
    let mut gap = f64::INFINITY;
    for p in 0..g.len() {
        if obs.at(p) {
            gap = gap.min(full_distance(&shapes, g.x(p % g.nx), g.y(p / g.nx)).0);
        }
    }
    if !gap.is_finite() || gap <= 0.0 {
        return Err(NoBand::NoGap);
    }
    let (inner, outer) = (INNER * gap, OUTER * gap);
    let band = outer - inner;
    for p in 0..g.len() {
        let (i, j) = (p % g.nx, p / g.nx);
        let d = full_distance(&shapes, g.x(i), g.y(j)).0;
        if d <= gap {
            let h = g.dual_x(i).1 - g.dual_x(i).0;
            if h.max(g.dual_len_y(j)) * BAND_CELLS > band {
                return Err(NoBand::Narrow);
            }
        }
        if d > inner && d < outer && !op.links_of(p).is_empty() {
            return Err(NoBand::Narrow);
        }
    }
    Ok((inner, outer))
}

/// The band force by the loop over every node.
fn full_force(field: &FieldEval, design: &Design, k: usize, w: &Weight) -> Option<[f64; 2]> {
    let shapes: Vec<Shape> = design.conductors[k].shapes().cloned().collect();
    let op = field.op;
    let g = &op.grid;
    let obs = obstacles(field, design, k, w.material);
    let eps = EPS0 * crate::material::of(design, w.material).permittivity;
    let axi = design.mode == Mode::Axisymmetric;
    let mut f = [0.0f64; 2];
    for p in 0..g.len() {
        let (i, j) = (p % g.nx, p / g.nx);
        let (d, dg) = full_distance(&shapes, g.x(i), g.y(j));
        if d > w.outer {
            continue;
        }
        if obs.at(p) {
            return None;
        }
        let gt = w.gradient(d, dg);
        if gt == [0.0, 0.0] {
            continue;
        }
        if !op.links_of(p).is_empty() {
            return None;
        }
        let e = field.at(p);
        let e2 = e[0] * e[0] + e[1] * e[1];
        let t = [
            [eps * (e[0] * e[0] - 0.5 * e2), eps * e[0] * e[1]],
            [eps * e[0] * e[1], eps * (e[1] * e[1] - 0.5 * e2)],
        ];
        let (a, b) = g.dual_x(i);
        let vol = if axi {
            std::f64::consts::PI * (b * b - a * a) * g.dual_len_y(j)
        } else {
            (b - a) * g.dual_len_y(j)
        };
        for (fi, ti) in f.iter_mut().zip(t) {
            *fi -= (ti[0] * gt[0] + ti[1] * gt[1]) * vol;
        }
    }
    if axi {
        f[0] = 0.0;
    }
    Some(f)
}

fn conductor(name: &str, volts: f64, shape: Shape) -> Conductor {
    Conductor {
        name: name.into(),
        drive: Drive::Fixed(volts),
        joined: Vec::new(),
        shape,
    }
}

fn rect(x: [f64; 2], y: [f64; 2]) -> Shape {
    Shape::Rect { x, y, round: 0.0 }
}

/// Weight and force of every conductor, on the design's lattice and with each weight on the
/// lattice of `other` (as the error estimate's coarse lattice uses it), equal to the bit
/// to the full-lattice loops; returns how many conductors got a band.
fn agrees_with_the_full_loops(design: &Design, other: &Design) -> usize {
    let params = StudyParams {
        error_estimate: false,
        ..Default::default()
    };
    let sol = run(design, &params).expect("study runs");
    let field = sol.field();
    let alt = run(other, &params).expect("study runs");
    let alt_field = alt.field();
    let mut banded = 0;
    for k in 0..design.conductors.len() {
        let got = weight(&field, design, k);
        let want = full_weight(&field, design, k);
        match (&got, want) {
            (Ok(w), Ok((inner, outer))) => {
                assert_eq!(w.inner.to_bits(), inner.to_bits(), "conductor {k}");
                assert_eq!(w.outer.to_bits(), outer.to_bits(), "conductor {k}");
            }
            (Err(a), Err(b)) => assert_eq!(*a, b, "conductor {k}"),
            _ => panic!("conductor {k}: {got:?} against {want:?}"),
        }
        let Ok(w) = got else { continue };
        banded += 1;
        for (f, d) in [(&field, design), (&alt_field, other)] {
            let got = weighted_force(f, d, k, &w).map(|v| v.map(f64::to_bits));
            let want = full_force(f, d, k, &w).map(|v| v.map(f64::to_bits));
            assert_eq!(got, want, "conductor {k}");
        }
    }
    banded
}

#[test]
fn band_weight_and_force_equal_the_full_lattice_loops_planar() {
    // Two traces over a laminate with a buried plane (the benchmark's layout, small), a
    // joined polygon, a disc and a thin polyline in the air above.
    let mut d = Design::default();
    d.domain.cell = 1.0 / 96.0;
    d.dielectrics.push(Dielectric {
        name: "lower".into(),
        permittivity: 4.4,
        strength: None,
        shape: rect([0.0, 1.0], [0.0, 0.5]),
    });
    d.conductors = vec![
        conductor("a", 1.0, rect([0.30, 0.45], [0.55, 0.60])),
        conductor("b", -1.0, rect([0.55, 0.70], [0.55, 0.60])),
        conductor("pad", 0.0, rect([0.20, 0.80], [0.25, 0.28])),
        conductor(
            "disc",
            0.5,
            Shape::Circle {
                center: [0.2, 0.82],
                radius: 0.06,
            },
        ),
        conductor(
            "wire",
            0.3,
            Shape::Polyline(vec![[0.74, 0.78], [0.8, 0.86], [0.86, 0.8]]),
        ),
    ];
    let mut l = conductor(
        "ell",
        -0.7,
        Shape::Polygon {
            outer: vec![
                [0.42, 0.72],
                [0.6, 0.72],
                [0.6, 0.77],
                [0.47, 0.77],
                [0.47, 0.9],
            ],
            holes: vec![],
            round: 0.0,
            corners: None,
        },
    );
    l.joined.push(rect([0.36, 0.42], [0.85, 0.9]));
    d.conductors.push(l);
    // One on the laminate's surface (two materials), one against the right side (no room).
    d.conductors
        .push(conductor("on", 0.2, rect([0.05, 0.15], [0.5, 0.52])));
    d.conductors
        .push(conductor("side", 0.1, rect([0.9, 1.0], [0.4, 0.45])));
    d.lattice = crate::design::Lattice::Uniform;
    let mut coarse = d.clone();
    coarse.domain.cell = 1.0 / 48.0;
    // At 96 cells the two traces' gap is too narrow for a band.
    assert_eq!(agrees_with_the_full_loops(&d, &coarse), 4);
}

#[test]
fn band_weight_and_force_equal_the_full_lattice_loops_axisymmetric() {
    // A sphere and a torus above a grounded plate, the axis on the left.
    let mut d = Design {
        mode: Mode::Axisymmetric,
        ..Design::default()
    };
    d.sides.left = Side::Axis;
    d.domain.cell = 1.0 / 80.0;
    d.conductors = vec![
        conductor(
            "sphere",
            1.0,
            Shape::Circle {
                center: [0.0, 0.6],
                radius: 0.12,
            },
        ),
        conductor(
            "torus",
            0.4,
            Shape::Circle {
                center: [0.45, 0.6],
                radius: 0.05,
            },
        ),
        conductor("plate", 0.0, rect([0.0, 0.7], [0.15, 0.2])),
    ];
    let mut fine = d.clone();
    fine.domain.cell = 1.0 / 112.0;
    assert_eq!(agrees_with_the_full_loops(&d, &fine), 3);
}

#[test]
fn distance_equals_every_segment_measured() {
    // Points of a fine lattice around a polygon with equal edges and a rectangle: many
    // points lie as far from two segments (on the bisectors at the corners).
    let shapes = vec![
        Shape::Polygon {
            outer: vec![[0.3, 0.3], [0.6, 0.3], [0.6, 0.6], [0.45, 0.75], [0.3, 0.6]],
            holes: vec![],
            round: 0.0,
            corners: None,
        },
        rect([0.65, 0.8], [0.1, 0.25]),
        Shape::Polyline(vec![[0.1, 0.9], [0.2, 0.8], [0.1, 0.7]]),
        Shape::Ring {
            center: [0.75, 0.75],
            inner: 0.05,
            outer: 0.1,
        },
    ];
    let grid = crate::grid::Grid::fit([0.0, 1.0], [0.0, 1.0], 0.1).expect("lattice");
    let s = Shapes::new(shapes.iter(), &grid);
    let n = 400;
    for j in 0..=n {
        for i in 0..=n {
            let (x, y) = (i as f64 / n as f64, j as f64 / n as f64);
            let (d, g) = s.distance(x, y);
            let (dw, gw) = full_distance(&shapes, x, y);
            assert_eq!(d.to_bits(), dw.to_bits(), "({x}, {y})");
            assert_eq!(g.map(f64::to_bits), gw.map(f64::to_bits), "({x}, {y})");
            for reach in [0.01, 0.1, 0.3] {
                assert!(!s.beyond(x, y, reach) || d > reach, "({x}, {y})");
            }
        }
    }
}
