//! Replacing a results directory as a whole: the new set is written into a staging directory
//! beside `--out` and exchanged with it in one step.
//!
//! Names, for `--out PARENT/NAME`: the staging directory `PARENT/.NAME.fieldgrid-new-PID`,
//! the backup of the fallback path `PARENT/.NAME.fieldgrid-old-PID`, and inside a finished
//! set the list of its files, [`MANIFEST`].
//!
//! Invariants:
//! - `--out` names, at every instant, either the complete previous set (or nothing, when there
//!   was none) or the complete new one. The exchange is `renameat2(RENAME_EXCHANGE)`, atomic;
//!   where the file system lacks it, the old directory is renamed to the backup name and the
//!   new one into place, and [`recover`] undoes a crash between the two renames by putting
//!   the backup back.
//! - [`recover`] runs under the directory's lock, so every staging or backup directory it
//!   finds belongs to a run that has ended.
//! - A set only replaces a directory that holds nothing but an earlier set's files (named by
//!   its manifest, or the result names of versions without one): a run never deletes a file
//!   it did not write.

use std::fs;
use std::io;
use std::path::{Path, PathBuf};

/// The file listing a finished set (one name per line), written last into the staging
/// directory.
pub const MANIFEST: &str = ".fieldgrid-set";

/// The result files of versions that wrote no manifest.
const EARLIER_RESULT_NAMES: &[&str] = &[
    "summary.json",
    "capacitance.csv",
    "hotspots.csv",
    "surface_charge.csv",
    "field.csv",
    "field.vti",
    "potential.png",
    "field.png",
    "capacitance.cir",
    "line.csv",
    "compare.csv",
    "compare.json",
    "field_change.png",
    "preview.png",
    "check.json",
    "sweep.json",
    "sweep.csv",
];

/// `.NAME.fieldgrid-KIND-PID` beside `out`.
pub fn sibling(out: &Path, kind: &str, pid: u32) -> PathBuf {
    let name = out.file_name().unwrap_or_default().to_string_lossy();
    out.with_file_name(format!(".{name}.fieldgrid-{kind}-{pid}"))
}

/// The staging and backup directories beside `out` left by earlier runs: (staging, backup).
fn leftovers(out: &Path) -> (Vec<PathBuf>, Vec<PathBuf>) {
    let name = out.file_name().unwrap_or_default().to_string_lossy();
    let parent = out.parent().unwrap_or(Path::new("."));
    let (mut new, mut old) = (Vec::new(), Vec::new());
    let Ok(entries) = fs::read_dir(parent) else {
        return (new, old);
    };
    let stem = format!(".{name}.fieldgrid-");
    for e in entries.flatten() {
        let n = e.file_name().to_string_lossy().into_owned();
        let Some(rest) = n.strip_prefix(&stem) else {
            continue;
        };
        let kind_pid = rest.split_once('-');
        match kind_pid {
            Some(("new", pid)) if pid.parse::<u32>().is_ok() => new.push(e.path()),
            Some(("old", pid)) if pid.parse::<u32>().is_ok() => old.push(e.path()),
            _ => {}
        }
    }
    (new, old)
}

/// What [`recover`] did.
#[derive(Debug, Default, PartialEq, Eq)]
pub struct Recovery {
    /// The previous set was put back after a run died between its two renames.
    pub restored: bool,
    /// Staging or backup directories of ended runs removed.
    pub removed: usize,
}

/// Cleans up after runs into `out` that ended without finishing (call with the lock held).
pub fn recover(out: &Path) -> Recovery {
    let (new, old) = leftovers(out);
    let mut r = Recovery::default();
    for b in old {
        if !out.exists() && fs::rename(&b, out).is_ok() {
            r.restored = true;
        } else if fs::remove_dir_all(&b).is_ok() {
            r.removed += 1;
        }
    }
    for s in new {
        if fs::remove_dir_all(&s).is_ok() {
            r.removed += 1;
        }
    }
    r
}

/// The first entry of the existing directory `out` that is not part of an earlier result set
/// (nor a temporary of an earlier version's writer), if any.
pub fn foreign_entry(out: &Path) -> io::Result<Option<String>> {
    let listed: Option<Vec<String>> = fs::read_to_string(out.join(MANIFEST))
        .ok()
        .map(|t| t.lines().map(str::to_string).collect());
    for e in fs::read_dir(out)? {
        let e = e?;
        let name = e.file_name().to_string_lossy().into_owned();
        let ours = name == MANIFEST
            || super::temporary_owner(&name).is_some()
            || match &listed {
                Some(l) => l.contains(&name),
                None => EARLIER_RESULT_NAMES.contains(&name.as_str()),
            };
        if !ours || !e.file_type()?.is_file() {
            return Ok(Some(name));
        }
    }
    Ok(None)
}

/// True when `dir` has no entries.
pub fn is_empty_dir(dir: &Path) -> bool {
    fs::read_dir(dir).is_ok_and(|mut d| d.next().is_none())
}

/// Exchanges the directories `a` and `b` atomically. `Unsupported` where the file system
/// cannot.
#[cfg(target_os = "linux")]
fn exchange(a: &Path, b: &Path) -> io::Result<()> {
    use std::ffi::CString;
    use std::os::unix::ffi::OsStrExt;
    let ca = CString::new(a.as_os_str().as_bytes())?;
    let cb = CString::new(b.as_os_str().as_bytes())?;
    // SAFETY: two NUL-terminated paths that live across the call.
    let r = unsafe {
        libc::renameat2(
            libc::AT_FDCWD,
            ca.as_ptr(),
            libc::AT_FDCWD,
            cb.as_ptr(),
            libc::RENAME_EXCHANGE,
        )
    };
    if r == 0 {
        return Ok(());
    }
    let e = io::Error::last_os_error();
    match e.raw_os_error() {
        Some(libc::EINVAL) | Some(libc::ENOSYS) | Some(libc::ENOTSUP) => {
            Err(io::Error::new(io::ErrorKind::Unsupported, e))
        }
        _ => Err(e),
    }
}

#[cfg(not(target_os = "linux"))]
fn exchange(_a: &Path, _b: &Path) -> io::Result<()> {
    Err(io::Error::new(io::ErrorKind::Unsupported, "no exchange"))
}

/// Puts the finished `staging` in the place of `out` (which may be absent or an earlier set)
/// and removes the earlier set. `step` is called between the steps (interruption points for
/// the fault-injection tests; nothing otherwise).
pub fn replace(staging: &Path, out: &Path, step: &mut dyn FnMut()) -> io::Result<()> {
    if !out.exists() {
        fs::rename(staging, out)?;
        step();
        return Ok(());
    }
    match exchange(staging, out) {
        Ok(()) => {
            step();
            // `staging` now holds the earlier set.
            let _ = fs::remove_dir_all(staging);
            Ok(())
        }
        Err(e) if e.kind() == io::ErrorKind::Unsupported => {
            let backup = sibling(out, "old", std::process::id());
            fs::rename(out, &backup)?;
            step();
            if let Err(e) = fs::rename(staging, out) {
                let _ = fs::rename(&backup, out);
                return Err(e);
            }
            step();
            let _ = fs::remove_dir_all(&backup);
            Ok(())
        }
        Err(e) => Err(e),
    }
}

/// Flushes a directory's entries to disk (a rename inside it survives a power cut).
pub fn sync_dir(dir: &Path) {
    if let Ok(d) = fs::File::open(dir) {
        let _ = d.sync_all();
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    fn scratch(name: &str) -> PathBuf {
        let d = std::env::temp_dir().join(format!("fieldgrid-swap-{}-{name}", std::process::id()));
        let _ = fs::remove_dir_all(&d);
        fs::create_dir_all(&d).unwrap();
        d
    }

    #[test]
    fn replace_exchanges_a_full_directory_for_the_new_set() {
        let d = scratch("replace");
        let out = d.join("out");
        fs::create_dir(&out).unwrap();
        fs::write(out.join("potential.png"), "old").unwrap();
        let staging = sibling(&out, "new", 1);
        fs::create_dir(&staging).unwrap();
        fs::write(staging.join("summary.json"), "new").unwrap();
        replace(&staging, &out, &mut || {}).unwrap();
        assert_eq!(fs::read_to_string(out.join("summary.json")).unwrap(), "new");
        assert!(!out.join("potential.png").exists());
        assert!(!staging.exists());
    }

    #[test]
    fn recovery_puts_back_the_previous_set_when_a_run_died_between_its_renames() {
        let d = scratch("recover");
        let out = d.join("out");
        let backup = sibling(&out, "old", 999_999_999);
        fs::create_dir(&backup).unwrap();
        fs::write(backup.join("summary.json"), "old").unwrap();
        let staging = sibling(&out, "new", 999_999_999);
        fs::create_dir(&staging).unwrap();
        fs::write(staging.join("summary.json"), "new").unwrap();
        let r = recover(&out);
        assert!(r.restored);
        assert_eq!(fs::read_to_string(out.join("summary.json")).unwrap(), "old");
        assert!(!backup.exists() && !staging.exists());
        // With the new set already in place, a leftover backup is simply removed.
        fs::create_dir(&backup).unwrap();
        assert_eq!(
            recover(&out),
            Recovery {
                restored: false,
                removed: 1
            }
        );
        assert!(out.join("summary.json").exists());
    }

    #[test]
    fn a_file_outside_the_earlier_set_is_foreign() {
        let d = scratch("foreign");
        fs::write(d.join("summary.json"), "").unwrap();
        assert_eq!(foreign_entry(&d).unwrap(), None);
        fs::write(d.join("notes.txt"), "").unwrap();
        assert_eq!(foreign_entry(&d).unwrap().as_deref(), Some("notes.txt"));
        fs::write(d.join(MANIFEST), "summary.json\nnotes.txt\n").unwrap();
        assert_eq!(foreign_entry(&d).unwrap(), None);
    }
}
