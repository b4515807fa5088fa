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

use crate::design::{Design, DesignError, Drive, Mode};
use crate::grid::{Grid, GridError};
use crate::operator::{self, Operator, OperatorError, SideId};
use crate::post::{self, Hotspot, HotspotParams, ProbeResult, SurfacePoint};
use crate::raster::{self, Raster, NO_CONDUCTOR};
use crate::solvers::{self, Info, Method, Params};
use crate::stages::{Stage, StageMonitor, Tracker};
use crate::surface::{self, SurfaceParams, SurfaceSample};
use crate::surface_results;
use crate::warning::{NonFiniteIn, SolveFailure, Warning};
use crate::EPS0;

/// What to run.
#[derive(Clone, Debug)]
pub struct StudyParams {
    /// Linear solver.
    pub method: Method,
    /// Its settings.
    pub solver: Params,
    /// Also solve on the lattice twice as coarse and estimate discretisation errors.
    pub error_estimate: bool,
    /// Hot-spot search settings.
    pub hotspots: HotspotParams,
    /// Told as each stage of the study starts and ends.
    pub stages: Option<StageMonitor>,
}

impl Default for StudyParams {
    fn default() -> Self {
        StudyParams {
            method: Method::default(),
            solver: Params::default(),
            error_estimate: true,
            hotspots: HotspotParams::default(),
            stages: None,
        }
    }
}

/// A study that could not run.
#[derive(Debug, thiserror::Error)]
#[non_exhaustive]
pub enum StudyError {
    /// The design breaks a rule.
    #[error(transparent)]
    Design(#[from] DesignError),
    /// The lattice cannot be built.
    #[error(transparent)]
    Grid(#[from] GridError),
    /// The operator cannot be built.
    #[error(transparent)]
    Operator(#[from] OperatorError),
}

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
}

/// The Maxwell capacitance matrix of the fixed-potential conductors.
#[derive(Clone, Debug, PartialEq)]
pub struct Capacitance {
    /// Conductor names in matrix order.
    pub names: Vec<String>,
    /// Entry (i, j): charge on i with j at 1 V and every other fixed conductor at 0 V
    /// (F/m planar, F axisymmetric).
    pub matrix: Vec<Vec<f64>>,
    /// Estimated discretisation error of each entry, same units, when requested.
    pub error_estimate: Option<Vec<Vec<f64>>>,
    /// How the estimate was made, when it was.
    pub error_model: Option<ErrorModel>,
}

/// How discretisation errors are estimated: Richardson's extrapolation from the fine lattice
/// and one with about twice the spacing. With the error of a result behaving like `K h^p`,
/// the fine result's error is about `|R_h - R_coarse| / (ratio^p - 1)`.
///
/// The order `p`: 1 for designs with sharp corners or thin conductors (their singular
/// fields make the scheme first order); for smooth designs the order observed from a third,
/// twice coarser lattice when the three results converge monotonically, clamped to [1, 2]
/// (the five-point scheme is second order), and 2 when no such order can be read.
#[derive(Clone, Debug, PartialEq)]
pub struct ErrorModel {
    /// Maxwell matrix on the coarse lattice, same order and units as the fine one.
    pub coarse: Vec<Vec<f64>>,
    /// Conductor charges at the operating point on the coarse lattice.
    pub coarse_charges: Vec<f64>,
    /// Coarse over fine spacing (the smaller of the two axes'), about 2.
    pub ratio: f64,
    /// The convergence order used.
    pub order: f64,
    /// The order observed from three lattices, when a third one was solved.
    pub observed_order: Option<f64>,
}

impl ErrorModel {
    /// Estimated error of a fine-lattice result from its coarse-lattice counterpart.
    pub fn estimate(&self, fine: f64, coarse: f64) -> f64 {
        (fine - coarse).abs() / (self.ratio.powf(self.order) - 1.0)
    }
}

/// Summary of the linear solves of a study.
#[derive(Clone, Debug, PartialEq)]
pub struct SolveSummary {
    /// Method name.
    pub method: &'static str,
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
}

impl Solution {
    /// Field evaluation at the operating point (every conductor at its potential).
    pub fn field(&self) -> post::FieldEval<'_> {
        let v: Vec<f64> = self.conductors.iter().map(|c| c.potential).collect();
        post::FieldEval::new(&self.operator, &self.raster, &self.potential, &v)
    }

    /// |E| at every node, V/m (NaN inside conductors and at fixed nodes).
    pub fn field_magnitude(&self) -> &[f64] {
        &self.magnitude
    }
}

/// Core results of the solves on one lattice.
struct Core {
    raster: Raster,
    op: Operator,
    phi: Vec<f64>,
    potentials: Vec<f64>,
    /// Charge of every target per conductor at 1 V: `response[k][t]`.
    response: Vec<Vec<f64>>,
    /// Charge of every target from the sides and the free charge.
    background: Vec<f64>,
    maxwell: Vec<Vec<f64>>,
    infos: Vec<Info>,
}

/// Runs the study of a validated design.
pub fn run(design: &Design, params: &StudyParams) -> Result<Solution, StudyError> {
    crate::design::validate(design)?;
    let grid = Grid::fit(design.domain.x, design.domain.y, design.domain.cell)?;
    let mut warnings = Vec::new();
    // Lattices twice and four times as coarse, for the error estimate and its order.
    let coarse_grid = grid.coarsened();
    let coarser_grid = coarse_grid.coarsened();
    let monitor = params.stages.as_ref();
    let mut stages = Tracker::new(monitor);
    let coarse = if params.error_estimate && grid.nx > 8 && grid.ny > 8 {
        stages.enter(Stage::ErrorEstimate);
        Some(solve_on(design, &coarse_grid, params, None)?)
    } else {
        None
    };
    let smooth = post::sharp_corners(design).is_empty();
    let coarser = if smooth && coarse.is_some() && coarse_grid.nx > 8 && coarse_grid.ny > 8 {
        Some(solve_on(design, &coarser_grid, params, None)?)
    } else {
        None
    };
    stages.leave();
    let core = solve_on(design, &grid, params, monitor)?;
    let fixed: Vec<usize> = (0..design.conductors.len())
        .filter(|&k| matches!(design.conductors[k].drive, Drive::Fixed(_)))
        .collect();
    let names: Vec<String> = fixed
        .iter()
        .map(|&k| design.conductors[k].name.clone())
        .collect();
    let error_model = coarse.as_ref().map(|c| {
        let ratio = (coarse_grid.hx / grid.hx).min(coarse_grid.hy / grid.hy);
        let observed_order = coarser.as_ref().and_then(|cc| {
            let ratio2 = (coarser_grid.hx / coarse_grid.hx).min(coarser_grid.hy / coarse_grid.hy);
            observed_order(&core.maxwell, &c.maxwell, &cc.maxwell, ratio.min(ratio2))
        });
        // Sharp corners and thin conductors make the field singular: the cut-cell scheme
        // then converges at first order, with an error constant that depends on where the
        // singular points fall within their cells, so an order read from three lattices
        // would not be trustworthy there.
        let singular = !post::sharp_corners(design).is_empty();
        let order = match observed_order {
            _ if singular => 1.0,
            Some(p) => p.clamp(1.0, 2.0),
            None => 2.0,
        };
        ErrorModel {
            coarse: c.maxwell.clone(),
            coarse_charges: c
                .op
                .reactions_total(&c.response, &c.background, &c.potentials)
                [..design.conductors.len()]
                .to_vec(),
            ratio,
            order,
            observed_order,
        }
    });
    let error_estimate = error_model.as_ref().map(|m| {
        core.maxwell
            .iter()
            .zip(&m.coarse)
            .map(|(rf, rc)| rf.iter().zip(rc).map(|(f, c)| m.estimate(*f, *c)).collect())
            .collect::<Vec<Vec<f64>>>()
    });
    if let Some(err) = &error_estimate {
        for (i, row) in err.iter().enumerate() {
            for (j, e) in row.iter().enumerate() {
                let c = core.maxwell[i][j];
                if c != 0.0 && *e > 0.01 * c.abs() {
                    warnings.push(Warning::CapacitanceError {
                        row: names[i].clone(),
                        column: names[j].clone(),
                        percent: 100.0 * e / c.abs(),
                    });
                }
            }
        }
    }
    let mut solve = summarize(&core.infos);
    if let Some(why) = &solve.failure {
        warnings.push(Warning::NotConverged(why.clone()));
    }

    let nc = design.conductors.len();
    let values = core.op.target_values(&core.potentials, true);
    let charges = core
        .op
        .reactions_total(&core.response, &core.background, &core.potentials);
    let corners = post::sharp_corners(design);
    let field = post::FieldEval::new(&core.op, &core.raster, &core.phi, &core.potentials);
    stages.enter(Stage::Field);
    field.magnitudes();
    stages.enter(Stage::Forces);
    // The coarse solve's field, surfaces and forces, for the error estimates of field
    // quantities.
    let coarse_field = coarse
        .as_ref()
        .map(|c| post::FieldEval::new(&c.op, &c.raster, &c.phi, &c.potentials));
    let force_error = |k: usize, f: [f64; 2]| -> Option<[f64; 2]> {
        let (m, cf) = (error_model.as_ref()?, coarse_field.as_ref()?);
        let c = post::force(cf, design, k);
        Some([m.estimate(f[0], c[0]), m.estimate(f[1], c[1])])
    };
    let conductors = (0..nc)
        .map(|k| ConductorResult {
            name: design.conductors[k].name.clone(),
            potential: core.potentials[k],
            floating: design.conductors[k].drive == Drive::Floating,
            charge: charges[k],
            charge_error: error_model
                .as_ref()
                .map(|m| m.estimate(charges[k], m.coarse_charges[k])),
            force: post::force(&field, design, k),
            force_error: None,
        })
        .enumerate()
        .map(|(k, mut c)| {
            c.force_error = force_error(k, c.force);
            c
        })
        .collect::<Vec<ConductorResult>>();
    warnings.extend(open_side_warnings(design, &core, &conductors));
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
    stages.enter(Stage::Surfaces);
    let probes = design
        .probes
        .iter()
        .map(|p| post::probe(&field, p))
        .collect();
    let surface = surface::sample(&field, design, &SurfaceParams::default());
    let surface_charge = surface_results::surface_charge(&surface, design, &charges);
    let closed = surface::without_thin_conductors(&surface, design);
    stages.enter(Stage::HotSpots);
    // Triple junctions and dielectric corners are singular too.
    let mut corners = corners;
    corners.extend(surface_results::singular_points(design, &closed));
    let (mut peak_field, mut hotspots) =
        surface_results::peak_and_hotspots(&field, design, &corners, &params.hotspots, &closed);
    let coarse_surface = coarse_field.as_ref().map(|f| {
        let all = surface::sample(f, design, &SurfaceParams::default());
        surface::without_thin_conductors(&all, design)
    });
    if let (Some(m), Some(cf), Some(cs)) = (&error_model, &coarse_field, &coarse_surface) {
        surface_results::estimate_errors(
            &mut peak_field,
            &mut hotspots,
            design,
            cf,
            cs,
            m.ratio,
            m.order,
        );
    }
    surface_results::finish(
        &mut peak_field,
        &mut hotspots,
        design,
        &closed,
        grid.hx.max(grid.hy),
    );
    let worst_margin = hotspots.iter().find(|h| h.margin.is_some()).cloned();
    stages.leave();
    let magnitude = field.into_magnitudes();
    // Every solve can converge and the results still overflow (potentials, permittivities
    // or charges near the end of the double range): such results are flagged, not reported.
    if solve.converged {
        if let Some(what) = non_finite(&core.phi, &conductors, &core.maxwell, energy) {
            let why = SolveFailure::NonFinite(what);
            warnings.push(Warning::NotConverged(why.clone()));
            solve.converged = false;
            solve.failure = Some(why);
        }
    }

    Ok(Solution {
        mode: design.mode,
        grid,
        capacitance: Capacitance {
            names,
            matrix: core.maxwell.clone(),
            error_estimate,
            error_model,
        },
        conductors,
        side_charge,
        energy,
        peak_field,
        hotspots,
        worst_margin,
        probes,
        surface_charge,
        surface,
        solve,
        warnings,
        potential: core.phi,
        magnitude,
        raster: core.raster,
        operator: core.op,
    })
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

/// The order observed from results on three lattices with spacings h, r h, r^2 h:
/// `log(|R_rh - R_r2h| / |R_h - R_rh|) / log(r)`, with the differences measured over the
/// whole matrix. `None` when the differences vanish or change direction (no monotone
/// convergence to read an order from).
fn observed_order(
    fine: &[Vec<f64>],
    coarse: &[Vec<f64>],
    coarser: &[Vec<f64>],
    r: f64,
) -> Option<f64> {
    let (mut d1, mut d2, mut cross) = (0.0, 0.0, 0.0);
    for ((rf, rc), rcc) in fine.iter().zip(coarse).zip(coarser) {
        for ((f, c), cc) in rf.iter().zip(rc).zip(rcc) {
            let (a, b) = (f - c, c - cc);
            d1 += a * a;
            d2 += b * b;
            cross += a * b;
        }
    }
    if !(d1 > 0.0 && d2 > 0.0 && cross > 0.0 && r > 1.0) {
        return None;
    }
    let p = (d2.sqrt() / d1.sqrt()).ln() / r.ln();
    p.is_finite().then_some(p)
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
        method: infos.first().map(|i| i.method).unwrap_or("none"),
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

impl Operator {
    /// Charge of every target at conductor potentials `v`: superposition of the unit
    /// responses and the background solve.
    fn reactions_total(&self, response: &[Vec<f64>], background: &[f64], v: &[f64]) -> Vec<f64> {
        let mut q = background.to_vec();
        for (k, col) in response.iter().enumerate() {
            for (t, c) in col.iter().enumerate() {
                q[t] += v[k] * c;
            }
        }
        q
    }
}

/// Runs every solve of the study on one lattice, telling `monitor` of its stages.
fn solve_on(
    design: &Design,
    grid: &Grid,
    params: &StudyParams,
    monitor: Option<&StageMonitor>,
) -> Result<Core, StudyError> {
    let mut stages = Tracker::new(monitor);
    stages.enter(Stage::Raster);
    let raster = raster::rasterize(design, grid);
    stages.enter(Stage::Assembly);
    let op = operator::assemble(design, &raster)?;
    stages.enter(Stage::SolverSetup);
    let prepared = solvers::prepare(params.method, &op.stencil);
    stages.enter(Stage::Solves);
    let n = grid.len();
    let nc = design.conductors.len();
    let floating: Vec<usize> = (0..nc)
        .filter(|&k| design.conductors[k].drive == Drive::Floating)
        .collect();
    let fixed: Vec<usize> = (0..nc).filter(|&k| !floating.contains(&k)).collect();
    let mut infos = Vec::new();
    let mut phi = vec![0.0; n];
    let mut response = vec![Vec::new(); nc];
    let mut kept: Vec<(usize, Vec<f64>)> = Vec::new();
    let record = |r: Result<Info, solvers::SolveError>, infos: &mut Vec<Info>| match r {
        Ok(i) => infos.push(i),
        Err(e) => infos.push(e.info().clone()),
    };
    for k in 0..nc {
        let mut unit = vec![0.0; nc];
        unit[k] = 1.0;
        let values = op.target_values(&unit, false);
        let b = op.rhs(&values, false);
        let mut x = vec![0.0; n];
        record(
            prepared.solve(&op.stencil, &b, &mut x, &params.solver),
            &mut infos,
        );
        response[k] = op.reactions(&x, &values, false);
        match design.conductors[k].drive {
            Drive::Fixed(v) => {
                if v != 0.0 {
                    phi.iter_mut().zip(&x).for_each(|(p, x)| *p += v * x);
                }
            }
            Drive::Floating => kept.push((k, x)),
        }
    }
    let zero = vec![0.0; nc];
    let values0 = op.target_values(&zero, true);
    let b0 = op.rhs(&values0, true);
    let background = if b0.iter().any(|&v| v != 0.0) {
        let mut x0 = vec![0.0; n];
        record(
            prepared.solve(&op.stencil, &b0, &mut x0, &params.solver),
            &mut infos,
        );
        let q = op.reactions(&x0, &values0, true);
        phi.iter_mut().zip(&x0).for_each(|(p, x)| *p += x);
        q
    } else {
        vec![0.0; op.n_targets()]
    };
    drop(b0);
    stages.enter(Stage::Superposition);

    // Conductor-to-conductor charge response: cfull[i][k] = charge on i with k at 1 V.
    let cfull: Vec<Vec<f64>> = (0..nc)
        .map(|i| (0..nc).map(|k| response[k][i]).collect())
        .collect();
    let mut potentials: Vec<f64> = design
        .conductors
        .iter()
        .map(|c| {
            if let Drive::Fixed(v) = c.drive {
                v
            } else {
                0.0
            }
        })
        .collect();
    let maxwell;
    if floating.is_empty() {
        maxwell = fixed
            .iter()
            .map(|&i| fixed.iter().map(|&j| cfull[i][j]).collect())
            .collect();
    } else {
        // Net charge zero on floating conductors: C_FF V_F = -(C_FS V_S + Q0_F).
        let cff: Vec<Vec<f64>> = floating
            .iter()
            .map(|&i| floating.iter().map(|&j| cfull[i][j]).collect())
            .collect();
        let rhs: Vec<f64> = floating
            .iter()
            .map(|&i| {
                -(fixed
                    .iter()
                    .map(|&j| cfull[i][j] * potentials[j])
                    .sum::<f64>()
                    + background[i])
            })
            .collect();
        let vf = dense_solve(&cff, &rhs);
        for (f, &i) in floating.iter().enumerate() {
            potentials[i] = vf[f];
        }
        for (k, x) in &kept {
            let v = potentials[*k];
            phi.iter_mut().zip(x).for_each(|(p, x)| *p += v * x);
        }
        // Reduced Maxwell matrix: C_SS - C_SF C_FF^-1 C_FS.
        maxwell = fixed
            .iter()
            .map(|&i| {
                fixed
                    .iter()
                    .map(|&j| {
                        let col: Vec<f64> = floating.iter().map(|&f| cfull[f][j]).collect();
                        let y = dense_solve(&cff, &col);
                        cfull[i][j]
                            - floating
                                .iter()
                                .zip(&y)
                                .map(|(&f, y)| cfull[i][f] * y)
                                .sum::<f64>()
                    })
                    .collect()
            })
            .collect();
    }
    // Fixed nodes hold their own potentials.
    let side_values = op.target_values(&potentials, true);
    let (nx, ny) = (grid.nx, grid.ny);
    for p in 0..n {
        if op.stencil.unknown[p] {
            continue;
        }
        let k = raster.conductor[p];
        phi[p] = if k != NO_CONDUCTOR {
            potentials[k as usize]
        } else {
            let s = operator::fixed_side(&op.side_potential, nx, ny, p % nx, p / nx)
                .expect("a fixed free node lies on a fixed side");
            side_values[op.side_target(s) as usize]
        };
    }
    stages.leave();
    Ok(Core {
        raster,
        op,
        phi,
        potentials,
        response,
        background,
        maxwell,
        infos,
    })
}

/// Solves a small dense SPD system by Gaussian elimination with partial pivoting.
fn dense_solve(a: &[Vec<f64>], b: &[f64]) -> Vec<f64> {
    let n = b.len();
    let mut m: Vec<Vec<f64>> = a
        .iter()
        .zip(b)
        .map(|(r, &v)| r.iter().copied().chain(std::iter::once(v)).collect())
        .collect();
    for c in 0..n {
        let piv = (c..n)
            .max_by(|&i, &j| m[i][c].abs().total_cmp(&m[j][c].abs()))
            .unwrap();
        m.swap(c, piv);
        for r in c + 1..n {
            let f = m[r][c] / m[c][c];
            for k in c..=n {
                m[r][k] -= f * m[c][k];
            }
        }
    }
    let mut x = vec![0.0; n];
    for r in (0..n).rev() {
        let s: f64 = (r + 1..n).map(|k| m[r][k] * x[k]).sum();
        x[r] = (m[r][n] - s) / m[r][r];
    }
    x
}
