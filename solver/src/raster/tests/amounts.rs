//! Areas and charges rebuilt from the raster against closed forms: conductor areas to second
//! order, region charges (planar and axisymmetric), charges inside conductors dropped, and
//! concentrated charges split without loss.

use super::*;

/// Per column, the conductor length rebuilt from the raster's y-edges; summed times hx
/// (the trapezoid rule, shapes away from the sides).
fn rebuilt_area(r: &Raster, axis: Axis) -> f64 {
    let g = &r.grid;
    let (h_along, h_across) = match axis {
        Axis::Y => (g.dy(0), g.dx(0)),
        Axis::X => (g.dx(0), g.dy(0)),
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
                corners: None,
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
            corners: None,
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
                q > -1e-18 && q <= 2.5e-4 * g.dx(0) * g.dy(0) * (1.0 + 1e-9),
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
