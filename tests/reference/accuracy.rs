//! The accuracy loop against independent finite-element values: the sensor pad's capacitance
//! matrix and the microstrip's Z0 and eps_eff of `tests/reference/fem_values.json`
//! (NGSolve 6.2.2608 with netgen 6.2.2608, order-10 elements on meshes graded
//! geometrically to the copper corners, converged to about 1e-9; the script is
//! `tests/reference/fem_reference.py`). The loop must bring every quantity it reports within
//! the target it was given, and say so.

use fieldgrid_solver::accuracy::{self, Info, Quantity};
use fieldgrid_solver::study::StudyParams;
use fieldgrid_tests::designs::demo_text;
use fieldgrid_tests::{design, rel_err};

fn fem() -> serde_json::Value {
    let path =
        std::path::Path::new(env!("CARGO_MANIFEST_DIR")).join("../tests/reference/fem_values.json");
    serde_json::from_str(&std::fs::read_to_string(path).unwrap()).unwrap()
}

/// The finite-element value of C[a,b] of the sensor pad (the matrix is stored once per
/// symmetric pair).
fn fem_entry(fem: &serde_json::Value, a: &str, b: &str) -> f64 {
    let v = &fem["sensor_pad"]["values"];
    v[format!("C[{a},{b}]")]
        .as_f64()
        .or_else(|| v[format!("C[{b},{a}]")].as_f64())
        .unwrap_or_else(|| panic!("no reference for C[{a},{b}]"))
}

fn print_rounds(what: &str, info: &Info) {
    for r in &info.rounds {
        println!(
            "{what}: {} bisections, {} x {} nodes, cells {:.3e}..{:.3e} m, tol {:.0e}, worst {:.3}",
            r.bisections, r.nx, r.ny, r.min_cell, r.max_cell, r.tol, r.worst
        );
    }
}

/// Every capacitance entry of the sensor pad solved to `target` lies within `target` of the
/// finite-element value; returns the worst true relative error.
fn sensor_pad_within(target: f64) -> f64 {
    let fem = fem();
    let d = design(&demo_text("sensor_pad.toml"));
    // As the command asks: capacitance entries and hot spots off sharp corners held, forces
    // estimated and reported only.
    let mut p = accuracy::Params::default().with_target(target);
    p.quantities.forces = false;
    let (sol, info) = accuracy::solve(&d, &StudyParams::default(), &p).unwrap();
    print_rounds(&format!("sensor pad {target:e}"), &info);
    assert!(info.met(), "{:?}", info.shortest());
    let c = &sol.capacitance;
    let mut worst: f64 = 0.0;
    for (i, a) in c.names.iter().enumerate() {
        for (j, b) in c.names.iter().enumerate() {
            let e = rel_err(c.matrix[i][j], fem_entry(&fem, a, b));
            let est = info
                .estimates
                .iter()
                .find(|e| {
                    e.quantity
                        == Quantity::Capacitance {
                            row: a.clone(),
                            column: b.clone(),
                        }
                })
                .unwrap();
            println!("C[{a},{b}] true {e:.2e} estimated {:.2e}", est.relative());
            assert!(e <= target, "C[{a},{b}] off by {e:e} at target {target:e}");
            worst = worst.max(e);
        }
    }
    worst
}

#[test]
fn sensor_pad_at_accuracy_1e_3_is_within_0_1_percent_of_the_fem_values() {
    sensor_pad_within(1e-3);
}

#[test]
fn sensor_pad_at_accuracy_1e_4_is_within_0_01_percent_of_the_fem_values() {
    sensor_pad_within(1e-4);
}

#[test]
fn microstrip_impedance_at_accuracy_1e_3_is_within_0_1_percent_of_the_fem_values() {
    // The command end to end: the open right and top sides' truncation is estimated from a
    // farther box and is part of the target (the finite-element reference puts the design's
    // own box 5e-5 off in Z0 and 1e-4 in eps_eff, fem_values.json "truncation").
    use fieldgrid_tests::cli::{expect, run, s, scratch, summary};
    let fem = fem();
    let out = scratch("fieldgrid-reference-accuracy", "microstrip");
    let design = fieldgrid_tests::designs::demo_path("microstrip.toml");
    expect(
        run(&[
            "impedance",
            &design,
            "--signal",
            "trace",
            "--accuracy",
            "1e-3",
            "--out",
            s(&out),
            "--quiet",
        ]),
        0,
    );
    let v = summary(&out);
    let a = &v["accuracy"];
    println!("{}", serde_json::to_string_pretty(a).unwrap());
    assert_eq!(a["met"], true);
    assert!(a["far_field"]["x"].is_array());
    for q in a["quantities"].as_array().unwrap() {
        assert!(q["truncation"].as_f64().unwrap() > 0.0, "{q}");
        assert!(q["relative"].as_f64().unwrap() <= 1e-3, "{q}");
    }
    let z0 = v["line"]["z0"].as_f64().unwrap();
    let eps = v["line"]["eps_eff"].as_f64().unwrap();
    let (z0_fem, eps_fem) = (
        fem["microstrip"]["values"]["z0"].as_f64().unwrap(),
        fem["microstrip"]["values"]["eps_eff"].as_f64().unwrap(),
    );
    println!(
        "Z0 {z0} ({:.2e}), eps_eff {eps} ({:.2e})",
        rel_err(z0, z0_fem),
        rel_err(eps, eps_fem)
    );
    assert!(rel_err(z0, z0_fem) <= 1e-3, "Z0 {z0} against {z0_fem}");
    assert!(
        rel_err(eps, eps_fem) <= 1e-3,
        "eps_eff {eps} against {eps_fem}"
    );
}

#[test]
fn sensor_pad_error_falls_at_least_as_one_over_the_node_count() {
    // Members 1, 2 and 3 of the graded family the accuracy loop refines (member 2 is the
    // design's own graded lattice at a 0.4 mm coarsest cell; each member halves the cells of
    // the one below along the grading's map, radically towards the copper corners), solved
    // to a tight tolerance: the worst entry's error against the finite-element values falls
    // as the square of the cell (at least 3.5 times per member), copper corners included,
    // while the nodes grow four times.
    let fem = fem();
    let text = demo_text("sensor_pad.toml");
    assert!(text.contains("\ncell = 0.4\n"), "the demo's cell moved");
    let d = design(&text);
    let p = accuracy::Params::default();
    let study = StudyParams::default()
        .with_error_estimate(false)
        .with_solver(fieldgrid_solver::solvers::Params::default().with_tol(1e-11));
    let mut points = Vec::new();
    for k in 1..=3 {
        let mut d = d.clone();
        d.lattice = fieldgrid_solver::design::Lattice::Graded;
        let grid = accuracy::lattice(&d, &p, k).unwrap();
        let nodes = grid.len() as f64;
        let plan = fieldgrid_solver::plan::on_grid(grid, study.method, false);
        let sol = fieldgrid_solver::study::run_planned(&d, &plan, &study).unwrap();
        let c = &sol.capacitance;
        let mut worst: f64 = 0.0;
        for (i, a) in c.names.iter().enumerate() {
            for (j, b) in c.names.iter().enumerate() {
                worst = worst.max(rel_err(c.matrix[i][j], fem_entry(&fem, a, b)));
            }
        }
        println!("member {k}: {nodes} nodes, worst entry {worst:.3e}");
        points.push((nodes.ln(), worst.ln()));
    }
    // Least-squares slope of ln(error) against ln(N).
    let n = points.len() as f64;
    let (mx, my) = (
        points.iter().map(|p| p.0).sum::<f64>() / n,
        points.iter().map(|p| p.1).sum::<f64>() / n,
    );
    let slope = points.iter().map(|p| (p.0 - mx) * (p.1 - my)).sum::<f64>()
        / points.iter().map(|p| (p.0 - mx).powi(2)).sum::<f64>();
    println!("slope {slope:.4}");
    for w in points.windows(2) {
        let fall = (w[0].1 - w[1].1).exp();
        assert!(
            fall >= 3.5,
            "the error fell only {fall:.2} times in one bisection"
        );
    }
    // Measured: 57 023, 226 941 and 905 465 nodes (3.98x, 3.99x), the worst entry 2.08e-3,
    // 5.22e-4, 1.31e-4 (3.99x, 3.99x): slope -1.0003. Where the copper's corner meets the
    // board (FR-4, 4.4) below and air beside it, the singularity exponent is about 0.56 (two
    // dielectric wedges, cos^2(lambda pi / 2) = eps_board / (2 (eps_air + eps_board)),
    // worked out by separation of variables); the junctions' grading exponent 1/4 lies
    // below it (solver/src/grading.rs's opener has the measured alternatives: the
    // exponent 2/3 of a corner in one medium gave -0.992 at 1.6 times the nodes for 1e-3:
    // 97 155, 387 045, 1 545 033 nodes, 1.95e-3, 4.95e-4, 1.25e-4). Re-measured with this
    // default after the multigrid's line relaxation: the same nodes and errors, -1.0003.
    assert!(slope <= -1.0, "error falls as N^{slope:.4}");
}
