//! Non-convergence: every stop reason of the solvers (stagnation, divergence, non-finite
//! values, the iteration limit) is reported as such, never as convergence, and the command
//! exits 3 with its results written and flagged.

use fieldgrid_solver::solvers::{self, cg, sor, Method, Params, SolveError, StopReason};
use fieldgrid_solver::stencil::Stencil5;
use fieldgrid_tests::cli::{expect, has_warning_code, run, scratch, summary, write};

use super::{PLATES, SCRATCH};

/// A box whose every node is free with no fixed potential anywhere (a pure Neumann problem):
/// singular, and inconsistent for a right-hand side with a non-zero sum.
fn floating_box(n: usize) -> (Stencil5, Vec<f64>) {
    let len = n * n;
    let mut s = Stencil5 {
        nx: n,
        ny: n,
        diag: vec![0.0; len],
        east: vec![0.0; len],
        north: vec![0.0; len],
        unknown: vec![true; len],
        cross: Vec::new(),
    };
    for j in 0..n {
        for i in 0..n {
            let p = i + j * n;
            if i + 1 < n {
                s.east[p] = 1.0;
                s.diag[p] += 1.0;
                s.diag[p + 1] += 1.0;
            }
            if j + 1 < n {
                s.north[p] = 1.0;
                s.diag[p] += 1.0;
                s.diag[p + n] += 1.0;
            }
        }
    }
    let b = (0..len).map(|p| 1.0 + (p as f64 * 0.37).sin()).collect();
    (s, b)
}

fn grounded_box(n: usize) -> (Stencil5, Vec<f64>) {
    let s = Stencil5::dirichlet_box(n, n, |_, _| 1.0);
    let b = (0..s.len())
        .map(|p| {
            if s.unknown[p] {
                (p as f64 * 0.11).cos()
            } else {
                0.0
            }
        })
        .collect();
    (s, b)
}

fn reason_of(r: Result<solvers::Info, SolveError>) -> (StopReason, usize) {
    match r {
        Ok(i) => panic!("reported as converged: {i:?}"),
        Err(e) => (e.info().reason, e.info().iterations),
    }
}

#[test]
fn stagnation_stops_with_its_reason_and_the_last_iterate() {
    // A tolerance below what double precision can reach: every method stagnates at the
    // round-off floor.
    let (s, b) = grounded_box(33);
    for m in Method::ALL {
        let mut x = vec![0.0; s.len()];
        let p = Params::default().with_tol(1e-19);
        let (reason, _) = reason_of(solvers::solve(m, &s, &b, &mut x, &p));
        assert_eq!(reason, StopReason::Stagnated, "{m:?}");
        // The last iterate is kept: the solution as far as it could be taken.
        let mut r = vec![0.0; s.len()];
        let rel = s.residual(&b, &x, &mut r) / b.iter().map(|v| v * v).sum::<f64>().sqrt();
        assert!(rel < 1e-12, "{m:?}: last iterate's residual {rel:e}");
    }
    // SOR on a singular, inconsistent operator: the residual cannot fall below the part of
    // the right-hand side outside the operator's range.
    let (s, b) = floating_box(24);
    let mut x = vec![0.0; s.len()];
    let (reason, it) = reason_of(sor::solve(&s, &b, &mut x, &Params::default()));
    assert_eq!(reason, StopReason::Stagnated, "after {it} iterations");
    assert!(x.iter().all(|v| v.is_finite()) && x.iter().any(|&v| v != 0.0));
}

#[test]
fn divergence_stops_with_its_reason() {
    let (s, b) = grounded_box(33);
    let mut x = vec![0.0; s.len()];
    // Over-relaxation beyond 2 makes SOR's iteration matrix expand (its spectral radius is
    // at least |omega - 1|; D. M. Young, Iterative Solution of Large Linear Systems, 1971,
    // Kahan's theorem, quoted from memory).
    let p = Params::default().with_omega(2.5);
    let (reason, it) = reason_of(sor::solve(&s, &b, &mut x, &p));
    assert_eq!(reason, StopReason::Diverged, "after {it} iterations");
    assert!(it < 1000, "divergence is caught early: {it}");
    // CG on a singular, inconsistent operator: the search directions lose their meaning
    // and the residual grows without bound.
    let (s, b) = floating_box(24);
    let mut x = vec![0.0; s.len()];
    let (reason, it) = reason_of(cg::solve(&s, &b, &mut x, &Params::default()));
    assert_eq!(reason, StopReason::Diverged, "after {it} iterations");
}

/// Regression: SOR compared a NaN residual with the tolerance as "not above it" and so never
/// looked at it, running to the iteration limit and reporting that instead.
#[test]
fn sor_reports_a_nan_residual_as_non_finite_not_as_the_iteration_limit() {
    let (s, mut b) = grounded_box(33);
    b[s.len() / 2] = f64::NAN;
    let mut x = vec![0.0; s.len()];
    let (reason, it) = reason_of(sor::solve(&s, &b, &mut x, &Params::default()));
    assert_eq!(reason, StopReason::NonFinite);
    assert!(it <= 10, "stopped at the first check: {it}");
}

#[test]
fn non_finite_values_stop_with_their_reason() {
    let (s, b) = grounded_box(33);
    let centre = s.len() / 2;
    let mut nan_b = b.clone();
    nan_b[centre] = f64::NAN;
    let mut inf_op = s.clone();
    inf_op.diag[centre] = f64::INFINITY;
    inf_op.east[centre] = f64::INFINITY;
    for m in Method::ALL {
        for (what, op, rhs) in [
            ("NaN source", &s, &nan_b),
            ("infinite operator", &inf_op, &b),
        ] {
            let mut x = vec![0.0; s.len()];
            let (reason, _) = reason_of(solvers::solve(m, op, rhs, &mut x, &Params::default()));
            assert_eq!(reason, StopReason::NonFinite, "{m:?}, {what}");
        }
    }
}

#[test]
fn a_singular_operator_is_never_reported_as_converged() {
    // Multigrid's hierarchy on an operator without any fixed potential (the assembler
    // refuses such designs; the solver must still not claim success or panic).
    let (s, b) = floating_box(24);
    for m in Method::ALL {
        let mut x = vec![0.0; s.len()];
        let (reason, _) = reason_of(solvers::solve(m, &s, &b, &mut x, &Params::default()));
        assert_ne!(reason, StopReason::Converged, "{m:?}");
    }
}

#[test]
fn unreachable_tolerance_exits_3_with_stagnation_and_flagged_results() {
    let dir = scratch(SCRATCH, "stagnate");
    let design = write(&dir, "plates.toml", PLATES);
    for solver in ["multigrid", "cg"] {
        let out = dir.join(format!("out-{solver}"));
        let args = [
            "solve",
            &design,
            "--out",
            out.to_str().unwrap(),
            "--quiet",
            "--tol",
            "1e-19",
            "--solver",
            solver,
        ];
        expect(run(&args), 3);
        let s = summary(&out);
        assert_eq!(s["solver"]["converged"], false);
        let why = s["solver"]["failure"]
            .as_str()
            .unwrap_or_default()
            .to_string();
        assert!(why.contains("stagnated"), "{solver}: {why}");
        assert!(has_warning_code(&s, "not-converged"));
        // The last iterate's numbers are written, and they are finite.
        assert!(s["capacitance"]["matrix"][0][0].as_f64().unwrap() > 0.0);
    }
}

#[test]
fn iteration_limit_exits_3_in_a_sweep_with_the_point_flagged() {
    let dir = scratch(SCRATCH, "sweep-noconv");
    let text = PLATES.replacen("[grid]", "[parameters]\nv = 1.0\n[grid]", 1);
    let design = write(&dir, "plates.toml", &text);
    let out = dir.join("out");
    let args = [
        "sweep",
        &design,
        "--vary",
        "v=1:2:2",
        "--out",
        out.to_str().unwrap(),
        "--quiet",
        "--solver",
        "sor",
        "--max-iterations",
        "1",
    ];
    expect(run(&args), 3);
    let mut table = csv::Reader::from_path(out.join("sweep.csv")).unwrap();
    let at = table
        .headers()
        .unwrap()
        .iter()
        .position(|h| h == "converged")
        .unwrap();
    let flags: Vec<String> = table
        .records()
        .map(|r| r.unwrap()[at].to_string())
        .collect();
    assert_eq!(flags, ["false", "false"]);
}

#[test]
fn an_unconverged_run_reports_non_convergence_alone() {
    // Converged, the sensor pad warns about its couplings' estimated errors; stopped after
    // one iteration, those numbers support no diagnosis and only the failure is reported.
    // (Three iterations stopped it while its solves started from zero; started from the
    // coarser lattice's solves, three are enough.)
    let dir = scratch(SCRATCH, "alone");
    let design = fieldgrid_tests::designs::demo_path("sensor_pad.toml");
    let out = dir.join("out");
    let args = [
        "solve",
        &design,
        "--out",
        out.to_str().unwrap(),
        "--quiet",
        "--max-iterations",
        "1",
    ];
    expect(run(&args), 3);
    let s = summary(&out);
    let codes: Vec<&str> = s["warning_details"]
        .as_array()
        .unwrap()
        .iter()
        .map(|w| w["code"].as_str().unwrap())
        .collect();
    assert_eq!(codes, ["not-converged"]);
}
