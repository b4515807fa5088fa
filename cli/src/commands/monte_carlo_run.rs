//! The solves of a Monte Carlo run: sample k's parameter values, its solve started from the
//! nominal design's solves, and a run divided into shards for a batch scheduler
//! (`--monte-carlo N --shard I/K`), each shard a part of a sweep that `sweep --merge` joins.
//!
//! A shard reads and checks every design of its samples before the first solve, solves the
//! nominal design (for its quantities' names and the solves every sample starts from), then
//! solves its samples k (k % K == I) in order, appending each row to `--out`'s `sweep.csv`
//! as a sweep does (resumable, one writer, a directory of another run refused).
//!
//! Invariants: sample k's values are [`fieldgrid_solver::tolerance::sample`] of the seed and
//! k alone, and its solve starts from the nominal solves in every shard and in the unsharded
//! run, so its row is the same text whatever the sharding.

use super::evaluate::{self, Named, Setup};
use super::monte_carlo::{self, Definition, Toleranced};
use super::sweep::{self, Shard, SweepFile};
use crate::design_file::DesignSource;
use crate::error::Failure;
use crate::outdir::OutDir;
use crate::{EXIT_NOT_CONVERGED, EXIT_OK};
use fieldgrid_solver::tolerance;
use std::path::Path;

/// The definition of a run of `count` samples seeded with `seed`, each parameter of
/// `tolerances` (name, +/- value) drawn uniformly.
pub fn definition(
    setup: &Setup,
    count: usize,
    seed: u64,
    tolerances: &[(String, f64)],
) -> Definition {
    Definition {
        count,
        seed,
        tolerances: tolerances
            .iter()
            .map(|(name, t)| Toleranced {
                name: name.clone(),
                tolerance: *t,
            })
            .collect(),
        signals: setup.signals.clone(),
        error_estimate: setup.params.error_estimate,
        distribution: monte_carlo::UNIFORM.into(),
    }
}

/// The nominal values of the toleranced parameters of `def` in the design `src`.
pub fn centre(def: &Definition, src: &DesignSource) -> Vec<f64> {
    def.tolerances
        .iter()
        .map(|t| {
            src.parameters
                .iter()
                .find(|p| p.0 == t.name)
                .map(|p| p.1)
                .expect("tolerances name parameters of the design")
        })
        .collect()
}

/// Sample `k`'s parameter values (design units), in the order of `def`'s tolerances.
pub fn point(def: &Definition, centre: &[f64], k: usize) -> Vec<f64> {
    let tol: Vec<f64> = def.tolerances.iter().map(|t| t.tolerance).collect();
    tolerance::sample(centre, &tol, def.seed, k)
}

/// Sample values as parameter overrides.
pub fn overrides(def: &Definition, values: &[f64]) -> Vec<(String, f64)> {
    def.tolerances
        .iter()
        .zip(values)
        .map(|(t, &v)| (t.name.clone(), v))
        .collect()
}

/// The columns of the samples table for the nominal quantities.
pub fn columns(def: &Definition, nominal: &[Named]) -> Vec<String> {
    let q: Vec<String> = nominal
        .iter()
        .map(|q| monte_carlo::quantity_column(&q.name, &q.unit))
        .collect();
    monte_carlo::columns(def, &q)
}

/// Runs the samples of `shard`, appending their rows to `out`'s sweep.csv; returns the exit
/// code (3 when a sample's solve did not converge).
pub fn shard(setup: &Setup, def: &Definition, shard: Shard, out: &Path) -> Result<u8, Failure> {
    let src = super::load_design(setup.design, &setup.base)?;
    let centre = centre(def, &src);
    let mine = || (0..def.count).filter(move |&k| shard.runs(k));
    // Every sample's design is read and checked before anything is solved.
    for k in mine() {
        let over = overrides(def, &point(def, &centre, k));
        let mut all = setup.base.clone();
        all.extend(over.iter().cloned());
        super::load_design(setup.design, &all).map_err(|f| sample_failure(k, &over, f))?;
    }
    let mut outdir = OutDir::prepare_in_place(out)?;
    let mut keep = setup.started_from(&Default::default());
    keep.params.keep_warm_start = true;
    let nominal = evaluate::evaluate(&keep, &[])?;
    let start = nominal.solved.warm_start();
    let quantities = nominal.quantities;
    drop(nominal.solved);
    let part = SweepFile {
        version: 1,
        design: setup.design.display().to_string(),
        design_hash: src.text_hash.clone(),
        vary: Vec::new(),
        points: def.count,
        solver: fieldgrid_solver::solvers::Method::from(setup.opts.solver)
            .name()
            .to_string(),
        tol: setup.opts.tol_or_default(),
        columns: columns(def, &quantities),
        shard: Some(shard),
        set: setup
            .base
            .iter()
            .map(|(name, value)| crate::summary::ParameterSummary {
                name: name.clone(),
                value: *value,
            })
            .collect(),
        monte_carlo: Some(def.clone()),
    };
    let (done, mut unconverged) = sweep::open_part(&outdir, &part)?;
    let total = mine().count();
    let skipped = mine().filter(|&k| done.contains(k)).count();
    let bar = crate::progress::counter(setup.opts.quiet, total, skipped);
    let warm = setup.started_from(&start);
    let mut solved = 0;
    for k in mine().filter(|&k| !done.contains(k)) {
        let values = point(def, &centre, k);
        let over = overrides(def, &values);
        if let Some(bar) = &bar {
            bar.set_message(format!("sample {k}"));
        }
        let ev = evaluate::evaluate(&warm, &over).map_err(|f| sample_failure(k, &[], f))?;
        let row = monte_carlo::row(
            k,
            &values,
            &evaluate::pick(&quantities, &ev.quantities),
            ev.converged(),
        );
        unconverged += usize::from(!ev.converged());
        outdir.append("sweep.csv", &sweep::row_bytes(&row))?;
        solved += 1;
        if let Some(bar) = &bar {
            bar.inc(1);
        }
    }
    if let Some(bar) = &bar {
        bar.finish_and_clear();
    }
    outdir.commit()?;
    if !setup.opts.quiet {
        println!(
            "monte carlo (shard {}/{}): {solved} of {total} samples solved now, {skipped} \
             already in {}; join the shards with `fieldgrid sweep --merge`",
            shard.index,
            shard.count,
            outdir.path().join("sweep.csv").display()
        );
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

/// A failure prefixed with the sample it happened at (and its values, when given).
fn sample_failure(k: usize, values: &[(String, f64)], f: Failure) -> Failure {
    let at: Vec<String> = values
        .iter()
        .map(|(n, v)| format!("{n} = {}", sweep::value_text(*v)))
        .collect();
    let message = f.message.strip_prefix("error: ").unwrap_or(&f.message);
    Failure {
        code: f.code,
        message: if at.is_empty() {
            format!("Monte Carlo sample {k}: {message}")
        } else {
            format!("Monte Carlo sample {k} ({}): {message}", at.join(", "))
        },
        location: f.location,
    }
}
