//! The study: which solves to run for a design, and their superposition into the operating
//! point and the capacitance matrix.
//!
//! One unit-potential solve per conductor gives one column of the charge response of every
//! fixed target; one more solve carries the side potentials and the free charge. Floating
//! conductors are then eliminated exactly (net charge zero) from that small dense system, and
//! the operating point is the superposition of the solves. With an error estimate requested,
//! the same study runs first on the lattice twice as coarse and the two capacitance matrices
//! give a Richardson estimate of the discretisation error.
//!
//! Invariants: every number comes from the same operator that the solver saw, so charges,
//! energy and capacitance agree with the solve to the solver tolerance; a study whose
//! results hold a NaN or an infinity (every solve converged, yet the numbers overflowed) is
//! never reported as converged.

use crate::design::{Design, Drive, Lattice, Mode};
use crate::forces::{self, ForceMethod, NoBand};
use crate::grid::{Grid, GridError};
use crate::operator::{Operator, SideId};
use crate::plan::Plan;
use crate::post::{self, Hotspot, ProbeResult, SurfacePoint};
use crate::raster::Raster;
use crate::solvers::{Info, Method};
use crate::stages::{Stage, Tracker};
use crate::surface::{self, SurfaceParams, SurfaceSample};
use crate::surface_results;
use crate::warning::{NonFiniteIn, SolveFailure, Warning};
use crate::EPS0;

mod estimate;
mod nested;
mod params;
mod reference;
mod solves;

use estimate::CoarseStudies;
pub use estimate::{junction_exponent, solver_errors, worst_relative_asymmetry, ErrorModel};
pub use params::{StudyError, StudyParams, WarmStart};
use solves::{solve_on, Core};
use std::sync::Arc;

/// Per-conductor results at the operating point.
#[derive(Clone, Debug, PartialEq)]
pub struct ConductorResult {
    /// Name.
    pub name: String,
    /// Potential, V (found by the solve for a floating conductor).
    pub potential: f64,
    /// True for a floating conductor.
    pub floating: bool,
    /// Net charge, C/m (planar) or C (axisymmetric).
    pub charge: f64,
    /// Estimated discretisation error of the charge, same units, when requested.
    pub charge_error: Option<f64>,
    /// Electrostatic force, N/m (planar) or N (axisymmetric: only the axial component, y).
    pub force: [f64; 2],
    /// Estimated discretisation error of each force component, same units, when requested.
    pub force_error: Option<[f64; 2]>,
    /// How the force was integrated.
    pub force_method: ForceMethod,
}

/// The Maxwell capacitance matrix of the fixed-potential conductors.
#[derive(Clone, Debug, PartialEq)]
pub struct Capacitance {
    /// Conductor names in matrix order.
    pub names: Vec<String>,
    /// Entry (i, j): charge on i with j at 1 V and every other fixed conductor at 0 V
    /// (F/m planar, F axisymmetric).
    pub matrix: Vec<Vec<f64>>,
    /// Estimated error of each entry, same units, when requested: the discretisation's (from
    /// the error model) plus the linear solver's (`solver_error`).
    pub error_estimate: Option<Vec<Vec<f64>>>,
    /// The linear solver's part of the error of each entry ([`solver_errors`]), same units.
    pub solver_error: Vec<Vec<f64>>,
    /// How the estimate was made, when it was.
    pub error_model: Option<ErrorModel>,
}

/// Summary of the linear solves of a study.
#[derive(Clone, Debug, PartialEq)]
pub struct SolveSummary {
    /// The method of the solves (`None` when nothing needed solving).
    pub method: Option<Method>,
    /// Number of solves on the fine lattice.
    pub solves: usize,
    /// Largest iteration count of one solve.
    pub iterations: usize,
    /// Sum of the iteration counts.
    pub total_iterations: usize,
    /// Largest final relative residual.
    pub relative_residual: f64,
    /// True when every solve converged.
    pub converged: bool,
    /// Why the solves are not reported as converged (the first failed solve), if so.
    pub failure: Option<SolveFailure>,
}

/// Everything a study produces.
#[derive(Clone, Debug)]
pub struct Solution {
    /// Planar or axisymmetric.
    pub mode: Mode,
    /// The lattice.
    pub grid: Grid,
    /// Node classification (kept for pictures and field tables).
    pub raster: Raster,
    /// The operator (kept for field evaluation).
    pub operator: Operator,
    /// Potential at every node at the operating point, V (fixed nodes hold their values).
    pub potential: Vec<f64>,
    /// The common offset of the fixed potentials that the solves left out, V: zero unless
    /// every fixed potential lies on one side of zero and no side is open (see
    /// [`Solution::field`]).
    pub reference: f64,
    /// `potential` minus `reference` at every node, V, kept when `reference` is not zero:
    /// the potential the solves found, whose differences are not rounded to the offset's
    /// last place.
    pub relative_potential: Option<Vec<f64>>,
    /// |E| at every node at the operating point, V/m (NaN inside conductors and at fixed
    /// nodes), as [`post::FieldEval::magnitudes`] gives it.
    pub magnitude: Vec<f64>,
    /// Per-conductor results.
    pub conductors: Vec<ConductorResult>,
    /// Maxwell capacitance matrix of the fixed conductors.
    pub capacitance: Capacitance,
    /// Charge of each side (left, right, bottom, top), C/m or C; zero for sides without a
    /// fixed potential.
    pub side_charge: [f64; 4],
    /// Stored energy, J/m (planar) or J.
    pub energy: f64,
    /// Largest field outside conductors.
    pub peak_field: Option<Hotspot>,
    /// Ranked distinct field maxima: by margin when any material has a strength (the lowest
    /// margin first), else by field.
    pub hotspots: Vec<Hotspot>,
    /// The point of lowest margin (strength over field plus its estimated error), over every
    /// material with a strength and both sides of every interface; `None` without strengths.
    pub worst_margin: Option<Hotspot>,
    /// Probe results.
    pub probes: Vec<ProbeResult>,
    /// Surface charge samples along the conductor outlines.
    pub surface_charge: Vec<SurfacePoint>,
    /// The field at the surfaces (conductors, fixed sides, both sides of interfaces),
    /// evaluated at points along their exact outlines.
    pub surface: Vec<SurfaceSample>,
    /// Linear-solve summary.
    pub solve: SolveSummary,
    /// Warnings for the user.
    pub warnings: Vec<Warning>,
    /// The lattice's solves, when [`StudyParams::keep_warm_start`] asked for them.
    pub warm_start: Option<Arc<WarmStart>>,
}

impl Solution {
    /// Field evaluation at the operating point (every conductor at its potential). It works
    /// on the potential relative to [`Solution::reference`] (the operator holds the sides
    /// relative to it), so fields carry no rounding of a large common offset; its probes
    /// read absolute potentials.
    pub fn field(&self) -> post::FieldEval<'_> {
        let v: Vec<f64> = self
            .conductors
            .iter()
            .map(|c| c.potential - self.reference)
            .collect();
        let phi = self
            .relative_potential
            .as_deref()
            .unwrap_or(&self.potential);
        post::FieldEval::new(&self.operator, &self.raster, phi, &v).with_reference(self.reference)
    }

    /// |E| at every node, V/m (NaN inside conductors and at fixed nodes).
    pub fn field_magnitude(&self) -> &[f64] {
        &self.magnitude
    }
}

/// The plan of the study of `design` with `params`: its lattice and memory estimate.
pub fn plan(design: &Design, params: &StudyParams) -> Result<Plan, GridError> {
    crate::plan::plan(design, params.method, params.error_estimate)
}

/// Runs the study of a validated design.
pub fn run(design: &Design, params: &StudyParams) -> Result<Solution, StudyError> {
    let plan = plan(design, params)?;
    run_planned(design, &plan, params)
}

/// Runs the study of a validated design on the lattice of its `plan` (made by [`plan`] for
/// this design, so the lattice is fitted once). A common offset of every fixed potential is
/// left out of the solves and added back to the reported potentials ([`reference`]).
pub fn run_planned(
    design: &Design,
    plan: &Plan,
    params: &StudyParams,
) -> Result<Solution, StudyError> {
    crate::design::validate(design)?;
    let offset = reference::common(design);
    let floor = reference::rounding_floor(design);
    let mut sol = if offset == 0.0 {
        run_relative(design, plan, params)?
    } else {
        run_relative(&reference::relative(design, offset), plan, params)?
    };
    if let Some((spread, largest, relative)) = floor {
        if sol.solve.converged {
            sol.warnings.push(Warning::PotentialRounding {
                spread,
                largest,
                relative,
            });
        }
    }
    if offset != 0.0 {
        let relative = std::mem::take(&mut sol.potential);
        sol.potential = relative.iter().map(|v| v + offset).collect();
        sol.relative_potential = Some(relative);
        sol.reference = offset;
        sol.conductors
            .iter_mut()
            .for_each(|c| c.potential += offset);
        sol.probes.iter_mut().for_each(|p| p.potential += offset);
    }
    Ok(sol)
}

/// The study of a design solved as written (its potentials relative to zero).
fn run_relative(
    design: &Design,
    plan: &Plan,
    params: &StudyParams,
) -> Result<Solution, StudyError> {
    let grid = plan.grid().clone();
    let corners = post::sharp_corners(design);
    let monitor = params.stages.as_ref();
    let mut stages = Tracker::new(monitor);
    if params.error_estimate && grid.nx > 8 && grid.ny > 8 {
        stages.enter(Stage::ErrorEstimate);
    }
    let coarse = CoarseStudies::run(design, &grid, params, corners.is_empty())?;
    stages.leave();
    let start = params.coarse_start.then(|| coarse.start()).flatten();
    let mut core = solve_on(design, &grid, params, start.as_ref(), monitor)?;
    drop(start);
    let warm_start = core.warm.take().map(Arc::new);
    let capacitance = capacitance(design, &grid, &core, &coarse, !corners.is_empty());
    let mut warnings = match &capacitance.error_estimate {
        Some(err) => estimate::capacitance_warnings(&capacitance.names, &core.maxwell, err),
        None => Vec::new(),
    };
    let mut solve = summarize(&core.infos);
    if let Some(why) = &solve.failure {
        warnings.push(Warning::NotConverged(why.clone()));
    }
    let field = post::FieldEval::new(&core.op, &core.raster, &core.phi, &core.potentials);
    stages.enter(Stage::Field);
    field.magnitudes();
    stages.enter(Stage::Forces);
    // The coarse solve's field, for the error estimates of field quantities.
    let coarse_field = coarse
        .coarse_core()
        .map(|c| post::FieldEval::new(&c.op, &c.raster, &c.phi, &c.potentials));
    let estimate = capacitance.error_model.as_ref().zip(coarse_field.as_ref());
    let mut point = operating_point(design, &core, &field, estimate);
    warnings.append(&mut point.warnings);
    warnings.extend(open_side_warnings(design, &core, &point.conductors));
    let fields = field_results(
        &field,
        design,
        &corners,
        params,
        &point.charges,
        estimate,
        &mut stages,
    );
    stages.leave();
    drop(coarse_field);
    drop(coarse);
    let magnitude = field.into_magnitudes();
    // Every solve can converge and the results still overflow (potentials, permittivities
    // or charges near the end of the double range): such results are flagged, not reported.
    if solve.converged {
        if let Some(what) = non_finite(&core.phi, &point.conductors, &core.maxwell, point.energy) {
            let why = SolveFailure::NonFinite(what);
            warnings.push(Warning::NotConverged(why.clone()));
            solve.converged = false;
            solve.failure = Some(why);
        }
    }
    // Unconverged numbers support no diagnosis: the failure is the one warning.
    if let Some(why) = &solve.failure {
        warnings = vec![Warning::NotConverged(why.clone())];
    }
    Ok(Solution {
        mode: design.mode,
        grid,
        capacitance,
        conductors: point.conductors,
        side_charge: point.side_charge,
        energy: point.energy,
        peak_field: fields.peak_field,
        hotspots: fields.hotspots,
        worst_margin: fields.worst_margin,
        probes: fields.probes,
        surface_charge: fields.surface_charge,
        surface: fields.surface,
        solve,
        warnings,
        potential: core.phi,
        reference: 0.0,
        relative_potential: None,
        magnitude,
        raster: core.raster,
        operator: core.op,
        warm_start,
    })
}

/// The Maxwell matrix of the fixed conductors with its error estimate.
fn capacitance(
    design: &Design,
    grid: &Grid,
    core: &Core,
    coarse: &CoarseStudies,
    singular: bool,
) -> Capacitance {
    let names: Vec<String> = design
        .conductors
        .iter()
        .filter(|c| matches!(c.drive, Drive::Fixed(_)))
        .map(|c| c.name.clone())
        .collect();
    let error_model = coarse.error_model(design, grid, core, singular);
    let solver_error = solver_errors(&core.maxwell);
    let error_estimate = error_model.as_ref().map(|m| {
        let mut e = estimate::matrix_errors(m, &core.maxwell);
        e.iter_mut()
            .flatten()
            .zip(solver_error.iter().flatten())
            .for_each(|(e, s)| *e += s);
        e
    });
    Capacitance {
        names,
        matrix: core.maxwell.clone(),
        error_estimate,
        solver_error,
        error_model,
    }
}

/// Conductor results, side charges and energy at the operating point.
struct OperatingPoint {
    conductors: Vec<ConductorResult>,
    /// Warnings about the forces.
    warnings: Vec<Warning>,
    /// Charge of every target (conductors, then sides).
    charges: Vec<f64>,
    side_charge: [f64; 4],
    energy: f64,
}

/// The error model and the coarse lattice's field at the operating point, when the error
/// estimate ran.
type Estimate<'a, 'b> = Option<(&'a ErrorModel, &'a post::FieldEval<'b>)>;

fn operating_point(
    design: &Design,
    core: &Core,
    field: &post::FieldEval,
    estimate: Estimate,
) -> OperatingPoint {
    let error_model = estimate.map(|(m, _)| m);
    // The coarse force counts only when its own path sees the conductor's field: a layer
    // that the coarse lattice does not resolve gives a coarse force unrelated to the fine one.
    // A conductor on an interface: the path passes its junctions, whose singular field sets
    // the order, with the cells beside them shrinking from the coarse lattice to the fine one
    // as the two lattices show on a graded family (2^(1 / mu) per member while the grading
    // falls radically there, 2 within its floor) and as the lattice's ratio on a uniform one.
    let path_error = |k: usize, f: [f64; 2], why: NoBand| -> Option<[f64; 2]> {
        let (m, cf) = estimate?;
        let c = post::force_on_path(cf, design, k);
        if c.seen(m.coarse_charges[k]) < post::RESOLVED_FORCE_SHARE {
            return None;
        }
        let eps =
            forces::permittivities_beside(field, design, k).filter(|_| why == NoBand::Interface);
        Some(match eps {
            Some([hi, lo]) => {
                let lambda = estimate::junction_exponent(hi, lo);
                let shrink = if design.lattice == Lattice::Graded {
                    estimate::junction_shrink(design, k, &field.op.grid, &cf.op.grid)
                        .unwrap_or(m.ratio)
                } else {
                    m.ratio
                };
                let e = |i: usize| m.estimate_at_junction(f[i], c.force[i], lambda, shrink);
                [e(0), e(1)]
            }
            None => [m.estimate(f[0], c.force[0]), m.estimate(f[1], c.force[1])],
        })
    };
    // A volume force is compared with the same weight's integral on the coarse lattice.
    let volume_error = |k: usize, w: &forces::Weight, f: [f64; 2]| -> Option<[f64; 2]> {
        let (m, cf) = estimate?;
        let c = forces::weighted_force(cf, design, k, w)?;
        Some([m.estimate(f[0], c[0]), m.estimate(f[1], c[1])])
    };
    let values = core.op.target_values(&core.potentials, true);
    let charges = core
        .op
        .reactions_total(&core.response, &core.background, &core.potentials);
    let mut warnings = Vec::new();
    let conductors = design
        .conductors
        .iter()
        .enumerate()
        .map(|(k, c)| {
            let path = post::force_on_path(field, design, k);
            let seen = path.seen(charges[k]);
            if seen < post::RESOLVED_FORCE_SHARE {
                warnings.push(Warning::ForceUnresolved {
                    conductor: c.name.clone(),
                    seen,
                });
            }
            let volume = forces::weight(field, design, k).and_then(|w| {
                let f = forces::weighted_force(field, design, k, &w).ok_or(NoBand::Narrow)?;
                Ok((f, w))
            });
            let (force, force_error, force_method) = match volume {
                Ok((f, w)) => (f, volume_error(k, &w, f), ForceMethod::Volume),
                Err(why) => (
                    path.force,
                    path_error(k, path.force, why),
                    ForceMethod::Path(why),
                ),
            };
            ConductorResult {
                name: c.name.clone(),
                potential: core.potentials[k],
                floating: c.drive == Drive::Floating,
                charge: charges[k],
                charge_error: error_model.map(|m| m.estimate(charges[k], m.coarse_charges[k])),
                force,
                force_error,
                force_method,
            }
        })
        .collect::<Vec<_>>();
    let mut side_charge = [0.0; 4];
    for s in SideId::ALL {
        side_charge[s as usize] = charges[core.op.side_target(s) as usize];
    }
    let free: f64 = core
        .op
        .source
        .iter()
        .map(|&(p, s)| s * EPS0 * core.phi[p as usize])
        .sum();
    let energy = 0.5 * (charges.iter().zip(&values).map(|(q, v)| q * v).sum::<f64>() + free);
    // A force whose estimate exceeds it, where the estimate matters against the design's own
    // force scale (stored energy over the domain's diagonal): forces that vanish by symmetry
    // carry rounding both ways and are not flagged.
    let d = &design.domain;
    let scale = energy.abs() / (d.x[1] - d.x[0]).hypot(d.y[1] - d.y[0]);
    for c in &conductors {
        let Some(e) = c.force_error else { continue };
        let (err, size) = (e[0].hypot(e[1]), c.force[0].hypot(c.force[1]));
        if err > size && err > 1e-3 * scale {
            warnings.push(Warning::ForceUncertain {
                conductor: c.name.clone(),
                ratio: err / size.max(f64::MIN_POSITIVE),
            });
        }
    }
    OperatingPoint {
        conductors,
        charges,
        side_charge,
        energy,
        warnings,
    }
}

/// What the field at the operating point gives: peak, hot spots, worst margin, probes,
/// surface values.
struct FieldResults {
    peak_field: Option<Hotspot>,
    hotspots: Vec<Hotspot>,
    worst_margin: Option<Hotspot>,
    probes: Vec<ProbeResult>,
    surface_charge: Vec<SurfacePoint>,
    surface: Vec<SurfaceSample>,
}

fn field_results(
    field: &post::FieldEval,
    design: &Design,
    corners: &[crate::design::Point],
    params: &StudyParams,
    charges: &[f64],
    estimate: Estimate,
    stages: &mut Tracker,
) -> FieldResults {
    stages.enter(Stage::Surfaces);
    let probes = design
        .probes
        .iter()
        .map(|p| post::probe(field, p))
        .collect();
    let surface = surface::sample(field, design, &SurfaceParams::default());
    let mut surface_charge = surface_results::surface_charge(&surface, design, charges);
    let closed = surface::without_thin_conductors(&surface, design);
    stages.enter(Stage::HotSpots);
    // Triple junctions and dielectric corners are singular too.
    let mut corners = corners.to_vec();
    corners.extend(surface_results::singular_points(design, &closed));
    let (mut peak_field, mut hotspots) =
        surface_results::peak_and_hotspots(field, design, &corners, &params.hotspots, &closed);
    if let Some((m, cf)) = estimate {
        // Side and interface readings of the coarse study serve only the hot spots'
        // estimates; its conductor samples all serve the surface charge's.
        let points = surface_results::estimate_points(&peak_field, &hotspots, &cf.op.grid);
        let all = surface::sample_near(cf, design, &SurfaceParams::default(), &points);
        surface_results::surface_charge_errors(
            &mut surface_charge,
            &surface,
            design,
            &field.op.grid,
            &surface_results::CoarseSurface {
                samples: &all,
                charges: &m.coarse_charges,
                ratio: m.ratio,
                order: m.order,
            },
        );
        let coarse_surface = surface::without_thin_conductors(&all, design);
        // The fine potential read by the coarse lattice's surface fit, where the coarse
        // lattice is below the fit's resolution (see `surface_results::estimate`).
        let fine_read = || {
            let phi = surface_results::fine_on_coarse_nodes(field, cf)?;
            let n = design.conductors.len();
            let f = post::FieldEval::new(cf.op, cf.raster, &phi, &cf.values[..n]);
            let read = surface::sample_near(&f, design, &SurfaceParams::default(), &points);
            Some(surface::without_thin_conductors(&read, design))
        };
        surface_results::estimate_errors(
            &mut peak_field,
            &mut hotspots,
            design,
            cf,
            &coarse_surface,
            &fine_read,
            m,
        );
    }
    surface_results::finish(
        &mut peak_field,
        &mut hotspots,
        design,
        &closed,
        &field.op.grid,
    );
    let worst_margin = hotspots.iter().find(|h| h.margin.is_some()).cloned();
    FieldResults {
        peak_field,
        hotspots,
        worst_margin,
        probes,
        surface_charge,
        surface,
    }
}

/// The first kind of result that holds a NaN or an infinity, if any.
fn non_finite(
    phi: &[f64],
    conductors: &[ConductorResult],
    maxwell: &[Vec<f64>],
    energy: f64,
) -> Option<NonFiniteIn> {
    let bad = |v: &f64| !v.is_finite();
    if phi.iter().any(bad) {
        Some(NonFiniteIn::Potential)
    } else if maxwell.iter().flatten().any(bad) {
        Some(NonFiniteIn::Capacitance)
    } else if conductors
        .iter()
        .any(|c| bad(&c.potential) || bad(&c.charge) || c.force.iter().any(bad))
    {
        Some(NonFiniteIn::Conductors)
    } else if bad(&energy) {
        Some(NonFiniteIn::Energy)
    } else {
        None
    }
}

/// Warnings about what open sides cannot settle in a planar design with no fixed side: the
/// potential of a net line charge grows logarithmically, so the charge that such a design
/// sends to infinity (beyond the open sides) depends on how far away they are.
fn open_side_warnings(
    design: &Design,
    core: &Core,
    conductors: &[ConductorResult],
) -> Vec<Warning> {
    let s = &design.sides;
    let sides = [s.left, s.right, s.bottom, s.top];
    let open = sides.contains(&crate::design::Side::Open);
    if design.mode != Mode::Planar || !open || sides.iter().any(|s| s.potential().is_some()) {
        return Vec::new();
    }
    let mut out = Vec::new();
    let to_infinity: Vec<usize> = (0..core.maxwell.len())
        .filter(|&i| {
            let row: f64 = core.maxwell[i].iter().sum();
            row.abs() > 0.01 * core.maxwell[i][i].abs()
        })
        .collect();
    if !to_infinity.is_empty() {
        out.push(Warning::ReferenceAtInfinity {
            rows: to_infinity.len(),
            of: core.maxwell.len(),
        });
    }
    let net: f64 = conductors.iter().map(|c| c.charge).sum::<f64>() + core.op.free_charge();
    let scale: f64 =
        conductors.iter().map(|c| c.charge.abs()).sum::<f64>() + core.op.free_charge().abs();
    if scale > 0.0 && net.abs() > 1e-3 * scale {
        out.push(Warning::NetChargeOpenSides { net });
    }
    out
}

fn summarize(infos: &[Info]) -> SolveSummary {
    let failed = infos.iter().find(|i| !i.converged());
    SolveSummary {
        method: infos.first().map(|i| i.method),
        solves: infos.len(),
        iterations: infos.iter().map(|i| i.iterations).max().unwrap_or(0),
        total_iterations: infos.iter().map(|i| i.iterations).sum(),
        relative_residual: infos
            .iter()
            .map(|i| i.relative_residual)
            .fold(0.0, f64::max),
        converged: failed.is_none(),
        failure: failed.map(|i| SolveFailure::Stopped {
            reason: i.reason,
            iterations: i.iterations,
            relative_residual: i.relative_residual,
        }),
    }
}
