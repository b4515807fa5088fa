//! Tests of the rasteriser: exact crossings, permittivity means, thin conductors and direct
//! links here, with the designs and helpers the other test files share; areas and charges
//! against closed forms in `amounts`; the documented invariants over seeded random designs
//! in `invariants`.

mod amounts;
mod invariants;

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
        joined: Vec::new(),
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

/// A charged region of `density`, C/m^3.
fn region(density: f64, shape: Shape) -> Charge {
    Charge::Region {
        name: "q".into(),
        density,
        shape,
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
                super::SNAP * g.dx(0).max(g.dy(0))
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
        assert!((a.theta - (y - ya) / g.dy(0)).abs() < 1e-12);
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
