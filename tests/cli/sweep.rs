//! `fieldgrid sweep`: the cartesian product in point order, shards that merge into exactly the
//! unsharded table, resuming, and refusing to mix sweeps.

use std::path::{Path, PathBuf};
use std::process::ExitCode;

use fieldgrid_tests::cli::{expect_for, run, s, scratch, write};

/// The prefix of this file's scratch directories.
const SCRATCH: &str = "fieldgrid-sweep";

/// Two strips over a ground plane; the gap between them and the width of the second vary.
fn strips() -> String {
    format!(
        "\nunit = \"mm\"\n[parameters]\ngap = 0.5\nw = 1.0\n{}\n{STRIPS_BODIES}",
        fieldgrid_tests::designs::grid_table([0.0, 6.0], [0.0, 3.0], 0.1)
    )
}

/// The sides and bodies of [`strips`].
const STRIPS_BODIES: &str = r#"[sides]
left = "symmetry"
right = "symmetry"
[[conductor]]
name = "a"
potential = 1.0
rect = { x = [1.0, 2.0], y = [1.0, 1.3] }
[[conductor]]
name = "b"
potential = 0.0
rect = { x = ["2 + gap", "2 + gap + w"], y = [1.0, 1.3] }
"#;

const VARY: [&str; 4] = ["--vary", "gap=0.4:1.2:3", "--vary", "w=1.0:2.0:2"];

fn sweep(design: &str, out: &Path, extra: &[&str]) -> ExitCode {
    let mut args = vec!["sweep", design];
    args.extend(VARY);
    args.extend(["--out", s(out), "--quiet", "--no-error-estimate"]);
    args.extend(extra);
    run(&args)
}

/// Merges the shard directories, in the order given, into `out`.
fn merge(shards: &[&Path], out: &Path) -> ExitCode {
    let mut args = vec!["sweep", "--merge"];
    args.extend(shards.iter().map(|d| s(d)));
    args.extend(["--out", s(out), "--quiet"]);
    run(&args)
}

fn rows(dir: &Path) -> (Vec<String>, Vec<Vec<String>>) {
    let mut r = csv::Reader::from_path(dir.join("sweep.csv")).unwrap();
    let h = r.headers().unwrap().iter().map(str::to_string).collect();
    let rows = r
        .records()
        .map(|x| x.unwrap().iter().map(str::to_string).collect())
        .collect();
    (h, rows)
}

#[test]
fn sharded_sweep_merges_into_the_unsharded_table_row_for_row() {
    let dir = scratch(SCRATCH, "shards");
    let design = write(&dir, "strips.toml", &strips());

    let whole = dir.join("whole");
    expect_for(sweep(&design, &whole, &[]), 0, "unsharded sweep");
    let (header, table) = rows(&whole);
    // The contract's columns first, in their order; the other reported quantities follow.
    assert_eq!(
        header[..9],
        [
            "point",
            "gap (mm)",
            "w (mm)",
            "C[a,a] (F/m)",
            "C[a,b] (F/m)",
            "C[b,a] (F/m)",
            "C[b,b] (F/m)",
            "peak_field (V/m)",
            "converged"
        ]
    );
    // Six points, the first parameter slowest.
    let params: Vec<(String, String)> =
        table.iter().map(|r| (r[1].clone(), r[2].clone())).collect();
    let want: Vec<(String, String)> = [
        ("0.4", "1"),
        ("0.4", "2"),
        ("0.8", "1"),
        ("0.8", "2"),
        ("1.2", "1"),
        ("1.2", "2"),
    ]
    .iter()
    .map(|(a, b)| (a.to_string(), b.to_string()))
    .collect();
    assert_eq!(params, want);
    assert!(table
        .iter()
        .enumerate()
        .all(|(k, r)| r[0] == k.to_string() && &r[8] == "true"));
    // Physics sanity: a wider gap weakens the coupling (C[a,b] is negative and shrinks).
    let cab = |k: usize| table[k][4].parse::<f64>().unwrap();
    assert!(cab(0) < cab(2) && cab(2) < cab(4) && cab(4) < 0.0);

    // Three shards, merged.
    let shards: Vec<PathBuf> = (0..3).map(|i| dir.join(format!("shard{i}"))).collect();
    for (i, d) in shards.iter().enumerate() {
        let spec = format!("{i}/3");
        expect_for(sweep(&design, d, &["--shard", &spec]), 0, "one shard");
        let (_, part) = rows(d);
        let idx: Vec<usize> = part.iter().map(|r| r[0].parse().unwrap()).collect();
        assert_eq!(
            idx,
            vec![i, i + 3],
            "shard {i} runs points with index % 3 == {i}"
        );
    }
    let merged = dir.join("merged");
    // Shards given in any order.
    expect_for(
        merge(&[&shards[2], &shards[0], &shards[1]], &merged),
        0,
        "merge",
    );
    let a = std::fs::read_to_string(whole.join("sweep.csv")).unwrap();
    let b = std::fs::read_to_string(merged.join("sweep.csv")).unwrap();
    assert_eq!(a, b, "merged shards differ from the unsharded sweep");

    // Missing shard: refused.
    let partial = dir.join("partial");
    expect_for(
        merge(&[&shards[0], &shards[1]], &partial),
        2,
        "merge without shard 2",
    );
    assert!(!partial.join("sweep.csv").exists());

    // A shard of another sweep (other design text): refused.
    let other_design = write(
        &dir,
        "other.toml",
        &strips().replace("cell = 0.1", "cell = 0.12"),
    );
    let other = dir.join("other");
    expect_for(
        sweep(&other_design, &other, &["--shard", "2/3"]),
        0,
        "other sweep's shard",
    );
    expect_for(
        merge(&[&shards[0], &shards[1], &other], &partial),
        2,
        "merge across sweeps",
    );
}

#[test]
fn sweep_resumes_and_refuses_another_sweep_in_its_directory() {
    let dir = scratch(SCRATCH, "resume");
    let design = write(&dir, "strips.toml", &strips());
    let out = dir.join("out");
    expect_for(sweep(&design, &out, &["--shard", "1/2"]), 0, "first run");
    // Mark a finished row; a re-run with the same arguments must keep it (skip the point).
    let path = out.join("sweep.csv");
    let text = std::fs::read_to_string(&path).unwrap();
    let (_, table) = rows(&out);
    let marked = text.replacen(&table[0][7], "1e99", 1);
    std::fs::write(&path, &marked).unwrap();
    expect_for(
        sweep(&design, &out, &["--shard", "1/2"]),
        0,
        "re-run resumes",
    );
    assert_eq!(std::fs::read_to_string(&path).unwrap(), marked);
    // Drop the last row: the re-run solves just that point again, and gets the same numbers.
    let (h, mut t) = rows(&out);
    let last = t.pop().unwrap();
    let mut w = csv::Writer::from_path(&path).unwrap();
    w.write_record(&h).unwrap();
    for r in &t {
        w.write_record(r).unwrap();
    }
    w.flush().unwrap();
    drop(w);
    expect_for(
        sweep(&design, &out, &["--shard", "1/2"]),
        0,
        "re-run completes",
    );
    let (_, t2) = rows(&out);
    assert_eq!(t2.last().unwrap(), &last);
    assert_eq!(t2.len(), 3);

    // Other arguments into the same directory: refused, nothing touched.
    let before = std::fs::read_to_string(&path).unwrap();
    expect_for(
        sweep(&design, &out, &["--shard", "0/2"]),
        2,
        "another shard",
    );
    let mut args = vec![
        "sweep",
        &design,
        "--vary",
        "gap=0.4:1.2:4",
        "--out",
        s(&out),
        "--quiet",
    ];
    args.push("--no-error-estimate");
    expect_for(run(&args), 2, "another range");
    assert_eq!(std::fs::read_to_string(&path).unwrap(), before);
}

#[test]
fn sweep_refuses_bad_arguments_before_solving() {
    let dir = scratch(SCRATCH, "bad");
    let design = write(&dir, "strips.toml", &strips());
    let out = dir.join("out");
    let o = s(&out);
    for (args, what) in [
        (vec!["--vary", "gap=0.4:1.2"], "two parts"),
        (vec!["--vary", "gap=0.4:1.2:0"], "count 0"),
        (vec!["--vary", "nope=0.4:1.2:2"], "unknown parameter"),
        (
            vec!["--vary", "gap=0.4:1.2:2", "--vary", "gap=1:2:2"],
            "varied twice",
        ),
        (
            vec!["--vary", "gap=0.4:1.2:2", "--shard", "2/2"],
            "shard index from 0",
        ),
        (
            vec!["--vary", "gap=0.4:1.2:2", "--shard", "1/0"],
            "zero shards",
        ),
        // The second point makes the strips overlap... or leave the domain.
        (
            vec!["--vary", "gap=0.5:9.0:2"],
            "a point outside the domain",
        ),
    ] {
        let mut a = vec!["sweep", design.as_str()];
        a.extend(args);
        a.extend(["--out", o, "--quiet"]);
        expect_for(run(&a), 2, what);
        assert!(!out.join("sweep.csv").exists(), "{what}: no rows");
    }
    expect_for(run(&["sweep", "--out", o]), 2, "no design");
}

/// A driven strip, a floating shield above it, a probe and an air strength: every kind of
/// quantity `solve` reports.
const SHIELDED: &str = r#"
unit = "mm"
[parameters]
h = 2.0
v = 1.0
[grid]
x = [0.0, 6.0]
y = [0.0, 4.0]
cell = 0.1
[background]
strength = 3.0e6
[[conductor]]
name = "strip"
potential = "v"
rect = { x = [2.0, 4.0], y = [1.0, 1.2] }
[[conductor]]
name = "shield"
floating = true
rect = { x = [1.0, 5.0], y = ["h", "h + 0.2"] }
[[probe]]
name = "above"
at = [3.0, 3.5]
"#;

#[test]
fn a_sweep_records_every_quantity_solve_reports() {
    let dir = scratch(SCRATCH, "every");
    let design = write(&dir, "shielded.toml", SHIELDED);
    let out = dir.join("out");
    let args = [
        "sweep",
        &design,
        "--vary",
        "h=2:2.5:2",
        "--set",
        "v=2*5",
        "--point-summaries",
        "--out",
        s(&out),
        "--quiet",
    ];
    expect_for(run(&args), 0, "sweep");
    let (header, table) = rows(&out);
    let col = |name: &str| {
        header
            .iter()
            .position(|h| h == name)
            .unwrap_or_else(|| panic!("no column {name} in {header:?}"))
    };
    for (k, row) in table.iter().enumerate() {
        let point: serde_json::Value = serde_json::from_slice(
            &std::fs::read(out.join(format!("point-{k}.summary.json"))).unwrap(),
        )
        .unwrap();
        // --set holds for every point.
        assert_eq!(point["parameters"][1]["value"], 10.0);
        let cell = |name: &str| row[col(name)].parse::<f64>().unwrap();
        let close = |a: f64, b: &serde_json::Value| {
            let b = b.as_f64().unwrap();
            assert!(
                (a - b).abs() <= 1e-12 * b.abs().max(1e-30),
                "{a} against {b}"
            );
        };
        let strip = &point["conductors"][0];
        let shield = &point["conductors"][1];
        close(cell("Q[strip] (C/m)"), &strip["charge"]);
        close(cell("Q[strip] error (C/m)"), &strip["charge_error"]);
        close(cell("F[shield] y (N/m)"), &shield["force"][1]);
        close(cell("V[shield] (V)"), &shield["potential"]);
        close(
            cell("probe[above] potential (V)"),
            &point["probes"][0]["potential"],
        );
        close(
            cell("probe[above] Ey (V/m)"),
            &point["probes"][0]["field"][1],
        );
        close(cell("energy (J/m)"), &point["energy"]);
        close(cell("peak_field x (m)"), &point["peak_field"]["x"]);
        close(
            cell("peak_field error (V/m)"),
            &point["peak_field"]["error_estimate"],
        );
        close(
            cell("worst_margin margin"),
            &point["worst_margin"]["margin"],
        );
        close(cell("worst_margin y (m)"), &point["worst_margin"]["y"]);
        close(
            cell("C[strip,strip] error (F/m)"),
            &point["capacitance"]["error_estimate"][0][0],
        );
        assert_eq!(
            row[col("peak_field singular")],
            point["peak_field"]["singular"].to_string()
        );
        assert_eq!(row[col("worst_margin material")], "background");
    }
    // The strip at 10 V: the floating shield settles between it and the grounded box.
    let v: f64 = table[0][col("V[shield] (V)")].parse().unwrap();
    assert!(v > 0.0 && v < 10.0, "{v}");
    // A parameter both set and varied is refused.
    let bad = dir.join("bad");
    let args = [
        "sweep",
        &design,
        "--vary",
        "h=2:2.5:2",
        "--set",
        "h=1",
        "--out",
        s(&bad),
    ];
    expect_for(run(&args), 2, "--set of a varied parameter");
}

#[test]
fn varied_parameter_columns_carry_the_declared_unit_or_the_file_unit_of_a_length() {
    let text = r#"
unit = "mil"
[parameters]
w = 20.0                # named in lengths only, through `half`: the file's unit
half = "w/2"
eps = 4.2               # a permittivity: no unit
v = 5.0                 # a potential, declared below
n = 2.0                 # named in a length and in a potential: no unit unless declared
[parameter_units]
v = "V"
[grid]
x = [0.0, 200.0]
y = [0.0, 100.0]
cell = 4.0
[[dielectric]]
name = "board"
permittivity = "eps"
rect = { x = [0.0, 200.0], y = [0.0, "n*10"] }
[[conductor]]
name = "trace"
potential = "v*n"
rect = { x = ["100 - half", "100 + half"], y = [20.0, 22.0] }
"#;
    let src = fieldgrid_cli::design_file::read_design(text, "units.toml", &[]).unwrap();
    let unit = |p: &str| src.parameter_unit(p).to_string();
    assert_eq!(
        ["w", "half", "eps", "v", "n"].map(unit),
        ["mil", "mil", "", "V", ""].map(String::from)
    );
    assert_eq!(
        fieldgrid_cli::commands::sweep::varied_column("w", &unit("w")),
        "w (mil)"
    );
    assert_eq!(
        fieldgrid_cli::commands::sweep::varied_column("eps", ""),
        "eps"
    );

    // A unit for a name that is not a parameter is refused at its key.
    let bad = text.replace("v = \"V\"", "volts = \"V\"");
    let e = fieldgrid_cli::design_file::read_design(&bad, "units.toml", &[]).unwrap_err();
    assert!(e.to_string().contains("parameter_units.volts"), "{e}");
}
