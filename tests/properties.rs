//! Property tests (proptest, fixed seeds): invariances that any correct discretisation of
//! electrostatics must keep, checked on randomly drawn small designs.
//!
//! - Capacitance does not change when the whole design (domain included) is translated, or
//!   rotated by 90 degrees (the five-point lattice maps onto itself).
//! - The order of a polygon's vertices (direction, starting vertex) does not matter.
//! - A design mirror-symmetric about a line gives a mirror-symmetric potential.
//! - Results are linear in the sources: every potential and charge scaled by s scales
//!   charges and potentials by s and the energy by s^2, and solutions superpose.
//! - The Maxwell capacitance matrix is symmetric (reciprocity), with a positive diagonal,
//!   non-positive off-diagonal entries and non-negative row sums (Maxwell, A Treatise on
//!   Electricity and Magnetism, 1873, Vol. I, Arts. 86-87: the coefficients of induction are
//!   reciprocal and negative, and no coefficient of induction exceeds the capacity in
//!   magnitude; quoted from memory).
//! - The area a rasterised convex polygon covers, read from the raster's cut fractions row by
//!   row, matches each row's exact chord (but for rows where a node within `raster::SNAP`
//!   of a cell from the surface joined the conductor), and its integral matches the
//!   polygon's area within the trapezoid-rule error of a piecewise-linear chord function
//!   plus one cell per snapped node.
//!
//! Every runner has a fixed seed and no failure file, so runs are reproducible; case counts
//! are small because each case solves (small lattices, about 33 x 25 nodes).

use fieldgrid_solver::design::{
    Background, Charge, Conductor, Design, Dielectric, Domain, Drive, Mode, Point, Shape, Side,
    Sides,
};
use fieldgrid_solver::grid::Grid;
use fieldgrid_solver::raster::{self, Axis, NO_CONDUCTOR};
use fieldgrid_solver::solvers::{Method, Params};
use fieldgrid_solver::study::{self, Solution, StudyParams};
use proptest::prelude::*;
use proptest::strategy::ValueTree;
use proptest::test_runner::{Config, RngAlgorithm, TestCaseError, TestRng, TestRunner};

// ------------------------------------------------------------------------- harness

fn runner(cases: u32, seed: u8) -> TestRunner {
    let config = Config {
        cases,
        failure_persistence: None,
        max_shrink_iters: 32,
        ..Config::default()
    };
    TestRunner::new_with_rng(
        config,
        TestRng::from_seed(RngAlgorithm::ChaCha, &[seed; 32]),
    )
}

fn params() -> StudyParams {
    StudyParams {
        method: Method::Multigrid,
        solver: Params {
            tol: 1e-12,
            ..Params::default()
        },
        error_estimate: false,
        ..StudyParams::default()
    }
}

fn solve(d: &Design) -> Result<Solution, TestCaseError> {
    let s = study::run(d, &params()).map_err(|e| TestCaseError::fail(format!("study: {e}")))?;
    prop_assert!(s.solve.converged, "not converged: {:?}", s.solve);
    Ok(s)
}

fn max_abs<'a>(v: impl IntoIterator<Item = &'a f64>) -> f64 {
    v.into_iter().fold(0.0f64, |m, x| m.max(x.abs()))
}

/// Entrywise agreement of two matrices relative to the largest entry of the first.
fn same_matrix(a: &[Vec<f64>], b: &[Vec<f64>], rel: f64, what: &str) -> Result<(), TestCaseError> {
    let scale = max_abs(a.iter().flatten());
    for (i, (ra, rb)) in a.iter().zip(b).enumerate() {
        for (j, (x, y)) in ra.iter().zip(rb).enumerate() {
            prop_assert!(
                (x - y).abs() <= rel * scale,
                "{what} ({i}, {j}): {x:e} vs {y:e} (scale {scale:e})"
            );
        }
    }
    Ok(())
}

fn same_charges(a: &Solution, b: &Solution, rel: f64) -> Result<(), TestCaseError> {
    let qa: Vec<f64> = a.conductors.iter().map(|c| c.charge).collect();
    let qb: Vec<f64> = b.conductors.iter().map(|c| c.charge).collect();
    let scale = max_abs(&qa);
    for (k, (x, y)) in qa.iter().zip(&qb).enumerate() {
        prop_assert!(
            (x - y).abs() <= rel * scale,
            "charge {k}: {x:e} vs {y:e} (scale {scale:e})"
        );
    }
    Ok(())
}

// ------------------------------------------------------------------------- scenes

/// Uniform fractions that shapes and values are drawn from.
type Fractions = [f64; 16];

fn fractions() -> impl Strategy<Value = Fractions> {
    prop::array::uniform16(0.0f64..1.0)
}

/// A convex polygon: `n` points on an ellipse at sorted random angles.
fn convex(c: Point, r: [f64; 2], n: usize, f: &[f64]) -> Vec<Point> {
    let mut a: Vec<f64> = (0..n)
        .map(|k| (k as f64 + 0.15 + 0.7 * f[k % f.len()]) / n as f64 * std::f64::consts::TAU)
        .collect();
    a.sort_by(f64::total_cmp);
    a.iter()
        .map(|t| [c[0] + r[0] * t.cos(), c[1] + r[1] * t.sin()])
        .collect()
}

/// A star-shaped (generally non-convex) polygon.
fn star(c: Point, r: f64, n: usize, f: &[f64]) -> Vec<Point> {
    (0..n)
        .map(|k| {
            let t = (k as f64 + 0.2 + 0.6 * f[k % f.len()]) / n as f64 * std::f64::consts::TAU;
            let rr = r * (0.55 + 0.45 * f[(k + 7) % f.len()]);
            [c[0] + rr * t.cos(), c[1] + rr * t.sin()]
        })
        .collect()
}

/// A shape of kind `kind % 5` inside the box `[x0, x1] x [y0, y1]`.
fn shape_in(kind: usize, f: &Fractions, b: [f64; 4]) -> Shape {
    let [x0, x1, y0, y1] = b;
    let (w, h) = (x1 - x0, y1 - y0);
    let c = [x0 + w * (0.4 + 0.2 * f[0]), y0 + h * (0.4 + 0.2 * f[1])];
    let (rx, ry) = (w * (0.18 + 0.2 * f[2]), h * (0.18 + 0.2 * f[3]));
    match kind % 5 {
        0 => Shape::Rect {
            x: [c[0] - rx, c[0] + rx],
            y: [c[1] - ry, c[1] + ry],
            round: if f[4] < 0.5 {
                0.0
            } else {
                0.4 * rx.min(ry) * f[5]
            },
        },
        1 => Shape::Circle {
            center: c,
            radius: rx.min(ry),
        },
        2 => Shape::Ring {
            center: c,
            inner: rx.min(ry) * (0.35 + 0.25 * f[6]),
            outer: rx.min(ry),
        },
        3 => Shape::Polygon {
            outer: convex(c, [rx, ry], 3 + (f[7] * 5.0) as usize, &f[8..]),
            holes: Vec::new(),
            round: 0.0,
        },
        _ => Shape::Polyline(vec![
            [c[0] - rx, c[1] - ry * f[9]],
            [c[0] + rx * (f[10] - 0.5), c[1] + ry],
            [c[0] + rx, c[1] - ry * f[11]],
        ]),
    }
}

fn side_of(k: usize, v: f64) -> Side {
    match k % 4 {
        0 => Side::Ground,
        1 => Side::Symmetry,
        2 => Side::Open,
        _ => Side::Fixed(v),
    }
}

/// A random planar or axisymmetric design: up to four conductors in the four quadrants of
/// the domain (so they never overlap), a dielectric, a charge region, random sides.
#[derive(Clone, Debug)]
struct Scene {
    kinds: [usize; 4],
    shapes: [Fractions; 4],
    values: Fractions,
    conductors: usize,
    floating: bool,
}

fn scene(min: usize, max: usize) -> impl Strategy<Value = Scene> {
    (
        prop::array::uniform4(0usize..5),
        prop::array::uniform4(fractions()),
        fractions(),
        min..=max,
        prop::bool::weighted(0.25),
    )
        .prop_map(|(kinds, shapes, values, conductors, floating)| Scene {
            kinds,
            shapes,
            values,
            conductors,
            floating,
        })
}

const LX: f64 = 1.0;
const LY: f64 = 0.75;
const CELL: f64 = LX / 32.0;

impl Scene {
    fn design(&self, mode: Mode) -> Design {
        let v = &self.values;
        let (x0, y0) = (0.0, 0.0);
        let boxes = [
            [0.1, 0.5, 0.05, 0.37],
            [0.5, 0.95, 0.05, 0.37],
            [0.1, 0.5, 0.38, 0.7],
            [0.5, 0.95, 0.38, 0.7],
        ];
        let conductors = (0..self.conductors)
            .map(|k| Conductor {
                name: format!("c{k}"),
                drive: if self.floating && k == self.conductors - 1 && k > 0 {
                    Drive::Floating
                } else {
                    Drive::Fixed(10.0 * v[k] - 5.0)
                },
                shape: shape_in(self.kinds[k], &self.shapes[k], boxes[k]),
            })
            .collect();
        let dx = [0.3 * v[4], 0.3 * v[4] + 0.2 + 0.5 * v[5]];
        let dielectrics = vec![Dielectric {
            name: "d".into(),
            permittivity: 1.0 + 9.0 * v[6],
            strength: None,
            shape: Shape::Rect {
                x: dx,
                y: [0.02 + 0.2 * v[7], 0.3 + 0.4 * v[8]],
                round: 0.0,
            },
        }];
        let charges = vec![Charge::Region {
            name: "q".into(),
            density: (v[9] - 0.5) * 1e-9,
            shape: Shape::Circle {
                center: [0.3 + 0.4 * v[10], 0.72],
                radius: 0.02,
            },
        }];
        let sv = 4.0 * v[11] - 2.0;
        let pick = |i: usize| side_of((v[12 + i] * 4.0) as usize, sv + i as f64);
        let sides = match mode {
            Mode::Planar => Sides {
                left: pick(0),
                right: pick(1),
                bottom: pick(2),
                top: pick(3),
            },
            Mode::Axisymmetric => Sides {
                left: Side::Axis,
                right: pick(1),
                bottom: pick(2),
                top: pick(3),
            },
        };
        Design {
            mode,
            depth: None,
            domain: Domain {
                x: [x0, x0 + LX],
                y: [y0, y0 + LY],
                cell: CELL,
            },
            sides,
            background: Background::default(),
            conductors,
            dielectrics,
            charges,
            probes: Vec::new(),
        }
    }
}

// ------------------------------------------------------------------------- transforms

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
        } => Shape::Polygon {
            outer: outer.iter().map(|p| f(*p)).collect(),
            holes: holes
                .iter()
                .map(|h| h.iter().map(|p| f(*p)).collect())
                .collect(),
            round: *round,
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

// ------------------------------------------------------------------------- properties

#[test]
fn capacitance_is_unchanged_by_translating_the_whole_design() {
    let strategy = (scene(1, 4), -10.0f64..10.0, -10.0f64..10.0);
    runner(16, 1)
        .run(&strategy, |(sc, tx, ty)| {
            let d = sc.design(Mode::Planar);
            let a = solve(&d)?;
            let b = solve(&translated(&d, [tx, ty]))?;
            same_matrix(&a.capacitance.matrix, &b.capacitance.matrix, 1e-8, "C")?;
            same_charges(&a, &b, 1e-8)
        })
        .unwrap();
}

#[test]
fn axisymmetric_capacitance_is_unchanged_by_an_axial_shift() {
    let strategy = (scene(1, 4), -10.0f64..10.0);
    runner(12, 2)
        .run(&strategy, |(sc, tz)| {
            let d = sc.design(Mode::Axisymmetric);
            let a = solve(&d)?;
            let b = solve(&translated(&d, [0.0, tz]))?;
            same_matrix(&a.capacitance.matrix, &b.capacitance.matrix, 1e-8, "C")?;
            same_charges(&a, &b, 1e-8)
        })
        .unwrap();
}

#[test]
fn capacitance_is_unchanged_by_a_quarter_turn_of_the_whole_design() {
    runner(16, 3)
        .run(&scene(1, 4), |sc| {
            let d = sc.design(Mode::Planar);
            let a = solve(&d)?;
            let r = rotated(&d);
            let b = solve(&r)?;
            prop_assert_eq!((a.grid.nx, a.grid.ny), (b.grid.ny, b.grid.nx));
            same_matrix(&a.capacitance.matrix, &b.capacitance.matrix, 1e-8, "C")?;
            same_charges(&a, &b, 1e-8)?;
            // Four quarter turns give the design back exactly.
            let back = rotated(&rotated(&rotated(&r)));
            prop_assert_eq!(&back.conductors, &d.conductors);
            Ok(())
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

/// Every source scaled by `s`: conductor and side potentials, charge density.
fn scaled(d: &Design, s: f64) -> Design {
    let mut out = d.clone();
    for c in &mut out.conductors {
        if let Drive::Fixed(v) = &mut c.drive {
            *v *= s;
        }
    }
    for side in [
        &mut out.sides.left,
        &mut out.sides.right,
        &mut out.sides.bottom,
        &mut out.sides.top,
    ] {
        if let Side::Fixed(v) = side {
            *v *= s;
        }
    }
    for q in &mut out.charges {
        match q {
            Charge::Region { density, .. } => *density *= s,
            Charge::Concentrated { amount, .. } => *amount *= s,
        }
    }
    out
}

#[test]
fn results_scale_linearly_with_the_potentials_and_superpose() {
    let strategy = (scene(1, 4), any::<bool>(), -3.0f64..3.0, any::<bool>());
    runner(12, 6)
        .run(&strategy, |(sc, axi, log_s, negative)| {
            let mode = if axi {
                Mode::Axisymmetric
            } else {
                Mode::Planar
            };
            let d = sc.design(mode);
            let s = 10f64.powf(log_s) * if negative { -1.0 } else { 1.0 };
            let a = solve(&d)?;
            let b = solve(&scaled(&d, s))?;
            let qs = max_abs(a.conductors.iter().map(|c| &c.charge));
            for (ca, cb) in a.conductors.iter().zip(&b.conductors) {
                prop_assert!(
                    (cb.charge - s * ca.charge).abs() <= 1e-9 * qs * s.abs(),
                    "charge {:e} vs {s} x {:e}",
                    cb.charge,
                    ca.charge
                );
                prop_assert!((cb.potential - s * ca.potential).abs() <= 1e-9 * s.abs() * 10.0);
            }
            let ps = max_abs(&a.potential);
            for (pa, pb) in a.potential.iter().zip(&b.potential) {
                prop_assert!((pb - s * pa).abs() <= 1e-9 * ps * s.abs());
            }
            prop_assert!(
                (b.energy - s * s * a.energy).abs() <= 1e-9 * a.energy.abs() * s * s,
                "energy {:e} vs {:e}",
                b.energy,
                s * s * a.energy
            );
            same_matrix(&a.capacitance.matrix, &b.capacitance.matrix, 1e-9, "C")?;
            // Superposition: the sources of d plus those of d scaled by s (same geometry).
            let sum = scaled(&d, 1.0 + s);
            let c = solve(&sum)?;
            for ((ca, cb), cc) in a.conductors.iter().zip(&b.conductors).zip(&c.conductors) {
                prop_assert!(
                    (cc.charge - ca.charge - cb.charge).abs() <= 1e-9 * qs * (1.0 + s.abs()),
                    "superposed charge {:e} vs {:e} + {:e}",
                    cc.charge,
                    ca.charge,
                    cb.charge
                );
            }
            Ok(())
        })
        .unwrap();
}

#[test]
fn maxwell_matrix_is_symmetric_with_reciprocal_negative_induction_coefficients() {
    let strategy = (scene(2, 4), any::<bool>());
    runner(24, 7)
        .run(&strategy, |(sc, axi)| {
            let mode = if axi {
                Mode::Axisymmetric
            } else {
                Mode::Planar
            };
            let s = solve(&sc.design(mode))?;
            let c = &s.capacitance.matrix;
            let diag = c.iter().enumerate().fold(0.0f64, |m, (i, r)| m.max(r[i]));
            for (i, ci) in c.iter().enumerate() {
                prop_assert!(ci[i] > 0.0, "C[{i}][{i}] = {:e}", ci[i]);
                let row: f64 = ci.iter().sum();
                prop_assert!(row >= -1e-8 * diag, "row {i} sums to {row:e}");
                for (j, cij) in ci.iter().enumerate() {
                    let cji = c[j][i];
                    prop_assert!(
                        (cij - cji).abs() <= 1e-8 * diag,
                        "C[{i}][{j}] = {cij:e}, C[{j}][{i}] = {cji:e}"
                    );
                    if i != j {
                        prop_assert!(*cij <= 1e-9 * diag, "C[{i}][{j}] = {cij:e} > 0");
                    }
                }
            }
            Ok(())
        })
        .unwrap();
}

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
                    shape: Shape::Polygon {
                        outer: poly.clone(),
                        holes: Vec::new(),
                        round: 0.0,
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
                    *row += covered * g.hx;
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
                    (got - want).abs() <= (snapped[j] as f64 + 1e-9) * g.hx,
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
            let integral: f64 = rows.iter().sum::<f64>() * g.hy;
            let bound: f64 = (0..n)
                .map(|k| {
                    let (p, q, s) = (poly[(k + n - 1) % n], poly[k], poly[(k + 1) % n]);
                    let slope = |a: Point, b: Point| ((b[0] - a[0]) / (b[1] - a[1])).abs();
                    slope(p, q) + slope(q, s)
                })
                .sum::<f64>()
                * g.hy
                * g.hy
                / 8.0;
            let bound = bound + snapped.iter().sum::<usize>() as f64 * g.hx * g.hy;
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

#[test]
fn scene_generator_draws_valid_designs() {
    // The generator itself: every drawn scene passes validation in both modes.
    let mut r = runner(1, 9);
    for _ in 0..200 {
        let sc = scene(1, 4).new_tree(&mut r).unwrap().current();
        for mode in [Mode::Planar, Mode::Axisymmetric] {
            let d = sc.design(mode);
            assert!(
                fieldgrid_solver::design::validate(&d).is_ok(),
                "{sc:?}: {:?}",
                fieldgrid_solver::design::validate(&d)
            );
        }
    }
}
