//! The line study: transmission-line parameters of a planar cross-section from two studies.
//!
//! Two studies on the same lattice: the design as drawn (capacitance matrix C) and the design
//! with every permittivity set to 1 (C0). The matrices over the signal conductors, every other
//! conductor grounded, go to [`crate::line::parameters`]. A symmetry side that every signal
//! touches is unfolded: the line is the design and its mirror image, so each such side
//! doubles the matrices (a half model reports the whole line). A symmetry side that some
//! signal does not touch mirrors that signal into an in-phase image, which a warning says.
//! With the error estimate, the coarse-lattice matrices of both studies give the line
//! parameters once more, and their difference the estimated discretisation error of each
//! scalar parameter (with the more cautious of the two studies' orders); on a graded family
//! the four times coarser matrices give them a third time, and each scalar's own order
//! ([`crate::study::ErrorModel::estimate_derived`]).
//!
//! Invariants: signals are distinct fixed-potential conductors of a planar design (checked by
//! [`check_signals`] before anything is solved); every number is per metre of line (F/m,
//! H/m, ohms).

use crate::design::{Design, Drive, Mode, Side};
use crate::grid::GridError;
use crate::line::{self, LineError, LineParams};
use crate::plan::Plan;
use crate::study::{self, Solution, StudyError, StudyParams, WarmStart};
use crate::warning::Warning;
use std::sync::Arc;

/// The two studies of a line and what follows from them.
#[derive(Clone, Debug)]
pub struct LineStudy {
    /// The study of the design as drawn.
    pub solution: Solution,
    /// The study with every permittivity 1.
    pub vacuum: Solution,
    /// Line parameters of the signals (of the whole line when unfolded).
    pub line: LineParams,
    /// Estimated errors of the scalar parameters (the discretisation's plus the linear
    /// solver's, from the asymmetry of the two studies' matrices), by the keys of
    /// [`line::scalars`] (empty without the error estimate).
    pub errors: Vec<(&'static str, f64)>,
    /// Symmetry sides the line was unfolded across (each doubles every signal conductor):
    /// "left", "right", "bottom", "top".
    pub mirrored: Vec<&'static str>,
    /// Warnings about the line parameters (the two studies keep their own).
    pub warnings: Vec<Warning>,
}

/// Starting guesses for a line study's two studies, from a nearby design's line study
/// ([`LineStudy::warm_start`]): each used only when it fits its study's lattice.
#[derive(Clone, Debug, Default)]
pub struct LineWarmStart {
    /// For the study of the design as drawn.
    pub design: Option<Arc<WarmStart>>,
    /// For the study with every permittivity 1.
    pub vacuum: Option<Arc<WarmStart>>,
}

impl LineStudy {
    /// Both studies' solves, when [`StudyParams::keep_warm_start`] asked for them.
    pub fn warm_start(&self) -> LineWarmStart {
        LineWarmStart {
            design: self.solution.warm_start.clone(),
            vacuum: self.vacuum.warm_start.clone(),
        }
    }
}

/// Signals that cannot make a line. `Display` renders the code and the data, for logs; the
/// command line words it for users.
#[derive(Clone, Debug, PartialEq)]
#[non_exhaustive]
pub enum SignalError {
    /// The design is axisymmetric: a line is a planar cross-section.
    NotPlanar,
    /// No signal was named.
    NoSignal,
    /// No conductor has this name.
    Unknown(String),
    /// The conductor is floating; a signal needs a fixed potential.
    Floating(String),
    /// The signal is named twice.
    Repeated(String),
}

impl SignalError {
    /// The stable code of this error (lower case words joined by `-`, never renamed or
    /// reused).
    pub fn code(&self) -> &'static str {
        match self {
            SignalError::NotPlanar => "line-not-planar",
            SignalError::NoSignal => "no-signal",
            SignalError::Unknown(_) => "unknown-signal",
            SignalError::Floating(_) => "floating-signal",
            SignalError::Repeated(_) => "repeated-signal",
        }
    }
}

impl std::fmt::Display for SignalError {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        write!(f, "{}: {self:?}", self.code())
    }
}

impl std::error::Error for SignalError {}

/// A line study that could not run.
#[derive(Debug, thiserror::Error)]
#[non_exhaustive]
pub enum LineStudyError {
    /// The signals cannot make a line.
    #[error(transparent)]
    Signals(#[from] SignalError),
    /// One of the two studies failed.
    #[error(transparent)]
    Study(#[from] StudyError),
    /// The matrices do not describe a line.
    #[error(transparent)]
    Line(#[from] LineError),
}

impl LineStudyError {
    /// The stable code of the error within (the signals', a study's or the line's).
    pub fn code(&self) -> &'static str {
        match self {
            LineStudyError::Signals(e) => e.code(),
            LineStudyError::Study(e) => e.code(),
            LineStudyError::Line(e) => e.code(),
        }
    }
}

/// Checks that `signals` name distinct fixed-potential conductors of a planar design.
pub fn check_signals(design: &Design, signals: &[String]) -> Result<(), SignalError> {
    if design.mode != Mode::Planar {
        return Err(SignalError::NotPlanar);
    }
    if signals.is_empty() {
        return Err(SignalError::NoSignal);
    }
    for (k, s) in signals.iter().enumerate() {
        match design.conductors.iter().find(|c| &c.name == s) {
            None => return Err(SignalError::Unknown(s.clone())),
            Some(c) if c.drive == Drive::Floating => return Err(SignalError::Floating(s.clone())),
            Some(_) if signals[..k].contains(s) => return Err(SignalError::Repeated(s.clone())),
            Some(_) => {}
        }
    }
    Ok(())
}

/// The plan of a line study: the lattice both studies share, and their memory (the first
/// study's solution is held while the second runs).
pub fn plan(design: &Design, params: &StudyParams) -> Result<Plan, GridError> {
    Ok(study::plan(design, params)?.holding_a_solution())
}

/// Runs both studies of a planar design and derives the line parameters of `signals`.
pub fn run(
    design: &Design,
    signals: &[String],
    params: &StudyParams,
) -> Result<LineStudy, LineStudyError> {
    let plan = plan(design, params).map_err(StudyError::from)?;
    run_planned(design, &plan, signals, params)
}

/// [`run`] on the lattice of a `plan` made for this design by [`plan`] (both studies share
/// it); both studies start from `params.warm_start` when it fits.
pub fn run_planned(
    design: &Design,
    plan: &Plan,
    signals: &[String],
    params: &StudyParams,
) -> Result<LineStudy, LineStudyError> {
    let start = LineWarmStart {
        design: params.warm_start.clone(),
        vacuum: params.warm_start.clone(),
    };
    run_planned_from(design, plan, signals, params, &start)
}

/// [`run_planned`] with each study started from its own guess in `start` (in place of
/// `params.warm_start`): a guess changes the iteration count only, every solve stops at the
/// same relative residual.
pub fn run_planned_from(
    design: &Design,
    plan: &Plan,
    signals: &[String],
    params: &StudyParams,
    start: &LineWarmStart,
) -> Result<LineStudy, LineStudyError> {
    check_signals(design, signals)?;
    let mut p = params.clone();
    p.warm_start = start.design.clone();
    let solution = study::run_planned(design, plan, &p)?;
    p.warm_start = start.vacuum.clone();
    let vacuum = study::run_planned(&without_dielectrics(design), plan, &p)?;
    let (mirrored, mut warnings) = mirrors(design, signals);
    let factor = 2f64.powi(mirrored.len() as i32);
    let pick = |sol: &Solution, m: &[Vec<f64>]| {
        let mut c = submatrix(sol, m, signals);
        c.iter_mut().flatten().for_each(|v| *v *= factor);
        c
    };
    let line = line::parameters(
        &pick(&solution, &solution.capacitance.matrix),
        &pick(&vacuum, &vacuum.capacitance.matrix),
    )?;
    let errors = match (
        &solution.capacitance.error_model,
        &vacuum.capacitance.error_model,
    ) {
        (Some(m), Some(m0)) => {
            let at = |a: &[Vec<f64>], b: &[Vec<f64>]| {
                line::parameters(&pick(&solution, a), &pick(&vacuum, b)).ok()
            };
            let coarser = match (&m.coarser, &m0.coarser) {
                (Some(a), Some(b)) => at(a, b),
                _ => None,
            };
            match at(&m.coarse, &m0.coarse) {
                Some(coarse) => {
                    // The more cautious of the two studies' orders where a scalar's own
                    // values cannot give one.
                    let model = if m0.order < m.order { m0 } else { m };
                    let coarser = coarser.as_ref().map(line::scalars);
                    line::scalars(&line)
                        .into_iter()
                        .zip(line::scalars(&coarse))
                        .map(|((key, f), (_, c))| {
                            let cc = coarser
                                .as_ref()
                                .and_then(|v| v.iter().find(|e| e.0 == key))
                                .map(|e| e.1);
                            (key, model.estimate_derived(f, c, cc))
                        })
                        .collect()
                }
                None => Vec::new(),
            }
        }
        _ => Vec::new(),
    };
    // The linear solver's part, from the asymmetry of either study's matrix.
    let asym = study::worst_relative_asymmetry(&solution.capacitance.matrix)
        .max(study::worst_relative_asymmetry(&vacuum.capacitance.matrix));
    let values = line::scalars(&line);
    let errors = errors
        .into_iter()
        .map(|(k, e)| {
            let v = values.iter().find(|s| s.0 == k).map_or(0.0, |s| s.1);
            (k, e + v.abs() * asym)
        })
        .collect();
    if line.pair.as_ref().is_some_and(|p| !p.symmetric) {
        warnings.push(Warning::AsymmetricPair);
    }
    Ok(LineStudy {
        solution,
        vacuum,
        line,
        errors,
        mirrored,
        warnings,
    })
}

/// The symmetry sides that every signal touches, and a warning for each symmetry side that
/// some signal does not touch (it mirrors that signal into an in-phase image).
fn mirrors(design: &Design, signals: &[String]) -> (Vec<&'static str>, Vec<Warning>) {
    let d = &design.domain;
    let s = &design.sides;
    let sides = [
        ("left", s.left, 0usize, d.x[0]),
        ("right", s.right, 0, d.x[1]),
        ("bottom", s.bottom, 1, d.y[0]),
        ("top", s.top, 1, d.y[1]),
    ];
    let mut mirrored = Vec::new();
    let mut warnings = Vec::new();
    for (name, side, axis, at) in sides {
        if side != Side::Symmetry {
            continue;
        }
        let apart: Vec<String> = signals
            .iter()
            .filter(|sig| {
                let c = design
                    .conductors
                    .iter()
                    .find(|c| &c.name == *sig)
                    .expect("signals checked before the study");
                !c.shapes()
                    .any(|s| crate::unfold::touches(design, s, axis, at))
            })
            .cloned()
            .collect();
        if apart.is_empty() {
            mirrored.push(name);
        } else {
            warnings.push(Warning::SymmetryImage {
                side: name,
                signals: apart,
            });
        }
    }
    (mirrored, warnings)
}

/// The design with the background and every dielectric at relative permittivity 1.
pub fn without_dielectrics(design: &Design) -> Design {
    let mut d = design.clone();
    d.background.permittivity = 1.0;
    for m in &mut d.dielectrics {
        m.permittivity = 1.0;
    }
    d
}

/// Rows and columns of the signals in a study's Maxwell matrix `m`.
fn submatrix(sol: &Solution, m: &[Vec<f64>], signals: &[String]) -> Vec<Vec<f64>> {
    let index: Vec<usize> = signals
        .iter()
        .map(|s| {
            sol.capacitance
                .names
                .iter()
                .position(|n| n == s)
                .expect("signals are fixed conductors, checked before the study")
        })
        .collect();
    index
        .iter()
        .map(|&i| index.iter().map(|&j| m[i][j]).collect())
        .collect()
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::design::{Conductor, Shape};

    /// A strip of half-width 1 mm on the symmetry side x = 0, 0.5 mm above a grounded
    /// plane, in a 4 mm x 2 mm box (other sides grounded), background permittivity `eps`.
    fn half_strip(eps: f64, second: Option<[f64; 2]>) -> Design {
        let mut d = Design::default();
        d.domain.x = [0.0, 4e-3];
        d.domain.y = [0.0, 2e-3];
        d.domain.cell = 0.1e-3;
        d.sides.left = Side::Symmetry;
        d.background.permittivity = eps;
        d.conductors.push(Conductor {
            name: "strip".into(),
            drive: Drive::Fixed(1.0),
            joined: Vec::new(),
            shape: Shape::Rect {
                x: [0.0, 1e-3],
                y: [0.5e-3, 0.6e-3],
                round: 0.0,
            },
        });
        if let Some(x) = second {
            d.conductors.push(Conductor {
                name: "other".into(),
                drive: Drive::Fixed(0.0),
                joined: Vec::new(),
                shape: Shape::Rect {
                    x,
                    y: [0.5e-3, 0.6e-3],
                    round: 0.0,
                },
            });
        }
        d
    }

    fn quick() -> StudyParams {
        StudyParams {
            error_estimate: false,
            ..StudyParams::default()
        }
    }

    #[test]
    fn a_uniform_dielectric_gives_its_permittivity_and_scales_the_impedance() {
        let air = run(&half_strip(1.0, None), &["strip".into()], &quick()).unwrap();
        let fr4 = run(&half_strip(4.0, None), &["strip".into()], &quick()).unwrap();
        assert_eq!(air.mirrored, ["left"]);
        assert!(air.warnings.is_empty());
        // A homogeneous line: eps_eff is the permittivity, Z0 falls by its square root.
        assert!((fr4.line.eps_eff.unwrap() - 4.0).abs() < 1e-9);
        let ratio = air.line.z0.unwrap() / fr4.line.z0.unwrap();
        assert!((ratio - 2.0).abs() < 1e-9, "{ratio}");
        // The unfolded line has twice the drawn half's capacitance.
        let half = air.solution.capacitance.matrix[0][0];
        assert!((air.line.c[0][0] - 2.0 * half).abs() <= 1e-12 * half);
    }

    #[test]
    fn a_signal_off_the_symmetry_side_is_an_image_and_says_so() {
        let d = half_strip(1.0, Some([2e-3, 3e-3]));
        let ls = run(&d, &["other".into()], &quick()).unwrap();
        assert!(ls.mirrored.is_empty());
        assert_eq!(
            ls.warnings,
            [Warning::SymmetryImage {
                side: "left",
                signals: vec!["other".into()],
            }]
        );
    }

    #[test]
    fn the_plan_counts_the_held_solution() {
        let d = half_strip(1.0, None);
        let one = study::plan(&d, &quick()).unwrap();
        let two = plan(&d, &quick()).unwrap();
        assert_eq!(one.grid(), two.grid());
        assert!(two.memory_mib() > one.memory_mib());
    }

    #[test]
    fn error_estimate_covers_every_scalar() {
        let p = StudyParams::default();
        let ls = run(&half_strip(2.0, None), &["strip".into()], &p).unwrap();
        let keys: Vec<&str> = ls.errors.iter().map(|e| e.0).collect();
        assert_eq!(keys, ["z0", "eps_eff"]);
        assert!(ls.errors.iter().all(|e| e.1.is_finite() && e.1 >= 0.0));
    }

    #[test]
    fn bad_signals_are_refused_before_solving() {
        let d = half_strip(1.0, Some([2e-3, 3e-3]));
        let sig = |s: &[&str]| s.iter().map(|s| s.to_string()).collect::<Vec<_>>();
        assert_eq!(
            check_signals(&d, &sig(&["nope"])),
            Err(SignalError::Unknown("nope".into()))
        );
        assert_eq!(
            check_signals(&d, &sig(&["strip", "strip"])),
            Err(SignalError::Repeated("strip".into()))
        );
        assert_eq!(check_signals(&d, &[]), Err(SignalError::NoSignal));
        let mut f = d.clone();
        f.conductors[1].drive = Drive::Floating;
        assert_eq!(
            check_signals(&f, &sig(&["other"])),
            Err(SignalError::Floating("other".into()))
        );
        let mut a = d;
        a.mode = Mode::Axisymmetric;
        assert!(matches!(
            run(&a, &sig(&["strip"]), &quick()),
            Err(LineStudyError::Signals(SignalError::NotPlanar))
        ));
    }
}
