//! `sweep.csv` read as a stream: the rows of a table in file order, checked against the
//! sweep's definition, and cursors that read a table a few kilobytes at a time for a merge.
//!
//! Invariants: no reader here holds more than a bounded batch of rows, so resuming a sweep
//! or merging its shards needs memory independent of the number of rows (a set of points
//! is one bit per point of the sweep, at most [`super::MAX_POINTS`] bits); a cursor keeps
//! its file open only while it reads a batch, so any number of directories can be merged;
//! every row has the table's number of fields and a point index below the sweep's count;
//! a cursor's indices strictly increase (the order every sweep writes its rows in).

use super::file::SweepFile;
use crate::error::Failure;
use std::collections::VecDeque;
use std::io::{Seek, SeekFrom};
use std::path::{Path, PathBuf};

/// A set of point indices of one sweep, one bit per point.
pub struct PointSet {
    bits: Vec<u64>,
}

impl PointSet {
    /// The empty set of a sweep of `points` points.
    pub(super) fn new(points: usize) -> PointSet {
        PointSet {
            bits: vec![0; points.div_ceil(64)],
        }
    }

    /// True when `p` is in the set.
    pub fn contains(&self, p: usize) -> bool {
        self.bits[p / 64] & (1 << (p % 64)) != 0
    }

    /// Adds `p`; false when it was there already.
    pub(super) fn insert(&mut self, p: usize) -> bool {
        let had = self.contains(p);
        self.bits[p / 64] |= 1 << (p % 64);
        !had
    }
}

/// A table's failure to read, naming the file.
fn bad(csv: &Path, what: impl std::fmt::Display) -> Failure {
    Failure::input(format!("{}: {what}", csv.display()))
}

/// The point index of a row, checked against the sweep's count and the table's width.
fn point_of(csv: &Path, def: &SweepFile, rec: &csv::StringRecord) -> Result<usize, Failure> {
    if rec.len() != def.columns.len() {
        return Err(bad(
            csv,
            format!(
                "a row of {} fields where the table has {} columns",
                rec.len(),
                def.columns.len()
            ),
        ));
    }
    rec.get(0)
        .and_then(|s| s.parse().ok())
        .filter(|&p| p < def.points)
        .ok_or_else(|| {
            bad(
                csv,
                format!(
                    "a row without a valid point index (0 to {})",
                    def.points.saturating_sub(1)
                ),
            )
        })
}

/// Opens `csv` and checks its header against `def`; the reader stands at the first row.
fn open(csv: &Path, def: &SweepFile) -> Result<csv::Reader<std::fs::File>, Failure> {
    let mut r = csv::ReaderBuilder::new()
        .flexible(true)
        .from_path(csv)
        .map_err(|e| bad(csv, e))?;
    let header = r.headers().map_err(|e| bad(csv, e))?;
    if header.iter().ne(def.columns.iter().map(String::as_str)) {
        return Err(bad(csv, "the columns do not match sweep.json"));
    }
    Ok(r)
}

/// Calls `visit` with every row of the table `csv` of the sweep `def`, in file order, with
/// its point index; no point may appear twice.
pub(super) fn for_each_row(
    csv: &Path,
    def: &SweepFile,
    mut visit: impl FnMut(usize, &csv::StringRecord) -> Result<(), Failure>,
) -> Result<(), Failure> {
    let mut r = open(csv, def)?;
    let mut seen = PointSet::new(def.points);
    let mut rec = csv::StringRecord::new();
    while r.read_record(&mut rec).map_err(|e| bad(csv, e))? {
        let p = point_of(csv, def, &rec)?;
        if !seen.insert(p) {
            return Err(bad(csv, format!("point {p} appears twice")));
        }
        visit(p, &rec)?;
    }
    Ok(())
}

/// Bytes of rows a cursor reads at a time.
const BATCH_BYTES: u64 = 16 * 1024;

/// The rows of one table in point order, read a batch at a time; the file is open only
/// while a batch is read.
pub(super) struct Cursor {
    csv: PathBuf,
    /// Byte offset of the first row not yet read into `batch`.
    offset: u64,
    batch: VecDeque<(usize, csv::StringRecord)>,
    /// The file is read to its end.
    exhausted: bool,
    /// The last point index read, for the order check.
    last: Option<usize>,
}

impl Cursor {
    /// A cursor at the first row of `csv`, whose header must match `def`; a missing table
    /// has no rows.
    pub(super) fn new(csv: &Path, def: &SweepFile) -> Result<Cursor, Failure> {
        let mut c = Cursor {
            csv: csv.to_path_buf(),
            offset: 0,
            batch: VecDeque::new(),
            exhausted: !csv.exists(),
            last: None,
        };
        if !c.exhausted {
            let r = open(csv, def)?;
            c.offset = r.position().byte();
        }
        Ok(c)
    }

    /// The table this cursor reads.
    pub(super) fn path(&self) -> &Path {
        &self.csv
    }

    /// The next row's point index, reading a batch when needed.
    pub(super) fn peek(&mut self, def: &SweepFile) -> Result<Option<usize>, Failure> {
        if self.batch.is_empty() && !self.exhausted {
            self.refill(def)?;
        }
        Ok(self.batch.front().map(|(p, _)| *p))
    }

    /// Takes the next row.
    pub(super) fn next(&mut self, def: &SweepFile) -> Result<Option<csv::StringRecord>, Failure> {
        self.peek(def)?;
        Ok(self.batch.pop_front().map(|(_, r)| r))
    }

    fn refill(&mut self, def: &SweepFile) -> Result<(), Failure> {
        let csv = &self.csv;
        let mut f = std::fs::File::open(csv).map_err(|e| bad(csv, e))?;
        f.seek(SeekFrom::Start(self.offset))
            .map_err(|e| bad(csv, e))?;
        let mut r = csv::ReaderBuilder::new()
            .has_headers(false)
            .flexible(true)
            .from_reader(f);
        let mut rec = csv::StringRecord::new();
        loop {
            if r.position().byte() >= BATCH_BYTES {
                break;
            }
            if !r.read_record(&mut rec).map_err(|e| bad(csv, e))? {
                self.exhausted = true;
                break;
            }
            let p = point_of(csv, def, &rec)?;
            if self.last.is_some_and(|l| p <= l) {
                return Err(bad(
                    csv,
                    format!(
                        "point {p} follows point {}: the rows are not in point order",
                        self.last.unwrap_or(0)
                    ),
                ));
            }
            self.last = Some(p);
            self.batch.push_back((p, rec.clone()));
        }
        self.offset += r.position().byte();
        Ok(())
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn a_point_set_holds_each_point_once() {
        let mut s = PointSet::new(130);
        assert!(s.insert(0) && s.insert(129) && s.insert(64));
        assert!(!s.insert(64));
        assert!(s.contains(129) && !s.contains(1) && !s.contains(63));
    }
}
