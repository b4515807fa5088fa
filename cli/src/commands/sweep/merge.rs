//! `fieldgrid sweep --merge DIR... --out DIR`: the directories of one sweep's shards joined
//! into one table, streamed.
//!
//! The tables are read side by side in point order (each sweep writes its rows in point
//! order) and merged a row at a time, twice: once to check that every part belongs to the
//! same sweep, that points given twice agree exactly and that together they cover every
//! point, and once to write the table. Nothing of a row is kept after it is written, so a
//! merge needs memory independent of the number of points (but for a Monte Carlo run's
//! samples, at most [`monte_carlo::MAX_SAMPLES`], whose statistics it writes as
//! `monte_carlo_statistics.csv`); bad parts leave no `--out`.

use super::super::monte_carlo;
use super::file::SweepFile;
use super::table::Cursor;
use super::{columns, read_dir};
use crate::error::Failure;
use crate::outdir::OutDir;
use crate::{EXIT_NOT_CONVERGED, EXIT_OK};
use std::cmp::Reverse;
use std::collections::BinaryHeap;
use std::path::{Path, PathBuf};

/// Joins the directories of one sweep's shards into `out`.
pub(super) fn merge(dirs: &[PathBuf], out: &Path, quiet: bool) -> Result<u8, Failure> {
    let mut first: Option<SweepFile> = None;
    for d in dirs {
        let def = read_dir(d)?.ok_or_else(|| {
            Failure::input(format!(
                "{}: no sweep.json: not a sweep directory",
                d.display()
            ))
        })?;
        match &first {
            Some(f) if !f.same_sweep(&def) => {
                return Err(Failure::input(format!(
                    "{} belongs to another sweep than {} ({})",
                    d.display(),
                    dirs[0].display(),
                    f.difference(&def)
                )))
            }
            Some(_) => {}
            None => first = Some(def),
        }
    }
    let mut def = first.ok_or_else(|| Failure::input("--merge needs at least one directory"))?;
    def.shard = None;
    if def.monte_carlo.is_some() && def.points > monte_carlo::MAX_SAMPLES {
        return Err(Failure::input(format!(
            "{}: a Monte Carlo run of {} samples (at most {})",
            dirs[0].display(),
            def.points,
            monte_carlo::MAX_SAMPLES
        )));
    }

    // First pass: coverage and agreement, nothing written.
    let at = columns::converged_column(&def.columns);
    let (mut next, mut missing, mut shown) = (0usize, 0usize, Vec::new());
    let (mut rows, mut unconverged) = (0usize, 0usize);
    let mut gap = |from: usize, to: usize, missing: &mut usize| {
        *missing += to - from;
        shown.extend((from..to).take(10usize.saturating_sub(shown.len())));
    };
    walk(dirs, &def, |p, rec| {
        gap(next, p, &mut missing);
        next = p + 1;
        rows += 1;
        unconverged += usize::from(at.and_then(|k| rec.get(k)) == Some("false"));
        Ok(())
    })?;
    gap(next, def.points, &mut missing);
    if missing > 0 {
        let shown: Vec<String> = shown.iter().map(|p| p.to_string()).collect();
        return Err(Failure::input(format!(
            "the merged sweep lacks {missing} of {} points ({}{}): run the missing shards (a \
             re-run resumes where it stopped) and merge again",
            def.points,
            shown.join(", "),
            if missing > 10 { ", ..." } else { "" }
        )));
    }

    // Second pass: the table, streamed into the new set; a Monte Carlo run's rows (at most
    // MAX_SAMPLES) are kept for its statistics.
    let mut outdir = OutDir::prepare(out)?;
    let mut samples: Vec<Vec<String>> = Vec::new();
    outdir.write_with("sweep.csv", |w| {
        let mut table = csv::Writer::from_writer(w);
        table.write_record(&def.columns)?;
        walk(dirs, &def, |_, rec| {
            if def.monte_carlo.is_some() {
                samples.push(rec.iter().map(str::to_string).collect());
            }
            table
                .write_record(rec)
                .map_err(|e| Failure::io("writing the merged table", e))
        })
        .map_err(|f| std::io::Error::other(f.message))?;
        table.flush()
    })?;
    let json =
        serde_json::to_vec_pretty(&def).map_err(|e| Failure::io("encoding sweep.json", e))?;
    outdir.write("sweep.json", &json)?;
    let statistics = def
        .monte_carlo
        .as_ref()
        .map(|mc| monte_carlo::statistics(&def.columns, mc.tolerances.len(), samples.iter()));
    if let Some(st) = &statistics {
        outdir.write(
            "monte_carlo_statistics.csv",
            &monte_carlo::statistics_csv(st),
        )?;
    }
    outdir.commit()?;
    if !quiet {
        println!(
            "merged {rows} points from {} directories into {}",
            dirs.len(),
            outdir.path().join("sweep.csv").display()
        );
        if let (Some(st), Some(mc)) = (&statistics, &def.monte_carlo) {
            print!(
                "Monte Carlo statistics of {rows} samples (seed {}), also in \
                 monte_carlo_statistics.csv:\n{}",
                mc.seed,
                monte_carlo::report(st)
            );
        }
        if unconverged > 0 {
            let w = crate::warning::ToolWarning::SweepNotConverged {
                points: unconverged,
            };
            println!("warning [{}]: {w}", crate::warning::Coded::code(&w));
        }
    }
    Ok(if unconverged > 0 {
        EXIT_NOT_CONVERGED
    } else {
        EXIT_OK
    })
}

/// Calls `visit` with every point the tables of `dirs` hold, once each and in point order;
/// a point held by several tables must have the same row in each.
fn walk(
    dirs: &[PathBuf],
    def: &SweepFile,
    mut visit: impl FnMut(usize, &csv::StringRecord) -> Result<(), Failure>,
) -> Result<(), Failure> {
    let mut cursors = dirs
        .iter()
        .map(|d| Cursor::new(&d.join("sweep.csv"), def))
        .collect::<Result<Vec<_>, _>>()?;
    let mut heap = BinaryHeap::new();
    for (i, c) in cursors.iter_mut().enumerate() {
        if let Some(p) = c.peek(def)? {
            heap.push(Reverse((p, i)));
        }
    }
    while let Some(Reverse((p, i))) = heap.pop() {
        let row = cursors[i].next(def)?.expect("a peeked row");
        if let Some(q) = cursors[i].peek(def)? {
            heap.push(Reverse((q, i)));
        }
        while let Some(&Reverse((q, j))) = heap.peek() {
            if q != p {
                break;
            }
            heap.pop();
            let other = cursors[j].next(def)?.expect("a peeked row");
            if other != row {
                return Err(Failure::input(format!(
                    "point {p} is in two directories with different values ({} and {})",
                    cursors[i].path().display(),
                    cursors[j].path().display()
                )));
            }
            if let Some(q) = cursors[j].peek(def)? {
                heap.push(Reverse((q, j)));
            }
        }
        visit(p, &row)?;
    }
    Ok(())
}
