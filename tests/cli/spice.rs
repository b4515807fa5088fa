//! Circuit export: `capacitance.cir` read back as a circuit reproduces the Maxwell matrix.
//! The reader here is written from the SPICE netlist conventions (element lines
//! `Cname node1 node2 value`, `.SUBCKT name ports...`, `*` comments, node `0` the ground)
//! independently of the writer.

use std::collections::HashMap;
use std::path::PathBuf;

use fieldgrid_tests::cli::{expect_for, run, s, scratch, summary, write};

/// The prefix of this file's scratch directories.
const SCRATCH: &str = "fieldgrid-spice";

/// Reads a subcircuit: its port names and the nodal capacitance matrix of the ports, built
/// by stamping every capacitor (C between a and b adds C to (a, a) and (b, b) and -C to (a, b)
/// and (b, a); a capacitor to node 0 only to the diagonal). That nodal matrix is the Maxwell
/// matrix of the conductors.
fn read_back(text: &str) -> (Vec<String>, Vec<Vec<f64>>) {
    let mut ports: Vec<String> = Vec::new();
    let mut caps: Vec<(String, String, f64)> = Vec::new();
    for line in text.lines().map(str::trim) {
        if line.is_empty() || line.starts_with('*') {
            continue;
        }
        let f: Vec<&str> = line.split_whitespace().collect();
        let head = f[0].to_ascii_uppercase();
        if head == ".SUBCKT" {
            ports = f[2..].iter().map(|p| p.to_ascii_lowercase()).collect();
        } else if head.starts_with('C') {
            assert_eq!(f.len(), 4, "capacitor line {line}");
            caps.push((
                f[1].to_ascii_lowercase(),
                f[2].to_ascii_lowercase(),
                f[3].parse().unwrap(),
            ));
        } else {
            assert!(head == ".ENDS", "unexpected line {line}");
        }
    }
    let index: HashMap<&str, usize> = ports
        .iter()
        .enumerate()
        .map(|(k, p)| (p.as_str(), k))
        .collect();
    let n = ports.len();
    let mut m = vec![vec![0.0; n]; n];
    for (a, b, c) in caps {
        let ia = index.get(a.as_str()).copied();
        let ib = index.get(b.as_str()).copied();
        assert!(ia.is_some() || a == "0", "unknown node {a}");
        assert!(ib.is_some() || b == "0", "unknown node {b}");
        if let Some(i) = ia {
            m[i][i] += c;
        }
        if let Some(j) = ib {
            m[j][j] += c;
        }
        if let (Some(i), Some(j)) = (ia, ib) {
            m[i][j] -= c;
            m[j][i] -= c;
        }
    }
    (ports, m)
}

/// Three conductors and a floating shield on a board, 25 mm deep.
fn three() -> String {
    format!(
        "\nunit = \"mm\"\ndepth = 25.0\n{}\n{THREE_BODIES}",
        fieldgrid_tests::designs::grid_table([0.0, 8.0], [0.0, 4.0], 0.1)
    )
}

/// The sides and bodies of [`three`].
const THREE_BODIES: &str = r#"[sides]
left = "symmetry"
right = "ground"
[[dielectric]]
name = "board"
permittivity = 4.0
rect = { x = [0.0, 8.0], y = [0.0, 1.0] }
[[conductor]]
name = "Sense pad"
potential = 1.0
rect = { x = [1.0, 3.0], y = [1.0, 1.2] }
[[conductor]]
name = "neighbour"
potential = 0.0
rect = { x = [3.5, 5.5], y = [1.0, 1.2] }
[[conductor]]
name = "ring"
potential = 0.0
circle = { center = [6.5, 2.5], radius = 0.6 }
[[conductor]]
name = "shield"
floating = true
rect = { x = [1.0, 5.5], y = [3.0, 3.3] }
"#;

/// Solves the design `text`, written to `file` in the fresh scratch directory `name`, with
/// `--circuit`; returns the results directory and its summary.
fn solve_with_circuit(name: &str, file: &str, text: &str) -> (PathBuf, serde_json::Value) {
    let dir = scratch(SCRATCH, name);
    let design = write(&dir, file, text);
    let out = dir.join("out");
    expect_for(
        run(&["solve", &design, "--out", s(&out), "--quiet", "--circuit"]),
        0,
        "solve",
    );
    let summary = summary(&out);
    (out, summary)
}

#[test]
fn exported_subcircuit_reproduces_the_maxwell_matrix() {
    let (out, summary) = solve_with_circuit("three", "three.toml", &three());
    let names: Vec<String> = summary["capacitance"]["names"]
        .as_array()
        .unwrap()
        .iter()
        .map(|v| v.as_str().unwrap().to_string())
        .collect();
    // The floating shield is folded into the matrix and gets no node.
    assert_eq!(names, ["Sense pad", "neighbour", "ring"]);
    let matrix: Vec<Vec<f64>> = summary["capacitance"]["matrix"]
        .as_array()
        .unwrap()
        .iter()
        .map(|r| {
            r.as_array()
                .unwrap()
                .iter()
                .map(|v| v.as_f64().unwrap())
                .collect()
        })
        .collect();
    let text = std::fs::read_to_string(out.join("capacitance.cir")).unwrap();
    let (ports, rebuilt) = read_back(&text);
    assert_eq!(ports, ["sense_pad", "neighbour", "ring"]);
    // Planar F/m times depth 25 mm gives whole-part farads (no conductor reaches the symmetry
    // side, so it halves nothing). The circuit is reciprocal, so it holds the symmetric part
    // of the matrix; the asymmetry is at the solver tolerance.
    assert_eq!(summary["part"]["whole_part_factor"], 1.0);
    let depth = 25e-3;
    let scale = matrix.iter().flatten().fold(0.0f64, |m, v| m.max(v.abs())) * depth;
    let mut worst = 0.0f64;
    for i in 0..3 {
        for j in 0..3 {
            let want = matrix[i][j] * depth;
            worst = worst.max((rebuilt[i][j] - want).abs() / scale);
        }
        // The diagonal is rebuilt exactly, up to rounding.
        let want = matrix[i][i] * depth;
        assert!(
            (rebuilt[i][i] - want).abs() <= 1e-12 * scale,
            "diagonal {i}"
        );
    }
    println!("largest deviation of the rebuilt matrix: {worst:e} of the largest entry");
    assert!(worst < 1e-6, "rebuilt matrix deviates by {worst:e}");
}

#[test]
fn planar_export_without_depth_is_skipped_or_refused() {
    let dir = scratch(SCRATCH, "nodepth");
    let design = write(&dir, "nodepth.toml", &three().replace("depth = 25.0\n", ""));
    let out = dir.join("out");
    expect_for(
        run(&["solve", &design, "--out", s(&out), "--quiet"]),
        0,
        "solve without depth",
    );
    assert!(out.join("summary.json").is_file());
    assert!(
        !out.join("capacitance.cir").exists(),
        "no per-metre subcircuit"
    );
    // Asked for explicitly: refused before solving, nothing written.
    let out2 = dir.join("out2");
    expect_for(
        run(&["solve", &design, "--out", s(&out2), "--quiet", "--circuit"]),
        2,
        "--circuit without depth",
    );
    assert!(!out2.exists());
}

#[test]
fn axisymmetric_export_is_whole_body_already() {
    // A sphere inside a grounded cylindrical can: the matrix is already in farads.
    let text = r#"
mode = "axisymmetric"
unit = "mm"
[grid]
x = [0.0, 10.0]
y = [-10.0, 10.0]
cell = 0.2
[[conductor]]
name = "ball"
potential = 1.0
circle = { center = [0.0, 0.0], radius = 3.0 }
"#;
    let (out, summary) = solve_with_circuit("axi", "ball.toml", text);
    let c = summary["capacitance"]["matrix"][0][0].as_f64().unwrap();
    assert_eq!(summary["capacitance"]["unit"], "F");
    let (_, m) = read_back(&std::fs::read_to_string(out.join("capacitance.cir")).unwrap());
    assert_eq!(m[0][0], c);
}

/// A plate pair over a substrate, as a half (`x` from 0, a mirror plane on the left) or whole
/// (`x` from -4): both conductors straddle the mirror plane.
fn plates(whole: bool) -> String {
    let (x0, left, drive, plate) = if whole {
        ("-4.0", "ground", "-2.0", "-2.5")
    } else {
        ("0.0", "symmetry", "0.0", "0.0")
    };
    format!(
        r#"
unit = "mm"
depth = 2.0
[grid]
x = [{x0}, 4.0]
y = [0.0, 3.0]
cell = 0.05
[sides]
left = "{left}"
[[dielectric]]
name = "oxide"
permittivity = 3.9
rect = {{ x = [{x0}, 4.0], y = [0.0, 0.5] }}
[[conductor]]
name = "drive"
potential = 5.0
rect = {{ x = [{drive}, 2.0], y = [0.5, 0.6] }}
[[conductor]]
name = "plate"
potential = 0.0
rect = {{ x = [{plate}, 2.5], y = [1.1, 1.5] }}
"#
    )
}

#[test]
fn half_model_netlist_equals_the_whole_model_netlist() {
    let netlist = |name: &str, text: &str| {
        let dir = scratch(SCRATCH, name);
        let design = write(&dir, "plates.toml", text);
        let out = dir.join("out");
        expect_for(
            run(&[
                "solve",
                &design,
                "--out",
                s(&out),
                "--quiet",
                "--no-error-estimate",
                "--tol",
                "1e-11",
            ]),
            0,
            name,
        );
        let sum = summary(&out);
        let cir = std::fs::read_to_string(out.join("capacitance.cir")).unwrap();
        (sum, read_back(&cir))
    };
    let (half_summary, (half_ports, half)) = netlist("half", &plates(false));
    let (whole_summary, (whole_ports, whole)) = netlist("whole", &plates(true));
    assert_eq!(half_ports, whole_ports);
    assert_eq!(half_summary["part"]["mirrored_across"][0], "left");
    assert!(half_summary["part"]["drawn_part_values"]
        .as_array()
        .unwrap()
        .iter()
        .any(|v| v == "capacitance"));
    assert_eq!(whole_summary["part"]["whole_part_factor"], 1.0);
    // The summary keeps the drawn half's values: half of the whole's.
    let c = |v: &serde_json::Value| v["capacitance"]["matrix"][0][1].as_f64().unwrap();
    assert!((2.0 * c(&half_summary) / c(&whole_summary) - 1.0).abs() < 1e-6);
    let scale = whole[0][0].abs();
    for i in 0..2 {
        for j in 0..2 {
            let dev = (half[i][j] - whole[i][j]).abs() / scale;
            assert!(
                dev < 1e-6,
                "entry ({i}, {j}): half model {:e}, whole model {:e}",
                half[i][j],
                whole[i][j]
            );
        }
    }
}
