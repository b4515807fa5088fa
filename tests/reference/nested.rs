//! Nested iteration against cold starts: every demo design solved with each lattice's
//! solves started from the coarser lattice's (the default), from zero, and from zero with a
//! tolerance of 1e-12 (the discrete solution, to compare both with). A nested start must
//! lose nothing: each capacitance entry and charge within 1e-6 of the converged one, or 1 %
//! of its estimated error, or the cold start's own error, whichever is largest (common
//! practice: a solver error well below the reported error bar). On the demos the nested
//! starts' errors are at most 0.3 of that (touch pad revision A's smallest coupling, where
//! the cold start is 6e-5 off and the nested one 1.8e-5).

use fieldgrid_solver::study::{self, Solution, StudyParams};
use fieldgrid_tests::design;
use std::path::PathBuf;

fn demo(name: &str) -> String {
    let root = PathBuf::from(env!("CARGO_MANIFEST_DIR")).join("..");
    std::fs::read_to_string(root.join("geometries").join(name)).unwrap()
}

/// The largest error of `warm` against `tight` (the study converged far below the default
/// tolerance) as a share of what is allowed: 1e-6 of the value, 1 % of its estimated error,
/// or the error of the cold start `cold`, whichever is largest.
fn worst_share(name: &str, warm: &Solution, cold: &Solution, tight: &Solution) -> f64 {
    let (cw, cc, ct) = (&warm.capacitance, &cold.capacitance, &tight.capacitance);
    let errors = ct.error_estimate.as_ref().expect("error estimate");
    let mut worst = 0.0f64;
    for (i, row) in ct.matrix.iter().enumerate() {
        for (j, &t) in row.iter().enumerate() {
            let cold_error = (cc.matrix[i][j] - t).abs();
            let allowed = (1e-6 * t.abs()).max(0.01 * errors[i][j]).max(cold_error);
            let share = (cw.matrix[i][j] - t).abs() / allowed;
            assert!(
                share <= 1.0,
                "{name}: C[{i},{j}] {} against {t} converged (cold start {})",
                cw.matrix[i][j],
                cc.matrix[i][j]
            );
            worst = worst.max(share);
        }
    }
    for ((w, c), t) in warm
        .conductors
        .iter()
        .zip(&cold.conductors)
        .zip(&tight.conductors)
    {
        let cold_error = (c.charge - t.charge).abs();
        let allowed = (1e-6 * t.charge.abs())
            .max(0.01 * t.charge_error.unwrap_or(0.0))
            .max(cold_error);
        if allowed > 0.0 {
            let share = (w.charge - t.charge).abs() / allowed;
            assert!(share <= 1.0, "{name}: charge of {} {}", t.name, w.charge);
            worst = worst.max(share);
        }
    }
    worst
}

#[test]
fn coarse_started_solves_agree_with_cold_starts_on_every_demo() {
    let names = [
        "coplanar_fenced.toml",
        "coupled_stripline.toml",
        "hv_electrode.toml",
        "hv_tip.toml",
        "mems_plate.toml",
        "microstrip.toml",
        "round_touch_pad.toml",
        "round_touch_pad_bare.toml",
        "sensor_pad.toml",
        "touch_pad_rev_a.toml",
        "touch_pad_rev_b.toml",
    ];
    for name in names {
        let d = design(&demo(name));
        let warm = study::run(&d, &StudyParams::default()).expect("study runs");
        let cold =
            study::run(&d, &StudyParams::default().with_coarse_start(false)).expect("study runs");
        assert!(warm.solve.converged && cold.solve.converged, "{name}");
        let mut tight_params = StudyParams::default().with_coarse_start(false);
        tight_params.solver.tol = 1e-12;
        let tight = study::run(&d, &tight_params).expect("study runs");
        let share = worst_share(name, &warm, &cold, &tight);
        println!(
            "{name}: largest difference {share:.3} of the allowed; iterations {} against {}",
            warm.solve.total_iterations, cold.solve.total_iterations
        );
    }
}
