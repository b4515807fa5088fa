//! Interrupted runs: a signal during a solve or a sweep leaves no partial file, a sweep
//! resumes where it stopped, and the temporaries of a killed run are removed by the next.
//!
//! Tests that need a separate process (signals) run this very test binary again as the
//! `fieldgrid` command: with `FIELDGRID_AS_CLI` set, the entry `child_process_runs_the_cli`
//! hands the arguments in that variable to `fieldgrid_cli::main_with_args` and exits with its
//! code; without it, the entry returns at once.

use std::io::Read;
use std::path::{Path, PathBuf};
use std::process::{Command, Stdio};
use std::time::Duration;

use fieldgrid_tests::cli::{expect, run, scratch, write};

use super::{PLATES, SCRATCH};

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

/// The test harness's name of [`child_process_runs_the_cli`]: its module path without the
/// program's name.
fn child_entry() -> String {
    let module = module_path!().split_once("::").map_or("", |(_, m)| m);
    format!("{module}::child_process_runs_the_cli")
}

/// True while a run is writing the set for `dir/name` (its staging directory exists).
pub(super) fn staging_exists(dir: &Path, name: &str) -> bool {
    let prefix = format!(".{name}.fieldgrid-new-");
    std::fs::read_dir(dir).is_ok_and(|d| {
        d.flatten()
            .any(|e| e.file_name().to_string_lossy().starts_with(&prefix))
    })
}

pub(super) fn spawn_cli(args: &[&str]) -> std::process::Child {
    spawn_cli_with(args, &[])
}

/// [`spawn_cli`] with extra environment variables (the test-only fault injection).
pub(super) fn spawn_cli_with(args: &[&str], env: &[(&str, String)]) -> std::process::Child {
    Command::new(std::env::current_exe().unwrap())
        .args([
            "--exact",
            &child_entry(),
            "--nocapture",
            "--test-threads",
            "1",
        ])
        .env(AS_CLI, args.join("\u{1f}"))
        .envs(env.iter().map(|(k, v)| (*k, v.as_str())))
        .stdout(Stdio::null())
        .stderr(Stdio::piped())
        .spawn()
        .expect("spawn the test binary")
}

/// Waits (polling; the only bound is the child's own life) until `ready` holds or the child
/// has ended. True when `ready` held while the child ran.
pub(super) fn wait_until(child: &mut std::process::Child, ready: impl Fn() -> bool) -> bool {
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

pub(super) fn signal(child: &std::process::Child, sig: &str) {
    let ok = Command::new("kill")
        .args([&format!("-{sig}"), &child.id().to_string()])
        .status()
        .expect("run kill")
        .success();
    assert!(ok, "kill -{sig} failed");
}

/// A design whose solve takes long enough to be interrupted: SOR to a tight tolerance on a
/// 401 x 401 lattice (many seconds; the tests send the signal as soon as the run has begun writing).
pub(super) const SLOW: &str = r#"
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
        let started = wait_until(&mut child, || staging_exists(&dir, "out"));
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
        assert!(err.contains("nothing was written to"), "{err}");
        // Nothing of the run is left: no results directory, no staging directory, no lock.
        assert!(!out.exists());
        let left: Vec<_> = std::fs::read_dir(&dir)
            .unwrap()
            .flatten()
            .map(|e| e.file_name())
            .filter(|n| n.to_string_lossy().starts_with(".out"))
            .collect();
        assert!(left.is_empty(), "left {left:?}");
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
    // Point 0 (51 x 51 nodes) is quick, point 1 (501 x 501, SOR) takes over a second; the
    // signal arrives once point 0 is in the table. (At cell 0.005, 201 x 201 nodes, point 1
    // took 0.28 s: on a loaded machine its row was written before the signal arrived.)
    let args = [
        "sweep",
        &design,
        "--vary",
        "c=0.02:0.002:2",
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
    expect(
        run(&["solve", &design, "--out", out.to_str().unwrap(), "--quiet"]),
        0,
    );
    assert!(!stale.exists(), "stale temporary kept");
    assert!(out.join("summary.json").is_file());
}

#[test]
fn a_sweep_row_cut_short_by_a_crash_is_dropped_and_solved_again() {
    let dir = scratch(SCRATCH, "torn-row");
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
    // As after a crash in the middle of appending point 1's row.
    let torn = format!(
        "{}\n{}\n{}",
        lines[0],
        lines[1],
        &lines[2][..lines[2].len() / 2]
    );
    std::fs::write(&table, torn).unwrap();
    expect(run(&args), 0);
    assert_eq!(std::fs::read_to_string(&table).unwrap(), full);
}
