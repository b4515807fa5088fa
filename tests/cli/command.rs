//! End-to-end tests of the `fieldgrid` command: exit codes, files written, nothing partial.

use fieldgrid_tests::cli::{expect, has_warning_code, read_json, run, scratch, summary, write};

/// The prefix of this file's scratch directories.
const SCRATCH: &str = "fieldgrid-cli";

/// The mirror box, grounded at the bottom, its top at 50 V, a probe in the middle: a
/// uniform field of 25 kV/m.
const PLATES: &str = fieldgrid_tests::mirror_box_4x2_mm!(
    r#"top = 50.0
[[probe]]
name = "mid"
at = [2.0, 1.0]
"#
);

#[test]
fn solve_writes_every_result_file() {
    let dir = scratch(SCRATCH, "solve");
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
    let s = summary(&out);
    assert_eq!(s["version"], 1);
    assert_eq!(s["mode"], "planar");
    assert_eq!(s["per_length"], true);
    assert_eq!(s["solver"]["converged"], true);
    // Uniform field 50 V over 2 mm (elementary: E = V/d).
    let e = s["probes"][0]["field"][1].as_f64().unwrap();
    assert!((e + 25_000.0).abs() < 1e-3 * 25_000.0, "Ey = {e}");
    // No temporary files are left behind: the only hidden file is the set's list of files.
    let leftovers: Vec<_> = std::fs::read_dir(&out)
        .unwrap()
        .filter_map(|e| e.ok())
        .filter(|e| e.file_name().to_string_lossy().starts_with('.'))
        .filter(|e| e.file_name() != fieldgrid_cli::outdir::swap::MANIFEST)
        .collect();
    assert!(leftovers.is_empty());
}

#[test]
fn bad_design_exits_2_and_leaves_no_output() {
    let dir = scratch(SCRATCH, "bad");
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
    let dir = scratch(SCRATCH, "outfile");
    let design = write(&dir, "plates.toml", PLATES);
    let out = write(&dir, "not_a_dir", "x");
    expect(run(&["solve", &design, "--out", &out, "--quiet"]), 2);
    assert_eq!(std::fs::read_to_string(&out).unwrap(), "x");
}

#[test]
fn missing_design_file_and_bad_usage_exit_2() {
    let dir = scratch(SCRATCH, "missing");
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
    let dir = scratch(SCRATCH, "noconv");
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
    let s = summary(&out);
    assert_eq!(s["solver"]["converged"], false);
    assert!(has_warning_code(&s, "not-converged"));
}

#[test]
fn check_reports_grid_without_solving() {
    let dir = scratch(SCRATCH, "check");
    // Asked for uniform: the report of equal cells (one cell size, 4 mm / 0.1 mm cells) is
    // the subject; graded grids' reports are checked by robustness::stretched_cells.
    let uniform = PLATES.replacen("[grid]\n", "[grid]\nlattice = \"uniform\"\n", 1);
    let design = write(&dir, "plates.toml", &uniform);
    let out = dir.join("out");
    expect(
        run(&["check", &design, "--out", out.to_str().unwrap(), "--quiet"]),
        0,
    );
    let s = read_json(&out.join("check.json"));
    assert_eq!(s["grid"]["nx"], 41);
    assert_eq!(s["grid"]["ny"], 21);
    assert!(!out.join("summary.json").exists());
    // The node lines and the cell range; the preview draws the lines when asked.
    let g = &s["grid"];
    assert_eq!(g["x_lines"].as_array().unwrap().len(), 41);
    assert_eq!(g["y_lines"].as_array().unwrap().len(), 21);
    assert_eq!(g["uniform"], true);
    assert_eq!(g["min_cell"], g["max_cell"]);
    let plain = std::fs::read(out.join("preview.png")).unwrap();
    expect(
        run(&[
            "check",
            &design,
            "--out",
            out.to_str().unwrap(),
            "--quiet",
            "--grid-lines",
        ]),
        0,
    );
    assert_ne!(std::fs::read(out.join("preview.png")).unwrap(), plain);
}

#[test]
fn memory_guard_refuses_oversized_grids_with_exit_2() {
    let dir = scratch(SCRATCH, "memory");
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

/// Parallel plates 4 mm wide whose gap is a parameter (mirror sides left and right).
const GAPPED: &str = r#"
unit = "mm"
[parameters]
gap = 2.0
[grid]
x = [0.0, 4.0]
y = [0.0, 4.0]
cell = 0.1
[sides]
left = "symmetry"
right = "symmetry"
top = "symmetry"
[[conductor]]
name = "plate"
potential = 1.0
rect = { x = [0.0, 4.0], y = ["gap", "gap + 0.5"] }
"#;

#[test]
fn set_replaces_a_parameter_for_one_run_and_the_summary_records_it() {
    let dir = scratch(SCRATCH, "set");
    let design = write(&dir, "gapped.toml", GAPPED);
    let (a, b) = (dir.join("a"), dir.join("b"));
    expect(
        run(&["solve", &design, "--out", a.to_str().unwrap(), "--quiet"]),
        0,
    );
    expect(
        run(&[
            "solve",
            &design,
            "--set",
            "gap=1",
            "--out",
            b.to_str().unwrap(),
            "--quiet",
        ]),
        0,
    );
    let (sa, sb) = (summary(&a), summary(&b));
    assert_eq!(
        sa["parameters"],
        serde_json::json!([{ "name": "gap", "value": 2.0 }])
    );
    assert_eq!(
        sb["parameters"],
        serde_json::json!([{ "name": "gap", "value": 1.0 }])
    );
    // Parallel plates: C = eps0 w / gap (the parallel-plate formula, common practice; the
    // field above the plate ends at a mirror side, so the plate's top face carries no
    // charge): halving the gap doubles C exactly.
    let c = |s: &serde_json::Value| s["capacitance"]["matrix"][0][0].as_f64().unwrap();
    let ratio = c(&sb) / c(&sa);
    assert!((ratio - 2.0).abs() < 1e-9, "C ratio {ratio}");
    // The file is untouched: the design hash is the same.
    assert_eq!(sa["design_hash"], sb["design_hash"]);
}

#[test]
fn set_with_an_unknown_parameter_or_a_bad_value_is_refused_before_writing() {
    let dir = scratch(SCRATCH, "set-bad");
    let design = write(&dir, "gapped.toml", GAPPED);
    for bad in ["gapp=1", "gap", "gap=abc", "gap=inf", "=1"] {
        let out = dir.join("out");
        expect(
            run(&[
                "solve",
                &design,
                "--set",
                bad,
                "--out",
                out.to_str().unwrap(),
            ]),
            2,
        );
        assert!(!out.exists(), "--set {bad} left {out:?}");
    }
}

#[test]
fn picture_width_sets_every_picture_and_out_of_range_widths_are_refused() {
    let dir = scratch(SCRATCH, "width");
    let design = write(&dir, "gapped.toml", GAPPED);
    let out = dir.join("out");
    expect(
        run(&[
            "solve",
            &design,
            "--picture-width",
            "640",
            "--out",
            out.to_str().unwrap(),
            "--quiet",
        ]),
        0,
    );
    for name in ["potential.png", "field.png"] {
        let img = image::open(out.join(name)).unwrap();
        assert!(
            img.width() <= 640 && img.width() >= 400,
            "{name}: {}",
            img.width()
        );
    }
    let check = dir.join("check");
    expect(
        run(&[
            "check",
            &design,
            "--picture-width",
            "500",
            "--out",
            check.to_str().unwrap(),
            "--quiet",
        ]),
        0,
    );
    let img = image::open(check.join("preview.png")).unwrap();
    assert!(img.width() <= 500, "{}", img.width());
    for w in ["399", "8001", "wide"] {
        let o = dir.join(format!("o{w}"));
        expect(
            run(&[
                "solve",
                &design,
                "--picture-width",
                w,
                "--out",
                o.to_str().unwrap(),
            ]),
            2,
        );
        assert!(!o.exists());
    }
}

#[test]
fn set_takes_an_arithmetic_expression_of_numbers() {
    let dir = scratch(SCRATCH, "set-expr");
    let design = write(&dir, "gapped.toml", GAPPED);
    let solve = |set: &str, name: &str| {
        let out = dir.join(name);
        let args = [
            "solve",
            &design,
            "--set",
            set,
            "--out",
            out.to_str().unwrap(),
        ];
        expect(
            run(&[&args[..], &["--quiet", "--no-error-estimate"]].concat()),
            0,
        );
        summary(&out)
    };
    let (a, b) = (solve("gap=2*0.75", "expr"), solve("gap=1.5", "number"));
    assert_eq!(a["parameters"][0]["value"], 1.5);
    assert_eq!(a["capacitance"], b["capacitance"]);
    // A name other than a constant is not known on the command line.
    let out = dir.join("bad");
    expect(
        run(&[
            "solve",
            &design,
            "--set",
            "gap=gap*2",
            "--out",
            out.to_str().unwrap(),
        ]),
        2,
    );
}

#[test]
fn a_mil_design_equals_the_same_design_in_mm() {
    // A trace 10 mil wide, 2 mil thick, 5.5 mil over a ground plane in a 200 x 100 mil box
    // (edges and the interface half-way between node lines, where a rounding of the last
    // digit moves nothing); the same design in mm (1 mil = 0.0254 mm exactly), its numbers
    // written as exact decimals.
    let design = |unit: &str, k: f64| {
        let n = |v: f64| format!("{:.7}", v * k);
        format!(
            "unit = \"{unit}\"\ndepth = {}\n[grid]\nx = [0, {}]\ny = [0, {}]\ncell = {}\n\
             [[dielectric]]\nname = \"laminate\"\npermittivity = 4.0\n\
             rect = {{ x = [0, {}], y = [0, {}] }}\n\
             [[conductor]]\nname = \"trace\"\npotential = 1.0\n\
             rect = {{ x = [{}, {}], y = [{}, {}] }}\n",
            n(1000.0),
            n(200.0),
            n(100.0),
            n(1.0),
            n(200.0),
            n(5.5),
            n(94.5),
            n(104.5),
            n(5.5),
            n(7.5),
        )
    };
    let dir = scratch(SCRATCH, "mil");
    let solve = |name: &str, text: &str| {
        let file = write(&dir, &format!("{name}.toml"), text);
        let out = dir.join(name);
        expect(
            run(&["solve", &file, "--out", out.to_str().unwrap(), "--quiet"]),
            0,
        );
        summary(&out)
    };
    let mil = solve("mil", &design("mil", 1.0));
    let mm = solve("mm", &design("mm", 0.0254));
    assert_eq!(mil["grid"]["nx"], mm["grid"]["nx"]);
    assert!((mil["depth"].as_f64().unwrap() / 25.4e-3 - 1.0).abs() < 1e-12);
    let c = |s: &serde_json::Value| s["capacitance"]["matrix"][0][0].as_f64().unwrap();
    let rel = (c(&mil) / c(&mm) - 1.0).abs();
    assert!(
        rel < 1e-9,
        "mil {} and mm {} differ by {rel:e}",
        c(&mil),
        c(&mm)
    );
}

#[test]
fn check_takes_the_memory_limit_it_reports_against() {
    let dir = scratch(SCRATCH, "check-memory");
    let design = write(&dir, "gapped.toml", GAPPED);
    expect(
        run(&["check", &design, "--quiet", "--max-memory", "4096"]),
        0,
    );
    expect(
        run(&["check", &design, "--quiet", "--max-memory", "0.01"]),
        2,
    );
}

#[test]
fn a_uniform_lattice_reproduces_the_former_default_bit_for_bit() {
    // The subject is the uniform lattice itself (so it is asked for by name, whatever the
    // default): the microstrip demo on its uniform lattice of cell 0.015 mm, and the numbers
    // the version before graded lattices existed wrote to summary.json, bit for bit.
    let root = std::path::Path::new(env!("CARGO_MANIFEST_DIR")).join("..");
    let text = std::fs::read_to_string(root.join("geometries/microstrip.toml")).unwrap();
    let (head, tail) = text.split_once("\ncell = ").expect("one cell line");
    let tail = tail.split_once('\n').expect("a line after the cell").1;
    let text = format!("{head}\ncell = 0.015\nlattice = \"uniform\"\n{tail}");
    let dir = scratch(SCRATCH, "uniform-bits");
    let design = write(&dir, "microstrip.toml", &text);
    let out = dir.join("out");
    expect(
        run(&[
            "impedance",
            &design,
            "--signal",
            "trace",
            "--out",
            out.to_str().unwrap(),
            "--quiet",
        ]),
        0,
    );
    let v = summary(&out);
    let bits = |x: &serde_json::Value| x.as_f64().expect("number").to_bits();
    assert_eq!(bits(&v["line"]["z0"]), 49.87667891780741f64.to_bits());
    assert_eq!(bits(&v["line"]["eps_eff"]), 2.7564536414598546f64.to_bits());
    assert_eq!(
        bits(&v["line"]["error_estimate"]["z0"]),
        0.05545577929173436f64.to_bits()
    );
    assert_eq!(
        bits(&v["capacitance"]["matrix"][0][0]),
        5.5517144456218735e-11f64.to_bits()
    );
}
