//! Running the `fieldgrid` command in-process and handling the files around it: exit codes,
//! scratch directories, design files and the JSON a run writes.
//!
//! `ExitCode` has neither `PartialEq` nor an accessor, so exit codes are compared through
//! their `Debug` text. Scratch directories live under the system temporary directory and are
//! named by a prefix of the test file, the process id and the test, so that test binaries
//! running in parallel never share one.

use std::path::{Path, PathBuf};
use std::process::ExitCode;

/// Runs `fieldgrid ARGS...` in this process and returns its exit code.
pub fn run(args: &[&str]) -> ExitCode {
    let mut full = vec!["fieldgrid"];
    full.extend_from_slice(args);
    fieldgrid_cli::main_with_args(full)
}

/// The `Debug` text of an exit code: equal texts mean equal codes.
pub fn code(c: ExitCode) -> String {
    format!("{c:?}")
}

/// Asserts that the exit code is `want`.
pub fn expect(c: ExitCode, want: u8) {
    assert_eq!(code(c), code(ExitCode::from(want)));
}

/// Asserts that the exit code is `want`, naming `what` was run when it is not.
pub fn expect_for(c: ExitCode, want: u8, what: &str) {
    assert_eq!(code(c), code(ExitCode::from(want)), "{what}");
}

/// A fresh, empty directory `PREFIX-PID-NAME` in the system temporary directory. `prefix`
/// names the test file and `name` the test, so that no two tests share a directory.
pub fn scratch(prefix: &str, name: &str) -> PathBuf {
    let d = std::env::temp_dir().join(format!("{prefix}-{}-{name}", std::process::id()));
    let _ = std::fs::remove_dir_all(&d);
    std::fs::create_dir_all(&d).unwrap();
    d
}

/// Writes `text` to `dir/name` and returns the path as a command-line argument.
pub fn write(dir: &Path, name: &str, text: &str) -> String {
    let p = dir.join(name);
    std::fs::write(&p, text).unwrap();
    p.display().to_string()
}

/// A path as a command-line argument (test paths are UTF-8).
pub fn s(p: &Path) -> &str {
    p.to_str().unwrap()
}

/// Reads a JSON file.
pub fn read_json(path: &Path) -> serde_json::Value {
    serde_json::from_slice(&std::fs::read(path).unwrap()).unwrap()
}

/// Reads the `summary.json` a run wrote into `out`.
pub fn summary(out: &Path) -> serde_json::Value {
    read_json(&out.join("summary.json"))
}

/// True when a summary's `warning_details` hold a warning with this stable `code`, and its
/// text stands in `warnings` beside it.
pub fn has_warning_code(summary: &serde_json::Value, code: &str) -> bool {
    let details = summary["warning_details"].as_array().unwrap();
    let texts = summary["warnings"].as_array().unwrap();
    assert_eq!(details.len(), texts.len(), "one code per warning");
    details
        .iter()
        .zip(texts)
        .any(|(d, t)| d["code"] == code && d["message"] == *t)
}
