//! Progress on a terminal: a single solve's stage and solver iteration, and a sweep's points.
//!
//! The library never prints: it tells the [`StageMonitor`] of its `StudyParams` when each
//! stage starts and ends, and the solver's monitor each iteration's relative residual. This
//! module turns both into one line drawn by `indicatif` on standard error.
//!
//! Invariants: nothing is drawn with `--quiet` or when standard error is not a terminal (the
//! bar is hidden then, and the monitors are not installed); the line is cleared before the
//! report is printed; monitors only update the bar's message, cheaply, from any thread.

use fieldgrid_solver::stages::{Event, Stage, StageMonitor};
use indicatif::{ProgressBar, ProgressDrawTarget, ProgressStyle};
use std::io::IsTerminal;
use std::sync::{Arc, Mutex};
use std::time::Duration;

/// The progress line of one solve; hidden unless shown on a terminal.
#[derive(Clone)]
pub struct Progress {
    bar: Option<ProgressBar>,
    stage: Arc<Mutex<&'static str>>,
    label: Arc<str>,
}

impl Progress {
    /// A progress line on standard error, drawn only when it is a terminal and not `quiet`.
    pub fn new(quiet: bool) -> Progress {
        let bar = (!quiet && std::io::stderr().is_terminal()).then(|| {
            let bar = ProgressBar::with_draw_target(None, ProgressDrawTarget::stderr());
            bar.set_style(
                ProgressStyle::with_template("{spinner} {elapsed:>4} {msg}")
                    .unwrap_or_else(|_| ProgressStyle::default_spinner()),
            );
            bar.enable_steady_tick(Duration::from_millis(120));
            bar
        });
        Progress {
            bar,
            stage: Arc::new(Mutex::new("reading")),
            label: Arc::from(""),
        }
    }

    /// The same line, every message opened by `label` (which of several solves this is).
    pub fn labelled(mut self, label: &str) -> Progress {
        self.label = Arc::from(format!("{label}: "));
        self
    }

    /// True when the line is drawn.
    pub fn shown(&self) -> bool {
        self.bar.is_some()
    }

    /// A stage monitor that shows each stage, and passes every event on to `inner`.
    pub fn stages(&self, inner: Option<StageMonitor>) -> Option<StageMonitor> {
        let Some(bar) = self.bar.clone() else {
            return inner;
        };
        let stage = Arc::clone(&self.stage);
        let label = Arc::clone(&self.label);
        Some(StageMonitor(Arc::new(move |s: Stage, e: Event| {
            if let Some(m) = &inner {
                (m.0)(s, e);
            }
            if e == Event::Start {
                let name = stage_name(s);
                *stage.lock().unwrap_or_else(|p| p.into_inner()) = name;
                bar.set_message(format!("{label}{name}"));
            }
        })))
    }

    /// A solver monitor that shows the iteration and residual beside the stage.
    pub fn iterations(&self) -> Option<fieldgrid_solver::solvers::Monitor> {
        let bar = self.bar.clone()?;
        let stage = Arc::clone(&self.stage);
        let label = Arc::clone(&self.label);
        Some(Arc::new(move |it: usize, rel: f64| {
            let name = *stage.lock().unwrap_or_else(|p| p.into_inner());
            bar.set_message(format!(
                "{label}{name}: iteration {it}, relative residual {rel:.2e}"
            ));
        }))
    }

    /// Clears the line (before the report is printed).
    pub fn finish(&self) {
        if let Some(bar) = &self.bar {
            bar.finish_and_clear();
        }
    }
}

/// A bar counting a sweep's points on standard error (`done` of `total` already there), or
/// `None` when `quiet` or when standard error is not a terminal.
pub fn counter(quiet: bool, total: usize, done: usize) -> Option<ProgressBar> {
    (!quiet && std::io::stderr().is_terminal()).then(|| {
        let bar = ProgressBar::with_draw_target(Some(total as u64), ProgressDrawTarget::stderr());
        bar.set_style(
            ProgressStyle::with_template("[{bar:24}] {pos}/{len} {elapsed:>4} {msg}")
                .unwrap_or_else(|_| ProgressStyle::default_bar())
                .progress_chars("#>-"),
        );
        bar.set_position(done as u64);
        bar
    })
}

/// The words shown for a stage.
fn stage_name(s: Stage) -> &'static str {
    match s {
        Stage::ErrorEstimate => "error estimate (coarser grids)",
        Stage::Raster => "rasterising",
        Stage::Assembly => "assembling the operator",
        Stage::SolverSetup => "solver setup",
        Stage::Solves => "solving",
        Stage::Superposition => "superposition",
        Stage::Field => "field",
        Stage::Forces => "charges and forces",
        Stage::Surfaces => "surfaces",
        Stage::HotSpots => "hot spots",
        _ => "working",
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn quiet_progress_installs_no_monitor() {
        let p = Progress::new(true);
        assert!(!p.shown());
        assert!(p.iterations().is_none());
        assert!(p.stages(None).is_none());
        p.finish();
    }
}
