//! Robustness: the memory guard, interrupted and failing runs, non-convergence, reproducible
//! numbers, and the fuzzing findings replayed as regression tests.
//!
//! Tests that need a separate process (signals) run this very test binary again as the
//! `fieldgrid` command: with `FIELDGRID_AS_CLI` set, the entry `child_process_runs_the_cli`
//! hands the arguments in that variable to `fieldgrid_cli::main_with_args` and exits with its
//! code; without it, the entry returns at once.

use std::io::Read;
use std::path::{Path, PathBuf};
use std::process::{Command, Stdio};
use std::time::Duration;

use clap::Parser;
use fieldgrid_cli::args::{Cli, Command as Cmd};
use fieldgrid_cli::commands;
use fieldgrid_solver::solvers::{self, cg, sor, Method, Params, SolveError, StopReason};
use fieldgrid_solver::stencil::Stencil5;
use fieldgrid_tests::cli::{expect, has_warning, run, scratch, summary, write};
use fieldgrid_tests::fuzzing;

// ------------------------------------------------------------------------- helpers

/// The prefix of this file's scratch directories.
const SCRATCH: &str = "fieldgrid-robust";

/// Runs a command in-process and returns its failure (code, message), or its exit code.
fn failure_of(args: &[&str]) -> Result<u8, (u8, String)> {
    let mut full = vec!["fieldgrid"];
    full.extend_from_slice(args);
    let cli = Cli::try_parse_from(full).expect("arguments parse");
    let r = match &cli.command {
        Cmd::Solve(a) => commands::solve::run(a),
        Cmd::Check(a) => commands::check::run(a),
        Cmd::Impedance(a) => commands::impedance::run(a),
        Cmd::Compare(a) => commands::compare::run(a),
        Cmd::Sweep(a) => commands::sweep::run(a),
    };
    r.map_err(|f| (f.code, f.message))
}

/// Every file below `dir` whose name starts with a dot (the temporary names of `OutDir`).
fn hidden_files(dir: &Path) -> Vec<PathBuf> {
    let mut out = Vec::new();
    if let Ok(entries) = std::fs::read_dir(dir) {
        for e in entries.flatten() {
            let p = e.path();
            if p.is_dir() {
                out.extend(hidden_files(&p));
            } else if e.file_name().to_string_lossy().starts_with('.') {
                out.push(p);
            }
        }
    }
    out
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
[[conductor]]
name = "pad"
potential = 5.0
rect = { x = [1.0, 3.0], y = [0.8, 1.0] }
"#;

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

// ------------------------------------------------------------------------- child process

const AS_CLI: &str = "FIELDGRID_AS_CLI";

/// Not a check: the entry through which the signal tests run this binary as `fieldgrid`.
#[test]
fn child_process_runs_the_cli() {
    let Ok(args) = std::env::var(AS_CLI) else {
        return;
    };
    let mut full = vec!["fieldgrid".to_string()];
    full.extend(args.split('\u{1f}').map(str::to_string));
    let code = fieldgrid_cli::main_with_args(full);
    // ExitCode has no accessor: its Debug form carries the number.
    let n: i32 = format!("{code:?}")
        .chars()
        .filter(char::is_ascii_digit)
        .collect::<String>()
        .parse()
        .unwrap_or(70);
    std::process::exit(n);
}

fn spawn_cli(args: &[&str]) -> std::process::Child {
    Command::new(std::env::current_exe().unwrap())
        .args([
            "--exact",
            "child_process_runs_the_cli",
            "--nocapture",
            "--test-threads",
            "1",
        ])
        .env(AS_CLI, args.join("\u{1f}"))
        .stdout(Stdio::null())
        .stderr(Stdio::piped())
        .spawn()
        .expect("spawn the test binary")
}

/// Waits (polling; the only bound is the child's own life) until `ready` holds or the child
/// has ended. True when `ready` held while the child ran.
fn wait_until(child: &mut std::process::Child, ready: impl Fn() -> bool) -> bool {
    loop {
        if ready() {
            return true;
        }
        if child.try_wait().unwrap().is_some() {
            return false;
        }
        std::thread::sleep(Duration::from_millis(5));
    }
}

fn signal(child: &std::process::Child, sig: &str) {
    let ok = Command::new("kill")
        .args([&format!("-{sig}"), &child.id().to_string()])
        .status()
        .expect("run kill")
        .success();
    assert!(ok, "kill -{sig} failed");
}

/// A design whose solve takes long enough to be interrupted: SOR to a tight tolerance on a
/// 401 x 401 lattice (many seconds; the tests send the signal as soon as `--out` exists).
const SLOW: &str = r#"
[grid]
x = [0.0, 1.0]
y = [0.0, 1.0]
cell = 0.0025
[[conductor]]
name = "c"
potential = 1.0
circle = { center = [0.5, 0.5], radius = 0.2 }
"#;

#[test]
fn sigterm_during_a_solve_leaves_no_partial_file() {
    for sig in ["TERM", "INT"] {
        let dir = scratch(SCRATCH, &format!("sig-{sig}"));
        let design = write(&dir, "slow.toml", SLOW);
        let out = dir.join("out");
        let mut child = spawn_cli(&[
            "solve",
            &design,
            "--out",
            out.to_str().unwrap(),
            "--solver",
            "sor",
            "--tol",
            "1e-12",
            "--quiet",
        ]);
        let started = wait_until(&mut child, || out.exists());
        assert!(started, "the solve ended before it could be interrupted");
        signal(&child, sig);
        let status = child.wait().unwrap();
        let mut err = String::new();
        child
            .stderr
            .take()
            .unwrap()
            .read_to_string(&mut err)
            .unwrap();
        let want = if sig == "TERM" { 143 } else { 130 };
        assert_eq!(status.code(), Some(want), "{status:?}: {err}");
        assert!(err.contains("interrupted"), "{err}");
        // The directory the run created is gone with everything in it.
        assert!(
            !out.exists(),
            "left {:?}",
            std::fs::read_dir(&out).map(|d| d.count())
        );
    }
}

#[test]
fn a_signal_during_a_sweep_leaves_a_valid_table_and_the_rerun_resumes() {
    let dir = scratch(SCRATCH, "sweep-signal");
    let text = SLOW.replace("cell = 0.0025", "cell = \"c\"").replacen(
        "[grid]",
        "[parameters]\nc = 0.02\n[grid]",
        1,
    );
    let design = write(&dir, "sweep.toml", &text);
    let out = dir.join("out");
    let outs = out.to_str().unwrap().to_string();
    // Point 0 (51 x 51 nodes) is quick, point 1 (201 x 201, SOR) takes seconds; the
    // signal arrives once point 0 is in the table.
    let args = [
        "sweep",
        &design,
        "--vary",
        "c=0.02:0.005:2",
        "--out",
        &outs,
        "--solver",
        "sor",
        "--tol",
        "1e-10",
        "--quiet",
    ];
    let mut child = spawn_cli(&args);
    let table = out.join("sweep.csv");
    let one_row = || std::fs::read_to_string(&table).is_ok_and(|t| t.lines().count() >= 2);
    assert!(wait_until(&mut child, one_row), "the sweep ended first");
    signal(&child, "TERM");
    assert_eq!(child.wait().unwrap().code(), Some(143));
    assert!(hidden_files(&out).is_empty(), "{:?}", hidden_files(&out));
    let before = std::fs::read_to_string(&table).unwrap();
    let rows: Vec<&str> = before.lines().collect();
    assert_eq!(rows.len(), 2, "header and point 0 only:\n{before}");
    assert!(rows[1].starts_with("0,"));
    // Re-running with the same arguments solves only the missing point and keeps the row
    // already written.
    expect(run(&args), 0);
    let after = std::fs::read_to_string(&table).unwrap();
    assert!(
        after.starts_with(&before),
        "rows already written changed:\n{before}\n{after}"
    );
    assert_eq!(after.lines().count(), 3);
}

#[test]
fn sweep_rerun_skips_the_points_already_written() {
    let dir = scratch(SCRATCH, "sweep-resume");
    let text = PLATES
        .replace("potential = 5.0", "potential = \"v\"")
        .replacen("[grid]", "[parameters]\nv = 1.0\n[grid]", 1);
    let design = write(&dir, "plates.toml", &text);
    let out = dir.join("out");
    let outs = out.to_str().unwrap();
    let args = [
        "sweep", &design, "--vary", "v=1:3:3", "--out", outs, "--quiet",
    ];
    expect(run(&args), 0);
    let table = out.join("sweep.csv");
    let full = std::fs::read_to_string(&table).unwrap();
    let lines: Vec<&str> = full.lines().collect();
    assert_eq!(lines.len(), 4);
    // As if interrupted after point 0, whose row is marked so that a recomputation shows.
    let mut marked: Vec<String> = lines[1].split(',').map(str::to_string).collect();
    marked[2] = "1.25e-99".into();
    let partial = format!("{}\n{}\n", lines[0], marked.join(","));
    std::fs::write(&table, &partial).unwrap();
    expect(run(&args), 0);
    let resumed = std::fs::read_to_string(&table).unwrap();
    let rl: Vec<&str> = resumed.lines().collect();
    assert_eq!(rl.len(), 4);
    assert_eq!(rl[1], marked.join(","), "point 0 was solved again");
    // The points solved on the re-run equal those of the first run exactly.
    assert_eq!(rl[2..], lines[2..]);
    // Other arguments are another sweep: refused, the table untouched.
    let other = [
        "sweep", &design, "--vary", "v=1:4:3", "--out", outs, "--quiet",
    ];
    expect(run(&other), 2);
    assert_eq!(std::fs::read_to_string(&table).unwrap(), resumed);
}

#[test]
fn temporaries_of_a_killed_run_are_removed_by_the_next_run() {
    let dir = scratch(SCRATCH, "stale");
    let design = write(&dir, "plates.toml", PLATES);
    let out = dir.join("out");
    std::fs::create_dir_all(&out).unwrap();
    // Linux process ids stay below 2^22: 999999999 never runs.
    let stale = out.join(".summary.json.partial-999999999");
    std::fs::write(&stale, "{ half").unwrap();
    // Process 1 always runs.
    let live = out.join(".capacitance.csv.partial-1");
    std::fs::write(&live, "in progress").unwrap();
    let keep = out.join(".notes.partial-of-mine");
    std::fs::write(&keep, "user's file").unwrap();
    expect(
        run(&["solve", &design, "--out", out.to_str().unwrap(), "--quiet"]),
        0,
    );
    assert!(!stale.exists(), "stale temporary kept");
    assert!(live.exists(), "a running process's temporary was removed");
    assert!(keep.exists(), "a file that is no temporary was removed");
    assert!(out.join("summary.json").is_file());
}

#[test]
fn unwritable_out_is_refused_before_solving() {
    let dir = scratch(SCRATCH, "unwritable");
    let design = write(&dir, "plates.toml", PLATES);
    let file = write(&dir, "a_file", "x");
    let below_file = format!("{file}/out");
    // /proc refuses new directories whoever asks (tests may run as root, who can write
    // into a directory without write permission).
    for out in [below_file.as_str(), "/proc/self/fieldgrid-out"] {
        // --max-iterations 1 would make a solve end with exit 3: exit 2 shows it never ran.
        let got = failure_of(&[
            "solve",
            &design,
            "--out",
            out,
            "--quiet",
            "--solver",
            "sor",
            "--max-iterations",
            "1",
        ]);
        match got {
            Err((2, m)) => assert!(m.contains("--out"), "{m}"),
            other => panic!("{out}: {other:?}"),
        }
        assert!(!Path::new(out).exists());
    }
    assert_eq!(std::fs::read_to_string(&file).unwrap(), "x");
    // The same for every command that writes.
    let sweep_design = write(
        &dir,
        "sweep.toml",
        &PLATES.replacen("[grid]", "[parameters]\nv = 1.0\n[grid]", 1),
    );
    for args in [
        vec![
            "sweep",
            sweep_design.as_str(),
            "--vary",
            "v=1:2:2",
            "--out",
            below_file.as_str(),
        ],
        vec!["check", design.as_str(), "--out", below_file.as_str()],
        vec![
            "impedance",
            design.as_str(),
            "--signal",
            "pad",
            "--out",
            below_file.as_str(),
        ],
    ] {
        match failure_of(&args) {
            Err((2, m)) => assert!(m.contains("--out"), "{args:?}: {m}"),
            other => panic!("{args:?}: {other:?}"),
        }
    }
}

// ------------------------------------------------------------------------- memory guard

#[test]
fn memory_guard_refuses_before_allocating_and_reports_the_estimate() {
    let dir = scratch(SCRATCH, "memory");
    // 100 001 x 100 001 nodes: about 1.5 TiB at the guard's rate; allocating it first would
    // abort the test process.
    let huge = write(
        &dir,
        "huge.toml",
        "[grid]\nx = [0.0, 1.0]\ny = [0.0, 1.0]\ncell = 1e-5\n[[conductor]]\nname = \"pad\"\n\
         potential = 1.0\nrect = { x = [0.4, 0.6], y = [0.4, 0.5] }\n",
    );
    let out = dir.join("out");
    let outs = out.to_str().unwrap();
    match failure_of(&["solve", &huge, "--out", outs, "--quiet"]) {
        Err((2, m)) => {
            let grid = fieldgrid_solver::grid::Grid::fit([0.0, 1.0], [0.0, 1.0], 1e-5).unwrap();
            let mib = commands::estimate_mib(&grid, commands::BYTES_PER_NODE);
            assert!(m.contains("100001 x 100001"), "{m}");
            assert!(m.contains(&format!("{mib:.0} MiB")), "{m}");
            assert!(m.contains("huge.toml:4:"), "names the file and line: {m}");
            assert!(m.contains("`grid.cell`"), "names the key: {m}");
        }
        other => panic!("{other:?}"),
    }
    assert!(!out.exists());
    // An explicit limit below the estimate of PLATES' small grid.
    let plates = write(&dir, "plates.toml", PLATES);
    match failure_of(&[
        "solve",
        &plates,
        "--out",
        outs,
        "--quiet",
        "--max-memory",
        "0.01",
    ]) {
        Err((2, m)) => assert!(m.contains("more than the 0 MiB allowed"), "{m}"),
        other => panic!("{other:?}"),
    }
    assert!(!out.exists());
    // Every command that solves applies the guard.
    let swept = write(
        &dir,
        "swept.toml",
        "[parameters]\nc = 1e-2\n[grid]\nx = [0.0, 1.0]\ny = [0.0, 1.0]\ncell = \"c\"\n\
         [[conductor]]\nname = \"a\"\npotential = 1.0\ncircle = { center = [0.5, 0.5], radius = 0.1 }\n",
    );
    for args in [
        vec![
            "sweep",
            swept.as_str(),
            "--vary",
            "c=1e-2:1e-5:2",
            "--out",
            outs,
        ],
        vec!["impedance", huge.as_str(), "--signal", "pad", "--out", outs],
        vec!["compare", huge.as_str(), plates.as_str()],
        vec!["check", huge.as_str()],
    ] {
        match failure_of(&args) {
            Err((2, m)) => assert!(m.contains("MiB"), "{args:?}: {m}"),
            other => panic!("{args:?}: {other:?}"),
        }
    }
    assert!(!out.exists(), "a refused sweep point must leave no output");
    // The field table costs more per node, and the guard counts it.
    let g = fieldgrid_solver::grid::Grid::fit([0.0, 4e-3], [0.0, 2e-3], 1e-4).unwrap();
    let plain = commands::estimate_mib(&g, commands::BYTES_PER_NODE);
    let limit = format!("{}", plain + 0.01);
    let args = [
        "solve",
        plates.as_str(),
        "--out",
        outs,
        "--quiet",
        "--max-memory",
        limit.as_str(),
    ];
    assert_eq!(failure_of(&args), Ok(0));
    let mut with_table = args.to_vec();
    with_table.push("--field-table");
    match failure_of(&with_table) {
        Err((2, m)) => assert!(m.contains("MiB allowed"), "{m}"),
        other => panic!("{other:?}"),
    }
}

// ------------------------------------------------------------------------- non-convergence

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
        let p = Params {
            tol: 1e-19,
            ..Params::default()
        };
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
    let p = Params {
        omega: Some(2.5),
        ..Params::default()
    };
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
        assert!(has_warning(&s, "did not converge: residual stagnated"));
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
        "3",
    ];
    expect(run(&args), 3);
    let table = std::fs::read_to_string(out.join("sweep.csv")).unwrap();
    assert!(
        table.lines().skip(1).all(|l| l.ends_with(",false")),
        "{table}"
    );
}

// ------------------------------------------------------------------------- reproducibility

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
    let design = write(&dir, "rich.toml", RICH);
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

// ------------------------------------------------------------------------- fuzzing

fn corpus(target: &str) -> Vec<(String, Vec<u8>)> {
    let dir = Path::new(env!("CARGO_MANIFEST_DIR"))
        .join("../fuzz/corpus")
        .join(target);
    let mut files: Vec<(String, Vec<u8>)> = std::fs::read_dir(&dir)
        .unwrap_or_else(|e| panic!("{}: {e}", dir.display()))
        .flatten()
        .map(|e| {
            (
                e.file_name().to_string_lossy().into_owned(),
                std::fs::read(e.path()).unwrap(),
            )
        })
        .collect();
    files.sort();
    files
}

#[test]
fn fuzz_seed_corpus_runs_clean_through_both_targets() {
    let designs = corpus("design");
    assert!(designs.len() >= 10);
    for (name, bytes) in &designs {
        let sig = fuzzing::design_target(bytes);
        // Seeds are valid designs that reach the solve, so mutations start deep.
        assert!(
            sig.starts_with("ok:") && sig.ends_with(":solved"),
            "{name}: {sig}"
        );
    }
    let exprs = corpus("expr");
    assert!(exprs.len() >= 10);
    for (name, bytes) in &exprs {
        assert_eq!(fuzzing::expr_target(bytes), "ok", "{name}");
    }
}

#[test]
fn fuzz_targets_refuse_garbage_without_panicking() {
    for bytes in [
        &b""[..],
        b"\xff\xfe\x00",
        b"[[conductor]]\n[[conductor]]\n",
        b"[grid]\nx = [0, 1]\ny = [0, 1]\ncell = 5e-324\n",
        b"((((((((((((((((((((((((((((((((((((((((((((((((((((((((((((((((((((1",
    ] {
        let _ = fuzzing::design_target(bytes);
        let _ = fuzzing::expr_target(bytes);
    }
}

/// Fuzzing finding (design target, stable driver, seed 1): a potential of 1.8e308 V solves
/// (the unit solves are fine) but the energy overflows; the study reported it as converged
/// and summary.json carried `null`. Now flagged: not converged, non-finite values, exit 3.
#[test]
fn overflowing_results_of_an_absurd_potential_are_flagged_not_converged() {
    let text = PLATES.replace("potential = 5.0", "potential = 1.7976931348623157e308");
    let _ = fuzzing::design_target(text.as_bytes());
    let d = fieldgrid_tests::design(&text);
    let s = fieldgrid_solver::study::run(&d, &fieldgrid_tests::params(Method::Multigrid)).unwrap();
    assert!(!s.solve.converged);
    let why = s.solve.failure.unwrap();
    assert!(
        why.starts_with("non-finite values appeared in the"),
        "{why}"
    );
    let dir = scratch(SCRATCH, "overflow-potential");
    let design = write(&dir, "huge_v.toml", &text);
    let out = dir.join("out");
    expect(
        run(&["solve", &design, "--out", out.to_str().unwrap(), "--quiet"]),
        3,
    );
    let s = summary(&out);
    assert_eq!(s["solver"]["converged"], false);
    assert!(has_warning(&s, "non-finite values"));
}

/// Fuzzing finding (design target): a string value holding a newline (`unit = "m\nm"`) was
/// quoted into the error message, which then spanned two lines. Control characters in
/// messages and keys are now escaped.
#[test]
fn an_error_quoting_a_value_with_a_newline_stays_on_one_line() {
    let text = "unit = \"are open\\nfrom m\"\n[grid]\nx = [0.0, 1.0]\ny = [0.0, 1.0]\ncell = 0.1\n";
    let _ = fuzzing::design_target(text.as_bytes());
    let e = fieldgrid_cli::design_file::read_design(text, "nl.toml", &[]).unwrap_err();
    assert!(!e.message.contains('\n'), "{:?}", e.message);
    assert!(e.message.contains("are open\\nfrom m"), "{:?}", e.message);
    assert_eq!((e.line, e.key.as_str()), (1, "unit"));
    let text = "[grid]\nx = [0.0, 1.0]\ny = [0.0, 1.0]\ncell = 0.1\n\"a\\tb\\nc\" = 1\n";
    let e = fieldgrid_cli::design_file::read_design(text, "nl.toml", &[]).unwrap_err();
    assert!(!e.key.contains('\n') && !e.to_string().lines().next().unwrap().contains('\t'));
}

/// Fuzzing finding (expression target): nesting that reaches the depth limit exactly at the
/// end of the text (32 opening parentheses) gave an error range one byte past the text.
#[test]
fn an_expression_too_deep_at_its_end_points_inside_the_text() {
    use fieldgrid_cli::design_file::expr;
    for n in [31, 32, 33, 40, 64] {
        let text = "(".repeat(n);
        let e = expr::eval(&text, &|_| None).unwrap_err();
        assert!(e.offset + e.len <= text.len(), "{n}: {e:?}");
        assert!(fuzzing::expr_target(text.as_bytes()).starts_with("err"));
    }
    let e = expr::eval(&"(".repeat(40), &|_| None).unwrap_err();
    assert_eq!(e.kind, expr::ExprErrorKind::TooComplex);
}

/// Fuzzing finding (expression target): a text over the length limit that starts with a
/// character of several bytes (an invalid byte read as U+FFFD) got an error range of one
/// byte, which ends inside that character.
#[test]
fn an_expression_too_long_that_starts_with_a_wide_character_points_at_it_whole() {
    use fieldgrid_cli::design_file::expr;
    for first in ["\u{FFFD}", "\u{e9}", "\u{1F600}", "a"] {
        let text = format!("{first}{}", "+1".repeat(expr::MAX_LEN));
        let e = expr::eval(&text, &|_| None).unwrap_err();
        assert_eq!(e.kind, expr::ExprErrorKind::TooComplex);
        assert_eq!((e.offset, e.len), (0, first.len()), "{first:?}");
    }
    let mut bytes = vec![0xB8u8];
    bytes.extend("+1".repeat(expr::MAX_LEN).bytes());
    assert!(fuzzing::expr_target(&bytes).starts_with("err"));
}

/// Fuzzing findings (design target): domains of 1e305 m (a parameter near the double
/// range) passed the reader; their node coordinates and areas of revolution overflowed, and
/// the raster and operator filled with NaN. Domains are now bounded (exit 2, at the key).
#[test]
fn an_absurdly_large_or_small_domain_is_refused_at_its_key() {
    let big = "unit = \"mm\"\nmode = \"axisymmetric\"\n[grid]\nx = [0.0, 1e308]\ny = [0.5, 10.0]\ncell = 0.25\n";
    let small = "[grid]\nx = [0.0, 1.0]\ny = [0.0, 1e-200]\ncell = 1e-201\n";
    for (text, line, key) in [(big, 4, "grid.x"), (small, 3, "grid.y")] {
        let _ = fuzzing::design_target(text.as_bytes());
        let e = fieldgrid_cli::design_file::read_design(text, "far.toml", &[]).unwrap_err();
        assert_eq!((e.line, e.key.as_str()), (line, key), "{e}");
        assert!(
            e.message
                .contains("fieldgrid computes with domains between"),
            "{e}"
        );
    }
}

/// Found while fuzzing the SVG import (`svg = { file, id }`, new on main): the drawing was
/// read whole whatever it was, so `file = "/dev/zero"` ate all memory and a named pipe waited
/// for a writer forever. Only regular files up to 64 MiB are read now.
#[test]
fn an_svg_import_of_a_device_or_a_pipe_is_refused_without_reading_it() {
    let dir = scratch(SCRATCH, "svg-device");
    let fifo = dir.join("pipe.svg");
    let made = Command::new("mkfifo")
        .arg(&fifo)
        .status()
        .expect("run mkfifo");
    assert!(made.success());
    for file in ["/dev/zero", fifo.to_str().unwrap(), dir.to_str().unwrap()] {
        let text = format!(
            "[grid]\nx = [0.0, 1.0]\ny = [0.0, 1.0]\ncell = 0.1\n[[conductor]]\nname = \"c\"\n\
             potential = 1.0\nsvg = {{ file = \"{file}\", id = \"a\" }}\n"
        );
        let path = dir.join("svg.toml");
        let e = fieldgrid_cli::design_file::read_design(&text, path.to_str().unwrap(), &[])
            .unwrap_err();
        assert_eq!(e.key, "conductor.svg.file", "{file}: {e}");
        assert!(e.message.contains("not a regular file"), "{file}: {e}");
    }
}

/// The same for the design file itself: a path that never ends is refused at 64 MiB.
#[test]
fn a_design_path_that_never_ends_is_refused() {
    match failure_of(&["check", "/dev/zero"]) {
        Err((2, m)) => assert!(m.contains("larger than 64 MiB"), "{m}"),
        other => panic!("{other:?}"),
    }
}

/// Fuzzing findings (design target, after the SVG import landed): a cell of 5e-324 made the
/// flattening tolerance underflow to zero and tripped an assertion in the SVG reader, and a
/// cell of 2.5e-310 asked for a circle of 10^300 chords (capacity overflow). The tolerance
/// is kept positive and circles get at most 10 000 chords, like path curves.
#[test]
fn an_svg_import_with_a_vanishing_cell_neither_panics_nor_explodes() {
    for cell in ["5e-324", "2.5e-310", "1e-12"] {
        let text = format!(
            "[grid]\nx = [0.0, 4.0]\ny = [0.0, 5.0]\ncell = {cell}\n\
             [[conductor]]\nname = \"dot\"\npotential = 1.0\n\
             svg = {{ file = \"svg/shapes.svg\", id = \"dot\" }}\n"
        );
        let _ = fuzzing::design_target(text.as_bytes());
        let src = fieldgrid_cli::design_file::read_design(&text, fuzzing::DESIGN_FILE, &[])
            .unwrap_or_else(|e| panic!("cell {cell}: {e}"));
        let fieldgrid_solver::design::Shape::Polygon { outer, .. } =
            &src.design.conductors[0].shape
        else {
            panic!("cell {cell}: not a polygon");
        };
        assert!(outer.len() <= 10_000, "cell {cell}: {} chords", outer.len());
    }
}

/// Fuzzing findings (design target): relative permittivities of 5e-324 (subnormal: the
/// operator's weights vanished and its rows went to zero) and 1.8e308 (weights overflowed)
/// are refused at their key; the accepted range is 1e-12 to 1e12.
#[test]
fn a_permittivity_beyond_any_material_is_refused_at_its_key() {
    for (eps, ok) in [
        ("5e-324", false),
        ("1e-13", false),
        ("1e-12", true),
        ("1e12", true),
        ("1.7976931348623157e308", false),
    ] {
        for (table, key) in [
            ("[background]\n", "background.permittivity"),
            (
                "[[dielectric]]\nname = \"d\"\nrect = { x = [0.0, 1.0], y = [0.0, 0.5] }\n",
                "dielectric.permittivity",
            ),
        ] {
            let text = format!(
                "[grid]\nx = [0.0, 1.0]\ny = [0.0, 1.0]\ncell = 0.1\n{table}permittivity = {eps}\n"
            );
            let _ = fuzzing::design_target(text.as_bytes());
            match fieldgrid_cli::design_file::read_design(&text, "eps.toml", &[]) {
                Ok(_) => assert!(ok, "{eps} accepted"),
                Err(e) => {
                    assert!(!ok, "{eps}: {e}");
                    assert_eq!(e.key, key);
                    assert!(e.message.contains("must lie between 1e-12 and 1e12"), "{e}");
                }
            }
        }
    }
}
