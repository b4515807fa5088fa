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
