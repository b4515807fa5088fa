//! `sweep.json`'s record: what identifies a sweep (design hash, varied and set parameters,
//! solver, tolerance, columns, a Monte Carlo run's definition) and which part of it a
//! directory holds. Two records describe the same sweep when everything but the shard and the
//! design's file name agrees; the reader of a directory, its resume and the merge of its
//! parts all compare through [`SweepFile::same_sweep`].

use super::points::{Shard, Vary};
use serde::{Deserialize, Serialize};

/// `sweep.json`: what identifies a sweep, and which part of it a directory holds.
#[derive(Clone, Debug, PartialEq, Serialize, Deserialize)]
pub struct SweepFile {
    /// Format version.
    pub version: u32,
    /// The design file as given (for information).
    pub design: String,
    /// Hash of the design text.
    pub design_hash: String,
    /// The varied parameters, slowest first.
    pub vary: Vec<Vary>,
    /// Number of points of the whole sweep.
    pub points: usize,
    /// Solver method name.
    pub solver: String,
    /// Relative residual tolerance.
    pub tol: f64,
    /// The columns of sweep.csv.
    pub columns: Vec<String>,
    /// The shard this directory holds; absent for a whole (or merged) sweep.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub shard: Option<Shard>,
    /// Parameters fixed for every point with `--set`, in the design's own units.
    #[serde(default, skip_serializing_if = "Vec::is_empty")]
    pub set: Vec<crate::summary::ParameterSummary>,
    /// A Monte Carlo run's definition, when the points are its samples.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub monte_carlo: Option<crate::commands::monte_carlo::Definition>,
}

impl SweepFile {
    /// True when two files describe the same sweep (shards and file names aside).
    pub fn same_sweep(&self, other: &SweepFile) -> bool {
        self.version == other.version
            && self.design_hash == other.design_hash
            && self.vary == other.vary
            && self.points == other.points
            && self.solver == other.solver
            && self.tol == other.tol
            && self.columns == other.columns
            && self.set == other.set
            && self.monte_carlo == other.monte_carlo
    }

    /// What differs between two sweeps, for messages.
    pub(super) fn difference(&self, other: &SweepFile) -> String {
        if self.design_hash != other.design_hash {
            "the design text differs".into()
        } else if self.vary != other.vary || self.points != other.points {
            "the varied parameters differ".into()
        } else if self.solver != other.solver || self.tol != other.tol {
            "the solver or its tolerance differs".into()
        } else if self.set != other.set {
            "the parameters given with --set differ".into()
        } else if self.monte_carlo != other.monte_carlo {
            "the Monte Carlo runs differ (seed, tolerances, signals or error estimate)".into()
        } else if self.columns != other.columns {
            "the columns differ".into()
        } else if self.shard != other.shard {
            "the shard differs".into()
        } else {
            "nothing".into()
        }
    }
}
