//! Invariances of the geometry: translating or quarter-turning the whole design, shifting an
//! axisymmetric one along the axis, reordering a polygon's vertices and mirroring a design
//! leave capacitance, charges and potentials as they were.

use fieldgrid_solver::design::{Charge, Conductor, Design, Drive, Mode, Point, Shape, Sides};
use proptest::prelude::*;
use proptest::test_runner::TestCaseError;

use crate::scenes::{convex, fractions, scene, side_of, star, Scene, LX, LY};
use crate::{max_abs, params, runner, same_charges, same_matrix, solve};
use fieldgrid_solver::grid::Grid;
use fieldgrid_solver::plan;
use fieldgrid_solver::solvers::CHARGE_TOL_FACTOR;
use fieldgrid_solver::study;

fn map_shape(
    s: &Shape,
    f: &dyn Fn(Point) -> Point,
    rect: &dyn Fn([f64; 2], [f64; 2]) -> ([f64; 2], [f64; 2]),
) -> Shape {
    match s {
        Shape::Rect { x, y, round } => {
            let (x, y) = rect(*x, *y);
            Shape::Rect {
                x,
                y,
                round: *round,
            }
        }
        Shape::Circle { center, radius } => Shape::Circle {
            center: f(*center),
            radius: *radius,
        },
        Shape::Ring {
            center,
            inner,
            outer,
        } => Shape::Ring {
            center: f(*center),
            inner: *inner,
            outer: *outer,
        },
        Shape::Polygon {
            outer,
            holes,
            round,
            corners,
        } => Shape::Polygon {
            outer: outer.iter().map(|p| f(*p)).collect(),
            holes: holes
                .iter()
                .map(|h| h.iter().map(|p| f(*p)).collect())
                .collect(),
            round: *round,
            corners: corners.clone(),
        },
        Shape::Polyline(v) => Shape::Polyline(v.iter().map(|p| f(*p)).collect()),
    }
}

/// The design with every point mapped by `f`, rectangles (and the domain) by `rect`.
fn map_design(
    d: &Design,
    f: &dyn Fn(Point) -> Point,
    rect: &dyn Fn([f64; 2], [f64; 2]) -> ([f64; 2], [f64; 2]),
    sides: Sides,
) -> Design {
    let mut out = d.clone();
    let (x, y) = rect(d.domain.x, d.domain.y);
    out.domain.x = x;
    out.domain.y = y;
    out.sides = sides;
    for c in &mut out.conductors {
        c.shape = map_shape(&c.shape, f, rect);
    }
    for e in &mut out.dielectrics {
        e.shape = map_shape(&e.shape, f, rect);
    }
    for q in &mut out.charges {
        match q {
            Charge::Region { shape, .. } => *shape = map_shape(shape, f, rect),
            Charge::Concentrated { at, .. } => *at = f(*at),
        }
    }
    for p in &mut out.probes {
        p.at = f(p.at);
    }
    out
}

fn translated(d: &Design, t: Point) -> Design {
    map_design(
        d,
        &|p| [p[0] + t[0], p[1] + t[1]],
        &|x, y| ([x[0] + t[0], x[1] + t[0]], [y[0] + t[1], y[1] + t[1]]),
        d.sides,
    )
}

/// Rotated by +90 degrees about the origin: (x, y) -> (-y, x). The left side (x = x0)
/// becomes the bottom (y = x0), the bottom becomes the right, and so on.
fn rotated(d: &Design) -> Design {
    let s = d.sides;
    map_design(
        d,
        &|p| [-p[1], p[0]],
        &|x, y| ([-y[1], -y[0]], x),
        Sides {
            left: s.top,
            right: s.bottom,
            bottom: s.left,
            top: s.right,
        },
    )
}

/// A scene's design on one lattice kind: [`Scene::design`] or [`Scene::graded`].
type Lattice = fn(&Scene, Mode) -> Design;

/// `b` is `a` mapped by `f` (taken in reverse order when `reverse`), to rounding of `span`.
fn moved(
    a: &[f64],
    b: &[f64],
    f: &dyn Fn(f64) -> f64,
    reverse: bool,
    span: f64,
) -> Result<(), TestCaseError> {
    prop_assert_eq!(a.len(), b.len());
    let n = a.len();
    for (i, &t) in a.iter().enumerate() {
        let u = if reverse { b[n - 1 - i] } else { b[i] };
        prop_assert!(
            (f(t) - u).abs() <= 1e-12 * span,
            "line {i}: {t:e} maps to {:e}, not {u:e}",
            f(t)
        );
    }
    Ok(())
}

fn translation_keeps_capacitance(lattice: Lattice, cases: u32) {
    let strategy = (scene(1, 4), -10.0f64..10.0, -10.0f64..10.0);
    runner(cases, 1)
        .run(&strategy, |(sc, tx, ty)| {
            let d = lattice(&sc, Mode::Planar);
            let a = solve(&d)?;
            let b = solve(&translated(&d, [tx, ty]))?;
            let span = 10.0 + LX;
            moved(a.grid.xs(), b.grid.xs(), &|x| x + tx, false, span)?;
            moved(a.grid.ys(), b.grid.ys(), &|y| y + ty, false, span)?;
            let rel = 1e-8;
            same_matrix(&a.capacitance.matrix, &b.capacitance.matrix, rel, "C")?;
            same_charges(&a, &b, rel)
        })
        .unwrap();
}

fn axial_shift_keeps_capacitance(lattice: Lattice, cases: u32) {
    let strategy = (scene(1, 4), -10.0f64..10.0);
    runner(cases, 2)
        .run(&strategy, |(sc, tz)| {
            let d = lattice(&sc, Mode::Axisymmetric);
            let a = solve(&d)?;
            let b = solve(&translated(&d, [0.0, tz]))?;
            moved(a.grid.xs(), b.grid.xs(), &|r| r, false, LX)?;
            moved(a.grid.ys(), b.grid.ys(), &|z| z + tz, false, 10.0 + LY)?;
            let rel = 1e-8;
            same_matrix(&a.capacitance.matrix, &b.capacitance.matrix, rel, "C")?;
            same_charges(&a, &b, rel)
        })
        .unwrap();
}

fn quarter_turn_keeps_capacitance(lattice: Lattice, cases: u32) {
    runner(cases, 3)
        .run(&scene(1, 4), |sc| {
            let d = lattice(&sc, Mode::Planar);
            let a = solve(&d)?;
            let r = rotated(&d);
            let b = solve(&r)?;
            // (x, y) -> (-y, x): the new columns are the old rows negated, in reverse.
            moved(a.grid.ys(), b.grid.xs(), &|y| -y, true, LX)?;
            moved(a.grid.xs(), b.grid.ys(), &|x| x, false, LX)?;
            let rel = 1e-8;
            same_matrix(&a.capacitance.matrix, &b.capacitance.matrix, rel, "C")?;
            same_charges(&a, &b, rel)?;
            // Four quarter turns give the design back exactly.
            let back = rotated(&rotated(&rotated(&r)));
            prop_assert_eq!(&back.conductors, &d.conductors);
            Ok(())
        })
        .unwrap();
}

#[test]
fn capacitance_is_unchanged_by_translating_the_whole_design() {
    translation_keeps_capacitance(Scene::design, 16);
}

#[test]
fn axisymmetric_capacitance_is_unchanged_by_an_axial_shift() {
    axial_shift_keeps_capacitance(Scene::design, 12);
}

#[test]
fn capacitance_is_unchanged_by_a_quarter_turn_of_the_whole_design() {
    quarter_turn_keeps_capacitance(Scene::design, 16);
}

// The graded lattice moves with the design: translated or shifted along the axis, its lines
// are the design's lines moved the same way (to rounding), and the results agree as closely
// as its solves' stop allows. (Regression: a cell count a rounding above a whole number took
// one more cell after a translation.)

#[test]
fn graded_capacitance_is_unchanged_by_translating_the_whole_design() {
    translation_keeps_capacitance(Scene::graded, 5);
}

#[test]
fn graded_axisymmetric_capacitance_is_unchanged_by_an_axial_shift() {
    axial_shift_keeps_capacitance(Scene::graded, 5);
}

// The graded lattice's own lines do not turn with the design: each stretch between node lines
// is sampled from its low end, and a quarter turn reverses an axis. (Measured on the first 8
// scenes of the quarter-turn runner: the lines of the turned design lay up to 8.4e-3 of the
// domain from the turned lines, or differed in count, and the capacitance moved by up to
// 1.2e-5.) On the turned lines themselves, the rasteriser and the operator are invariant.
#[test]
fn graded_capacitance_on_turned_lines_is_unchanged_by_a_quarter_turn() {
    runner(5, 3)
        .run(&scene(1, 4), |sc| {
            let d = Scene::graded(&sc, Mode::Planar);
            let a = solve(&d)?;
            // (x, y) -> (-y, x): the new columns are the old rows negated, in reverse.
            let xs: Vec<f64> = a.grid.ys().iter().rev().map(|y| -y).collect();
            let grid = Grid::from_lines(xs, a.grid.xs().to_vec())
                .map_err(|e| TestCaseError::fail(format!("turned lines: {e}")))?;
            let p = params(d.lattice);
            let plan = plan::on_grid(grid, p.method, p.error_estimate);
            let b = study::run_planned(&rotated(&d), &plan, &p)
                .map_err(|e| TestCaseError::fail(format!("study: {e}")))?;
            prop_assert!(b.solve.converged, "not converged: {:?}", b.solve);
            // Agreement to the solver's stop, which holds each charge within
            // CHARGE_TOL_FACTOR * tol of the largest (the two solves run in transposed node
            // order). Measured on the 8 scenes: 4e-13 to 1.2e-8 at the tolerance here; at tol
            // 1e-12 all but one below 3.2e-11, and that one stays at 1.4e-8: a conductor's face
            // meets a dielectric's edge, the lattice grades to 3.5e-9 m cells there and its
            // solves stagnate near a relative residual of 5e-10 (without the dielectric, or
            // with its edge moved off the face's end, it agrees to 6e-13).
            let rel = 2.0 * CHARGE_TOL_FACTOR * p.solver.tol;
            same_matrix(&a.capacitance.matrix, &b.capacitance.matrix, rel, "C")?;
            same_charges(&a, &b, rel)
        })
        .unwrap();
}

#[test]
fn polygon_vertex_order_does_not_matter() {
    let strategy = (
        scene(1, 3),
        fractions(),
        5usize..10,
        0usize..10,
        any::<bool>(),
    );
    runner(16, 4)
        .run(&strategy, |(sc, f, n, shift, dielectric)| {
            let mut d = sc.design(Mode::Planar);
            // A non-convex polygon with a hole, as a conductor in the upper-left quadrant or
            // as the dielectric.
            let outer = star([0.3, 0.54], 0.15, n, &f);
            let hole = convex([0.3, 0.54], [0.03, 0.025], 4, &f[3..]);
            let shape = |outer: Vec<Point>, hole: Vec<Point>| Shape::Polygon {
                outer,
                holes: vec![hole],
                round: 0.0,
                corners: None,
            };
            let slot = if dielectric {
                None
            } else {
                Some(2.min(d.conductors.len()))
            };
            let set = |d: &mut Design, s: Shape| match slot {
                Some(k) if k < d.conductors.len() => d.conductors[k].shape = s,
                Some(_) => d.conductors.push(Conductor {
                    name: "poly".into(),
                    drive: Drive::Fixed(1.0),
                    joined: Vec::new(),
                    shape: s,
                }),
                None => d.dielectrics[0].shape = s,
            };
            set(&mut d, shape(outer.clone(), hole.clone()));
            let a = solve(&d)?;
            let mut o2 = outer.clone();
            o2.reverse();
            o2.rotate_left(shift % n);
            let mut h2 = hole.clone();
            h2.rotate_left(shift % 4);
            let mut e = d.clone();
            set(&mut e, shape(o2, h2));
            let b = solve(&e)?;
            same_matrix(&a.capacitance.matrix, &b.capacitance.matrix, 1e-9, "C")?;
            same_charges(&a, &b, 1e-9)
        })
        .unwrap();
}

/// The mirror image of a design about x = 0 (planar) or z = 0 (axisymmetric) is added to it,
/// conductor by conductor with equal potentials; the sides facing each other are equal.
#[test]
fn mirror_symmetric_designs_give_mirror_symmetric_potentials() {
    let strategy = (scene(1, 2), any::<bool>(), 0usize..4, 0usize..4);
    runner(16, 5)
        .run(&strategy, |(sc, axi, s1, s2)| {
            let mode = if axi {
                Mode::Axisymmetric
            } else {
                Mode::Planar
            };
            let half = sc.design(mode);
            // Planar: mirror in x about the domain's left side, moved to x = 0.
            // Axisymmetric: mirror in z about its bottom side, moved to z = 0.
            let flip: Box<dyn Fn(Point) -> Point> = if axi {
                Box::new(|p: Point| [p[0], -p[1]])
            } else {
                Box::new(|p: Point| [-p[0], p[1]])
            };
            let flip_rect = |x: [f64; 2], y: [f64; 2]| {
                if axi {
                    (x, [-y[1], -y[0]])
                } else {
                    ([-x[1], -x[0]], y)
                }
            };
            let mirrored = map_design(&half, &*flip, &flip_rect, half.sides);
            let mut d = half.clone();
            let sv = 1.5;
            if axi {
                d.domain.y = [-LY, LY];
                d.sides.bottom = side_of(s1, sv);
                d.sides.top = side_of(s1, sv);
                d.sides.right = side_of(s2, -sv);
            } else {
                d.domain.x = [-LX, LX];
                d.sides.left = side_of(s1, sv);
                d.sides.right = side_of(s1, sv);
                d.sides.top = side_of(s2, -sv);
            }
            for (k, mut c) in mirrored.conductors.into_iter().enumerate() {
                c.name = format!("m{k}");
                d.conductors.push(c);
            }
            // The dielectric and the charge become symmetric shapes straddling the mirror.
            if let Shape::Rect { x, y, .. } = &mut d.dielectrics[0].shape {
                if axi {
                    *y = [-y[1], y[1]];
                } else {
                    *x = [-x[1], x[1]];
                }
            }
            if let Charge::Region {
                shape: Shape::Circle { center, .. },
                ..
            } = &mut d.charges[0]
            {
                if axi {
                    center[1] = 0.0;
                } else {
                    center[0] = 0.0;
                }
            }
            let s = solve(&d)?;
            let g = s.grid;
            let scale = max_abs(&s.potential).max(1e-30);
            for j in 0..g.ny {
                for i in 0..g.nx {
                    let (mi, mj) = if axi {
                        (i, g.ny - 1 - j)
                    } else {
                        (g.nx - 1 - i, j)
                    };
                    let (a, b) = (s.potential[g.idx(i, j)], s.potential[g.idx(mi, mj)]);
                    prop_assert!(
                        (a - b).abs() <= 1e-8 * scale,
                        "node ({i}, {j}): {a:e} vs mirror {b:e}"
                    );
                }
            }
            // Mirror-image conductors carry equal charges.
            let n = s.conductors.len() / 2;
            let qs = max_abs(s.conductors.iter().map(|c| &c.charge));
            for k in 0..n {
                let (a, b) = (s.conductors[k].charge, s.conductors[n + k].charge);
                prop_assert!((a - b).abs() <= 1e-8 * qs, "charges {a:e} vs {b:e}");
            }
            Ok(())
        })
        .unwrap();
}
