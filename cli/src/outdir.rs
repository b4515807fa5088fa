//! The results directory: every file is written whole or not at all.
//!
//! Invariants:
//! - A file appears under its final name only complete (written to a hidden temporary name
//!   in the same directory, then renamed). The directory is checked before any solve starts,
//!   so a bad `--out` costs no solve.
//! - An interrupted run (SIGINT, SIGTERM, SIGHUP) leaves no temporary file: the temporary
//!   names being written are registered, and a signal thread removes them (and the
//!   directories this run created, when still empty) before the process exits with
//!   128 + the signal number. While it cleans up it holds the registry, so no new temporary
//!   file is started. A run killed outright (SIGKILL) cannot clean up; the next run into the
//!   same directory removes the temporary files of processes that no longer exist.

use crate::error::Failure;
use std::fs;
use std::io::Write;
use std::path::{Path, PathBuf};
use std::sync::{Mutex, MutexGuard, Once};

/// What an interruption must remove: temporary files being written, and the directories
/// this process created, outermost first.
#[derive(Debug, Default)]
pub struct Pending {
    files: Vec<PathBuf>,
    dirs: Vec<PathBuf>,
}

static PENDING: Mutex<Pending> = Mutex::new(Pending {
    files: Vec::new(),
    dirs: Vec::new(),
});

fn pending() -> MutexGuard<'static, Pending> {
    PENDING.lock().unwrap_or_else(|e| e.into_inner())
}

/// Removes every registered temporary file, and every directory this process created that
/// is still empty. Returns the registry locked: while the guard lives no temporary file can
/// be started, so the caller can exit without a new one appearing.
pub fn clean_up_interrupted() -> MutexGuard<'static, Pending> {
    let mut p = pending();
    for f in p.files.drain(..) {
        let _ = fs::remove_file(&f);
    }
    for d in p.dirs.iter().rev() {
        // Only an empty directory goes: results already completed stay.
        let _ = fs::remove_dir(d);
    }
    p.dirs.clear();
    p
}

/// Starts (once per process) the thread that cleans up on SIGINT, SIGTERM and SIGHUP and
/// then ends the process with 128 + the signal number.
fn install_interrupt_cleanup() {
    static ONCE: Once = Once::new();
    ONCE.call_once(|| {
        #[cfg(unix)]
        {
            use signal_hook::consts::{SIGHUP, SIGINT, SIGTERM};
            if let Ok(mut signals) = signal_hook::iterator::Signals::new([SIGINT, SIGTERM, SIGHUP])
            {
                std::thread::spawn(move || {
                    if let Some(sig) = signals.forever().next() {
                        let _guard = clean_up_interrupted();
                        eprintln!("\nfieldgrid: interrupted; no partial result was left");
                        std::process::exit(128 + sig);
                    }
                });
            }
        }
    });
}

/// The process id in a temporary name `.NAME.partial-PID` or `.fieldgrid-write-test-PID`.
fn temporary_owner(name: &str) -> Option<u32> {
    if !name.starts_with('.') {
        return None;
    }
    let (_, pid) = name
        .rsplit_once(".partial-")
        .or_else(|| name.rsplit_once(".fieldgrid-write-test-"))?;
    pid.parse().ok()
}

/// Removes the temporary files left in `dir` by processes that no longer run (a run killed
/// with SIGKILL, or a crash of the machine).
fn remove_stale_temporaries(dir: &Path) {
    let Ok(entries) = fs::read_dir(dir) else {
        return;
    };
    for e in entries.flatten() {
        let name = e.file_name().to_string_lossy().into_owned();
        if let Some(pid) = temporary_owner(&name) {
            let alive = pid == std::process::id() || Path::new(&format!("/proc/{pid}")).exists();
            if !alive && e.path().is_file() {
                let _ = fs::remove_file(e.path());
            }
        }
    }
}

/// A checked, writable results directory.
#[derive(Debug, Clone)]
pub struct OutDir {
    path: PathBuf,
}

impl OutDir {
    /// Checks that `path` is (or can be made) a writable directory. Creates it.
    pub fn prepare(path: &Path) -> Result<OutDir, Failure> {
        if path.exists() && !path.is_dir() {
            return Err(Failure::input(format!(
                "--out {}: exists and is not a directory",
                path.display()
            )));
        }
        install_interrupt_cleanup();
        // The levels this run creates, deepest first, so that an interruption removes them.
        let mut created = Vec::new();
        let mut level = Some(path);
        while let Some(l) = level.filter(|l| !l.as_os_str().is_empty() && !l.exists()) {
            created.push(l.to_path_buf());
            level = l.parent();
        }
        {
            let mut p = pending();
            fs::create_dir_all(path).map_err(|e| {
                Failure::input(format!(
                    "--out {}: cannot create the directory: {e}",
                    path.display()
                ))
            })?;
            p.dirs.extend(created.iter().rev().cloned());
        }
        remove_stale_temporaries(path);
        let probe = path.join(format!(".fieldgrid-write-test-{}", std::process::id()));
        pending().files.push(probe.clone());
        let written = fs::write(&probe, b"");
        let _ = fs::remove_file(&probe);
        pending().files.retain(|f| *f != probe);
        if let Err(e) = written {
            // Leave nothing behind: the directories this call created go again.
            for d in &created {
                let _ = fs::remove_dir(d);
            }
            return Err(Failure::input(format!(
                "--out {}: not writable: {e}",
                path.display()
            )));
        }
        Ok(OutDir {
            path: path.to_path_buf(),
        })
    }

    /// The directory.
    pub fn path(&self) -> &Path {
        &self.path
    }

    /// Writes `name` atomically.
    pub fn write(&self, name: &str, bytes: &[u8]) -> Result<PathBuf, Failure> {
        let final_path = self.path.join(name);
        let tmp = self
            .path
            .join(format!(".{name}.partial-{}", std::process::id()));
        // Registered before it exists, so an interruption at any point removes it.
        pending().files.push(tmp.clone());
        let result = (|| -> std::io::Result<()> {
            let mut f = fs::File::create(&tmp)?;
            f.write_all(bytes)?;
            f.sync_all()?;
            fs::rename(&tmp, &final_path)
        })();
        if result.is_err() {
            let _ = fs::remove_file(&tmp);
        }
        pending().files.retain(|f| *f != tmp);
        result.map_err(|e| Failure::io(format!("writing {}", final_path.display()), e))?;
        Ok(final_path)
    }

    /// Writes a PNG atomically.
    pub fn write_png(&self, name: &str, img: &image::RgbImage) -> Result<PathBuf, Failure> {
        use image::codecs::png::{CompressionType, FilterType, PngEncoder};
        let mut bytes = Vec::new();
        // Best compression: the maps are smooth gradients under thin lines, and the files
        // end up in reports and repositories.
        let enc =
            PngEncoder::new_with_quality(&mut bytes, CompressionType::Best, FilterType::Adaptive);
        img.write_with_encoder(enc)
            .map_err(|e| Failure::io(format!("encoding {name}"), e))?;
        self.write(name, &bytes)
    }
}

/// Builds a CSV document in memory with the `csv` crate.
pub fn csv_bytes(header: &[&str], rows: impl IntoIterator<Item = Vec<String>>) -> Vec<u8> {
    let mut w = csv::Writer::from_writer(Vec::new());
    w.write_record(header).expect("in-memory CSV write");
    for r in rows {
        w.write_record(&r).expect("in-memory CSV write");
    }
    w.into_inner().expect("in-memory CSV flush")
}

/// A number for CSV: shortest round-trip form, empty for NaN.
pub fn num(v: f64) -> String {
    if v.is_finite() {
        format!("{v:e}")
    } else {
        String::new()
    }
}
