//! The results directory: a run's files appear in `--out` together, as one whole set, or not
//! at all.
//!
//! Invariants:
//! - One writer per directory: [`lock`] takes an advisory lock beside `--out` before anything
//!   is written, and a second run into the same directory is refused with exit 2.
//! - A one-shot run (`solve`, `impedance`, `check`, `compare`, a sweep merge) writes its files
//!   into a staging directory beside `--out` and, after the last one, exchanges it with
//!   `--out` in one step ([`swap`]). At every instant `--out` holds the complete previous set
//!   (or nothing) or the complete new set, never a mix; files of the previous set that the
//!   new run does not write are gone with it. `--out` is checked (and the staging directory
//!   created) before any solve starts, so a bad `--out` costs no solve.
//! - A sweep writes in place ([`OutDir::prepare_in_place`]): each file appears under its name
//!   only whole (written to a hidden temporary name beside it, then renamed), and the table
//!   grows one complete row at a time, so the directory is a valid, resumable sweep at every
//!   instant.
//! - An interruption (SIGINT, SIGTERM, SIGHUP) is handled by a signal thread: it holds the
//!   registry of what is being written, removes the staging directories and temporary files,
//!   the directories this run created when still empty, and the lock file, says exactly what
//!   `--out` holds, and ends the process with 128 + the signal number. While it holds the
//!   registry no file is started and no directory exchanged. A run killed outright (SIGKILL,
//!   a crash) cannot clean up; the next run into the same directory does ([`swap::recover`]).

mod fault;
pub mod lock;
pub mod swap;

use crate::error::Failure;
use lock::DirLock;
use std::fs;
use std::io::Write;
use std::path::{Path, PathBuf};
use std::sync::{Mutex, MutexGuard, Once};

pub use fault::step as interruption_point;

/// One results directory being written by this process.
#[derive(Debug)]
struct SetState {
    /// `--out` as given (for messages).
    shown: PathBuf,
    /// The staging directory; `None` for a directory written in place.
    staging: Option<PathBuf>,
    /// `--out` held an earlier set when the run began.
    previous: bool,
    /// The new set is in place.
    committed: bool,
}

impl SetState {
    /// What the directory holds now, for messages after an interruption or a failure.
    fn describe(&self) -> String {
        let d = self.shown.display();
        match (&self.staging, self.committed, self.previous) {
            (None, _, _) => format!(
                "{d} holds every file finished before the stop, each complete; the same \
                 command resumes"
            ),
            (Some(_), true, _) => format!("{d} holds the new results, complete"),
            (Some(_), false, true) => {
                format!("{d} holds the previous results, complete and unchanged")
            }
            (Some(_), false, false) => format!("nothing was written to {d}"),
        }
    }
}

/// What an interruption must remove or report: temporary files being written, the
/// directories this process created (outermost first), the sets being written and the lock
/// files held.
#[derive(Debug, Default)]
pub struct Pending {
    files: Vec<PathBuf>,
    dirs: Vec<PathBuf>,
    sets: Vec<SetState>,
    locks: Vec<PathBuf>,
}

static PENDING: Mutex<Pending> = Mutex::new(Pending {
    files: Vec::new(),
    dirs: Vec::new(),
    sets: Vec::new(),
    locks: Vec::new(),
});

fn pending() -> MutexGuard<'static, Pending> {
    PENDING.lock().unwrap_or_else(|e| e.into_inner())
}

/// Removes every registered temporary file and uncommitted staging directory, every
/// directory this process created that is still empty, and the lock files. Returns the
/// registry locked (while the guard lives nothing new is started, so the caller can exit
/// without a new file appearing) and the sentence saying what each results directory holds.
pub fn clean_up_interrupted() -> (MutexGuard<'static, Pending>, String) {
    let mut p = pending();
    for f in p.files.drain(..) {
        let _ = fs::remove_file(&f);
    }
    for s in &p.sets {
        if let (Some(staging), false) = (&s.staging, s.committed) {
            let _ = fs::remove_dir_all(staging);
        }
    }
    for d in p.dirs.iter().rev() {
        // Only an empty directory goes: results already completed stay.
        let _ = fs::remove_dir(d);
    }
    p.dirs.clear();
    for l in p.locks.drain(..) {
        let _ = fs::remove_file(&l);
    }
    let what = if p.sets.is_empty() {
        "nothing was written".to_string()
    } else {
        p.sets
            .iter()
            .map(SetState::describe)
            .collect::<Vec<_>>()
            .join("; ")
    };
    (p, what)
}

/// Whether this process has decided about the interrupt clean-up (installed it, or chose to
/// leave signals alone).
static INTERRUPT_CLEANUP: Once = Once::new();

/// Leaves the process's signal handling alone: no results directory of this process starts
/// the interrupt clean-up, so SIGINT, SIGTERM and SIGHUP keep the host's meaning (a Python
/// interpreter notes SIGINT and raises KeyboardInterrupt once the running call returns, after
/// the set is committed or dropped). Takes effect when called before the first
/// [`OutDir::prepare`].
pub fn leave_signals_alone() {
    INTERRUPT_CLEANUP.call_once(|| {});
}

/// Starts (once per process) the thread that cleans up on SIGINT, SIGTERM and SIGHUP and
/// then ends the process with 128 + the signal number.
fn install_interrupt_cleanup() {
    INTERRUPT_CLEANUP.call_once(|| {
        #[cfg(unix)]
        {
            use signal_hook::consts::{SIGHUP, SIGINT, SIGTERM};
            if let Ok(mut signals) = signal_hook::iterator::Signals::new([SIGINT, SIGTERM, SIGHUP])
            {
                std::thread::spawn(move || {
                    if let Some(sig) = signals.forever().next() {
                        let (_guard, what) = clean_up_interrupted();
                        eprintln!("\nfieldgrid: interrupted; {what}");
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

/// `--out` resolved: the directory's absolute path with symbolic links followed, its parent
/// created. Refuses what cannot be a results directory.
fn resolve(path: &Path, created: &mut Vec<PathBuf>) -> Result<PathBuf, Failure> {
    let shown = path.display();
    if let Ok(m) = fs::symlink_metadata(path) {
        if m.file_type().is_symlink() {
            let to = fs::read_link(path)
                .map(|t| t.display().to_string())
                .unwrap_or_default();
            match fs::metadata(path) {
                Err(_) => {
                    return Err(Failure::input(format!(
                        "--out {shown} is a symbolic link to {to}, which does not exist: \
                         create that directory, remove the link, or give another --out"
                    )))
                }
                Ok(t) if !t.is_dir() => {
                    return Err(Failure::input(format!(
                        "--out {shown} is a symbolic link to {to}, which is not a directory"
                    )))
                }
                Ok(_) => {}
            }
        } else if !m.is_dir() {
            return Err(Failure::input(format!(
                "--out {shown}: exists and is not a directory"
            )));
        }
        return fs::canonicalize(path).map_err(|e| Failure::input(format!("--out {shown}: {e}")));
    }
    let name = path
        .file_name()
        .ok_or_else(|| Failure::input(format!("--out {shown}: not a directory name")))?;
    let parent = match path.parent() {
        Some(p) if !p.as_os_str().is_empty() => p.to_path_buf(),
        _ => PathBuf::from("."),
    };
    // The levels this run creates, outermost first, so that an interruption or a failure
    // removes them again.
    let mut levels = Vec::new();
    let mut level = Some(parent.as_path());
    while let Some(l) = level.filter(|l| !l.as_os_str().is_empty() && !l.exists()) {
        levels.push(l.to_path_buf());
        level = l.parent();
    }
    {
        let mut p = pending();
        fs::create_dir_all(&parent).map_err(|e| {
            Failure::input(format!("--out {shown}: cannot create the directory: {e}"))
        })?;
        levels.reverse();
        p.dirs.extend(levels.iter().cloned());
        created.extend(levels);
    }
    let parent =
        fs::canonicalize(&parent).map_err(|e| Failure::input(format!("--out {shown}: {e}")))?;
    Ok(parent.join(name))
}

/// A checked, locked results directory being written.
#[derive(Debug)]
pub struct OutDir {
    /// `--out` as given.
    path: PathBuf,
    /// `--out` resolved.
    target: PathBuf,
    /// Where files go: the staging directory, or `target` when written in place.
    dir: PathBuf,
    staged: bool,
    written: Mutex<Vec<String>>,
    lock: Option<DirLock>,
    committed: bool,
    /// Directories this run created, outermost first.
    created: Vec<PathBuf>,
}

/// Removes the directories of `created` (outermost first) that are still empty, deepest
/// first, and unregisters them.
fn remove_created(created: &[PathBuf]) {
    let mut p = pending();
    for d in created.iter().rev() {
        let _ = fs::remove_dir(d);
    }
    p.dirs.retain(|d| !created.contains(d));
}

impl OutDir {
    /// Checks `path` for a one-shot result set, takes its lock, recovers from runs that died
    /// writing it, and creates the staging directory beside it. The set appears in `path`
    /// only at [`OutDir::commit`].
    pub fn prepare(path: &Path) -> Result<OutDir, Failure> {
        Self::open(path, true)
    }

    /// Checks `path` for files written in place (a sweep), takes its lock and creates it.
    pub fn prepare_in_place(path: &Path) -> Result<OutDir, Failure> {
        Self::open(path, false)
    }

    fn open(path: &Path, staged: bool) -> Result<OutDir, Failure> {
        install_interrupt_cleanup();
        let shown = path.display();
        let mut created = Vec::new();
        let target = resolve(path, &mut created)?;
        let lock_path = target.with_file_name(format!(
            ".{}.fieldgrid-lock",
            target.file_name().unwrap_or_default().to_string_lossy()
        ));
        let lock = match DirLock::acquire(&lock_path) {
            Ok(l) => l,
            Err(e) => {
                remove_created(&created);
                return Err(lock::busy_failure(path, e));
            }
        };
        pending().locks.push(lock_path);
        // From here on, dropping `out` on a failure undoes what this call did.
        let mut out = OutDir {
            path: path.to_path_buf(),
            target: target.clone(),
            dir: target.clone(),
            staged,
            written: Mutex::new(Vec::new()),
            lock: Some(lock),
            committed: false,
            created,
        };
        let r = swap::recover(&target);
        if r.restored {
            eprintln!(
                "fieldgrid: note: {shown}: a run that was stopped while putting its results in \
                 place left the previous results aside; they are back"
            );
        }
        let previous = target.is_dir() && !swap::is_empty_dir(&target);
        if target.is_dir() {
            remove_stale_temporaries(&target);
        }
        if staged && previous {
            match swap::foreign_entry(&target) {
                Ok(None) => {}
                Ok(Some(name)) => {
                    return Err(Failure::input(format!(
                        "--out {shown} holds `{name}`, which is not a fieldgrid result: a run \
                         replaces its results directory as a whole, so give a directory of \
                         its own (new, empty, or holding an earlier run's results)"
                    )))
                }
                Err(e) => return Err(Failure::input(format!("--out {shown}: {e}"))),
            }
        }
        if staged {
            let staging = swap::sibling(&target, "new", std::process::id());
            let mut p = pending();
            fs::create_dir(&staging).map_err(|e| {
                Failure::input(format!("--out {shown}: cannot write beside it: {e}"))
            })?;
            out.dir = staging;
            p.sets.push(SetState {
                shown: path.to_path_buf(),
                staging: Some(out.dir.clone()),
                previous,
                committed: false,
            });
        } else {
            let created = !target.exists();
            let mut p = pending();
            fs::create_dir_all(&target).map_err(|e| {
                Failure::input(format!("--out {shown}: cannot create the directory: {e}"))
            })?;
            if created {
                p.dirs.push(target.clone());
                out.created.push(target.clone());
            }
            p.sets.push(SetState {
                shown: path.to_path_buf(),
                staging: None,
                previous,
                committed: false,
            });
        }
        let probe = out
            .dir
            .join(format!(".fieldgrid-write-test-{}", std::process::id()));
        pending().files.push(probe.clone());
        let written = fs::write(&probe, b"");
        let _ = fs::remove_file(&probe);
        pending().files.retain(|f| *f != probe);
        if let Err(e) = written {
            return Err(Failure::input(format!("--out {shown}: not writable: {e}")));
        }
        fault::step(false);
        Ok(out)
    }

    /// The directory as given.
    pub fn path(&self) -> &Path {
        &self.path
    }

    /// What `--out` holds now, for messages.
    fn state(&self) -> String {
        pending()
            .sets
            .iter()
            .find(|s| {
                s.shown == self.path && s.staging.as_ref() == self.staged.then_some(&self.dir)
            })
            .map(SetState::describe)
            .unwrap_or_default()
    }

    /// A write failure, saying what `--out` holds after it.
    fn write_failure(&self, name: &str, e: std::io::Error) -> Failure {
        Failure::io(
            format!("writing {}", self.path.join(name).display()),
            format!("{e}; {}", self.state()),
        )
    }

    /// Writes `name` whole: into the staging directory, or in place under a temporary name
    /// renamed at the end.
    pub fn write(&self, name: &str, bytes: &[u8]) -> Result<PathBuf, Failure> {
        self.write_with(name, |w| w.write_all(bytes))
    }

    /// Writes `name` whole as [`OutDir::write`] does, its bytes produced by `fill` through a
    /// buffer (a file larger than memory is never held whole).
    pub fn write_with(
        &self,
        name: &str,
        fill: impl FnOnce(&mut dyn Write) -> std::io::Result<()>,
    ) -> Result<PathBuf, Failure> {
        let final_path = self.dir.join(name);
        let tmp = if self.staged {
            final_path.clone()
        } else {
            self.dir
                .join(format!(".{name}.partial-{}", std::process::id()))
        };
        // Created while the registry is held, and registered before it exists, so an
        // interruption at any point removes it.
        let file = {
            let mut p = pending();
            if !self.staged {
                p.files.push(tmp.clone());
            }
            fs::File::create(&tmp)
        };
        fault::step(false);
        let result = (|| -> std::io::Result<()> {
            let f = file?;
            if fault::write_fails() {
                return Err(std::io::Error::from_raw_os_error(28));
            }
            let mut w = std::io::BufWriter::new(f);
            fill(&mut w)?;
            w.into_inner().map_err(|e| e.into_error())?.sync_all()?;
            if !self.staged {
                fs::rename(&tmp, &final_path)?;
            }
            Ok(())
        })();
        if result.is_err() {
            let _ = fs::remove_file(&tmp);
        }
        if !self.staged {
            pending().files.retain(|f| *f != tmp);
        }
        result.map_err(|e| self.write_failure(name, e))?;
        fault::step(false);
        self.written
            .lock()
            .unwrap_or_else(|e| e.into_inner())
            .push(name.to_string());
        Ok(self.path.join(name))
    }

    /// Appends `bytes` to the file `name` written in place (one `write` call, then synced).
    pub fn append(&self, name: &str, bytes: &[u8]) -> Result<(), Failure> {
        assert!(!self.staged, "append is for directories written in place");
        let path = self.dir.join(name);
        fault::step(false);
        let result = (|| -> std::io::Result<()> {
            let mut f = fs::OpenOptions::new().append(true).open(&path)?;
            if fault::write_fails() {
                return Err(std::io::Error::from_raw_os_error(28));
            }
            f.write_all(bytes)?;
            f.sync_all()
        })();
        result.map_err(|e| self.write_failure(name, e))?;
        fault::step(false);
        Ok(())
    }

    /// Writes a PNG whole.
    pub fn write_png(&self, name: &str, img: &image::RgbImage) -> Result<PathBuf, Failure> {
        self.write(name, &png_bytes(name, img)?)
    }

    /// Puts the set in place (the staging directory exchanged with `--out`, with a manifest
    /// listing its files) and releases the lock. For a directory written in place, only
    /// releases the lock.
    pub fn commit(&mut self) -> Result<(), Failure> {
        if self.committed {
            return Ok(());
        }
        if self.staged {
            let mut names = self
                .written
                .lock()
                .unwrap_or_else(|e| e.into_inner())
                .clone();
            names.sort();
            names.dedup();
            let manifest: String = names.iter().map(|n| format!("{n}\n")).collect();
            self.write(swap::MANIFEST, manifest.as_bytes())?;
            swap::sync_dir(&self.dir);
            let mut p = pending();
            fault::step(true);
            let replaced = swap::replace(&self.dir, &self.target, &mut || fault::step(true));
            if let Err(e) = replaced {
                drop(p);
                return Err(Failure::io(
                    format!(
                        "--out {}: putting the results in place",
                        self.path.display()
                    ),
                    format!("{e}; {}", self.state()),
                ));
            }
            if let Some(s) = p
                .sets
                .iter_mut()
                .find(|s| s.staging.as_ref() == Some(&self.dir))
            {
                s.committed = true;
            }
            drop(p);
            if let Some(parent) = self.target.parent() {
                swap::sync_dir(parent);
            }
        }
        self.committed = true;
        self.finish();
        Ok(())
    }

    /// Releases the lock (removing an uncommitted staging directory first).
    fn finish(&mut self) {
        let mut p = pending();
        // Only ever the staging directory: `dir` is `--out` itself until the staging
        // directory exists.
        if self.staged && !self.committed && self.dir != self.target {
            let _ = fs::remove_dir_all(&self.dir);
        }
        // The set stays registered: a signal arriving now is still told what `--out` holds.
        if let Some(l) = self.lock.take() {
            p.locks.retain(|x| x != l.path());
            l.release();
        }
        drop(p);
        if !self.committed {
            remove_created(&self.created);
        } else {
            pending().dirs.retain(|d| !self.created.contains(d));
        }
    }
}

impl Drop for OutDir {
    fn drop(&mut self) {
        if self.lock.is_some() {
            self.finish();
        }
    }
}

/// A picture encoded as PNG (`name` for the error message).
pub fn png_bytes(name: &str, img: &image::RgbImage) -> Result<Vec<u8>, Failure> {
    let fail = |e: png::EncodingError| Failure::io(format!("encoding {name}"), e);
    let mut bytes = Vec::new();
    let mut enc = png::Encoder::new(&mut bytes, img.width(), img.height());
    enc.set_color(png::ColorType::Rgb);
    enc.set_depth(png::BitDepth::Eight);
    // The maps are smooth gradients under thin lines, and the files end up in reports and
    // repositories: the Paeth filter on every row with the balanced deflate level (6) makes
    // files as small as the best level with adaptive filters (538 382 against 538 684 bytes
    // over the sensor-pad and microstrip pictures). The zlib-rs deflate (the `zlib-rs`
    // feature of `png`) encodes 27 pictures (the demos' and the benchmark's) in 0.18 CPU s
    // where miniz_oxide at the same level took 0.41, at 2 949 410 against 2 941 351 bytes.
    enc.set_compression(png::Compression::Balanced);
    enc.set_filter(png::Filter::Paeth);
    let mut w = enc.write_header().map_err(fail)?;
    w.write_image_data(img.as_raw()).map_err(fail)?;
    w.finish().map_err(fail)?;
    Ok(bytes)
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
