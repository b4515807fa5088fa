//! The bad-input catalogue: every malformed design under `tests/bad_input/` must be refused
//! with one clear message naming the file, the line and the key, and no input may panic the
//! reader.
//!
//! Each catalogue file opens with comment lines stating what it expects:
//! ```text
//! # expect-line: 7            1-based line the error must point at
//! # expect-key: grid.cell     dotted key path the error must name (empty for TOML syntax)
//! # expect: must be positive  fragment the message must contain
//! ```

use std::fs;
use std::path::{Path, PathBuf};
use std::process::ExitCode;

use fieldgrid_cli::design_file::{read_design, InputError};
use fieldgrid_tests::cli::{code, run, s, scratch};

struct Expect {
    line: usize,
    key: String,
    fragment: String,
}

fn catalogue() -> Vec<(String, String)> {
    let dir = Path::new(env!("CARGO_MANIFEST_DIR")).join("bad_input");
    let mut files: Vec<PathBuf> = fs::read_dir(&dir)
        .unwrap_or_else(|e| panic!("{}: {e}", dir.display()))
        .map(|e| e.expect("directory entry").path())
        .filter(|p| p.extension().is_some_and(|x| x == "toml"))
        .collect();
    files.sort();
    files
        .into_iter()
        .map(|p| {
            let name = p.file_name().unwrap().to_string_lossy().into_owned();
            let text = fs::read_to_string(&p).unwrap_or_else(|e| panic!("{name}: {e}"));
            (name, text)
        })
        .collect()
}

fn expectation(name: &str, text: &str) -> Expect {
    let field = |tag: &str| {
        text.lines()
            .take_while(|l| l.starts_with('#'))
            .find_map(|l| l.strip_prefix(&format!("# {tag}:")))
            .map(|v| v.trim().to_string())
            .unwrap_or_else(|| panic!("{name}: no `# {tag}:` line"))
    };
    Expect {
        line: field("expect-line")
            .parse()
            .unwrap_or_else(|e| panic!("{name}: {e}")),
        key: field("expect-key"),
        fragment: field("expect"),
    }
}

fn check(name: &str, e: &InputError, want: &Expect) -> Result<(), String> {
    let shown = e.to_string();
    let mut wrong = Vec::new();
    if e.line != want.line {
        wrong.push(format!("line {} instead of {}", e.line, want.line));
    }
    if e.key != want.key {
        wrong.push(format!("key `{}` instead of `{}`", e.key, want.key));
    }
    if !e.message.contains(&want.fragment) {
        wrong.push(format!("message lacks \"{}\"", want.fragment));
    }
    if e.message.contains('\n') {
        wrong.push("message spans several lines".to_string());
    }
    let head = format!("error: {name}:{}:{}: ", e.line, e.column);
    if !shown.starts_with(&head) || (!e.key.is_empty() && !shown.contains(&format!("`{}`", e.key)))
    {
        wrong.push("display does not name file:line:column and key".to_string());
    }
    if wrong.is_empty() {
        Ok(())
    } else {
        Err(format!("{name}: {}\n{shown}", wrong.join("; ")))
    }
}

#[test]
fn every_malformed_design_is_refused_at_its_line_and_key() {
    let files = catalogue();
    assert!(
        files.len() >= 40,
        "catalogue has only {} designs",
        files.len()
    );
    let mut failures = Vec::new();
    for (name, text) in &files {
        let want = expectation(name, text);
        match read_design(text, name, &[]) {
            Ok(_) => failures.push(format!(
                "{name}: accepted, expected an error at line {}",
                want.line
            )),
            Err(e) => {
                if let Err(m) = check(name, &e, &want) {
                    failures.push(m);
                }
            }
        }
    }
    assert!(
        failures.is_empty(),
        "{} of {} wrong:\n\n{}",
        failures.len(),
        files.len(),
        failures.join("\n\n")
    );
}

/// Every key of the contract's design file is the subject of at least one catalogue case.
#[test]
fn catalogue_covers_every_key_of_the_contract() {
    let keys: Vec<String> = catalogue()
        .iter()
        .map(|(name, text)| expectation(name, text).key)
        .collect();
    let contract = [
        "unit",
        "mode",
        "depth",
        "grid",
        "grid.x",
        "grid.y",
        "grid.cell",
        "sides.left",
        "sides.right",
        "sides.bottom",
        "sides.top",
        "sides",
        "background",
        "background.permittivity",
        "background.strength",
        "parameters",
        "conductor",
        "conductor.name",
        "conductor.potential",
        "conductor.floating",
        "dielectric",
        "dielectric.name",
        "dielectric.permittivity",
        "dielectric.strength",
        "charge",
        "charge.name",
        "charge.density",
        "charge.at",
        "charge.amount",
        "probe",
        "probe.name",
        "probe.at",
        "rect",
        "rect.x",
        "rect.y",
        "rect.round",
        "circle",
        "circle.center",
        "circle.radius",
        "ring",
        "ring.center",
        "ring.inner",
        "ring.outer",
        "polygon",
        "holes",
        "round",
        "polyline",
    ];
    let covered = |k: &str| {
        keys.iter().any(|got| {
            got == k
                || got.starts_with(&format!("{k}."))
                || got.ends_with(&format!(".{k}"))
                || got.contains(&format!(".{k}."))
        })
    };
    let missing: Vec<&str> = contract.iter().copied().filter(|k| !covered(k)).collect();
    assert!(missing.is_empty(), "no catalogue case for {missing:?}");
}

/// Seeded mutations of every catalogue design (bytes deleted, duplicated, replaced) never
/// panic the reader, and a refusal always carries a position inside the file.
#[test]
fn mutated_designs_never_panic_the_reader() {
    let alphabet = b"[]{}\"'=,.-+*/^()#\n 0123456789eEnaifx_";
    let mut state: u64 = 0x9e37_79b9_7f4a_7c15;
    let mut next = move || {
        state ^= state << 13;
        state ^= state >> 7;
        state ^= state << 17;
        state
    };
    for (name, text) in catalogue() {
        for _ in 0..150 {
            let mut bytes = text.clone().into_bytes();
            for _ in 0..1 + next() % 4 {
                if bytes.is_empty() {
                    break;
                }
                let at = (next() % bytes.len() as u64) as usize;
                match next() % 3 {
                    0 => {
                        bytes.remove(at);
                    }
                    1 => {
                        let b = bytes[at];
                        bytes.insert(at, b);
                    }
                    _ => bytes[at] = alphabet[(next() % alphabet.len() as u64) as usize],
                }
            }
            let mutated = String::from_utf8_lossy(&bytes).into_owned();
            if let Err(e) = read_design(&mutated, &name, &[]) {
                let lines = mutated.lines().count().max(1);
                assert!(
                    e.line >= 1 && e.line <= lines + 1,
                    "{name}: line {} of {lines}",
                    e.line
                );
                assert!(!e.message.is_empty());
            }
        }
    }
}

/// Through the command line every catalogue design ends with exit code 2 and leaves no
/// `--out` directory behind.
#[test]
fn every_malformed_design_exits_2_through_solve_and_writes_nothing() {
    let scratch = scratch("fieldgrid-bad-input", "solve");
    let dir = Path::new(env!("CARGO_MANIFEST_DIR")).join("bad_input");
    let want = code(ExitCode::from(fieldgrid_cli::EXIT_BAD_INPUT));
    let mut failures = Vec::new();
    for (name, _) in catalogue() {
        let out = scratch.join(name.trim_end_matches(".toml"));
        let design = dir.join(&name);
        let got = code(run(&["solve", s(&design), "--out", s(&out), "--quiet"]));
        if got != want {
            failures.push(format!("{name}: exit {got}"));
        }
        if out.exists() {
            failures.push(format!("{name}: left {}", out.display()));
        }
    }
    let _ = fs::remove_dir_all(&scratch);
    assert!(failures.is_empty(), "{}", failures.join("\n"));
}
