//! `fieldgrid target` and the `--sensitivity`, `--tolerance` and `--monte-carlo` options:
//! refusals (a target outside the bracket, unknown names, mismatched options), several
//! targets met at once, the design file's `[tolerances]`, and seeded, reproducible Monte
//! Carlo runs.

use clap::Parser;
use fieldgrid_cli::args::{Cli, Command as Cmd};
use fieldgrid_cli::commands;
use fieldgrid_tests::cli::{expect, read_json, run, s, scratch, summary, write};
use fieldgrid_tests::designs::{microstrip_eps_parameter, COAX_RADII, GAP_PLATES};

/// The prefix of this file's scratch directories.
const SCRATCH: &str = "fieldgrid-target";

/// Runs `target`, `solve` or `impedance` in-process and returns its failure (code,
/// message), or its exit code.
fn failure_of(args: &[&str]) -> Result<u8, (u8, String)> {
    let mut full = vec!["fieldgrid"];
    full.extend_from_slice(args);
    let cli = Cli::try_parse_from(full).expect("arguments parse");
    let r = match &cli.command {
        Cmd::Target(a) => commands::target::run(a),
        Cmd::Solve(a) => commands::sensitivities::solve(a),
        Cmd::Impedance(a) => commands::sensitivities::impedance(a),
        _ => unreachable!("not used here"),
    };
    r.map_err(|f| (f.code, f.message))
}

/// The plates of [`GAP_PLATES`] with the gap's tolerance in the design file.
fn plates() -> String {
    format!("{GAP_PLATES}[tolerances]\ng = 0.05\n")
}

#[test]
fn a_target_outside_the_bracket_is_refused_with_the_values_at_its_ends() {
    let dir = scratch(SCRATCH, "outside");
    let design = write(&dir, "plates.toml", &plates());
    let out = dir.join("out");
    // Between g = 0.3 and 1.5 mm the coupling runs from -1.18e-10 to -2.36e-11 F/m.
    let (code, message) = failure_of(&[
        "target",
        &design,
        "--quantity",
        "C[lower,upper]",
        "--value",
        "-1e-9",
        "--vary",
        "g=0.3:1.5",
        "--out",
        s(&out),
        "--quiet",
    ])
    .unwrap_err();
    assert_eq!(code, 2, "{message}");
    assert!(message.contains("outside the bracket"), "{message}");
    assert!(
        message.contains("at g = 0.3") && message.contains("at g = 1.5"),
        "{message}"
    );
    assert!(message.contains("-1.1806e-10 F/m"), "{message}");
    assert!(!out.join("target.json").exists());
    assert!(!out.exists() || std::fs::read_dir(&out).unwrap().next().is_none());
}

#[test]
fn target_refuses_unknown_names_and_mismatched_options() {
    let dir = scratch(SCRATCH, "refusals");
    let design = write(&dir, "plates.toml", &plates());
    let out = dir.join("out");
    let o = s(&out);
    let cases: [(&[&str], &str); 5] = [
        (
            &["--quantity", "C[a,b]", "--value", "1", "--vary", "g=0.3:1"],
            "no such quantity",
        ),
        (
            &[
                "--quantity",
                "energy",
                "--value",
                "1",
                "--vary",
                "gap=0.3:1",
            ],
            "no parameter of that name",
        ),
        (
            &[
                "--quantity",
                "energy",
                "--quantity",
                "peak_field",
                "--value",
                "1",
                "--vary",
                "g=0.3:1",
            ],
            "as many --value and --vary",
        ),
        (
            &["--quantity", "Z0", "--value", "50", "--vary", "g=0.3:1"],
            "needs --signal",
        ),
        (
            &["--quantity", "energy", "--value", "1", "--vary", "g=1:0.3"],
            "LO must be below HI",
        ),
    ];
    for (extra, want) in cases {
        let mut args = vec!["target", design.as_str(), "--out", o, "--quiet"];
        args.extend_from_slice(extra);
        let (code, message) = failure_of(&args).unwrap_err();
        assert_eq!(code, 2, "{extra:?}: {message}");
        assert!(message.contains(want), "{extra:?}: {message}");
    }
    let (code, message) =
        failure_of(&["solve", &design, "--sensitivity", "gap", "--out", o]).unwrap_err();
    assert_eq!(code, 2);
    assert!(message.contains("no parameter of that name"), "{message}");
}

#[test]
fn two_targets_are_met_with_two_parameters_at_once() {
    let dir = scratch(SCRATCH, "two");
    let design = write(
        &dir,
        "microstrip.toml",
        // Graded: the lines move with `w`, so the search's solves start from zero wherever
        // they moved. (Regression: started from the solutions on moved lines, the search's
        // last solve stopped at its tolerance reading eps_eff 3.20002 where a solve from
        // zero at the same values reads 3.19899.)
        &microstrip_eps_parameter(3.0, 0.03),
    );
    let out = dir.join("out");
    expect(
        run(&[
            "target",
            &design,
            "--signal",
            "trace",
            "--quantity",
            "Z0",
            "--value",
            "45",
            "--vary",
            "w=1.0:2.5",
            "--quantity",
            "eps_eff",
            "--value",
            "3.2",
            "--vary",
            "eps=3.0:5.0",
            "--out",
            s(&out),
            "--quiet",
        ]),
        0,
    );
    let t = read_json(&out.join("target.json"));
    let targets = t["targets"].as_array().unwrap();
    assert_eq!(targets.len(), 2);
    for x in targets {
        let (achieved, wanted) = (
            x["achieved"].as_f64().unwrap(),
            x["target"].as_f64().unwrap(),
        );
        assert!(
            (achieved - wanted).abs() <= x["tolerance"].as_f64().unwrap(),
            "{x}"
        );
    }
    // An independent solve at the values found gives both.
    let check = dir.join("check");
    let sets: Vec<String> = targets
        .iter()
        .map(|x| format!("{}={}", x["parameter"].as_str().unwrap(), x["value"]))
        .collect();
    expect(
        run(&[
            "impedance",
            &design,
            "--signal",
            "trace",
            "--set",
            &sets[0],
            "--set",
            &sets[1],
            "--out",
            s(&check),
            "--quiet",
        ]),
        0,
    );
    let line = &summary(&check)["line"];
    for (x, key) in targets.iter().zip(["z0", "eps_eff"]) {
        let v = line[key].as_f64().unwrap();
        assert!(
            (v - x["target"].as_f64().unwrap()).abs() <= x["tolerance"].as_f64().unwrap(),
            "{key} = {v}"
        );
    }
}

fn coupling_tolerances(
    dir: &std::path::Path,
    name: &str,
    extra: &[&str],
) -> (Vec<u8>, serde_json::Value) {
    // Uniform by name: there the derivatives' two-cell steps carry the coupling's curvature
    // into the linear spread that the Monte Carlo test below bounds its samples with. (On
    // the graded default the 1 % steps give the tangent alone, and a sample 10 % out reads
    // 0.6 % beyond the linear worst case.)
    let design = write(dir, "plates.toml", &fieldgrid_tests::uniform(&plates()));
    let out = dir.join(name);
    let mut args = vec![
        "solve",
        design.as_str(),
        "--out",
        s(&out),
        "--quiet",
        "--no-error-estimate",
    ];
    args.extend_from_slice(extra);
    expect(run(&args), 0);
    (
        std::fs::read(out.join("tolerances.csv")).unwrap(),
        summary(&out),
    )
}

#[test]
fn monte_carlo_is_seeded_and_reproducible_bit_for_bit() {
    let dir = scratch(SCRATCH, "monte-carlo");
    let mc = |name: &str, seed: &str| {
        coupling_tolerances(
            &dir,
            name,
            &[
                "--tolerance",
                "g=0.05",
                "--monte-carlo",
                "4",
                "--seed",
                seed,
            ],
        )
    };
    let (a, sa) = mc("a", "7");
    let (b, _) = mc("b", "7");
    let (c, _) = mc("c", "8");
    assert_eq!(a, b, "the same seed gives the same table");
    assert_ne!(a, c, "another seed draws other points");
    let q = &sa["tolerances"]["quantities"]["C[lower,upper]"];
    let m = &q["monte_carlo"];
    assert_eq!(m["count"], 4);
    // Every drawn gap lies within 0.45..0.55 mm, so every coupling within the values there
    // (the coupling is monotonic in the gap).
    let (lo, hi) = (
        q["worst_low"].as_f64().unwrap(),
        q["worst_high"].as_f64().unwrap(),
    );
    let slack = 0.02 * (hi - lo);
    assert!(
        m["min"].as_f64().unwrap() >= lo - slack && m["max"].as_f64().unwrap() <= hi + slack,
        "{q}"
    );
    assert_eq!(sa["tolerances"]["monte_carlo"]["seed"], 7);
}

#[test]
fn design_file_tolerances_are_used_and_the_command_line_replaces_them() {
    let dir = scratch(SCRATCH, "design-file");
    // The design's [tolerances] alone ask for nothing; --sensitivity brings them in.
    let design = write(&dir, "plates.toml", &plates());
    let plain = dir.join("plain");
    expect(
        run(&[
            "solve",
            &design,
            "--out",
            s(&plain),
            "--quiet",
            "--no-error-estimate",
        ]),
        0,
    );
    assert!(summary(&plain).get("tolerances").is_none());
    let (_, from_file) = coupling_tolerances(&dir, "file", &["--sensitivity"]);
    assert_eq!(from_file["tolerances"]["parameters"]["g"], 0.05);
    let (_, replaced) = coupling_tolerances(&dir, "cli", &["--tolerance", "g=0.1"]);
    assert_eq!(replaced["tolerances"]["parameters"]["g"], 0.1);
    // Twice the tolerance, twice the linear spread.
    let spread = |s: &serde_json::Value| {
        let q = &s["tolerances"]["quantities"]["C[lower,upper]"];
        q["worst_high"].as_f64().unwrap() - q["worst_low"].as_f64().unwrap()
    };
    assert!((spread(&replaced) / spread(&from_file) - 2.0).abs() < 1e-9);
    for (bad, want) in [
        ("[tolerances]\nnope = 0.1\n", "not a parameter"),
        ("[tolerances]\ng = -0.1\n", "positive number"),
        ("[tolerances]\ng = \"x\"\n", "expected a number"),
    ] {
        let text = plates().replace("[tolerances]\ng = 0.05\n", bad);
        let path = write(&dir, "bad.toml", &text);
        let (code, message) =
            failure_of(&["solve", &path, "--out", s(&dir.join("bad")), "--quiet"]).unwrap_err();
        assert_eq!(code, 2, "{message}");
        assert!(
            message.contains(want) && message.contains("tolerances"),
            "{message}"
        );
    }
}

/// A disc electrode at 20 kV with a rounded rim over a grounded floor (axisymmetric), air
/// with a strength of 3 MV/m: the rim's rounding sets the worst margin.
const RIM: &str = r#"
unit = "mm"
mode = "axisymmetric"
[parameters]
rim = 4.0
[grid]
x = [0.0, 60.0]
y = [0.0, 60.0]
cell = 0.5
[sides]
right = "open"
top = "open"
bottom = "ground"
[background]
strength = 3.0e6
[[conductor]]
name = "disc"
potential = 20.0e3
rect = { x = [-20.0, 20.0], y = [12.0, 24.0], round = "rim" }
"#;

#[test]
fn a_margin_target_is_met_from_above() {
    let dir = scratch(SCRATCH, "margin");
    let design = write(&dir, "rim.toml", RIM);
    let out = dir.join("out");
    let code = failure_of(&[
        "target",
        &design,
        "--quantity",
        "worst_margin",
        "--value",
        "0.9",
        "--vary",
        "rim=1:6",
        "--out",
        s(&out),
        "--quiet",
    ]);
    assert_eq!(code, Ok(0), "{code:?}");
    let t = read_json(&out.join("target.json"));
    let (achieved, tol) = (
        t["achieved"].as_f64().unwrap(),
        t["tolerance"].as_f64().unwrap(),
    );
    assert!((0.9..=0.9 + tol).contains(&achieved), "{t}");
    // The files beside it are those of the point found: its worst margin is the one achieved.
    assert_eq!(
        summary(&out)["worst_margin"]["margin"].as_f64().unwrap(),
        achieved
    );
}

#[test]
fn vertices_give_the_exact_extremes_of_a_nonlinear_result() {
    let dir = scratch(SCRATCH, "vertices");
    let (csv, sum) = coupling_tolerances(&dir, "v", &["--tolerance", "g=0.05", "--vertices"]);
    let q = &sum["tolerances"]["quantities"]["C[lower,upper]"];
    let corners = &q["vertices"];
    assert_eq!(corners["count"], 2);
    // The coupling -eps0 W / g (uniform field between plates spanning the mirror box,
    // common practice) at the corners g = 0.45 and 0.55 mm: the cut-cell operator holds the
    // linear potential exactly, so only the solver tolerance separates them.
    let c = |g: f64| -fieldgrid_solver::EPS0 * 4e-3 / (g * 1e-3);
    let (lo, hi) = (
        corners["min"].as_f64().unwrap(),
        corners["max"].as_f64().unwrap(),
    );
    assert!((lo - c(0.45)).abs() < 1e-6 * lo.abs(), "{corners}");
    assert!((hi - c(0.55)).abs() < 1e-6 * hi.abs(), "{corners}");
    // 1/g curves: the corners are not symmetric about the nominal value, the linear worst
    // case is.
    let nominal = q["nominal"].as_f64().unwrap();
    assert!((nominal - lo) > 1.1 * (hi - nominal), "{q}");
    let text = String::from_utf8(csv).unwrap();
    assert!(text
        .lines()
        .next()
        .unwrap()
        .ends_with("vertex min,vertex max"));
    let (code, message) = failure_of(&[
        "solve",
        &write(&dir, "plain.toml", GAP_PLATES),
        "--vertices",
        "--out",
        s(&dir.join("none")),
    ])
    .unwrap_err();
    assert_eq!(code, 2);
    assert!(message.contains("--vertices needs tolerances"), "{message}");
}

/// The coaxial line of [`COAX_RADII`] with both radii's tolerances in the design file, on a
/// uniform lattice by name: its nodes do not move with the radii (a graded lattice follows
/// the circles), so every sample starts from the nominal solves.
fn coax() -> String {
    fieldgrid_tests::uniform(&format!("{COAX_RADII}[tolerances]\na = 0.02\nb = 0.03\n"))
}

#[test]
fn monte_carlo_shards_merged_give_the_unsharded_statistics_bit_for_bit() {
    let dir = scratch(SCRATCH, "monte-carlo-shards");
    let design = write(&dir, "coax.toml", &coax());
    let mc = |out: &std::path::Path, extra: &[&str]| {
        let mut args = vec![
            "solve",
            design.as_str(),
            "--monte-carlo",
            "5",
            "--seed",
            "11",
            "--out",
            s(out),
            "--quiet",
            "--no-error-estimate",
        ];
        args.extend_from_slice(extra);
        run(&args)
    };
    let whole = dir.join("whole");
    expect(mc(&whole, &[]), 0);
    let shards: Vec<_> = (0..3).map(|i| dir.join(format!("shard-{i}"))).collect();
    // Shards run in any order; one runs twice (the second run resumes: nothing left).
    for i in [2, 0, 1, 1] {
        expect(mc(&shards[i], &["--shard", &format!("{i}/3")]), 0);
    }
    let rows = |d: &std::path::Path| std::fs::read_to_string(d.join("sweep.csv")).unwrap();
    assert_eq!(
        rows(&shards[1]).lines().count(),
        3,
        "samples 1 and 4, once each"
    );
    let all = dir.join("all");
    let mut merge = vec!["sweep", "--merge"];
    merge.extend(shards.iter().rev().map(|d| s(d)));
    merge.extend(["--out", s(&all), "--quiet"]);
    expect(run(&merge), 0);
    // Sample k is drawn from the seed and k alone and solved from the nominal solves in every
    // shard: the merged table is the unsharded one, text for text, and so are the statistics.
    let read = |p: std::path::PathBuf| std::fs::read(p).unwrap();
    assert_eq!(
        read(all.join("sweep.csv")),
        read(whole.join("monte_carlo.csv"))
    );
    let stats = read(all.join("monte_carlo_statistics.csv"));
    assert_eq!(stats, read(whole.join("monte_carlo_statistics.csv")));
    // ... and equal to the summary's, bit for bit.
    let sum = summary(&whole);
    let text = String::from_utf8(stats).unwrap();
    let line = text
        .lines()
        .find(|l| l.starts_with("\"C[inner,inner]\""))
        .unwrap();
    let cells: Vec<f64> = line
        .rsplit(',')
        .take(4)
        .map(|c| c.parse().unwrap())
        .collect();
    let m = &sum["tolerances"]["quantities"]["C[inner,inner]"]["monte_carlo"];
    let (mean, std, min, max) = (cells[3], cells[2], cells[1], cells[0]);
    assert_eq!(m["count"], 5);
    // The JSON's numbers read by the standard library's parser (correctly rounded; the JSON
    // reader's default one may miss by a unit in the last place).
    let json = std::fs::read_to_string(whole.join("summary.json")).unwrap();
    let path = ["tolerances", "quantities", "C[inner,inner]", "monte_carlo"];
    assert_eq!(
        [mean, std, min, max],
        ["mean", "std", "min", "max"].map(|k| raw_number(&json, &[&path[..], &[k]].concat()))
    );
    // Every sample started from the nominal solves, and its result is that of a solve
    // started from zero, to the solver's tolerance.
    let solves = &sum["perturbed_solves"];
    assert_eq!(
        solves["studies"],
        4 * 2 + 5,
        "two pairs per parameter, five samples"
    );
    assert_eq!(solves["warm_starts"], solves["studies"]);
    let table = rows(&all);
    let sample = table.lines().nth(3).unwrap();
    let cell: Vec<&str> = sample.split(',').collect();
    let (a, b, c): (f64, f64, f64) = (
        cell[1].parse().unwrap(),
        cell[2].parse().unwrap(),
        cell[3].parse().unwrap(),
    );
    let cold = dir.join("cold");
    let (sa, sb) = (format!("a={a:e}"), format!("b={b:e}"));
    expect(
        run(&[
            "solve",
            &design,
            "--set",
            &sa,
            "--set",
            &sb,
            "--out",
            s(&cold),
            "--quiet",
            "--no-error-estimate",
        ]),
        0,
    );
    let c_cold = summary(&cold)["capacitance"]["matrix"][0][0]
        .as_f64()
        .unwrap();
    // Both stop at a relative residual of 1e-8 (measured: 1e-7 apart in C).
    assert!((c - c_cold).abs() <= 1e-6 * c_cold, "{c:e} {c_cold:e}");

    // Parts of another run (another seed) are refused, and so are --shard without
    // --monte-carlo and --shard with --sensitivity.
    let other = dir.join("other");
    expect(
        run(&[
            "solve",
            &design,
            "--monte-carlo",
            "5",
            "--seed",
            "12",
            "--shard",
            "0/3",
            "--out",
            s(&other),
            "--quiet",
            "--no-error-estimate",
        ]),
        0,
    );
    let bad_out = dir.join("bad");
    let mut bad = vec!["sweep", "--merge", s(&other)];
    bad.extend(shards[1..].iter().map(|d| s(d)));
    bad.extend(["--out", s(&bad_out), "--quiet"]);
    expect(run(&bad), 2);
    let refused = |extra: &[&str]| {
        let mut args = vec!["solve", design.as_str(), "--out", s(&other)];
        args.extend_from_slice(extra);
        failure_of(&args).unwrap_err().0
    };
    assert_eq!(refused(&["--shard", "0/2"]), 2);
    assert_eq!(
        refused(&["--monte-carlo", "4", "--sensitivity", "--shard", "0/2"]),
        2
    );
}

/// The number at the end of a path of keys in JSON text, each key searched for after the
/// previous one (enough for the files written here, whose keys are unique along the path).
fn raw_number(text: &str, path: &[&str]) -> f64 {
    let mut at = 0;
    for key in path {
        let quoted = format!("\"{key}\"");
        at += text[at..].find(&quoted).expect("key present") + quoted.len();
    }
    let rest = text[at..].trim_start_matches([':', ' ']);
    let end = rest.find([',', '\n', '}']).expect("a number");
    rest[..end].trim().parse().expect("a number")
}
