//! Result directories are whole as a set: a re-run replaces the previous set as a whole,
//! one writer at a time per directory, a stale lock is taken over, a full disk leaves the
//! previous set, and `--out` paths that cannot hold a set are refused before any solve.

use std::collections::BTreeMap;
use std::io::Read;
use std::path::Path;

use fieldgrid_tests::cli::{expect, run, scratch, write};

use super::interrupted::{spawn_cli, spawn_cli_with, staging_exists, wait_until, SLOW};
use super::{failure_of, PLATES, SCRATCH};

/// Every file of a results directory with its contents; `summary.json` without the run's
/// timing (the only value that differs between two runs of the same design).
pub(super) fn snapshot(dir: &Path) -> BTreeMap<String, Vec<u8>> {
    let mut m = BTreeMap::new();
    let Ok(entries) = std::fs::read_dir(dir) else {
        return m;
    };
    for e in entries.flatten() {
        let name = e.file_name().to_string_lossy().into_owned();
        let mut bytes = std::fs::read(e.path()).unwrap_or_default();
        if name == "summary.json" {
            if let Ok(mut v) = serde_json::from_slice::<serde_json::Value>(&bytes) {
                v["solver"]["seconds"] = serde_json::Value::Null;
                bytes = v.to_string().into_bytes();
            }
        }
        m.insert(name, bytes);
    }
    m
}

/// The plates design at revision `rev`: the pad's potential differs between revisions. On a
/// uniform lattice by name, whose `--vtk` file is `field.vti` (image data).
pub(super) fn plates_rev(rev: u32) -> String {
    fieldgrid_tests::uniform(
        &PLATES.replace("potential = 5.0", &format!("potential = {}.0", 4 + rev)),
    )
}

#[test]
fn a_rerun_replaces_the_previous_set_whole_and_drops_its_stale_files() {
    let dir = scratch(SCRATCH, "replace");
    let a = write(&dir, "a.toml", &plates_rev(1));
    let b = write(&dir, "b.toml", &plates_rev(2));
    let out = dir.join("out");
    let o = out.to_str().unwrap();
    expect(run(&["solve", &a, "--out", o, "--vtk", "--quiet"]), 0);
    assert!(out.join("field.vti").is_file());
    expect(run(&["solve", &b, "--out", o, "--quiet"]), 0);
    // field.vti belonged to revision A's set: it went with it.
    assert!(!out.join("field.vti").exists());
    let fresh = dir.join("fresh");
    expect(
        run(&["solve", &b, "--out", fresh.to_str().unwrap(), "--quiet"]),
        0,
    );
    assert_eq!(snapshot(&out), snapshot(&fresh));
    // Nothing of the run is left beside the directory but the directories themselves.
    let beside: Vec<String> = std::fs::read_dir(&dir)
        .unwrap()
        .flatten()
        .map(|e| e.file_name().to_string_lossy().into_owned())
        .filter(|n| n.starts_with('.'))
        .collect();
    assert!(beside.is_empty(), "{beside:?}");
}

#[test]
fn a_directory_holding_other_files_is_refused_and_left_alone() {
    let dir = scratch(SCRATCH, "foreign");
    let design = write(&dir, "plates.toml", PLATES);
    let out = dir.join("out");
    std::fs::create_dir_all(&out).unwrap();
    std::fs::write(out.join("notes.txt"), "mine").unwrap();
    let (code, msg) = failure_of(&["solve", &design, "--out", out.to_str().unwrap()]).unwrap_err();
    assert_eq!(code, 2);
    assert!(
        msg.contains("`notes.txt`") && msg.contains("not a fieldgrid result"),
        "{msg}"
    );
    assert_eq!(
        std::fs::read_to_string(out.join("notes.txt")).unwrap(),
        "mine"
    );
    assert_eq!(std::fs::read_dir(&out).unwrap().count(), 1);
}

#[test]
fn a_dangling_symlink_as_out_is_named_as_such() {
    let dir = scratch(SCRATCH, "dangling");
    let design = write(&dir, "plates.toml", PLATES);
    let link = dir.join("out");
    std::os::unix::fs::symlink(dir.join("nowhere"), &link).unwrap();
    let (code, msg) = failure_of(&["solve", &design, "--out", link.to_str().unwrap()]).unwrap_err();
    assert_eq!(code, 2);
    assert!(
        msg.contains("symbolic link") && msg.contains("does not exist"),
        "{msg}"
    );
    assert!(!dir.join("nowhere").exists());
}

#[test]
fn results_through_a_symlinked_out_land_in_its_target() {
    let dir = scratch(SCRATCH, "symlink");
    let design = write(&dir, "plates.toml", PLATES);
    let target = dir.join("target");
    std::fs::create_dir(&target).unwrap();
    let link = dir.join("out");
    std::os::unix::fs::symlink(&target, &link).unwrap();
    expect(
        run(&["solve", &design, "--out", link.to_str().unwrap(), "--quiet"]),
        0,
    );
    assert!(std::fs::symlink_metadata(&link)
        .unwrap()
        .file_type()
        .is_symlink());
    assert!(target.join("summary.json").is_file());
}

#[test]
fn a_second_writer_into_the_same_directory_is_refused_while_the_first_runs() {
    let dir = scratch(SCRATCH, "lock");
    let slow = write(&dir, "slow.toml", SLOW);
    let plates = write(&dir, "plates.toml", PLATES);
    let out = dir.join("out");
    let o = out.to_str().unwrap();
    let mut first = spawn_cli(&[
        "solve", &slow, "--out", o, "--solver", "sor", "--tol", "1e-12", "--quiet",
    ]);
    assert!(
        wait_until(&mut first, || staging_exists(&dir, "out")),
        "the first run ended before the second began"
    );
    let (code, msg) = failure_of(&["solve", &plates, "--out", o, "--quiet"]).unwrap_err();
    assert_eq!(code, 2);
    assert!(msg.contains("another fieldgrid run"), "{msg}");
    // A sweep shard into the same directory is refused alike, before any solve.
    let swept = PLATES
        .replace("potential = 5.0", "potential = \"v\"")
        .replacen("[grid]", "[parameters]\nv = 1.0\n[grid]", 1);
    let sweep = write(&dir, "sweep.toml", &swept);
    let (code, msg) = failure_of(&[
        "sweep", &sweep, "--vary", "v=1:2:2", "--shard", "0/2", "--out", o, "--quiet",
    ])
    .unwrap_err();
    assert_eq!(code, 2);
    assert!(msg.contains("another fieldgrid run"), "{msg}");
    first.kill().unwrap();
    first.wait().unwrap();
    // The first run died without cleaning up: its lock is free, and the next run takes
    // over, removing the dead run's staging directory.
    expect(run(&["solve", &plates, "--out", o, "--quiet"]), 0);
    assert!(!staging_exists(&dir, "out"));
    assert!(out.join("summary.json").is_file());
}

#[test]
fn a_stale_lock_file_of_a_dead_process_is_taken_over() {
    let dir = scratch(SCRATCH, "stale-lock");
    let design = write(&dir, "plates.toml", PLATES);
    // Linux process ids stay below 2^22: 999999999 never ran, and nothing holds the lock.
    std::fs::write(dir.join(".out.fieldgrid-lock"), "999999999\n").unwrap();
    let out = dir.join("out");
    expect(
        run(&["solve", &design, "--out", out.to_str().unwrap(), "--quiet"]),
        0,
    );
    assert!(out.join("summary.json").is_file());
    assert!(!dir.join(".out.fieldgrid-lock").exists());
}

#[test]
fn a_full_disk_while_writing_leaves_the_previous_set_and_says_so() {
    let dir = scratch(SCRATCH, "full-disk");
    let a = write(&dir, "a.toml", &plates_rev(1));
    let b = write(&dir, "b.toml", &plates_rev(2));
    let out = dir.join("out");
    let o = out.to_str().unwrap();
    expect(run(&["solve", &a, "--out", o, "--quiet"]), 0);
    let before = snapshot(&out);
    for n in 1..=4 {
        let mut child = spawn_cli_with(
            &["solve", &b, "--out", o, "--quiet"],
            &[(
                "FIELDGRID_FAULT_INJECTION_TEST_ONLY_FAIL_WRITE",
                n.to_string(),
            )],
        );
        let status = child.wait().unwrap();
        let mut err = String::new();
        child
            .stderr
            .take()
            .unwrap()
            .read_to_string(&mut err)
            .unwrap();
        assert_eq!(status.code(), Some(2), "write {n}: {err}");
        assert!(err.contains("No space left on device"), "{err}");
        assert!(
            err.contains("holds the previous results, complete and unchanged"),
            "{err}"
        );
        assert_eq!(snapshot(&out), before, "write {n} failing changed the set");
        assert!(!staging_exists(&dir, "out"));
    }
}
