//! The named stages of a study, reported to an optional monitor as each starts and ends.
//!
//! The library reads no clock: a caller that wants to know where the time goes (the
//! command's `--timings`, the `pipeline` benchmark) times the calls of its monitor. Stages are
//! reported in the order they run, never nested, each start followed by its end (unless the
//! study fails within the stage); the coarse-lattice solves of the error estimate are one
//! stage, their inner stages unreported.

use std::sync::Arc;

/// A stage of a study.
#[derive(Clone, Copy, Debug, PartialEq, Eq, Hash)]
#[non_exhaustive]
pub enum Stage {
    /// The whole studies on the coarser lattices of the error estimate.
    ErrorEstimate,
    /// Node classification and cut edges on the lattice.
    Raster,
    /// The five-point operator and its links to fixed targets.
    Assembly,
    /// The solver's setup (the multigrid hierarchy).
    SolverSetup,
    /// The linear solves, one per conductor and one for the sides and free charge.
    Solves,
    /// Superposition of the solves: potentials, floating conductors, Maxwell matrix.
    Superposition,
    /// |E| at every node.
    Field,
    /// Conductor charges, forces, energy.
    Forces,
    /// Probes, the field at the surfaces and the surface charge.
    Surfaces,
    /// Hot spots, the peak field and their error estimates.
    HotSpots,
}

impl Stage {
    /// A short stable identifier: `raster`, `solver_setup`, ...
    pub fn key(self) -> &'static str {
        match self {
            Stage::ErrorEstimate => "error_estimate",
            Stage::Raster => "raster",
            Stage::Assembly => "assembly",
            Stage::SolverSetup => "solver_setup",
            Stage::Solves => "solves",
            Stage::Superposition => "superposition",
            Stage::Field => "field",
            Stage::Forces => "forces",
            Stage::HotSpots => "hot_spots",
            Stage::Surfaces => "surfaces",
        }
    }
}

/// Whether a stage starts or ends.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub enum Event {
    /// The stage starts.
    Start,
    /// The stage has ended.
    End,
}

/// Called as stages start and end.
#[derive(Clone)]
pub struct StageMonitor(pub Arc<dyn Fn(Stage, Event) + Send + Sync>);

impl std::fmt::Debug for StageMonitor {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        f.write_str("StageMonitor")
    }
}

/// Reports the stages of one run to an optional monitor: entering a stage ends the one before.
pub(crate) struct Tracker<'a> {
    monitor: Option<&'a StageMonitor>,
    current: Option<Stage>,
}

impl<'a> Tracker<'a> {
    pub(crate) fn new(monitor: Option<&'a StageMonitor>) -> Tracker<'a> {
        Tracker {
            monitor,
            current: None,
        }
    }

    /// Ends the current stage, if any, and starts `stage`.
    pub(crate) fn enter(&mut self, stage: Stage) {
        self.leave();
        if let Some(m) = self.monitor {
            (m.0)(stage, Event::Start);
        }
        self.current = Some(stage);
    }

    /// Ends the current stage, if any.
    pub(crate) fn leave(&mut self) {
        if let (Some(m), Some(s)) = (self.monitor, self.current.take()) {
            (m.0)(s, Event::End);
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use std::sync::Mutex;

    #[test]
    fn a_study_reports_each_stage_once_in_order_start_before_end() {
        let seen = Arc::new(Mutex::new(Vec::new()));
        let log = seen.clone();
        let design = crate::design::Design {
            conductors: vec![crate::design::Conductor {
                name: "c".into(),
                drive: crate::design::Drive::Fixed(1.0),
                joined: Vec::new(),
                shape: crate::design::Shape::Circle {
                    center: [0.5, 0.5],
                    radius: 0.2,
                },
            }],
            ..Default::default()
        };
        let params = crate::study::StudyParams {
            stages: Some(StageMonitor(Arc::new(move |s, e| {
                log.lock().unwrap().push((s, e))
            }))),
            ..Default::default()
        };
        crate::study::run(&design, &params).expect("study runs");
        let seen = seen.lock().unwrap();
        let order = [
            Stage::ErrorEstimate,
            Stage::Raster,
            Stage::Assembly,
            Stage::SolverSetup,
            Stage::Solves,
            Stage::Superposition,
            Stage::Field,
            Stage::Forces,
            Stage::Surfaces,
            Stage::HotSpots,
        ];
        let want: Vec<(Stage, Event)> = order
            .iter()
            .flat_map(|&s| [(s, Event::Start), (s, Event::End)])
            .collect();
        assert_eq!(*seen, want);
    }
}
