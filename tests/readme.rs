//! Every command in the README runs as written, and every output the README quotes is what
//! the command prints today.
//!
//! The README's fenced blocks declare what they are, and this test holds them to it:
//! - ```` ```sh ````: commands, one per line (a trailing `\` continues a line). Each runs with
//!   `sh -c` in a scratch directory that holds `geometries/` (a link to the repository's), with
//!   `fieldgrid` on PATH. `cargo run --release -- ARGS` runs as `fieldgrid ARGS` (the same
//!   program; `.ci/run` runs the set-up command through cargo itself), and `cargo test
//!   --workspace` is skipped: it is the run this test is part of. A trailing comment
//!   `# exit code N` states the exit code the command must end with; otherwise it is 0.
//! - ```` ```bash ````: a job script. It runs with `bash`; a Slurm array script
//!   (`#SBATCH --array=A-B`) runs once per task, with the variables Slurm sets for a whole
//!   array, except one task in the middle, which runs afterwards alone with the variables
//!   Slurm sets for one resubmitted task (`sbatch --array=T`: count 1, min = max = T).
//! - ```` ```text ````: quoted output, announced by the HTML comment on the line before the
//!   fence: `<!-- output of: PREFIX -->` (what the first command starting with PREFIX
//!   printed, standard output and error), `<!-- file: PATH -->` (a file a command wrote), or
//!   `<!-- not checked: WHY -->`. Every quoted line must appear, as a whole line, in what was
//!   printed or written; lines holding `...` mark a cut and are not compared.
//! - ```` ```toml ````: design-file excerpts, not run.
//! - Python: the commands `pip ...` and `python3 ...` of an ```` ```sh ```` block and the
//!   scripts of ```` ```python ```` blocks run in the repository's root (so `pip install
//!   ./python` installs this tree) inside the virtual environment `python-venv` of the
//!   target directory (made when missing; `.ci/run` makes the same one, so the extension is
//!   built once), with `fieldgrid` on PATH. Where `python3 -m venv` fails they are skipped
//!   and the run says so.
//! - any other fence, or a block with no kind, fails the test: a command cannot slip past it.
//!
//! The file has its own `main` (no test harness): started under the name `fieldgrid` (the
//! link the scratch directory puts on PATH) it is the command itself, through the same entry
//! point as `cli/src/main.rs`; otherwise it runs the checks below. So the workspace keeps a
//! single binary, and `cargo run` at its root stays unambiguous.

use std::path::{Path, PathBuf};
use std::process::Command;

/// The kinds of block the README may hold.
#[derive(Debug, PartialEq)]
enum Kind {
    Commands,
    Script,
    Output(Check),
    /// A design; with a `<!-- file: PATH -->` announcement, every line must be in that file.
    Toml(Option<String>),
    /// A Python script, run by the virtual environment's `python3`.
    Python,
}

#[derive(Debug, PartialEq)]
enum Check {
    OutputOf(String),
    File(String),
    Unchecked,
}

#[derive(Debug)]
struct Block {
    kind: Kind,
    /// 1-based line of the opening fence.
    line: usize,
    body: Vec<String>,
}

fn repo() -> PathBuf {
    Path::new(env!("CARGO_MANIFEST_DIR"))
        .parent()
        .unwrap()
        .to_path_buf()
}

fn blocks(text: &str) -> Vec<Block> {
    let lines: Vec<&str> = text.lines().collect();
    let mut out = Vec::new();
    let mut k = 0;
    while k < lines.len() {
        let Some(info) = lines[k].strip_prefix("```") else {
            k += 1;
            continue;
        };
        let start = k;
        let mut body = Vec::new();
        k += 1;
        while k < lines.len() && !lines[k].starts_with("```") {
            body.push(lines[k].to_string());
            k += 1;
        }
        assert!(k < lines.len(), "README line {}: unclosed fence", start + 1);
        k += 1;
        let kind = match info.trim() {
            "sh" => Kind::Commands,
            "bash" => Kind::Script,
            "toml" => Kind::Toml(match optional_announcement(&lines, start) {
                Some(Check::File(f)) => Some(f),
                _ => None,
            }),
            "text" => Kind::Output(announcement(&lines, start)),
            "python" => Kind::Python,
            other => panic!(
                "README line {}: a fenced block of kind {other:?}; use sh (commands), bash \
                 (a script), python (a script), text (output) or toml (a design)",
                start + 1
            ),
        };
        out.push(Block {
            kind,
            line: start + 1,
            body,
        });
    }
    out
}

/// The announcement above a block, if the nearest non-blank line above is one.
fn optional_announcement(lines: &[&str], fence: usize) -> Option<Check> {
    let above = lines[..fence].iter().rev().find(|l| !l.trim().is_empty())?;
    above
        .trim()
        .starts_with("<!--")
        .then(|| announcement(lines, fence))
}

/// The HTML comment above a text block (blank lines between are allowed).
fn announcement(lines: &[&str], fence: usize) -> Check {
    let above = lines[..fence]
        .iter()
        .rev()
        .find(|l| !l.trim().is_empty())
        .map(|l| l.trim())
        .unwrap_or("");
    let inner = above
        .strip_prefix("<!--")
        .and_then(|s| s.strip_suffix("-->"))
        .map(str::trim)
        .unwrap_or_else(|| {
            panic!(
                "README line {}: a text block needs `<!-- output of: ... -->`, \
                 `<!-- file: ... -->` or `<!-- not checked: ... -->` on the line above",
                fence + 1
            )
        });
    if let Some(c) = inner.strip_prefix("output of:") {
        Check::OutputOf(c.trim().to_string())
    } else if let Some(f) = inner.strip_prefix("file:") {
        Check::File(f.trim().to_string())
    } else if inner.starts_with("not checked:") {
        Check::Unchecked
    } else {
        panic!("README line {}: unknown announcement {inner:?}", fence + 1)
    }
}

/// One command of a `sh` block: its text as run and the exit code it must end with.
fn commands(block: &Block) -> Vec<(String, u8)> {
    let mut joined: Vec<String> = Vec::new();
    let mut pending = String::new();
    for l in &block.body {
        let t = l.trim_end();
        if let Some(head) = t.strip_suffix('\\') {
            pending.push_str(head);
            pending.push(' ');
            continue;
        }
        pending.push_str(t);
        joined.push(std::mem::take(&mut pending));
    }
    assert!(
        pending.is_empty(),
        "README line {}: dangling `\\`",
        block.line
    );
    joined
        .into_iter()
        .filter(|c| !c.trim().is_empty() && !c.trim_start().starts_with('#'))
        .filter_map(|c| {
            let (cmd, comment) = match c.split_once(" #") {
                Some((a, b)) => (a.trim().to_string(), b.trim().to_string()),
                None => (c.trim().to_string(), String::new()),
            };
            let code = comment
                .strip_prefix("exit code ")
                .map(|r| {
                    r.split(|ch: char| !ch.is_ascii_digit())
                        .next()
                        .unwrap()
                        .parse::<u8>()
                        .unwrap_or_else(|_| panic!("README line {}: bad exit code", block.line))
                })
                .unwrap_or(0);
            if cmd == "cargo test --workspace" {
                return None;
            }
            // Runs of spaces (from continued lines) folded, so that prefixes match.
            let cmd = cmd.split_whitespace().collect::<Vec<_>>().join(" ");
            let cmd = match cmd.strip_prefix("cargo run --release -- ") {
                Some(rest) => format!("fieldgrid {rest}"),
                None => cmd,
            };
            assert!(
                cmd.starts_with("fieldgrid ") || is_python(&cmd),
                "README line {}: `{cmd}` is not a fieldgrid command",
                block.line
            );
            Some((cmd, code))
        })
        .collect()
}

/// A Python command: run in the virtual environment, from the repository's root.
fn is_python(cmd: &str) -> bool {
    cmd.starts_with("pip ") || cmd.starts_with("python3 ")
}

/// The target directory this program was built in (`TARGET/debug/deps/readme-HASH`).
fn target_dir() -> PathBuf {
    let exe = std::env::current_exe().unwrap();
    exe.ancestors().nth(3).unwrap().to_path_buf()
}

/// The virtual environment's `bin` directory, made when missing; `None` where Python cannot
/// make one (the Python parts of the README are then skipped).
fn python_env() -> Option<PathBuf> {
    let venv = target_dir().join("python-venv");
    let bin = venv.join("bin");
    if !bin.join("python3").exists() {
        let made = Command::new("python3")
            .args(["-m", "venv"])
            .arg(&venv)
            .status()
            .map(|s| s.success())
            .unwrap_or(false);
        if !made {
            return None;
        }
    }
    Some(bin)
}

/// Runs a Python command or script in the repository's root inside the virtual environment
/// `bin`, `fieldgrid` on PATH; the variables cargo sets for this test are left out, so a
/// build that `pip` starts is an ordinary one.
fn run_python(bin: &Path, path: &str, program: &str, script: &str) -> (i32, String) {
    let mut c = Command::new(program);
    c.arg("-c")
        .arg(script)
        .current_dir(repo())
        .env("PATH", format!("{}:{path}", bin.display()))
        .env("VIRTUAL_ENV", bin.parent().unwrap())
        .env("RAYON_NUM_THREADS", "2");
    for (k, _) in std::env::vars() {
        if k == "CARGO" || (k.starts_with("CARGO_") && k != "CARGO_HOME" && k != "CARGO_TARGET_DIR")
        {
            c.env_remove(&k);
        }
    }
    let o = c.output().expect("run a Python command");
    let printed = format!(
        "{}{}",
        String::from_utf8_lossy(&o.stdout),
        String::from_utf8_lossy(&o.stderr)
    );
    (o.status.code().unwrap_or(-1), printed)
}

/// The scratch directory: `geometries/` linked, `bin/fieldgrid` the program under test.
fn scratch() -> (PathBuf, String) {
    let dir = std::env::temp_dir().join(format!("fieldgrid-readme-{}", std::process::id()));
    let _ = std::fs::remove_dir_all(&dir);
    let bin = dir.join("bin");
    let work = dir.join("work");
    std::fs::create_dir_all(&bin).unwrap();
    std::fs::create_dir_all(&work).unwrap();
    std::os::unix::fs::symlink(repo().join("geometries"), work.join("geometries")).unwrap();
    // This very program, named `fieldgrid`, is the command (see `main`).
    std::os::unix::fs::symlink(std::env::current_exe().unwrap(), bin.join("fieldgrid")).unwrap();
    let path = format!(
        "{}:{}",
        bin.display(),
        std::env::var("PATH").unwrap_or_default()
    );
    (work, path)
}

fn run_shell(
    work: &Path,
    path: &str,
    program: &str,
    script: &str,
    env: &[(&str, String)],
) -> (i32, String) {
    let mut c = Command::new(program);
    c.arg("-c")
        .arg(script)
        .current_dir(work)
        .env("PATH", path)
        // Two workers at most, as on the CI machine; results do not depend on the count.
        .env("RAYON_NUM_THREADS", "2");
    for (k, v) in env {
        c.env(k, v);
    }
    let o = c.output().expect("run a shell");
    let printed = format!(
        "{}{}",
        String::from_utf8_lossy(&o.stdout),
        String::from_utf8_lossy(&o.stderr)
    );
    (o.status.code().unwrap_or(-1), printed)
}

/// The task ids of `#SBATCH --array=A-B`, if the script is a Slurm array job.
fn array_tasks(script: &[String]) -> Option<Vec<u32>> {
    let spec = script.iter().find_map(|l| {
        l.trim()
            .strip_prefix("#SBATCH --array=")
            .map(|r| r.split_whitespace().next().unwrap().to_string())
    })?;
    let (a, b) = spec.split_once('-').expect("an array range A-B");
    Some((a.parse().unwrap()..=b.parse().unwrap()).collect())
}

fn check_quoted(block: &Block, printed: &str, what: &str) {
    let have: std::collections::HashSet<&str> = printed.lines().map(str::trim_end).collect();
    let missing: Vec<&String> = block
        .body
        .iter()
        .filter(|l| !l.contains("...") && !l.trim().is_empty())
        .filter(|l| !have.contains(l.trim_end()))
        .collect();
    assert!(
        missing.is_empty(),
        "README line {}: {what} no longer shows these quoted lines:\n{}\n--- it printed:\n{printed}",
        block.line,
        missing
            .iter()
            .map(|s| s.as_str())
            .collect::<Vec<_>>()
            .join("\n")
    );
}

fn every_readme_command_runs_as_written_and_prints_what_the_readme_quotes() {
    let text = std::fs::read_to_string(repo().join("README.md")).unwrap();
    let blocks = blocks(&text);
    let (work, path) = scratch();
    // Each command run so far, with its standard output and error.
    let mut ran: Vec<(String, String)> = Vec::new();
    let mut files_checked = 0;
    let mut count = 0;
    let mut python_skipped = 0;
    let python = std::sync::OnceLock::new();
    let python = || python.get_or_init(python_env).clone();
    for b in &blocks {
        match &b.kind {
            Kind::Toml(None) => {}
            Kind::Python => {
                let Some(bin) = python() else {
                    python_skipped += 1;
                    continue;
                };
                let (code, printed) = run_python(&bin, &path, "python3", &b.body.join("\n"));
                assert_eq!(
                    code, 0,
                    "README line {}: the Python script failed:\n{printed}",
                    b.line
                );
                count += 1;
            }
            Kind::Toml(Some(f)) => {
                let body = std::fs::read_to_string(work.join(f))
                    .unwrap_or_else(|e| panic!("README line {}: {f}: {e}", b.line));
                check_quoted(b, &body, f);
                files_checked += 1;
            }
            Kind::Commands => {
                for (cmd, want) in commands(b) {
                    let (code, printed) = if is_python(&cmd) {
                        let Some(bin) = python() else {
                            python_skipped += 1;
                            continue;
                        };
                        run_python(&bin, &path, "sh", &cmd)
                    } else {
                        run_shell(&work, &path, "sh", &cmd, &[])
                    };
                    assert_eq!(
                        code,
                        i32::from(want),
                        "README line {}: `{cmd}` exited {code}, the README says {want}:\n{printed}",
                        b.line
                    );
                    count += 1;
                    ran.push((cmd, printed));
                }
            }
            Kind::Script => {
                let script = b.body.join("\n");
                let tasks = array_tasks(&b.body).unwrap_or_default();
                let slurm = |id: u32, of: &[u32]| {
                    vec![
                        ("SLURM_ARRAY_TASK_ID", id.to_string()),
                        ("SLURM_ARRAY_TASK_COUNT", of.len().to_string()),
                        ("SLURM_ARRAY_TASK_MIN", of[0].to_string()),
                        ("SLURM_ARRAY_TASK_MAX", of[of.len() - 1].to_string()),
                        ("SLURM_CPUS_PER_TASK", "1".to_string()),
                    ]
                };
                // The whole array but one task (as if it failed), then that task resubmitted
                // alone: the merge below needs every shard.
                let resubmitted = tasks.get(tasks.len() / 2).copied();
                let mut envs: Vec<Vec<(&str, String)>> = tasks
                    .iter()
                    .filter(|&&t| Some(t) != resubmitted)
                    .map(|&t| slurm(t, &tasks))
                    .collect();
                if let Some(t) = resubmitted {
                    envs.push(slurm(t, &[t]));
                }
                if envs.is_empty() {
                    envs.push(Vec::new());
                }
                for env in &envs {
                    let (code, printed) = run_shell(&work, &path, "bash", &script, env);
                    assert_eq!(
                        code, 0,
                        "README line {}: the script failed with {env:?}:\n{printed}",
                        b.line
                    );
                    count += 1;
                }
            }
            Kind::Output(Check::Unchecked) => {}
            Kind::Output(Check::OutputOf(prefix)) => {
                if is_python(prefix) && python().is_none() {
                    continue;
                }
                let (_, r) = ran
                    .iter()
                    .find(|(c, _)| c.starts_with(prefix.as_str()))
                    .unwrap_or_else(|| {
                        panic!(
                            "README line {}: no command above starts with `{prefix}`",
                            b.line
                        )
                    });
                check_quoted(b, r, &format!("`{prefix}`"));
            }
            Kind::Output(Check::File(f)) => {
                let body = std::fs::read_to_string(work.join(f)).unwrap_or_else(|e| {
                    panic!(
                        "README line {}: {f} was not written by a command above: {e}",
                        b.line
                    )
                });
                check_quoted(b, &body, f);
                files_checked += 1;
            }
        }
    }
    assert!(
        count >= 10,
        "only {count} commands found in the README: is the parser still reading it?"
    );
    println!("{count} README commands ran; {files_checked} quoted files checked");
    if python_skipped > 0 {
        println!("{python_skipped} Python commands and scripts skipped: `python3 -m venv` failed");
    }
    let _ = std::fs::remove_dir_all(work.parent().unwrap());
}

fn readme_block_parser_reads_exit_codes_continuations_and_announcements() {
    let text = "x\n```sh\nfieldgrid solve a \\\n  --out b   # exit code 1: margin\ncargo test --workspace\n\
                cargo run --release -- check a\n```\n<!-- output of: fieldgrid solve a -->\n```text\nhi\n```\n";
    let bs = blocks(text);
    assert_eq!(bs.len(), 2);
    assert_eq!(
        commands(&bs[0]),
        vec![
            ("fieldgrid solve a --out b".to_string(), 1),
            ("fieldgrid check a".to_string(), 0)
        ]
    );
    assert_eq!(
        bs[1].kind,
        Kind::Output(Check::OutputOf("fieldgrid solve a".to_string()))
    );
    let b = Block {
        kind: Kind::Output(Check::Unchecked),
        line: 1,
        body: vec!["a".into(), "b ... c".into()],
    };
    check_quoted(&b, "a\nz\n", "t");
    // The expected failure's message is not news: keep it off the output.
    let hook = std::panic::take_hook();
    std::panic::set_hook(Box::new(|_| {}));
    let r = std::panic::catch_unwind(|| check_quoted(&b, "z\n", "t"));
    std::panic::set_hook(hook);
    assert!(r.is_err(), "a missing quoted line must fail");
    let t = "<!-- file: a.toml -->\n```toml\nx = 1\n```\n```toml\ny = 2\n```\n";
    let bs = blocks(t);
    assert_eq!(bs[0].kind, Kind::Toml(Some("a.toml".to_string())));
    assert_eq!(bs[1].kind, Kind::Toml(None));
}

/// The checks, in order, by name.
const CHECKS: &[(&str, fn())] = &[
    (
        "readme_block_parser_reads_exit_codes_continuations_and_announcements",
        readme_block_parser_reads_exit_codes_continuations_and_announcements,
    ),
    (
        "every_readme_command_runs_as_written_and_prints_what_the_readme_quotes",
        every_readme_command_runs_as_written_and_prints_what_the_readme_quotes,
    ),
];

fn main() -> std::process::ExitCode {
    let mut args = std::env::args_os();
    let as_cli = args
        .next()
        .and_then(|a| Path::new(&a).file_name().map(|f| f == "fieldgrid"))
        .unwrap_or(false);
    if as_cli {
        return fieldgrid_cli::main_with_args(std::env::args_os());
    }
    // `cargo test` passes filters and harness flags; a filter selects checks by substring.
    let filters: Vec<String> = args
        .map(|a| a.to_string_lossy().into_owned())
        .filter(|a| !a.starts_with('-'))
        .collect();
    let (mut passed, mut failed) = (0, 0);
    for (name, check) in CHECKS {
        if !filters.is_empty() && !filters.iter().any(|f| name.contains(f.as_str())) {
            continue;
        }
        match std::panic::catch_unwind(check) {
            Ok(()) => {
                println!("test {name} ... ok");
                passed += 1;
            }
            Err(_) => {
                println!("test {name} ... FAILED");
                failed += 1;
            }
        }
    }
    println!();
    println!("readme: {passed} passed, {failed} failed");
    if failed == 0 {
        std::process::ExitCode::SUCCESS
    } else {
        std::process::ExitCode::FAILURE
    }
}
