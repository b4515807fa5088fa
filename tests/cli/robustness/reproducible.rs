//! Reproducible numbers: every result file is byte-identical across runs, thread counts and
//! solvers' repetitions, and the summary records the tool version and the design's hash.

use std::path::Path;

use fieldgrid_tests::cli::{expect, run, scratch, summary, write};

use super::{PLATES, SCRATCH};

/// Every feature that takes a separate path through the study: dielectrics, an open side, a
/// floating conductor, a fixed side, space charge, a thin conductor, a probe.
const RICH: &str = r#"
unit = "mm"
[parameters]
gap = 0.3
[grid]
x = [0.0, 6.0]
y = [0.0, 4.0]
cell = 0.05
[sides]
left = "symmetry"
right = "open"
top = "open"
bottom = 2.0
[background]
strength = 3.0e6
[[conductor]]
name = "a"
potential = 10.0
rect = { x = [0.5, 1.5], y = [1.0, 1.2], round = 0.05 }
[[conductor]]
name = "b"
potential = -4.0
circle = { center = ["1.5 + 1.5 + gap", 1.1], radius = 0.3 }
[[conductor]]
name = "f"
floating = true
polygon = [[2.0, 2.5], [3.5, 2.6], [2.8, 3.4]]
[[conductor]]
name = "wire"
potential = 1.0
polyline = [[4.0, 0.5], [5.0, 0.9], [5.5, 0.4]]
[[dielectric]]
name = "board"
permittivity = 4.4
strength = 2.0e7
rect = { x = [0.0, 6.0], y = [0.0, 1.0] }
[[charge]]
name = "cloud"
density = 1.0e-4
circle = { center = [4.5, 3.0], radius = 0.3 }
[[probe]]
name = "s"
at = [3.0, 2.0]
"#;

/// Every result file of a solve, with the wall-clock `seconds` line of summary.json blanked.
fn results(out: &Path) -> Vec<(String, Vec<u8>)> {
    let mut files: Vec<(String, Vec<u8>)> = std::fs::read_dir(out)
        .unwrap()
        .flatten()
        .map(|e| {
            let name = e.file_name().to_string_lossy().into_owned();
            let mut bytes = std::fs::read(e.path()).unwrap();
            if name == "summary.json" {
                let text = String::from_utf8(bytes).unwrap();
                let kept: Vec<&str> = text
                    .lines()
                    .filter(|l| !l.trim_start().starts_with("\"seconds\""))
                    .collect();
                assert_eq!(kept.len() + 1, text.lines().count(), "one seconds line");
                bytes = kept.join("\n").into_bytes();
            }
            (name, bytes)
        })
        .collect();
    files.sort();
    files
}

#[test]
fn results_are_byte_identical_across_runs_and_thread_counts() {
    let dir = scratch(SCRATCH, "repro");
    // On a uniform lattice by name: graded, this design has 1.2 million nodes (its thin
    // conductor's ends graded to nanometres), too many for a test run three times.
    let design = write(&dir, "rich.toml", &fieldgrid_tests::uniform(RICH));
    let mut all = Vec::new();
    for (k, threads) in ["1", "1", "2"].iter().enumerate() {
        let out = dir.join(format!("out-{k}"));
        let args = [
            "solve",
            &design,
            "--out",
            out.to_str().unwrap(),
            "--quiet",
            "--threads",
            threads,
            "--field-table",
        ];
        expect(run(&args), 0);
        all.push(results(&out));
    }
    let names: Vec<&String> = all[0].iter().map(|f| &f.0).collect();
    for f in [
        "summary.json",
        "capacitance.csv",
        "field.csv",
        "potential.png",
        "field.png",
    ] {
        assert!(names.iter().any(|n| *n == f), "{f} missing: {names:?}");
    }
    for (k, other) in all.iter().enumerate().skip(1) {
        assert_eq!(all[0].len(), other.len());
        for (a, b) in all[0].iter().zip(other) {
            assert_eq!(a.0, b.0);
            assert!(a.1 == b.1, "{} differs between run 0 and run {k}", a.0);
        }
    }
    // Every solver is reproducible across thread counts too.
    for solver in ["cg", "sor"] {
        let mut got = Vec::new();
        for threads in ["1", "2"] {
            let out = dir.join(format!("out-{solver}-{threads}"));
            let args = [
                "solve",
                &design,
                "--out",
                out.to_str().unwrap(),
                "--quiet",
                "--threads",
                threads,
                "--solver",
                solver,
                "--no-error-estimate",
            ];
            expect(run(&args), 0);
            got.push(results(&out));
        }
        assert!(
            got[0] == got[1],
            "{solver}: results differ between 1 and 2 threads"
        );
    }
}

#[test]
fn summary_records_the_tool_version_and_the_design_hash() {
    let dir = scratch(SCRATCH, "identity");
    let design = write(&dir, "plates.toml", PLATES);
    let out = dir.join("out");
    expect(
        run(&["solve", &design, "--out", out.to_str().unwrap(), "--quiet"]),
        0,
    );
    let s = summary(&out);
    assert_eq!(s["tool_version"], env!("CARGO_PKG_VERSION"));
    let hash = fieldgrid_cli::design_file::text_hash(PLATES);
    assert_eq!(s["design_hash"], hash.as_str());
    assert_eq!(hash.len(), 16);
    // One byte more (a comment) is another design text.
    let edited = write(&dir, "edited.toml", &format!("{PLATES}#\n"));
    let out2 = dir.join("out2");
    expect(
        run(&["solve", &edited, "--out", out2.to_str().unwrap(), "--quiet"]),
        0,
    );
    let s2 = summary(&out2);
    assert_ne!(s2["design_hash"], s["design_hash"]);
    assert_eq!(s2["capacitance"], s["capacitance"]);
}
