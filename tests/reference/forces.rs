//! Forces and their error estimates against closed forms; a force the lattice cannot resolve
//! is flagged.

use fieldgrid_cli::design_file::read_design;
use fieldgrid_solver::accuracy::{self, Quantity};
use fieldgrid_solver::forces::ForceMethod;
use fieldgrid_solver::solvers::{Method, Params};
use fieldgrid_solver::study::{self, Solution, StudyParams};
use fieldgrid_solver::warning::Warning;
use fieldgrid_solver::EPS0;
use fieldgrid_tests::{design, designs, params, rel_err, uniform};
use std::f64::consts::PI;

fn with_estimate(text: &str) -> Solution {
    let mut p = params(Method::default());
    p.error_estimate = true;
    let s = study::run(&design(text), &p).expect("study runs");
    assert!(s.solve.converged);
    s
}

/// The eccentric line of [`designs::eccentric_rod`], `n` cells across the rod's radius.
const E: f64 = designs::ECCENTRIC_SHIFT;
fn eccentric(n: f64) -> String {
    designs::eccentric_rod(n)
}

#[test]
fn eccentric_rod_force_and_its_estimate_match_the_closed_form() {
    // Capacitance per length of eccentric cylinders (radii a < b, centres e apart),
    // C' = 2 pi eps0 / arccosh((a^2 + b^2 - e^2) / (2 a b)) (W. R. Smythe, Static and
    // Dynamic Electricity, 1950, sec. 4.13, by bipolar coordinates; from memory), and the
    // force at fixed potentials by virtual work, F = (V^2 / 2) dC'/de (common practice):
    // F = V^2 pi eps0 e / (a b arccosh(u)^2 sqrt(u^2 - 1)), pushing the rod off the axis.
    let (a, b, e, v) = (1e-3, 2.5e-3, E * 1e-3, 100.0);
    let u = (a * a + b * b - e * e) / (2.0 * a * b);
    let want = v * v * PI * EPS0 * e / (a * b * u.acosh().powi(2) * (u * u - 1.0).sqrt());
    let mut errs = Vec::new();
    for n in [10.0, 20.0, 40.0] {
        let s = with_estimate(&eccentric(n));
        let c = &s.conductors[0];
        let err = (c.force[0] - want).abs();
        let est = c.force_error.expect("an estimate")[0];
        eprintln!(
            "eccentric rod, {n} cells: force {:e} N/m, want {want:e}, error {:.3e}, estimate \
             {:.3e} (ratio {:.2}); capacitance error {:.3e}",
            c.force[0],
            err / want,
            est / want,
            est / err,
            rel_err(s.capacitance.matrix[0][0], 2.0 * PI * EPS0 / u.acosh())
        );
        // The rod stands in one material clear of the tube, so its force is the stress
        // weighted over a band between them (away from the cut cells at its surface), which
        // converges as the capacitance does. Measured: errors 6.2e-4 / 1.6e-4 / 4.9e-5,
        // estimate over error 2.73 / 1.42 / 0.77 (on the path one cell out, as before:
        // 4.2e-4 / 1.9e-4 / 4.1e-5 and 5.3 / 0.64 / 1.19, the estimate comparing paths at
        // different distances from the rod).
        assert_eq!(c.force_method, ForceMethod::Volume);
        assert!(
            est <= 3.0 * err && est >= err / 3.0,
            "{n} cells: estimate {est:e}, error {err:e}"
        );
        // The component that vanishes by symmetry stays within its estimate.
        assert!(c.force[1].abs() <= c.force_error.unwrap()[1], "{:?}", c);
        assert!(s.warnings.is_empty(), "{:?}", s.warnings);
        errs.push(err);
    }
    assert!(errs[2] < 1e-4 * want, "{errs:?}");
}

/// Capacitance of a sphere of radius `a` whose centre is `h` above a grounded plane, F, and
/// its derivative along h, F/m, by the image series: C = 4 pi eps0 a sinh(alpha) sum_n
/// 1 / sinh(n alpha), cosh(alpha) = h / a (W. R. Smythe, Static and Dynamic Electricity,
/// 1950, by the infinite set of images; from memory); the derivative term by term, with
/// d(alpha)/dh = 1 / (a sinh(alpha)). The sums run until a term is below 1e-18 of the sum.
fn sphere_over_plane(a: f64, h: f64) -> (f64, f64) {
    let al = (h / a).acosh();
    let (mut s0, mut s1) = (0.0, 0.0);
    for n in 1..100_000 {
        let x = n as f64 * al;
        let t = 1.0 / x.sinh();
        s0 += t;
        s1 += n as f64 * x.cosh() * t * t;
        if t < 1e-18 * s0 {
            break;
        }
    }
    let k = 4.0 * PI * EPS0 * a;
    (
        k * al.sinh() * s0,
        k * (al.cosh() * s0 - al.sinh() * s1) / (a * al.sinh()),
    )
}

/// A sphere of radius 1 mm at 100 V on the axis, its centre 2.0291 mm above a grounded plane
/// (the bottom side), in a box 16 mm high and wide open on its other sides; `n` cells across
/// the radius, uniform.
fn sphere_over_ground(n: f64) -> String {
    format!(
        r#"
unit = "mm"
mode = "axisymmetric"
[grid]
x = [0.0, 16.0]
y = [0.0, 16.0]
cell = {}
lattice = "uniform"
[sides]
bottom = 0.0
right = "open"
top = "open"
[[conductor]]
name = "ball"
potential = 100.0
circle = {{ center = [0.0, 2.0291], radius = 1.0 }}
"#,
        1.0 / n
    )
}

#[test]
fn sphere_over_a_plane_force_and_its_estimate_match_the_image_series() {
    let (a, h, v) = (1e-3, 2.0291e-3, 100.0);
    // The series itself: far from the plane the isolated sphere's 4 pi eps0 a, with the first
    // image's correction 1 + a / (2 h) (common practice); the derivative against a central
    // difference of the series.
    let far = sphere_over_plane(a, 1e3 * a).0 / (4.0 * PI * EPS0 * a);
    assert!((far - (1.0 + 5e-4)).abs() < 1e-6, "{far}");
    let (c, dc) = sphere_over_plane(a, h);
    let step = 1e-7;
    let fd = (sphere_over_plane(a, h + step).0 - sphere_over_plane(a, h - step).0) / (2.0 * step);
    assert!(rel_err(fd, dc) < 1e-6, "{dc:e} against {fd:e}");
    // At fixed potential the force is (V^2 / 2) dC/dh along z: towards the plane (common
    // practice, virtual work).
    let want = 0.5 * v * v * dc;
    let mut errs = Vec::new();
    for n in [10.0, 20.0, 40.0] {
        let s = with_estimate(&sphere_over_ground(n));
        let ball = &s.conductors[0];
        let err = (ball.force[1] - want).abs();
        let est = ball.force_error.expect("an estimate")[1];
        eprintln!(
            "sphere over a plane, {n} cells: force {:e} N, want {want:e}, error {:.3e}, \
             estimate {:.3e} (ratio {:.2}); capacitance error {:.3e}",
            ball.force[1],
            err / want.abs(),
            est / want.abs(),
            est / err,
            rel_err(s.capacitance.matrix[0][0], c)
        );
        // The sphere stands in one material clear of the plane: the band force. Measured:
        // errors 1.07e-3 / 4.8e-4 / 1.15e-4 of the force (3.1e-5 at 80 cells), estimate over
        // error 2.9 / 0.52 / 2.6 (0.91 at 80). The force at 10 cells is closer to the series
        // than the second-order trend of the finer grids (0.19 (h / a)^2) says, so the
        // two-grid estimate at 20 cells is low by half; from 20 cells on the error falls at
        // order 2.1 and 1.9. The box's open sides at 16 mm move the force by 1.4e-6 of it
        // against 32 mm (at 10 cells).
        assert_eq!(ball.force_method, ForceMethod::Volume);
        assert!(
            est <= 3.0 * err && est >= err / 3.0,
            "{n} cells: estimate {est:e}, error {err:e}"
        );
        // The radial force vanishes on the axis of symmetry.
        assert_eq!(ball.force[0], 0.0, "{ball:?}");
        errs.push(err);
    }
    let order = (errs[1] / errs[2]).log2();
    eprintln!("sphere over a plane: force order {order:.2} from 20 to 40 cells");
    assert!(order >= 1.8, "{errs:?}");
    assert!(errs[2] < 2e-4 * want.abs(), "{errs:?}");
}

#[test]
fn eccentric_rod_force_at_accuracy_1e_3_is_within_its_target_of_the_closed_form() {
    // The same closed form as above (Smythe 1950, sec. 4.13, by virtual work; from memory).
    // The accuracy loop holds the rod's force to the target like every capacitance entry.
    let (a, b, e, v) = (1e-3, 2.5e-3, E * 1e-3, 100.0);
    let u = (a * a + b * b - e * e) / (2.0 * a * b);
    let want = v * v * PI * EPS0 * e / (a * b * u.acosh().powi(2) * (u * u - 1.0).sqrt());
    let target = 1e-3;
    // The subject is the force: the hot spots' fields are left out of the target, and the
    // memory is bounded so that a loop that failed to hold the force stops instead of
    // refining on.
    let mut p = accuracy::Params::default()
        .with_target(target)
        .with_max_memory_mib(600.0);
    p.quantities.hotspots = false;
    let (s, info) = accuracy::solve(&design(&eccentric(5.0)), &StudyParams::default(), &p)
        .expect("the loop runs");
    let force = info
        .estimates
        .iter()
        .find(|q| {
            q.quantity
                == Quantity::Force {
                    conductor: "rod".into(),
                }
        })
        .expect("the rod's force is estimated");
    let err = rel_err(s.conductors[0].force[0], want);
    eprintln!(
        "eccentric rod at accuracy {target:e}: {} rounds, force error {err:.2e}, estimated {:.2e}",
        info.rounds.len(),
        force.relative()
    );
    assert!(info.met(), "{:?}", info.shortest());
    assert!(force.held && force.relative() <= target, "{force:?}");
    assert!(err <= target, "force off by {err:e}");
}

#[test]
fn parallel_plate_force_is_exact_and_its_estimate_says_so() {
    // Force per length between parallel plates, F' = eps0 w V^2 / (2 d^2) (D. J. Griffiths,
    // Introduction to Electrodynamics, 4th ed., 2017, sec. 2.5.3, electrostatic pressure
    // sigma^2 / (2 eps0)). The plates span the width between symmetry sides: the field is
    // uniform, which the five-point scheme reproduces exactly on any lattice (with the cut
    // cells where the faces lie off the node rows), so the force is exact to rounding and its
    // estimate (the difference from the coarse lattice's, which is exact too) must be as
    // small.
    let (w, v, gap) = (4e-3, 100.0, (2.0291 - 1.0137) * 1e-3);
    let want = EPS0 * w * v * v / (2.0 * gap * gap);
    // "Exact" is sharp only with a solver tolerance well below the checks. Measured on the
    // graded lattice at cell 0.2: at the tests' usual 1e-10 the force was 1.6e-9 off (its
    // charge 7.8e-10), the solver's stop, which bounds each charge's error by 1000 times the
    // tolerance of the largest; at 1e-12 the sideways force was 1.2e-12; at 1e-13 the errors
    // are at most 1.5e-11 (estimates 1.5e-11) and the sideways force 1.9e-14 over the three
    // cells; the uniform lattice's are at most 9e-13 (and met these checks at 1e-10 too).
    let mut p = params(Method::default()).with_solver(Params::default().with_tol(1e-13));
    p.error_estimate = true;
    for cell in [0.2, 0.1, 0.05] {
        let plates = designs::plates_at_100_v(1.0137, 2.0291, cell);
        // On a uniform lattice (named so) the faces lie off the node rows, in cut cells; on
        // the default graded lattice they lie on node lines.
        for text in [uniform(&plates), plates] {
            let d = design(&text);
            let s = study::run(&d, &p).expect("study runs");
            assert!(s.solve.converged);
            for (c, sign) in s.conductors.iter().zip([1.0, -1.0]) {
                let err = (sign * c.force[1] - want).abs();
                let est = c
                    .force_error
                    .unwrap_or_else(|| panic!("no estimate: {c:?}"));
                eprintln!(
                    "plates, {:?} lattice, cell {cell} mm: {} error {:.1e}, estimate {:.1e}, \
                     sideways {:.1e} (relative)",
                    d.lattice,
                    c.name,
                    err / want,
                    est[1] / want,
                    c.force[0] / want
                );
                assert!(err < 1e-9 * want && est[1] < 1e-9 * want, "{c:?}");
                assert!(c.force[0].abs() < 1e-12 * want, "{c:?}");
            }
        }
    }
}

const MEMS: &str = include_str!("../../geometries/mems_plate.toml");

fn mems(cell: f64) -> Solution {
    // The subject is a layer thinner than the cell, which only a uniform lattice leaves (the
    // default graded lattice puts at least four cells across every layer): asked for by name.
    assert!(MEMS.contains("\ncell = 2\n"), "the demo's cell moved");
    let text = uniform(&MEMS.replace("\ncell = 2\n", &format!("\ncell = {cell}\n")));
    let src = read_design(&text, "mems.toml", &[]).expect("demo design reads");
    let mut p = params(Method::default());
    p.error_estimate = true;
    let s = study::run(&src.design, &p).expect("study runs");
    assert!(s.solve.converged);
    s
}

#[test]
fn a_force_across_a_layer_thinner_than_a_cell_is_flagged_unresolved() {
    // The demo MEMS actuator: the drive electrode lies on a nitride layer 0.5 um thick over the
    // grounded substrate. At a 0.5 um cell the layer is one cell thick and holds no free node:
    // the capacitance still comes out within 0.2 % of the 0.125 um solve, but the force on the
    // drive (pulled down hard by the nitride's field, and up by the plate) reads +4.5e-3 N/m
    // against -1.53 N/m, and its two-grid estimate (1.1e-3 N/m) says nothing of it. The force
    // path sees 2.5 % of the drive's field there; it is flagged.
    let coarse = mems(0.5);
    let fine = mems(0.125);
    let c = |s: &Solution| s.capacitance.matrix[0][1];
    let dc = rel_err(c(&coarse), c(&fine));
    let (fc, ff) = (coarse.conductors[0].force[1], fine.conductors[0].force[1]);
    eprintln!(
        "mems: cell 0.5 um: C_drive,plate off by {dc:.2e}, drive force {fc:e} N/m vs {ff:e} at \
         0.125 um; warnings {:?}",
        coarse.warnings
    );
    assert!(dc < 3e-3, "capacitance {dc:e}");
    assert!(
        fc * ff < 0.0,
        "the coarse drive force has the fine one's sign"
    );
    let unresolved = |s: &Solution| -> Vec<(String, f64)> {
        s.warnings
            .iter()
            .filter_map(|w| match w {
                Warning::ForceUnresolved { conductor, seen } => Some((conductor.clone(), *seen)),
                _ => None,
            })
            .collect()
    };
    let flagged = unresolved(&coarse);
    assert_eq!(flagged.len(), 1, "{:?}", coarse.warnings);
    assert_eq!(flagged[0].0, "drive");
    assert!(flagged[0].1 < 0.1, "{flagged:?}");
    assert!(coarse
        .warnings
        .iter()
        .any(|w| w.code() == "force-unresolved"));
    // At two cells across the layer (the demo's own cell) the force is right and nothing is
    // flagged; the drive force gets no estimate, the coarse lattice's path being unresolved.
    let demo = mems(0.25);
    let fd = demo.conductors[0].force[1];
    eprintln!(
        "mems: cell 0.25 um: drive force {fd:e} N/m, warnings {:?}",
        demo.warnings
    );
    assert!(rel_err(fd, ff) < 2e-3, "{fd:e} vs {ff:e}");
    assert!(unresolved(&demo).is_empty() && unresolved(&fine).is_empty());
    assert_eq!(demo.conductors[0].force_error, None);
    assert!(demo.conductors[1].force_error.is_some());
}

#[test]
fn a_force_through_a_junction_is_not_estimated_optimistically() {
    // The demo MEMS actuator on its own graded lattice (member 2 of its family): the drive
    // electrode lies on the nitride, so its force is integrated on a path that passes the
    // junctions where its edges meet the nitride, (0, 0.5) um on the mirror plane and
    // (80, 0.5) um. The potential goes as r^lambda there (lambda = 0.5375, nitride 7.5 below,
    // air beside: `study::junction_exponent`, separation of variables in the two wedges after
    // J. Meixner's edge conditions, common practice), the stress along the path as r^(2 lambda - 2), and the path's force misses
    // about h^q of it, q = 2 lambda - 1 = 0.075, h the cells beside the junction: it
    // converges so slowly that its error is about 1 / (s^q - 1) times the last difference,
    // s the junction cells' shrink between the two lattices (18.7 for s = 2).
    //
    // Two checks. (1) A lower bound of the true error that holds whatever the model: the
    // forces of members 2, 3 and 4 move monotonically (asserted), so member 4 lies between
    // the demo's force and the limit and the estimate must reach its distance. (2) The
    // estimate against the limit extrapolated from the two finest members (3 and 4), with
    // the same h^q law and the shrink read from their lattices: the junction's share of the
    // difference dominates more the finer the pair, so this limit is the better one, and
    // the estimate (from members 1 and 2) must lie within a factor of 3 of its distance.
    //
    // Why not "within 3x of the distance to member 3", as this test asked before: that
    // premise (member 3 much nearer the limit than member 2) held only while member 3 shrank
    // the junction's cells 16x (a steep grading without a floor). With q = 0.075 an honest
    // estimate is ~19x the distance between two members that halve the junction's cells, so
    // no such bound can hold. Measured (multigrid-CG to 1e-11, nodes / junction cell at
    // (80, 0.5) um / force):
    // - grading 2/3, 1/16, no floor: 156 821 / 2.05e-9 m / -1.534032 N/m, 625 641 /
    //   4.20e-10 / -1.536288, 2 499 281 / 2.10e-10 / -1.537841; estimate 2.03e-2 N/m (the
    //   shrink read 3.02, at the mirror plane's junction), bound 3.8e-3, extrapolated
    //   distance 3.29e-2 (ratio 0.62);
    // - grading 1/4, 1/2, floor 1e-3: 157 341 / 4.69e-10 / -1.538782, 627 705 / 2.34e-10 /
    //   -1.540284, 2 507 505 / 1.17e-10 / -1.541364; estimate 4.40e-2 (shrink 2.35: the
    //   cells reach the floor between members 1 and 2), bound 2.6e-3, extrapolated distance
    //   2.28e-2 (ratio 1.93). Least-squares fits of limit + A h^q + B H (or H^2), H the
    //   regular cell, over members 0-4 put that distance at 1.2e-2 to 2.9e-2: the limit
    //   itself is known to a factor of about 2, which the factor 3 covers.
    let d = read_design(MEMS, "mems.toml", &[])
        .expect("demo design reads")
        .design;
    let demo = with_estimate(MEMS);
    let own = accuracy::Params::default();
    assert_eq!(
        demo.grid.len(),
        accuracy::lattice(&d, &own, fieldgrid_solver::grading::BISECTIONS)
            .expect("graded lattice fits")
            .len(),
        "the demo solves on its own graded lattice"
    );
    let drive = &demo.conductors[0];
    assert!(matches!(drive.force_method, ForceMethod::Path(_)));
    let est = drive.force_error.expect("an estimate")[1];
    // The smallest cell beside a junction: the larger of the two axes' smallest cells next
    // to the node line through it.
    let beside = |g: &fieldgrid_solver::grid::Grid, p: [f64; 2]| {
        let axis = |l: &[f64], t: f64| {
            let i = (0..l.len())
                .min_by(|&a, &b| (l[a] - t).abs().total_cmp(&(l[b] - t).abs()))
                .expect("lines");
            let below = (i > 0).then(|| l[i] - l[i - 1]);
            let above = (i + 1 < l.len()).then(|| l[i + 1] - l[i]);
            below.into_iter().chain(above).fold(f64::INFINITY, f64::min)
        };
        axis(g.xs(), p[0]).max(axis(g.ys(), p[1]))
    };
    let junctions = [[0.0, 0.5e-6], [80e-6, 0.5e-6]];
    let mut members = Vec::new();
    for k in [3, 4] {
        let grid = accuracy::lattice(&d, &own, k).expect("graded lattice fits");
        let study = params(Method::default());
        let plan = fieldgrid_solver::plan::on_grid(grid, study.method, false);
        let s = study::run_planned(&d, &plan, &study).expect("study runs");
        assert!(s.solve.converged);
        eprintln!(
            "mems drive, member {k}: {:e} N/m ({} nodes)",
            s.conductors[0].force[1],
            s.grid.len()
        );
        members.push((s.conductors[0].force[1], s.grid));
    }
    let (f2, (f3, g3), (f4, g4)) = (drive.force[1], &members[0], &members[1]);
    assert!(
        (f2 - f3) * (f3 - f4) > 0.0,
        "members 2-4 move monotonically: {f2:e}, {f3:e}, {f4:e}"
    );
    let below = (f2 - f4).abs();
    assert!(
        est >= below,
        "estimate {est:e} below the known error {below:e}"
    );
    let shrink = junctions
        .iter()
        .map(|&p| beside(g3, p) / beside(g4, p))
        .fold(f64::INFINITY, f64::min);
    let q = 2.0 * study::junction_exponent(7.5, 1.0) - 1.0;
    let limit = f4 + (f4 - f3) / (shrink.powf(q) - 1.0);
    let far = (f2 - limit).abs();
    eprintln!(
        "mems drive force {f2:e} +/- {est:e} N/m; member 4 {below:e} away, the limit from \
         members 3-4 (shrink {shrink:.3}) {limit:e}, {far:e} away (ratio {:.2})",
        est / far
    );
    assert!(
        est <= 3.0 * far && est >= far / 3.0,
        "estimate {est:e} vs {far:e} from the extrapolated limit"
    );
}
