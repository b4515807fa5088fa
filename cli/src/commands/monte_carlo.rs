//! A Monte Carlo run's table of samples and its statistics: the definition that identifies
//! the run (count, seed, tolerances, signals, options that move the results), the columns of
//! the samples table, one sample's row, and the statistics of a whole table.
//!
//! The samples table is what `--monte-carlo N` writes as `monte_carlo.csv` and what each
//! shard of a run divided with `--shard I/K` writes as `sweep.csv` (so that `sweep --merge`
//! joins the shards): `point` (the sample's index k), the toleranced parameters drawn for
//! it (design units), every quantity of the nominal design as `NAME (unit)` (SI; empty
//! where missing at the sample), and `converged`. `monte_carlo_statistics.csv` holds, per
//! quantity, the count, mean, sample standard deviation, minimum and maximum of its column.
//!
//! Invariants: a cell holds the shortest decimal that reads back as the same double, so the
//! statistics are a function of the table's text alone; they are computed from the rows in
//! sample order (fixed sums, [`fieldgrid_solver::tolerance::stats`]), so a merged table of
//! shards gives the unsharded run's statistics bit for bit.

use crate::outdir::{csv_bytes, num};
use fieldgrid_solver::tolerance::{self, Stats};
use serde::{Deserialize, Serialize};

/// Most samples of one Monte Carlo run.
pub const MAX_SAMPLES: usize = 10_000;

/// One toleranced parameter of a Monte Carlo run.
#[derive(Clone, Debug, PartialEq, Serialize, Deserialize)]
pub struct Toleranced {
    /// Parameter name.
    pub name: String,
    /// Half-width of its uniform distribution, design units.
    pub tolerance: f64,
}

/// What identifies a Monte Carlo run (with the design, solver and `--set` values that a
/// sweep's definition records beside it).
#[derive(Clone, Debug, PartialEq, Serialize, Deserialize)]
pub struct Definition {
    /// Number of samples of the whole run.
    pub count: usize,
    /// The generator's seed.
    pub seed: u64,
    /// The toleranced parameters, in the order they are drawn.
    pub tolerances: Vec<Toleranced>,
    /// The signal conductors of a line study (`impedance`); empty for `solve`.
    #[serde(default)]
    pub signals: Vec<String>,
    /// Whether each study also solved the coarser lattices of the error estimate (which
    /// may shape the lattice).
    pub error_estimate: bool,
    /// How the samples are drawn.
    pub distribution: String,
}

/// The distribution of every Monte Carlo parameter.
pub const UNIFORM: &str = "uniform within +/- the tolerance";

/// The column of a quantity named `name` with SI unit `unit` ("" for a ratio).
pub fn quantity_column(name: &str, unit: &str) -> String {
    if unit.is_empty() {
        name.to_string()
    } else {
        format!("{name} ({unit})")
    }
}

/// The columns of the samples table, the quantities' columns given.
pub fn columns(def: &Definition, quantities: &[String]) -> Vec<String> {
    let mut c = vec!["point".to_string()];
    c.extend(def.tolerances.iter().map(|t| t.name.clone()));
    c.extend(quantities.iter().cloned());
    c.push("converged".into());
    c
}

/// Sample `k`'s row: its parameters, its quantities (NaN: missing) and whether every solve
/// converged.
pub fn row(k: usize, parameters: &[f64], values: &[f64], converged: bool) -> Vec<String> {
    let mut r = vec![k.to_string()];
    r.extend(parameters.iter().map(|&v| num(v)));
    r.extend(values.iter().map(|&v| num(v)));
    r.push(converged.to_string());
    r
}

/// The statistics of every quantity column of a samples table with `parameters` toleranced
/// parameters, from its rows in sample order: (column, statistics; `None` when the column
/// holds no value).
pub fn statistics<'r>(
    columns: &[String],
    parameters: usize,
    rows: impl Iterator<Item = &'r Vec<String>> + Clone,
) -> Vec<(String, Option<Stats>)> {
    let quantities = 1 + parameters..columns.len().saturating_sub(1);
    quantities
        .map(|c| {
            let values: Vec<f64> = rows
                .clone()
                .filter_map(|r| r.get(c).and_then(|v| v.parse::<f64>().ok()))
                .filter(|v| v.is_finite())
                .collect();
            (columns[c].clone(), tolerance::stats(&values))
        })
        .collect()
}

/// A quantity column split into its name and unit.
fn name_and_unit(column: &str) -> (&str, &str) {
    match column.strip_suffix(')').and_then(|c| c.rsplit_once(" (")) {
        Some((name, unit)) => (name, unit),
        None => (column, ""),
    }
}

/// `monte_carlo_statistics.csv`: one row per quantity.
pub fn statistics_csv(stats: &[(String, Option<Stats>)]) -> Vec<u8> {
    let rows = stats.iter().map(|(column, st)| {
        let (name, unit) = name_and_unit(column);
        let f = |g: fn(&Stats) -> f64| st.as_ref().map(|s| num(g(s))).unwrap_or_default();
        vec![
            name.to_string(),
            unit.to_string(),
            st.as_ref().map_or(0, |s| s.count).to_string(),
            f(|s| s.mean),
            f(|s| s.std),
            f(|s| s.min),
            f(|s| s.max),
        ]
    });
    csv_bytes(
        &["quantity", "unit", "count", "mean", "std", "min", "max"],
        rows,
    )
}

/// The printed table of the statistics (forces that are zero throughout left out).
pub fn report(stats: &[(String, Option<Stats>)]) -> String {
    use std::fmt::Write;
    let mut s = String::new();
    for (column, st) in stats {
        let Some(st) = st else { continue };
        let (name, unit) = name_and_unit(column);
        if name.starts_with("F[") && st.min == 0.0 && st.max == 0.0 {
            continue;
        }
        let _ = writeln!(
            s,
            "  {name:>16}  mean {:.5e}  std {:.3e}  min {:.5e}  max {:.5e}  {unit}",
            st.mean, st.std, st.min, st.max
        );
    }
    s
}

#[cfg(test)]
mod tests {
    use super::*;

    fn def() -> Definition {
        Definition {
            count: 3,
            seed: 1,
            tolerances: vec![Toleranced {
                name: "w".into(),
                tolerance: 0.1,
            }],
            signals: Vec::new(),
            error_estimate: true,
            distribution: UNIFORM.into(),
        }
    }

    #[test]
    fn statistics_read_the_quantity_columns_of_the_text() {
        let cols = columns(
            &def(),
            &[
                quantity_column("C[a,a]", "F/m"),
                quantity_column("eps_eff", ""),
            ],
        );
        assert_eq!(cols, ["point", "w", "C[a,a] (F/m)", "eps_eff", "converged"]);
        // Values that print with many digits read back as the same doubles.
        let v = [0.1 + 0.2, 1.0 / 3.0, f64::NAN];
        let rows: Vec<Vec<String>> = (0..3)
            .map(|k| row(k, &[1.0 + v[k % 2]], &[v[k], 2.0], true))
            .collect();
        let st = statistics(&cols, 1, rows.iter());
        assert_eq!(st.len(), 2);
        assert_eq!(
            st[0].1,
            tolerance::stats(&v[..2]),
            "the empty cell is left out"
        );
        assert_eq!(st[1].1.as_ref().unwrap().count, 3);
        let csv = String::from_utf8(statistics_csv(&st)).unwrap();
        assert!(
            csv.lines().nth(1).unwrap().starts_with("\"C[a,a]\",F/m,2,"),
            "{csv}"
        );
        assert!(
            csv.lines()
                .nth(2)
                .unwrap()
                .starts_with("eps_eff,,3,2e0,0e0,"),
            "{csv}"
        );
    }
}
