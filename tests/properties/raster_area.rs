//! The area a rasterised convex polygon covers, read from the raster's cut fractions row by
//! row, against its exact chords and its area.

use fieldgrid_solver::design::{Conductor, Design, Domain, Drive, Point, Shape};
use fieldgrid_solver::grid::Grid;
use fieldgrid_solver::raster::{self, Axis, NO_CONDUCTOR};
use proptest::prelude::*;
use proptest::test_runner::TestCaseError;

use crate::runner;
use crate::scenes::{convex, fractions, CELL, LX, LY};

/// True when `p` lies inside (or on) the convex, counter-clockwise polygon.
fn inside_convex(poly: &[Point], p: Point) -> bool {
    (0..poly.len()).all(|k| {
        let (a, b) = (poly[k], poly[(k + 1) % poly.len()]);
        (b[0] - a[0]) * (p[1] - a[1]) - (b[1] - a[1]) * (p[0] - a[0]) >= 0.0
    })
}

/// Exact length of the chord of a convex polygon on the line y = yl.
fn chord(poly: &[Point], yl: f64) -> f64 {
    let mut xs = Vec::new();
    for k in 0..poly.len() {
        let (p, q) = (poly[k], poly[(k + 1) % poly.len()]);
        if (p[1] - yl) * (q[1] - yl) <= 0.0 && p[1] != q[1] {
            xs.push(p[0] + (yl - p[1]) / (q[1] - p[1]) * (q[0] - p[0]));
        }
    }
    match (
        xs.iter().copied().reduce(f64::min),
        xs.iter().copied().reduce(f64::max),
    ) {
        (Some(a), Some(b)) => b - a,
        _ => 0.0,
    }
}

#[test]
fn rasterised_polygon_area_matches_its_geometric_area_within_the_cut_cell_error() {
    let strategy = (
        fractions(),
        3usize..9,
        0.3f64..1.0,
        0.0f64..1.0,
        0.0f64..1.0,
    );
    runner(64, 8)
        .run(&strategy, |(f, n, size, ox, oy)| {
            let c = [0.5 + 0.1 * (ox - 0.5), 0.375 + 0.1 * (oy - 0.5)];
            let r = [0.35 * size, 0.3 * size * (0.5 + 0.5 * f[15])];
            let poly = convex(c, r, n, &f);
            let d = Design {
                domain: Domain {
                    x: [0.0, LX],
                    y: [0.0, LY],
                    cell: CELL * (0.5 + f[14]),
                },
                conductors: vec![Conductor {
                    name: "p".into(),
                    drive: Drive::Fixed(1.0),
                    joined: Vec::new(),
                    shape: Shape::Polygon {
                        outer: poly.clone(),
                        holes: Vec::new(),
                        round: 0.0,
                        corners: None,
                    },
                }],
                ..Design::default()
            };
            fieldgrid_solver::design::validate(&d)
                .map_err(|e| TestCaseError::fail(format!("{e}")))?;
            let g = Grid::fit(d.domain.x, d.domain.y, d.domain.cell).unwrap();
            let ras = raster::rasterize(&d, &g);
            // Covered length of every row from the raster: whole edges between conductor
            // nodes, and the cut fractions (1 - theta) of edges that a surface crosses.
            let mut rows = vec![0.0; g.ny];
            let mut cut = ras
                .cut_edges
                .iter()
                .filter(|e| e.axis == Axis::X)
                .peekable();
            for (j, row) in rows.iter_mut().enumerate() {
                for i in 0..g.nx - 1 {
                    let a = g.idx(i, j);
                    let inside = |p: usize| ras.conductor[p] != NO_CONDUCTOR;
                    while cut.peek().is_some_and(|e| (e.node as usize) < a) {
                        cut.next();
                    }
                    let rec = cut.next_if(|e| e.node as usize == a);
                    let covered = match (inside(a), inside(a + 1), rec) {
                        (true, true, _) => 1.0,
                        (false, false, None) => 0.0,
                        (_, _, Some(e)) => {
                            let ta = e.from_a.map_or(0.0, |h| h.theta);
                            let tb = e.from_b.map_or(0.0, |h| h.theta);
                            let free_both = e.from_a.is_some_and(|h| h.ends_on.is_none());
                            if free_both {
                                0.0
                            } else {
                                1.0 - ta - tb
                            }
                        }
                        (_, _, None) => {
                            return Err(TestCaseError::fail(format!(
                                "edge at node {a} joins conductor and free without a crossing"
                            )))
                        }
                    };
                    *row += covered * g.dx(0);
                }
            }
            // A free node closer to the surface than SNAP of a cell (along x or y) joins the
            // conductor, which can lengthen its row's chord by up to one cell; in every other
            // row the cut fractions give the chord exactly.
            let snapped: Vec<usize> = (0..g.ny)
                .map(|j| {
                    (0..g.nx)
                        .filter(|&i| {
                            ras.conductor[g.idx(i, j)] != NO_CONDUCTOR
                                && !inside_convex(&poly, [g.x(i), g.y(j)])
                        })
                        .count()
                })
                .collect();
            for (j, got) in rows.iter().enumerate() {
                let want = chord(&poly, g.y(j));
                prop_assert!(
                    (got - want).abs() <= (snapped[j] as f64 + 1e-9) * g.dx(0),
                    "row {j}: raster covers {got:e}, chord {want:e}, {} snapped nodes",
                    snapped[j]
                );
            }
            let exact_rows = snapped.iter().filter(|&&n| n == 0).count();
            prop_assert!(
                exact_rows * 10 >= 9 * g.ny,
                "only {exact_rows} of {} rows exact",
                g.ny
            );
            // Trapezoid rule over the rows. The chord is piecewise linear in y with kinks at
            // the vertices; the rule's error on a cell with a kink of slope jump J is at most
            // J h^2 / 8, and J is at most the sum of |dx/dy| of the two edges meeting there.
            let integral: f64 = rows.iter().sum::<f64>() * g.dy(0);
            let bound: f64 = (0..n)
                .map(|k| {
                    let (p, q, s) = (poly[(k + n - 1) % n], poly[k], poly[(k + 1) % n]);
                    let slope = |a: Point, b: Point| ((b[0] - a[0]) / (b[1] - a[1])).abs();
                    slope(p, q) + slope(q, s)
                })
                .sum::<f64>()
                * g.dy(0)
                * g.dy(0)
                / 8.0;
            let bound = bound + snapped.iter().sum::<usize>() as f64 * g.dx(0) * g.dy(0);
            let exact = fieldgrid_tests::polygon_area(&poly);
            prop_assert!(
                (integral - exact).abs() <= bound + 1e-12 * exact,
                "area {integral:e} vs {exact:e}: error {:e} above the bound {bound:e}",
                (integral - exact).abs()
            );
            Ok(())
        })
        .unwrap();
}
