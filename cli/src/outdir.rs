//! The results directory: every file is written whole or not at all.
//!
//! Invariant: a file appears under its final name only complete (written to a hidden
//! temporary name in the same directory, then renamed). The directory is checked before any
//! solve starts, so a bad `--out` costs no solve.

use crate::error::Failure;
use std::fs;
use std::io::Write;
use std::path::{Path, PathBuf};

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
        fs::create_dir_all(path).map_err(|e| {
            Failure::input(format!(
                "--out {}: cannot create the directory: {e}",
                path.display()
            ))
        })?;
        let probe = path.join(format!(".fieldgrid-write-test-{}", std::process::id()));
        fs::write(&probe, b"")
            .map_err(|e| Failure::input(format!("--out {}: not writable: {e}", path.display())))?;
        let _ = fs::remove_file(&probe);
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
        let result = (|| -> std::io::Result<()> {
            let mut f = fs::File::create(&tmp)?;
            f.write_all(bytes)?;
            f.sync_all()?;
            fs::rename(&tmp, &final_path)
        })();
        if let Err(e) = result {
            let _ = fs::remove_file(&tmp);
            return Err(Failure::io(format!("writing {}", final_path.display()), e));
        }
        Ok(final_path)
    }

    /// Writes a PNG atomically.
    pub fn write_png(&self, name: &str, img: &image::RgbImage) -> Result<PathBuf, Failure> {
        let mut bytes = Vec::new();
        img.write_to(
            &mut std::io::Cursor::new(&mut bytes),
            image::ImageFormat::Png,
        )
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
