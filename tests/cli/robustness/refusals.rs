//! Refusals before any work: an output directory that cannot be written, and grids beyond
//! the memory guard, are refused with exit 2 before solving or allocating, by every command.

use std::path::Path;

use fieldgrid_cli::commands;
use fieldgrid_solver::plan::Plan;
use fieldgrid_solver::study::{self, StudyParams};
use fieldgrid_tests::cli::{scratch, write};

use super::{failure_of, PLATES, SCRATCH};

/// The plan of the default study (multigrid, error estimate) of a design file.
fn plan_of(file: &str) -> Plan {
    let text = std::fs::read_to_string(file).unwrap();
    study::plan(&fieldgrid_tests::design(&text), &StudyParams::default()).unwrap()
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

#[test]
fn memory_guard_refuses_before_allocating_and_reports_the_estimate() {
    let dir = scratch(SCRATCH, "memory");
    // 100 001 x 100 001 nodes: about 1.5 TiB at the guard's rate; allocating it first would
    // abort the test process.
    let huge = write(
        &dir,
        "huge.toml",
        "[grid]\nx = [0.0, 1.0]\ny = [0.0, 1.0]\ncell = 1e-5\nlattice = \"uniform\"\n[[conductor]]\nname = \"pad\"\n\
         potential = 1.0\nrect = { x = [0.4, 0.6], y = [0.4, 0.5] }\n",
    );
    let out = dir.join("out");
    let outs = out.to_str().unwrap();
    match failure_of(&["solve", &huge, "--out", outs, "--quiet"]) {
        Err((2, m)) => {
            let mib = plan_of(&huge).memory_mib();
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
    // The design text counts too (vertices, parameters, names).
    let text = std::fs::metadata(&plates).unwrap().len() as f64;
    let plain =
        plan_of(&plates).memory_mib() + text * commands::BYTES_PER_TEXT_BYTE / (1024.0 * 1024.0);
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
