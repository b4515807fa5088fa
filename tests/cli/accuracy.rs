//! `--accuracy REL` and `[grid] accuracy` end to end: the report and summary.json's
//! `accuracy` object, the command line winning over the file, exit code 3 with the results
//! written and flagged when the memory limit stops the refinement, and the target on
//! `impedance`, `compare` and `sweep`.

use fieldgrid_tests::cli::{expect, run, s, scratch, summary, write};

/// The prefix of this file's scratch directories.
const SCRATCH: &str = "fieldgrid-accuracy";

/// A 2 mm x 1 mm bar at 1 V beside a grounded 1 mm square in a 10 mm grounded box, with
/// `extra` lines in [grid].
fn bars(extra: &str) -> String {
    format!(
        r#"unit = "mm"
[parameters]
gap = 1.0
[grid]
x = [0.0, 10.0]
y = [0.0, 10.0]
cell = 1.0
{extra}
[[conductor]]
name = "a"
potential = 1.0
rect = {{ x = [3.0, 5.0], y = [4.0, 5.0] }}
[[conductor]]
name = "b"
potential = 0.0
rect = {{ x = ["5 + gap", "6 + gap"], y = [4.0, 5.0] }}
"#
    )
}

fn acc(v: &serde_json::Value) -> &serde_json::Value {
    &v["accuracy"]
}

#[test]
fn accuracy_in_the_grid_table_is_met_and_reported_and_the_command_line_wins() {
    let dir = scratch(SCRATCH, "met");
    let file = write(&dir, "bars.toml", &bars("accuracy = 1e-2"));
    let out = dir.join("file");
    expect(run(&["solve", &file, "--out", s(&out), "--quiet"]), 0);
    let v = summary(&out);
    let a = acc(&v);
    assert_eq!(a["target"], 1e-2);
    assert_eq!(a["met"], true);
    assert_eq!(a["stop"], "met");
    assert_eq!(a["grid"]["nx"], v["grid"]["nx"]);
    assert!(a["rounds"].as_u64().unwrap() >= 1);
    let entries: Vec<&serde_json::Value> = a["quantities"]
        .as_array()
        .unwrap()
        .iter()
        .filter(|q| q["quantity"].as_str().unwrap().starts_with("C["))
        .collect();
    assert_eq!(entries.len(), 4);
    for q in entries {
        assert!(q["relative"].as_f64().unwrap() <= 1e-2, "{q}");
        assert_eq!(q["held"], true);
    }
    // --accuracy wins over the file and asks for more.
    let out2 = dir.join("cli");
    expect(
        run(&[
            "solve",
            &file,
            "--accuracy",
            "1e-3",
            "--out",
            s(&out2),
            "--quiet",
        ]),
        0,
    );
    let v2 = summary(&out2);
    assert_eq!(acc(&v2)["target"], 1e-3);
    assert!(v2["grid"]["nx"].as_u64() >= v["grid"]["nx"].as_u64());
}

#[test]
fn the_memory_limit_stops_the_refinement_with_exit_3_and_the_short_quantity_named() {
    let dir = scratch(SCRATCH, "memory");
    let file = write(&dir, "bars.toml", &bars(""));
    let out = dir.join("out");
    // The first round fits in 40 MiB; the next lattice does not.
    expect(
        run(&[
            "solve",
            &file,
            "--accuracy",
            "1e-7",
            "--max-memory",
            "40",
            "--out",
            s(&out),
            "--quiet",
        ]),
        3,
    );
    let v = summary(&out);
    let a = acc(&v);
    assert_eq!(a["met"], false);
    assert_eq!(a["stop"], "memory-limit");
    assert_eq!(a["memory"]["limit_mib"].as_f64().unwrap().round(), 40.0);
    assert!(a["memory"]["needed_mib"].as_f64().unwrap() > 40.0);
    assert!(!a["short"]["quantity"].as_str().unwrap().is_empty());
    assert!(a["short"]["times_target"].as_f64().unwrap() > 1.0);
    assert!(fieldgrid_tests::cli::has_warning_code(
        &v,
        "accuracy-not-met"
    ));
    for f in [
        "capacitance.csv",
        "potential.png",
        "field.png",
        "hotspots.csv",
    ] {
        assert!(out.join(f).is_file(), "{f} missing");
    }
}

#[test]
fn an_accuracy_outside_zero_to_one_is_bad_input() {
    let dir = scratch(SCRATCH, "bad");
    let file = write(&dir, "bars.toml", &bars(""));
    for rel in ["0", "1", "-1e-3", "NaN"] {
        let opt = format!("--accuracy={rel}");
        expect(
            run(&["solve", &file, &opt, "--out", s(&dir.join("o")), "--quiet"]),
            2,
        );
    }
    let bad = write(&dir, "bad.toml", &bars("accuracy = 2.0"));
    expect(
        run(&["solve", &bad, "--out", s(&dir.join("o")), "--quiet"]),
        2,
    );
    expect(
        run(&[
            "solve",
            &file,
            "--accuracy",
            "1e-2",
            "--no-error-estimate",
            "--out",
            s(&dir.join("o")),
            "--quiet",
        ]),
        2,
    );
}

#[test]
fn compare_and_sweep_take_the_accuracy() {
    let dir = scratch(SCRATCH, "compare");
    let a = write(&dir, "a.toml", &bars(""));
    let b = write(&dir, "b.toml", &bars("").replace("gap = 1.0", "gap = 1.5"));
    let out = dir.join("cmp");
    expect(
        run(&[
            "compare",
            &a,
            &b,
            "--accuracy",
            "1e-2",
            "--out",
            s(&out),
            "--quiet",
        ]),
        1,
    );
    let sweep = dir.join("sweep");
    expect(
        run(&[
            "sweep",
            &a,
            "--vary",
            "gap=1:1.5:2",
            "--accuracy",
            "1e-2",
            "--point-summaries",
            "--out",
            s(&sweep),
            "--quiet",
        ]),
        0,
    );
    let p0 = fieldgrid_tests::cli::read_json(&sweep.join("point-0.summary.json"));
    assert_eq!(p0["accuracy"]["target"], 1e-2);
    assert_eq!(p0["accuracy"]["met"], true);
}

#[test]
fn the_loops_solver_tolerance_follows_the_target_and_tol_caps_it() {
    let dir = scratch(SCRATCH, "tol");
    let file = write(&dir, "bars.toml", &bars(""));
    let tols = |extra: &[&str], name: &str| -> Vec<f64> {
        let out = dir.join(name);
        let mut args = vec![
            "solve",
            &file,
            "--out",
            s(&out),
            "--quiet",
            "--accuracy",
            "1e-2",
        ];
        args.extend_from_slice(extra);
        expect(run(&args), 0);
        let v = summary(&out);
        acc(&v)["history"]
            .as_array()
            .unwrap()
            .iter()
            .map(|r| r["tol"].as_f64().unwrap())
            .collect()
    };
    // Without --tol: 1e-4 of the target, looser than a plain solve's 1e-8.
    let own = tols(&[], "own");
    assert!(!own.is_empty());
    assert!(own.iter().all(|&t| (t - 1e-6).abs() < 1e-18), "{own:?}");
    // A --tol tighter than that holds every round to it; a looser one does not loosen it.
    let tight = tols(&["--tol", "1e-9"], "tight");
    assert!(tight.iter().all(|&t| t <= 1e-9), "{tight:?}");
    let loose = tols(&["--tol", "1e-3"], "loose");
    assert!(
        loose.iter().all(|&t| t <= 1e-6 * (1.0 + 1e-12)),
        "{loose:?}"
    );
}
