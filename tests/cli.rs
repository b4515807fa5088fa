//! End-to-end tests of the `fieldgrid` command: exit codes, files written, nothing partial.

use std::path::{Path, PathBuf};
use std::process::ExitCode;

fn run(args: &[&str]) -> ExitCode {
    let mut full = vec!["fieldgrid"];
    full.extend_from_slice(args);
    fieldgrid_cli::main_with_args(full)
}

fn code(c: ExitCode) -> String {
    format!("{c:?}")
}

fn expect(c: ExitCode, want: u8) {
    assert_eq!(code(c), code(ExitCode::from(want)));
}

/// A fresh, empty scratch directory unique to the test.
fn scratch(name: &str) -> PathBuf {
    let d = std::env::temp_dir().join(format!("fieldgrid-cli-{}-{name}", std::process::id()));
    let _ = std::fs::remove_dir_all(&d);
    std::fs::create_dir_all(&d).unwrap();
    d
}

fn write(dir: &Path, name: &str, text: &str) -> String {
    let p = dir.join(name);
    std::fs::write(&p, text).unwrap();
    p.display().to_string()
}

const PLATES: &str = r#"
unit = "mm"
[grid]
x = [0.0, 4.0]
y = [0.0, 2.0]
cell = 0.1
[sides]
left = "symmetry"
right = "symmetry"
top = 50.0
[[probe]]
name = "mid"
at = [2.0, 1.0]
"#;

#[test]
fn solve_writes_every_result_file() {
    let dir = scratch("solve");
    let design = write(&dir, "plates.toml", PLATES);
    let out = dir.join("out");
    expect(
        run(&[
            "solve",
            &design,
            "--out",
            out.to_str().unwrap(),
            "--quiet",
            "--field-table",
        ]),
        0,
    );
    for f in [
        "summary.json",
        "capacitance.csv",
        "hotspots.csv",
        "surface_charge.csv",
        "field.csv",
    ] {
        assert!(out.join(f).is_file(), "{f} missing");
    }
    let s: serde_json::Value =
        serde_json::from_slice(&std::fs::read(out.join("summary.json")).unwrap()).unwrap();
    assert_eq!(s["version"], 1);
    assert_eq!(s["mode"], "planar");
    assert_eq!(s["per_length"], true);
    assert_eq!(s["solver"]["converged"], true);
    // Uniform field 50 V over 2 mm (elementary: E = V/d).
    let e = s["probes"][0]["field"][1].as_f64().unwrap();
    assert!((e + 25_000.0).abs() < 1e-3 * 25_000.0, "Ey = {e}");
    // No temporary files are left behind.
    let leftovers: Vec<_> = std::fs::read_dir(&out)
        .unwrap()
        .filter_map(|e| e.ok())
        .filter(|e| e.file_name().to_string_lossy().starts_with('.'))
        .collect();
    assert!(leftovers.is_empty());
}

#[test]
fn bad_design_exits_2_and_leaves_no_output() {
    let dir = scratch("bad");
    let design = write(
        &dir,
        "bad.toml",
        "[grid]\nx = [0.0, 1.0]\ny = [0.0, 1.0]\ncell = -1.0\n",
    );
    let out = dir.join("out");
    expect(
        run(&["solve", &design, "--out", out.to_str().unwrap(), "--quiet"]),
        2,
    );
    assert!(!out.exists(), "a bad design must not create --out");
}

#[test]
fn out_that_is_a_file_is_refused_before_solving() {
    let dir = scratch("outfile");
    let design = write(&dir, "plates.toml", PLATES);
    let out = write(&dir, "not_a_dir", "x");
    expect(run(&["solve", &design, "--out", &out, "--quiet"]), 2);
    assert_eq!(std::fs::read_to_string(&out).unwrap(), "x");
}

#[test]
fn missing_design_file_and_bad_usage_exit_2() {
    let dir = scratch("missing");
    let out = dir.join("out");
    expect(
        run(&[
            "solve",
            dir.join("nope.toml").to_str().unwrap(),
            "--out",
            out.to_str().unwrap(),
        ]),
        2,
    );
    expect(run(&["solve"]), 2);
    expect(run(&["frobnicate"]), 2);
    expect(run(&["solve", "x.toml", "--out", "o", "--tol", "-1"]), 2);
}

#[test]
fn non_convergence_exits_3_with_results_written_and_flagged() {
    let dir = scratch("noconv");
    let design = write(&dir, "plates.toml", PLATES);
    let out = dir.join("out");
    let args = [
        "solve",
        &design,
        "--out",
        out.to_str().unwrap(),
        "--quiet",
        "--solver",
        "sor",
        "--max-iterations",
        "2",
    ];
    expect(run(&args), 3);
    let s: serde_json::Value =
        serde_json::from_slice(&std::fs::read(out.join("summary.json")).unwrap()).unwrap();
    assert_eq!(s["solver"]["converged"], false);
    assert!(s["warnings"]
        .as_array()
        .unwrap()
        .iter()
        .any(|w| w.as_str().unwrap().contains("did not converge")));
}

#[test]
fn check_reports_grid_without_solving() {
    let dir = scratch("check");
    let design = write(&dir, "plates.toml", PLATES);
    let out = dir.join("out");
    expect(
        run(&["check", &design, "--out", out.to_str().unwrap(), "--quiet"]),
        0,
    );
    let s: serde_json::Value =
        serde_json::from_slice(&std::fs::read(out.join("check.json")).unwrap()).unwrap();
    assert_eq!(s["grid"]["nx"], 41);
    assert_eq!(s["grid"]["ny"], 21);
    assert!(!out.join("summary.json").exists());
}

#[test]
fn memory_guard_refuses_oversized_grids_with_exit_2() {
    let dir = scratch("memory");
    let design = write(
        &dir,
        "big.toml",
        "[grid]\nx = [0.0, 1.0]\ny = [0.0, 1.0]\ncell = 1e-4\n",
    );
    let out = dir.join("out");
    expect(
        run(&[
            "solve",
            &design,
            "--out",
            out.to_str().unwrap(),
            "--quiet",
            "--max-memory",
            "100",
        ]),
        2,
    );
    assert!(!out.exists());
}
