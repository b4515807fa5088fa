//! One writer per results directory: an advisory lock (`flock`) on the file
//! `.NAME.fieldgrid-lock` beside the directory `NAME`.
//!
//! Invariants:
//! - The lock is taken without waiting: a second writer is refused at once, naming the
//!   process that holds it (its id is written into the lock file).
//! - The kernel releases a `flock` when its process ends, however it ends, so the lock of a
//!   dead process (killed, crashed) is free and the next run simply takes it over; the lock
//!   file such a run leaves behind is reused.
//! - A lock is only held on the file that the path names at the moment it is held: after
//!   locking, the path is checked to still name the locked file (a finishing run removes it),
//!   and the lock is taken again otherwise. So removing the file at the end never lets two
//!   writers in.

use crate::error::Failure;
use std::fs::{self, File, OpenOptions};
use std::io::{Read, Seek, Write};
use std::path::{Path, PathBuf};

/// A held lock; released (and its file removed) by [`DirLock::release`] or when the process
/// ends.
#[derive(Debug)]
pub struct DirLock {
    file: File,
    path: PathBuf,
}

/// Why a lock could not be taken.
#[derive(Debug)]
pub enum LockError {
    /// Another live process holds it; its id when the lock file names one.
    Busy(Option<u32>),
    /// The lock file could not be created or locked.
    Io(std::io::Error),
}

#[cfg(unix)]
fn try_flock(f: &File) -> std::io::Result<bool> {
    use std::os::fd::AsRawFd;
    // SAFETY: flock on a file descriptor this File owns; no memory is passed.
    let r = unsafe { libc::flock(f.as_raw_fd(), libc::LOCK_EX | libc::LOCK_NB) };
    if r == 0 {
        return Ok(true);
    }
    let e = std::io::Error::last_os_error();
    if e.raw_os_error() == Some(libc::EWOULDBLOCK) {
        Ok(false)
    } else {
        Err(e)
    }
}

#[cfg(not(unix))]
fn try_flock(_f: &File) -> std::io::Result<bool> {
    Ok(true)
}

#[cfg(unix)]
fn same_file(f: &File, path: &Path) -> bool {
    use std::os::unix::fs::MetadataExt;
    match (f.metadata(), fs::metadata(path)) {
        (Ok(a), Ok(b)) => a.dev() == b.dev() && a.ino() == b.ino(),
        _ => false,
    }
}

#[cfg(not(unix))]
fn same_file(_f: &File, path: &Path) -> bool {
    path.exists()
}

impl DirLock {
    /// Takes the lock at `path` without waiting.
    pub fn acquire(path: &Path) -> Result<DirLock, LockError> {
        loop {
            let mut file = OpenOptions::new()
                .read(true)
                .write(true)
                .create(true)
                .truncate(false)
                .open(path)
                .map_err(LockError::Io)?;
            if !try_flock(&file).map_err(LockError::Io)? {
                let mut text = String::new();
                let _ = file.read_to_string(&mut text);
                return Err(LockError::Busy(text.trim().parse().ok()));
            }
            if !same_file(&file, path) {
                // The holder finished and removed the file between our open and our lock.
                continue;
            }
            let _ = file.set_len(0);
            let _ = file.rewind();
            let _ = writeln!(file, "{}", std::process::id());
            return Ok(DirLock {
                file,
                path: path.to_path_buf(),
            });
        }
    }

    /// The lock file.
    pub fn path(&self) -> &Path {
        &self.path
    }

    /// Removes the lock file and releases the lock.
    pub fn release(self) {
        let _ = fs::remove_file(&self.path);
        drop(self.file);
    }
}

/// The message for a directory another run is writing.
pub fn busy_failure(out: &Path, err: LockError) -> Failure {
    match err {
        LockError::Busy(pid) => Failure::input(format!(
            "--out {}: another fieldgrid run{} is writing this directory; wait until it has \
             finished, or give another --out",
            out.display(),
            pid.map(|p| format!(" (process {p})")).unwrap_or_default()
        )),
        LockError::Io(e) => Failure::input(format!(
            "--out {}: cannot lock the directory for writing: {e}",
            out.display()
        )),
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    fn scratch(name: &str) -> PathBuf {
        let d = std::env::temp_dir().join(format!("fieldgrid-lock-{}-{name}", std::process::id()));
        let _ = fs::remove_dir_all(&d);
        fs::create_dir_all(&d).unwrap();
        d
    }

    #[test]
    fn a_second_lock_on_the_same_directory_is_refused_while_the_first_is_held() {
        let d = scratch("busy");
        let p = d.join(".out.fieldgrid-lock");
        let first = DirLock::acquire(&p).unwrap();
        match DirLock::acquire(&p) {
            Err(LockError::Busy(pid)) => assert_eq!(pid, Some(std::process::id())),
            other => panic!("second lock not refused: {other:?}"),
        }
        first.release();
        assert!(!p.exists());
        DirLock::acquire(&p).unwrap().release();
    }

    #[test]
    fn the_lock_file_of_a_dead_process_is_taken_over() {
        let d = scratch("stale");
        let p = d.join(".out.fieldgrid-lock");
        // Linux process ids stay below 2^22: this one never runs, and nothing holds the flock.
        fs::write(&p, "999999999\n").unwrap();
        let l = DirLock::acquire(&p).unwrap();
        assert_eq!(
            fs::read_to_string(&p).unwrap().trim(),
            std::process::id().to_string()
        );
        l.release();
    }
}
