//! Tests of the rasteriser: exact crossings, permittivity means, thin conductors, areas and
//! charges against closed forms, and the documented invariants over seeded random designs.

use super::*;
use crate::design::{Conductor, Dielectric, Domain, Drive, Shape, Side};
use crate::geometry::validate_design;
use std::f64::consts::PI;

fn design(x: [f64; 2], y: [f64; 2], cell: f64) -> Design {
    Design {
        domain: Domain { x, y, cell },
        ..Design::default()
    }
}

fn grid_of(d: &Design) -> Grid {
    Grid::fit(d.domain.x, d.domain.y, d.domain.cell).unwrap()
}

fn conductor(name: &str, shape: Shape) -> Conductor {
    Conductor {
        name: name.into(),
        drive: Drive::Fixed(1.0),
        shape,
    }
}

fn dielectric(eps: f64, shape: Shape) -> Dielectric {
    Dielectric {
        name: "d".into(),
        permittivity: eps,
        strength: None,
        shape,
    }
}

fn rect(x: [f64; 2], y: [f64; 2]) -> Shape {
    Shape::Rect { x, y, round: 0.0 }
}

/// The other end of an edge.
fn far(g: &Grid, c: &CutEdge) -> usize {
    c.node as usize + if c.axis == Axis::X { 1 } else { g.nx }
}

fn node_xy(g: &Grid, p: usize) -> [f64; 2] {
    [g.x(p % g.nx), g.y(p / g.nx)]
}

/// Where a half-link's stretch ends, m.
fn surface_point(g: &Grid, c: &CutEdge, from_a: bool) -> [f64; 2] {
    let (p, h, sign) = if from_a {
        (c.node as usize, c.from_a.unwrap(), 1.0)
    } else {
        (far(g, c), c.from_b.unwrap(), -1.0)
    };
    let [x, y] = node_xy(g, p);
    let (a, b) = (node_xy(g, c.node as usize), node_xy(g, far(g, c)));
    match c.axis {
        Axis::X => [x + sign * h.theta * (b[0] - a[0]), y],
        Axis::Y => [x, y + sign * h.theta * (b[1] - a[1])],
    }
}

#[test]
fn rect_on_grid_lines_owns_its_boundary_nodes() {
    // Binary-exact numbers: the rectangle's sides lie exactly on node lines.
    let mut d = design([0.0, 1.0], [0.0, 1.0], 0.125);
    d.conductors
        .push(conductor("r", rect([0.25, 0.75], [0.125, 0.5])));
    let g = grid_of(&d);
    let r = rasterize(&d, &g);
    for j in 0..g.ny {
        for i in 0..g.nx {
            let inside = (2..=6).contains(&i) && (1..=4).contains(&j);
            assert_eq!(r.conductor[g.idx(i, j)] == 0, inside, "node ({i}, {j})");
        }
    }
    // Every free neighbour sees the surface at the far node.
    for c in &r.cut_edges {
        for h in [c.from_a, c.from_b].into_iter().flatten() {
            assert_eq!((h.theta, h.ends_on, h.eps), (1.0, Some(0), 1.0));
        }
    }
    // 5 x 4 conductor nodes: 2 * 4 x-edges on the left and right, 2 * 5 y-edges.
    assert_eq!(r.cut_edges.len(), 18);
}

#[test]
fn circle_half_links_end_on_the_circle() {
    let (c, rad) = ([0.431, 0.517], 0.2713);
    let mut d = design([0.0, 1.0], [0.0, 1.0], 0.01);
    d.conductors.push(conductor(
        "c",
        Shape::Circle {
            center: c,
            radius: rad,
        },
    ));
    let g = grid_of(&d);
    let r = rasterize(&d, &g);
    let mut n = 0;
    for e in &r.cut_edges {
        for (from_a, h) in [(true, e.from_a), (false, e.from_b)] {
            let Some(h) = h else { continue };
            assert!(h.theta > 0.0 && h.theta <= 1.0);
            assert_eq!(h.ends_on, Some(0));
            let p = surface_point(&g, e, from_a);
            // A node within SNAP of the surface joined the conductor: the link ends there.
            let tol = if h.theta == 1.0 {
                super::SNAP * g.hx.max(g.hy)
            } else {
                1e-12
            };
            assert!(
                ((p[0] - c[0]).hypot(p[1] - c[1]) - rad).abs() < tol,
                "{p:?}"
            );
            n += 1;
        }
    }
    // Roughly the perimeter in cells along each axis, times 2 axes.
    assert!(n > 200, "{n}");
}

#[test]
fn harmonic_mean_of_an_edge_split_30_70() {
    // The y-edge from y = 3 to y = 4 has 0.3 of background (eps 1) and 0.7 of eps 4.
    let mut d = design([0.0, 10.0], [0.0, 10.0], 1.0);
    d.dielectrics
        .push(dielectric(4.0, rect([0.0, 10.0], [3.3, 10.0])));
    let g = grid_of(&d);
    let r = rasterize(&d, &g);
    let want = 1.0 / (0.3 / 1.0 + 0.7 / 4.0);
    let e = r
        .cut_edges
        .iter()
        .find(|c| c.axis == Axis::Y && c.node as usize == g.idx(5, 3))
        .unwrap();
    for h in [e.from_a.unwrap(), e.from_b.unwrap()] {
        assert_eq!((h.theta, h.ends_on), (1.0, None));
        assert!((h.eps - want).abs() < 1e-14 * want, "{} vs {want}", h.eps);
    }
    // Edges fully inside one material are not cut; nodes carry the material.
    assert!(!r
        .cut_edges
        .iter()
        .any(|c| c.axis == Axis::Y && c.node as usize == g.idx(5, 5)));
    assert_eq!((r.material[g.idx(5, 3)], r.material[g.idx(5, 4)]), (0, 1));
}

#[test]
fn edge_along_an_interface_takes_the_mean_of_both_sides() {
    let mut d = design([0.0, 8.0], [0.0, 8.0], 1.0);
    d.dielectrics
        .push(dielectric(5.0, rect([0.0, 8.0], [0.0, 3.0])));
    let g = grid_of(&d);
    let r = rasterize(&d, &g);
    // Nodes on y = 3 belong to the dielectric (closed region).
    assert_eq!(r.material[g.idx(4, 3)], 1);
    let x_edge = r
        .cut_edges
        .iter()
        .find(|c| c.axis == Axis::X && c.node as usize == g.idx(4, 3))
        .unwrap();
    assert_eq!(x_edge.from_a.unwrap().eps, 3.0);
    // The y-edge above the interface is background, the one below is not cut.
    let up = r
        .cut_edges
        .iter()
        .find(|c| c.axis == Axis::Y && c.node as usize == g.idx(4, 3))
        .unwrap();
    assert_eq!(up.from_a.unwrap().eps, 1.0);
    assert!(!r
        .cut_edges
        .iter()
        .any(|c| c.axis == Axis::Y && c.node as usize == g.idx(4, 2)));
}

#[test]
fn edge_along_a_domain_side_takes_the_material_inside_the_domain() {
    // A dielectric reaching the domain's left side: the control-volume faces of the edges on
    // x = x0 lie wholly inside it, so those edges take its permittivity, not a mean with the
    // (non-existent) outside.
    let mut d = design([0.0, 8.0], [0.0, 8.0], 1.0);
    d.dielectrics
        .push(dielectric(5.0, rect([0.0, 4.0], [0.0, 8.0])));
    let g = grid_of(&d);
    let r = rasterize(&d, &g);
    let eps_on = |i: usize| {
        r.cut_edges
            .iter()
            .find(|c| c.axis == Axis::Y && c.node as usize == g.idx(i, 3))
            .map(|c| c.from_a.unwrap().eps)
            .unwrap_or(if r.material[g.idx(i, 3)] == 1 {
                5.0
            } else {
                1.0
            })
    };
    assert_eq!(eps_on(0), 5.0);
    assert_eq!(eps_on(4), 3.0);
}

#[test]
fn polyline_gives_theta_and_one_minus_theta() {
    let y = 0.503;
    let mut d = design([0.0, 1.0], [0.0, 1.0], 0.01);
    d.conductors
        .push(conductor("w", Shape::Polyline(vec![[0.2, y], [0.8, y]])));
    let g = grid_of(&d);
    let r = rasterize(&d, &g);
    assert!(r.conductor.iter().all(|&c| c == NO_CONDUCTOR));
    let mut cols = 0;
    for e in &r.cut_edges {
        assert_eq!(e.axis, Axis::Y);
        let (a, b) = (e.from_a.unwrap(), e.from_b.unwrap());
        assert_eq!((a.ends_on, b.ends_on), (Some(0), Some(0)));
        let ya = g.y(e.node as usize / g.nx);
        assert!((a.theta - (y - ya) / g.hy).abs() < 1e-12);
        assert!((a.theta + b.theta - 1.0).abs() < 1e-12);
        cols += 1;
    }
    // Columns x = 0.20 .. 0.80, end points included.
    assert_eq!(cols, 61);
}

#[test]
fn polyline_along_a_node_row_owns_its_nodes() {
    let mut d = design([0.0, 1.0], [0.0, 1.0], 0.125);
    d.conductors.push(conductor(
        "w",
        Shape::Polyline(vec![[0.25, 0.5], [0.6, 0.5]]),
    ));
    let g = grid_of(&d);
    let r = rasterize(&d, &g);
    let owned: Vec<usize> = (0..g.nx)
        .filter(|&i| r.conductor[g.idx(i, 4)] == 0)
        .collect();
    assert_eq!(owned, vec![2, 3, 4]);
    // The free node beyond the end sees the end at 0.6.
    let e = r
        .cut_edges
        .iter()
        .find(|c| c.axis == Axis::X && c.node as usize == g.idx(4, 4))
        .unwrap();
    let h = e.from_b.unwrap();
    assert!((h.theta - (0.625 - 0.6) / 0.125).abs() < 1e-15 && h.ends_on == Some(0));
}

#[test]
fn sliver_thinner_than_a_cell_links_both_ends() {
    let mut d = design([0.0, 1.0], [0.0, 1.0], 0.01);
    d.conductors
        .push(conductor("s", rect([0.2, 0.8], [0.5025, 0.5075])));
    let g = grid_of(&d);
    let r = rasterize(&d, &g);
    assert!(r.conductor.iter().all(|&c| c == NO_CONDUCTOR));
    let e = r
        .cut_edges
        .iter()
        .find(|c| c.axis == Axis::Y && c.node as usize == g.idx(50, 50))
        .unwrap();
    let (a, b) = (e.from_a.unwrap(), e.from_b.unwrap());
    assert!((a.theta - 0.25).abs() < 1e-10 && (b.theta - 0.25).abs() < 1e-10);
    assert_eq!((a.ends_on, b.ends_on), (Some(0), Some(0)));
}

#[test]
fn two_conductors_on_one_edge_get_a_direct_link() {
    let mut d = design([0.0, 1.0], [0.0, 1.0], 0.1);
    d.dielectrics
        .push(dielectric(3.0, rect([0.0, 1.0], [0.0, 1.0])));
    d.conductors
        .push(conductor("a", rect([0.1, 0.42], [0.1, 0.9])));
    d.conductors
        .push(conductor("b", rect([0.47, 0.9], [0.1, 0.9])));
    let g = grid_of(&d);
    let r = rasterize(&d, &g);
    let e = r
        .cut_edges
        .iter()
        .find(|c| c.axis == Axis::X && c.node as usize == g.idx(4, 5))
        .unwrap();
    assert_eq!((e.from_a, e.from_b), (None, None));
    let dl = e.direct.unwrap();
    assert_eq!((dl.a, dl.b, dl.eps), (0, 1, 3.0));
    assert!((dl.gap - 0.5).abs() < 1e-12);
}

/// Per column, the conductor length rebuilt from the raster's y-edges; summed times hx
/// (the trapezoid rule, shapes away from the sides).
fn rebuilt_area(r: &Raster, axis: Axis) -> f64 {
    let g = &r.grid;
    let (h_along, h_across) = match axis {
        Axis::Y => (g.hy, g.hx),
        Axis::X => (g.hx, g.hy),
    };
    let step = if axis == Axis::X { 1 } else { g.nx };
    let mut len = 0.0;
    let cut: std::collections::HashMap<(u32, Axis), &CutEdge> =
        r.cut_edges.iter().map(|c| ((c.node, c.axis), c)).collect();
    for j in 0..g.ny {
        for i in 0..g.nx {
            let a = g.idx(i, j);
            if (axis == Axis::X && i + 1 == g.nx) || (axis == Axis::Y && j + 1 == g.ny) {
                continue;
            }
            let b = a + step;
            let (ca, cb) = (r.conductor[a], r.conductor[b]);
            len += match cut.get(&(a as u32, axis)) {
                None if ca != NO_CONDUCTOR && ca == cb => h_along,
                None => 0.0,
                Some(c) => {
                    let fa = c.from_a.map_or(0.0, |h| h.theta);
                    let fb = c.from_b.map_or(0.0, |h| h.theta);
                    if c.from_a.is_some_and(|h| h.ends_on.is_none()) {
                        0.0
                    } else {
                        (1.0 - fa - fb) * h_along
                    }
                }
            };
        }
    }
    len * h_across
}

#[test]
fn rebuilt_area_matches_to_second_order() {
    // A triangle: the cross-section length is piecewise linear, so the trapezoid sum of exact
    // lengths errs by at most h^2/8 times the total slope change at the kinks (common
    // practice: the trapezoid rule's error on one kink inside a cell). Summed slope changes:
    // 8.34 for vertical sections (over x), 13.27 for horizontal ones (over y).
    let v = vec![[0.2, 0.2], [0.8, 0.3], [0.45, 0.85]];
    let exact = 0.5 * ((0.6f64 * 0.65) - (0.1 * 0.25));
    for cell in [0.01, 0.005, 0.0025] {
        let mut d = design([0.0, 1.0], [0.0, 1.0], cell);
        d.conductors.push(conductor(
            "t",
            Shape::Polygon {
                outer: v.clone(),
                holes: vec![],
                round: 0.0,
            },
        ));
        let r = rasterize(&d, &grid_of(&d));
        let (ey, ex) = (
            rebuilt_area(&r, Axis::Y) - exact,
            rebuilt_area(&r, Axis::X) - exact,
        );
        assert!(
            ey.abs() <= 8.34 / 8.0 * cell * cell + 1e-12,
            "cell {cell}: {ey}"
        );
        assert!(
            ex.abs() <= 13.27 / 8.0 * cell * cell + 1e-12,
            "cell {cell}: {ex}"
        );
    }
    // A disc: where a column is nearly tangent the length grows like sqrt(2 r s), so the cell
    // holding each of the two tangent columns misses at most (4/3) sqrt(2 r) h^1.5 of area
    // and the error is O(h^1.5) (common practice for the trapezoid rule on a square-root
    // end point).
    let rad = 0.31;
    let mut errs = vec![];
    for cell in [0.02, 0.01, 0.005] {
        let mut d = design([0.0, 1.0], [0.0, 1.0], cell);
        d.conductors.push(conductor(
            "c",
            Shape::Circle {
                center: [0.47, 0.52],
                radius: rad,
            },
        ));
        let r = rasterize(&d, &grid_of(&d));
        let e = (rebuilt_area(&r, Axis::Y) - PI * rad * rad).abs();
        assert!(
            e <= 8.0 / 3.0 * (2.0 * rad).sqrt() * cell.powf(1.5),
            "cell {cell}: {e}"
        );
        errs.push(e);
    }
    assert!(
        errs[0] / errs[1] > 2.4 && errs[1] / errs[2] > 2.4,
        "{errs:?}"
    );
}

fn region(density: f64, shape: Shape) -> Charge {
    Charge::Region {
        name: "q".into(),
        density,
        shape,
    }
}

fn total_charge(r: &Raster) -> f64 {
    r.node_charge.iter().map(|c| c.1).sum()
}

#[test]
fn region_charge_sums_to_density_times_area() {
    let shapes = vec![
        Shape::Circle {
            center: [0.4, 0.55],
            radius: 0.23,
        },
        Shape::Rect {
            x: [0.1, 0.77],
            y: [0.2, 0.61],
            round: 0.09,
        },
        Shape::Ring {
            center: [0.5, 0.5],
            inner: 0.1,
            outer: 0.4,
        },
        Shape::Polygon {
            outer: vec![[0.1, 0.1], [0.9, 0.15], [0.7, 0.9], [0.12, 0.8]],
            holes: vec![vec![[0.3, 0.3], [0.5, 0.6], [0.6, 0.3]]],
            round: 0.02,
        },
        // Touching the sides of the domain (halved boxes).
        rect([0.0, 1.0], [0.0, 0.35]),
    ];
    for s in shapes {
        let mut d = design([0.0, 1.0], [0.0, 1.0], 0.0137);
        d.charges.push(region(2.5e-4, s.clone()));
        validate_design(&d).unwrap();
        let g = grid_of(&d);
        let r = rasterize(&d, &g);
        let want = 2.5e-4 * crate::geometry::outline(&s).unwrap().area();
        assert!(
            (total_charge(&r) - want).abs() < 1e-12 * want,
            "{s:?}: {} vs {want}",
            total_charge(&r)
        );
        // No node holds more than its full control volume.
        for &(p, q) in &r.node_charge {
            assert!(
                q > -1e-18 && q <= 2.5e-4 * g.hx * g.hy * (1.0 + 1e-9),
                "node {p}: {q}"
            );
        }
    }
}

#[test]
fn axisymmetric_sphere_charge_is_density_times_four_thirds_pi_r3() {
    let (rad, rho) = (0.37, 1.5e-5);
    let mut d = design([0.0, 1.0], [-1.0, 1.0], 0.021);
    d.mode = Mode::Axisymmetric;
    d.sides.left = Side::Axis;
    d.charges.push(region(
        rho,
        Shape::Circle {
            center: [0.0, 0.1],
            radius: rad,
        },
    ));
    validate_design(&d).unwrap();
    let r = rasterize(&d, &grid_of(&d));
    let want = rho * 4.0 / 3.0 * PI * rad.powi(3);
    assert!(
        (total_charge(&r) - want).abs() < 1e-12 * want,
        "{} vs {want}",
        total_charge(&r)
    );
    // A shell (ring on the axis) and a cylinder crossing the axis (only r >= 0 counts).
    let mut d2 = d.clone();
    d2.charges = vec![region(
        rho,
        Shape::Ring {
            center: [0.0, 0.0],
            inner: 0.2,
            outer: 0.5,
        },
    )];
    let r = rasterize(&d2, &grid_of(&d2));
    let want = rho * 4.0 / 3.0 * PI * (0.125 - 0.008);
    assert!((total_charge(&r) - want).abs() < 1e-12 * want);
    d2.charges = vec![region(rho, rect([-0.3, 0.4], [-0.2, 0.3]))];
    let r = rasterize(&d2, &grid_of(&d2));
    let want = rho * PI * 0.16 * 0.5;
    assert!((total_charge(&r) - want).abs() < 1e-12 * want);
}

#[test]
fn charge_inside_a_conductor_is_dropped() {
    let mut d = design([0.0, 1.0], [0.0, 1.0], 0.125);
    d.conductors
        .push(conductor("c", rect([0.25, 0.75], [0.25, 0.75])));
    d.charges
        .push(region(1.0, rect([0.25, 0.75], [0.25, 0.75])));
    let g = grid_of(&d);
    let r = rasterize(&d, &g);
    assert!(r.node_charge.is_empty(), "{:?}", r.node_charge);
    d.charges = vec![Charge::Concentrated {
        name: "q".into(),
        at: [0.5, 0.5],
        amount: 1.0,
    }];
    assert!(rasterize(&d, &g).node_charge.is_empty());
}

#[test]
fn concentrated_charge_split_conserves_the_amount() {
    let mut d = design([0.0, 1.0], [0.0, 1.0], 0.1);
    d.charges.push(Charge::Concentrated {
        name: "q".into(),
        at: [0.234, 0.871],
        amount: 3e-9,
    });
    let g = grid_of(&d);
    let r = rasterize(&d, &g);
    assert_eq!(r.node_charge.len(), 4);
    assert!((total_charge(&r) - 3e-9).abs() < 1e-24);
    // Bilinear: the charge's first moment is kept too.
    let mx: f64 = r
        .node_charge
        .iter()
        .map(|&(p, q)| q * node_xy(&g, p as usize)[0])
        .sum();
    assert!((mx / 3e-9 - 0.234).abs() < 1e-12);
    // On a node exactly, and on the far corner.
    d.charges = vec![Charge::Concentrated {
        name: "q".into(),
        at: [0.5, 0.5],
        amount: 1.0,
    }];
    assert_eq!(
        rasterize(&d, &g).node_charge,
        vec![(g.idx(5, 5) as u32, 1.0)]
    );
    d.charges = vec![Charge::Concentrated {
        name: "q".into(),
        at: [1.0, 1.0],
        amount: 1.0,
    }];
    assert_eq!(
        rasterize(&d, &g).node_charge,
        vec![(g.idx(10, 10) as u32, 1.0)]
    );
    // Axisymmetric: split along the axis.
    d.mode = Mode::Axisymmetric;
    d.sides.left = Side::Axis;
    d.charges = vec![Charge::Concentrated {
        name: "q".into(),
        at: [0.0, 0.25],
        amount: 2.0,
    }];
    let r = rasterize(&d, &g);
    assert_eq!(r.node_charge.len(), 2);
    assert!((r.node_charge[0].1 - 1.0).abs() < 1e-12 && (r.node_charge[1].1 - 1.0).abs() < 1e-12);
    assert_eq!(r.node_charge[1].0 as usize, g.idx(0, 3));
}

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
                if distance(&o, [x, y]) < super::SNAP * g.hx.max(g.hy) {
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
        },
    ));
    d.conductors.push(conductor(
        "diamond",
        Shape::Polygon {
            outer: vec![[0.5, 1.0], [0.75, 1.25], [0.5, 1.5], [0.25, 1.25]],
            holes: vec![],
            round: 0.0,
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
