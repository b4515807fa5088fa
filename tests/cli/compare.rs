//! `fieldgrid compare`: exit 0 when nothing moved beyond the tolerance, 1 when something did,
//! 2 on bad input; on design files and on summary.json files. The revisions are the demo
//! designs `geometries/touch_pad_rev_a.toml` and `touch_pad_rev_b.toml` (the neighbour pad
//! moved 0.3 mm closer).

use std::path::Path;

use fieldgrid_tests::cli::{expect_for, read_json, run, s, scratch};
use fieldgrid_tests::designs::demo_path;

/// The prefix of this file's scratch directories.
const SCRATCH: &str = "fieldgrid-compare";

/// compare.csv as (quantity -> row).
fn table(dir: &Path) -> Vec<csv::StringRecord> {
    let mut r = csv::Reader::from_path(dir.join("compare.csv")).unwrap();
    r.records().map(|x| x.unwrap()).collect()
}

fn row<'a>(t: &'a [csv::StringRecord], q: &str) -> &'a csv::StringRecord {
    t.iter()
        .find(|r| &r[0] == q)
        .unwrap_or_else(|| panic!("no row {q}"))
}

#[test]
fn compare_designs_and_summaries_of_two_revisions() {
    let dir = scratch(SCRATCH, "revisions");
    let (a, b) = (
        demo_path("touch_pad_rev_a.toml"),
        demo_path("touch_pad_rev_b.toml"),
    );
    let q = ["--quiet", "--no-error-estimate"];

    // Identical designs: nothing changes (results are a pure function of the input).
    let same = dir.join("same");
    let mut args = vec!["compare", &a, &a, "--out", s(&same)];
    args.extend(q);
    expect_for(run(&args), 0, "identical designs");
    assert!(table(&same).iter().all(|r| &r[6] == "false"));
    assert!(
        same.join("field_change.png").is_file(),
        "same grids: a change picture"
    );

    // The revision: the coupling moves by far more than 1 %.
    let rev = dir.join("rev");
    let mut args = vec!["compare", &a, &b, "--out", s(&rev)];
    args.extend(q);
    expect_for(run(&args), 1, "revision B moves the neighbour");
    let t = table(&rev);
    let coupling = row(&t, "C[pad,neighbour]");
    let rel: f64 = coupling[5].parse().unwrap();
    println!(
        "C[pad,neighbour]: base {} new {} relative change {rel}",
        &coupling[2], &coupling[3]
    );
    assert!(rel.abs() > 0.01 && &coupling[6] == "true");
    // Closer means stronger coupling: the mutual entry grows in magnitude (it is negative).
    let (cb, cn): (f64, f64) = (coupling[2].parse().unwrap(), coupling[3].parse().unwrap());
    assert!(cb < 0.0 && cn < cb);
    // A growing coupling reads as growth: change and relative change positive.
    let change: f64 = coupling[4].parse().unwrap();
    assert!(change > 0.0 && rel > 0.0, "growth read as {change} ({rel})");
    assert_eq!(&coupling[7], "magnitude");
    for qn in ["C[pad,pad]", "Q[pad]", "energy", "peak_field"] {
        row(&t, qn);
    }
    let json = read_json(&rev.join("compare.json"));
    assert!(json["changed"].as_u64().unwrap() >= 1);
    assert_eq!(json["rel_tol"].as_f64(), Some(0.01));

    // A looser tolerance that covers the change lets it pass.
    let rel_tol = format!(
        "{}",
        2.0 * t
            .iter()
            .filter_map(|r| r[5].parse::<f64>().ok())
            .fold(0.0, |m: f64, v| m.max(v.abs()))
    );
    let mut args = vec!["compare", &a, &b, "--rel-tol", &rel_tol];
    args.extend(q);
    expect_for(run(&args), 0, "tolerance above every change");

    // The same on summary.json files written by `solve`.
    let (sa, sb) = (dir.join("a"), dir.join("b"));
    expect_for(
        run(&[
            "solve",
            &a,
            "--out",
            s(&sa),
            "--quiet",
            "--no-error-estimate",
        ]),
        0,
        "solve A",
    );
    expect_for(
        run(&[
            "solve",
            &b,
            "--out",
            s(&sb),
            "--quiet",
            "--no-error-estimate",
        ]),
        0,
        "solve B",
    );
    let (ja, jb) = (sa.join("summary.json"), sb.join("summary.json"));
    expect_for(
        run(&["compare", s(&ja), s(&ja), "--quiet"]),
        0,
        "same summary",
    );
    expect_for(
        run(&["compare", s(&ja), s(&jb), "--quiet"]),
        1,
        "two revisions' summaries",
    );
    // A results directory stands for its summary.json, and a design for its solve.
    expect_for(
        run(&["compare", s(&sa), &a, "--quiet", "--no-error-estimate"]),
        0,
        "dir vs design",
    );
    let mixed = dir.join("mixed");
    expect_for(
        run(&[
            "compare",
            s(&ja),
            &b,
            "--out",
            s(&mixed),
            "--quiet",
            "--no-error-estimate",
        ]),
        1,
        "summary vs design",
    );
    assert!(
        !mixed.join("field_change.png").exists(),
        "no picture without two solutions"
    );
}

#[test]
fn compare_reports_quantities_on_one_side_only_as_changes() {
    let dir = scratch(SCRATCH, "one-sided");
    let base = serde_json::json!({
        "version": 1, "mode": "planar", "per_length": true,
        "grid": { "nx": 11, "ny": 11, "cell": 1e-4 },
        "solver": { "method": "jacobi-cg", "iterations": 10, "relative_residual": 1e-9,
                    "seconds": 0.1, "converged": true },
        "conductors": [ { "name": "pad", "potential": 1.0, "charge": 2e-11, "force": [0.0, 0.0] } ],
        "capacitance": { "unit": "F/m", "names": ["pad"], "matrix": [[2e-11]] },
        "energy": 1e-11,
        "peak_field": { "magnitude": 1e4, "x": 0.0, "y": 0.0, "material": "background", "singular": false },
        "hotspots": [], "probes": [], "warnings": []
    });
    let mut new = base.clone();
    new["conductors"][0]["name"] = "sense".into();
    new["capacitance"]["names"][0] = "sense".into();
    let (pb, pn) = (dir.join("base.json"), dir.join("new.json"));
    std::fs::write(&pb, serde_json::to_vec(&base).unwrap()).unwrap();
    std::fs::write(&pn, serde_json::to_vec(&new).unwrap()).unwrap();
    let out = dir.join("out");
    expect_for(
        run(&["compare", s(&pb), s(&pn), "--out", s(&out), "--quiet"]),
        1,
        "renamed conductor",
    );
    let t = table(&out);
    assert_eq!(&row(&t, "C[pad,pad]")[7], "only in BASE");
    assert_eq!(&row(&t, "C[sense,sense]")[7], "only in NEW");
    assert_eq!(&row(&t, "C[sense,sense]")[6], "true");
    assert_eq!(&row(&t, "energy")[6], "false");

    // A change just inside and just outside the default 1 %.
    let mut inside = base.clone();
    inside["energy"] = (1e-11 * 1.009).into();
    std::fs::write(&pn, serde_json::to_vec(&inside).unwrap()).unwrap();
    expect_for(
        run(&["compare", s(&pb), s(&pn), "--quiet"]),
        0,
        "0.9 % change",
    );
    let mut outside = base.clone();
    outside["energy"] = (1e-11 * 1.011).into();
    std::fs::write(&pn, serde_json::to_vec(&outside).unwrap()).unwrap();
    expect_for(
        run(&["compare", s(&pb), s(&pn), "--quiet"]),
        1,
        "1.1 % change",
    );
}

#[test]
fn compare_refuses_bad_input_with_exit_2() {
    let dir = scratch(SCRATCH, "bad");
    let junk = dir.join("junk.json");
    std::fs::write(&junk, "{ \"version\": 1 ").unwrap();
    let missing = dir.join("missing.toml");
    let good = dir.join("good.json");
    std::fs::write(&good, "{}").unwrap();
    expect_for(
        run(&["compare", s(&junk), s(&junk), "--quiet"]),
        2,
        "broken JSON",
    );
    expect_for(
        run(&["compare", s(&missing), s(&missing), "--quiet"]),
        2,
        "missing file",
    );
    expect_for(
        run(&["compare", s(&good), s(&good), "--quiet"]),
        2,
        "JSON that is not a summary",
    );
    expect_for(
        run(&["compare", s(&dir), s(&dir), "--quiet"]),
        2,
        "directory without summary",
    );
    expect_for(
        run(&["compare", s(&junk), s(&junk), "--rel-tol=-1", "--quiet"]),
        2,
        "negative tolerance",
    );
    expect_for(run(&["compare", s(&junk)]), 2, "one input only");
}

#[test]
fn a_floating_conductors_net_charge_is_never_flagged() {
    let dir = scratch(SCRATCH, "floating");
    let design = fieldgrid_tests::cli::write(
        &dir,
        "shield.toml",
        r#"
unit = "mm"
[grid]
x = [0.0, 6.0]
y = [0.0, 4.0]
cell = 0.1
[[conductor]]
name = "pad"
potential = 1.0
rect = { x = [1.0, 3.0], y = [1.0, 1.2] }
[[conductor]]
name = "shield"
floating = true
rect = { x = [1.0, 5.0], y = [2.0, 2.2] }
"#,
    );
    let out = dir.join("out");
    expect_for(
        run(&[
            "solve",
            &design,
            "--out",
            s(&out),
            "--quiet",
            "--no-error-estimate",
        ]),
        0,
        "solve",
    );
    // Two summaries that differ only in the floating shield's net charge, zero by definition
    // up to round-off: 1e-22 C/m in one, -3e-22 C/m in the other.
    let mut json = read_json(&out.join("summary.json"));
    let shield = json["conductors"]
        .as_array()
        .unwrap()
        .iter()
        .position(|c| c["name"] == "shield")
        .unwrap();
    let mut paths = Vec::new();
    for (name, q) in [("a.json", 1e-22), ("b.json", -3e-22)] {
        json["conductors"][shield]["charge"] = serde_json::json!(q);
        let path = dir.join(name);
        std::fs::write(&path, serde_json::to_vec(&json).unwrap()).unwrap();
        paths.push(path);
    }
    let cmp = dir.join("cmp");
    expect_for(
        run(&[
            "compare",
            s(&paths[0]),
            s(&paths[1]),
            "--out",
            s(&cmp),
            "--quiet",
        ]),
        0,
        "a floating charge of 1e-22 C/m",
    );
    let t = table(&cmp);
    let q = row(&t, "Q[shield]");
    assert_eq!(&q[6], "false");
    assert!(q[7].contains("zero by definition"), "{:?}", q);
}

#[test]
fn an_absolute_tolerance_per_unit_holds_back_small_changes() {
    let dir = scratch(SCRATCH, "abs");
    let (a, b) = (
        demo_path("touch_pad_rev_a.toml"),
        demo_path("touch_pad_rev_b.toml"),
    );
    let q = ["--quiet", "--no-error-estimate"];
    let out = dir.join("out");
    // Absolute tolerances above every change of their unit.
    let mut args = vec![
        "compare",
        &a,
        &b,
        "--out",
        s(&out),
        "--abs-tol",
        "F/m=1",
        "--abs-tol",
        "C/m=1",
        "--abs-tol",
        "N/m=1",
        "--abs-tol",
        "J/m=1",
        "--abs-tol",
        "V/m=1e9",
    ];
    args.extend(q);
    expect_for(run(&args), 0, "every change below its absolute tolerance");
    let json = read_json(&out.join("compare.json"));
    assert_eq!(json["abs_tol"]["F/m"].as_f64(), Some(1.0));
    for bad in ["F/m", "ohm=1", "F/m=-1"] {
        let mut args = vec!["compare", &a, &b, "--abs-tol", bad];
        args.extend(q);
        expect_for(run(&args), 2, bad);
    }
}

#[test]
fn compare_on_different_grids_maps_the_change_on_the_new_grid() {
    let dir = scratch(SCRATCH, "grids");
    let design = |cell: f64| {
        format!(
            "unit = \"mm\"\n[grid]\nx = [0.0, 6.0]\ny = [0.0, 4.0]\ncell = {cell}\n\
             [[conductor]]\nname = \"wire\"\npotential = 1.0\n\
             circle = {{ center = [3.0, 2.0], radius = 0.5 }}\n"
        )
    };
    let (a, b) = (
        fieldgrid_tests::cli::write(&dir, "coarse.toml", &design(0.1)),
        fieldgrid_tests::cli::write(&dir, "fine.toml", &design(0.08)),
    );
    let out = dir.join("out");
    let args = [
        "compare",
        &a,
        &b,
        "--out",
        s(&out),
        "--quiet",
        "--no-error-estimate",
    ];
    // Exit 0 or 1 (the discretisation moves some results): both sides were solved.
    let c = fieldgrid_tests::cli::code(run(&args));
    assert!(c.contains("(0)") || c.contains("(1)"), "{c}");
    assert!(
        out.join("field_change.png").is_file(),
        "a change picture on the new grid"
    );
    let json = read_json(&out.join("compare.json"));
    let remarks = json["remarks"].to_string();
    assert!(remarks.contains("grids differ"), "{remarks}");
}
