//! The written and printed report of a comparison: `compare.csv`, `compare.json` and the
//! table on standard output.
//!
//! Invariants: every change is one row, in the order given; an infinite relative change is
//! written `inf`/`-inf` in the CSV and null in the JSON; the closing line counts the
//! quantities beyond tolerance.

use super::changes::{parse_abs_tol, Change};
use crate::args::CompareArgs;
use crate::error::Failure;
use crate::outdir::{csv_bytes, num, OutDir};

fn opt_num(v: Option<f64>) -> String {
    v.map(num).unwrap_or_default()
}

fn relative_text(c: &Change) -> String {
    match (c.relative_change, c.change) {
        (Some(r), _) => num(r),
        (None, Some(d)) => {
            if d > 0.0 {
                "inf".into()
            } else {
                "-inf".into()
            }
        }
        _ => String::new(),
    }
}

pub(super) fn write_outputs(
    out: &OutDir,
    args: &CompareArgs,
    table: &[Change],
    beyond: usize,
    remarks: &[String],
) -> Result<(), Failure> {
    let csv = csv_bytes(
        &[
            "quantity",
            "unit",
            "base",
            "new",
            "change",
            "relative change",
            "beyond tolerance",
            "note",
        ],
        table.iter().map(|c| {
            vec![
                c.quantity.clone(),
                c.unit.clone(),
                opt_num(c.base),
                opt_num(c.new),
                opt_num(c.change),
                relative_text(c),
                c.beyond_tolerance.to_string(),
                c.note.clone(),
            ]
        }),
    );
    let json = serde_json::json!({
        "version": 1,
        "base": args.base.display().to_string(),
        "new": args.new.display().to_string(),
        "rel_tol": args.rel_tol,
        "abs_tol": parse_abs_tol(&args.abs_tol)?.into_iter().collect::<std::collections::BTreeMap<_, _>>(),
        "changed": beyond,
        "quantities": table,
        "remarks": remarks,
    });
    let json =
        serde_json::to_vec_pretty(&json).map_err(|e| Failure::io("encoding compare.json", e))?;
    out.write("compare.csv", &csv)?;
    out.write("compare.json", &json)?;
    Ok(())
}

/// The table printed on standard output.
pub fn render_table(
    args: &CompareArgs,
    table: &[Change],
    beyond: usize,
    remarks: &[String],
) -> String {
    use std::fmt::Write;
    let mut s = String::new();
    let _ = writeln!(s, "BASE {}", args.base.display());
    let _ = writeln!(s, "NEW  {}", args.new.display());
    let w = table
        .iter()
        .map(|c| c.quantity.len())
        .max()
        .unwrap_or(8)
        .max(8);
    let _ = writeln!(
        s,
        "{:w$}  {:>4}  {:>12}  {:>12}  {:>11}  {:>9}",
        "quantity", "unit", "base", "new", "change", "relative"
    );
    let cell = |v: Option<f64>| v.map(|v| format!("{v:.5e}")).unwrap_or_else(|| "-".into());
    for c in table {
        let rel = match (c.relative_change, c.change) {
            (Some(r), _) => format!("{:+.3} %", 100.0 * r),
            (None, Some(_)) => "from 0".into(),
            _ => "-".into(),
        };
        let mut flag = String::new();
        if c.beyond_tolerance {
            flag.push_str("  CHANGED");
        }
        if !c.note.is_empty() {
            let _ = write!(flag, "  ({})", c.note);
        }
        let _ = writeln!(
            s,
            "{:w$}  {:>4}  {:>12}  {:>12}  {:>11}  {:>9}{flag}",
            c.quantity,
            c.unit,
            cell(c.base),
            cell(c.new),
            c.change
                .map(|v| format!("{v:+.3e}"))
                .unwrap_or_else(|| "-".into()),
            rel
        );
    }
    for r in remarks {
        let _ = writeln!(s, "note: {r}");
    }
    if beyond == 0 {
        let _ = writeln!(
            s,
            "no change beyond {} % in {} quantities",
            100.0 * args.rel_tol,
            table.len()
        );
    } else {
        let _ = writeln!(
            s,
            "{beyond} of {} quantities changed beyond {} %",
            table.len(),
            100.0 * args.rel_tol
        );
    }
    s
}
