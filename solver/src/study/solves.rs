//! The solves of a study on one lattice: rasterise, assemble, one unit-potential solve per
//! conductor and one for the sides and the free charge, then the exact elimination of
//! floating conductors (net charge zero) from that small dense system.
//!
//! Invariants: every charge is a reaction of the operator the solver saw, and every solve
//! is given the charge scale of its targets' reactions (so it meets the solvers' charge test
//! as well as the relative residual); fixed nodes hold their own potentials in `phi`;
//! `response[k][t]` is the charge on target t with conductor k at 1 V and everything else at
//! 0 V.

use super::nested::CoarseStart;
use super::params::{StudyError, StudyParams, WarmStart};
use crate::design::{Design, Drive};
use crate::grid::Grid;
use crate::links::Link;
use crate::operator::{self, Operator};
use crate::parallel;
use crate::raster::{self, Raster, NO_CONDUCTOR};
use crate::solvers::{self, Info};
use crate::stages::{Stage, StageMonitor, Tracker};
use rayon::prelude::*;
use std::sync::Arc;

/// Core results of the solves on one lattice.
pub(super) struct Core {
    pub(super) raster: Raster,
    pub(super) op: Operator,
    /// Potential at every node at the operating point, V.
    pub(super) phi: Vec<f64>,
    /// Conductor potentials at the operating point (floating ones solved for), V.
    pub(super) potentials: Vec<f64>,
    /// Charge of every target per conductor at 1 V: `response[k][t]`.
    pub(super) response: Vec<Vec<f64>>,
    /// Charge of every target from the sides and the free charge.
    pub(super) background: Vec<f64>,
    /// Maxwell matrix of the fixed conductors (floating ones eliminated).
    pub(super) maxwell: Vec<Vec<f64>>,
    /// One record per linear solve.
    pub(super) infos: Vec<Info>,
    /// The solves, when the study keeps them for a later one.
    pub(super) warm: Option<WarmStart>,
}

impl Operator {
    /// Charge of every target at conductor potentials `v`: superposition of the unit
    /// responses and the background solve.
    pub(super) fn reactions_total(
        &self,
        response: &[Vec<f64>],
        background: &[f64],
        v: &[f64],
    ) -> Vec<f64> {
        let mut q = background.to_vec();
        for (k, col) in response.iter().enumerate() {
            for (t, c) in col.iter().enumerate() {
                q[t] += v[k] * c;
            }
        }
        q
    }

    /// False only when every term of [`Operator::rhs`] for `values` (and the free charge, when
    /// `with_source`) is zero, so that every entry of it is too; a pass over the links and
    /// sources instead of building and scanning a lattice vector.
    pub(super) fn rhs_may_be_nonzero(&self, values: &[f64], with_source: bool) -> bool {
        // `!= 0.0` holds for NaN: a NaN term is never taken for zero.
        self.links
            .iter()
            .any(|l| l.weight * values[l.target as usize] != 0.0)
            || (with_source && self.source.iter().any(|&(_, s)| s != 0.0))
    }
}

/// The solver settings of one solve with target potentials `values`: the study's, with the
/// charge scale of an iterate, the largest reaction over the targets in the units of the
/// right-hand side (charge / eps0).
fn with_charge_scale(
    params: &solvers::Params,
    links: &Arc<[Link]>,
    values: &[f64],
) -> solvers::Params {
    let (links, values) = (Arc::clone(links), values.to_vec());
    let mut p = params.clone();
    p.charge_scale = Some(Arc::new(move |x: &[f64]| {
        let mut q = vec![0.0; values.len()];
        for l in links.iter() {
            q[l.target as usize] += l.weight * (values[l.target as usize] - x[l.node as usize]);
        }
        q.iter().fold(0.0, |m: f64, v| m.max(v.abs()))
    }));
    p
}

/// How much tighter a solve started from a coarser lattice stops: a cold start's last
/// iteration cuts the residual about 60 times and so lands well below the tests, a nested
/// start's lands anywhere under them; a decade tighter keeps nested results within the cold
/// starts' solver error (measured on every demo, `tests/reference/nested.rs`) for about half
/// an iteration.
const NESTED_TIGHTENING: f64 = 0.1;

/// The tightest relative residual a nested start is asked for (the double-precision floor
/// the solvers reach on the demos), unless the caller asks for less.
const NESTED_FLOOR: f64 = 1e-13;

/// The solver settings of a solve started from a coarser lattice.
fn nested_params(params: &solvers::Params) -> solvers::Params {
    let mut p = params.clone();
    p.tol = (p.tol * NESTED_TIGHTENING).max(p.tol.min(NESTED_FLOOR));
    p
}

/// Runs every solve of the study on one lattice, telling `monitor` of its stages. Each solve
/// starts from the study's warm start when it fits the lattice, else from `coarse` (the same
/// study on a coarser lattice, [`CoarseStart`]) when given, else from zero.
pub(super) fn solve_on(
    design: &Design,
    grid: &Grid,
    params: &StudyParams,
    coarse: Option<&CoarseStart>,
    monitor: Option<&StageMonitor>,
) -> Result<Core, StudyError> {
    let mut stages = Tracker::new(monitor);
    stages.enter(Stage::Raster);
    let raster = raster::rasterize(design, grid);
    stages.enter(Stage::Assembly);
    let op = operator::assemble(design, &raster)?;
    stages.enter(Stage::SolverSetup);
    let prepared = solvers::prepare_with(params.method, &op.stencil, &params.multigrid);
    let links: Arc<[Link]> = op.links.as_slice().into();
    stages.enter(Stage::Solves);
    let n = grid.len();
    let nc = design.conductors.len();
    let floating: Vec<usize> = (0..nc)
        .filter(|&k| design.conductors[k].drive == Drive::Floating)
        .collect();
    let fixed: Vec<usize> = (0..nc).filter(|&k| !floating.contains(&k)).collect();
    let mut infos = Vec::new();
    // The superposed potential, taking the storage of its first term (see `superpose`).
    let mut phi: Option<Vec<f64>> = None;
    let mut response = vec![Vec::new(); nc];
    let mut kept: Vec<(usize, Vec<f64>)> = Vec::new();
    let warm = params.warm_start.as_deref().filter(|w| w.fits(grid, nc));
    let coarse = coarse.filter(|c| warm.is_none() && c.fits(nc));
    let solver_params = match coarse {
        Some(_) => nested_params(&params.solver),
        None => params.solver.clone(),
    };
    let mut keep = WarmStart {
        xs: grid.xs().to_vec(),
        ys: grid.ys().to_vec(),
        unit: Vec::new(),
        background: None,
    };
    // One set of the solver's work vectors for every solve on this lattice.
    let mut scratch = solvers::Scratch::default();
    let record = |r: Result<Info, solvers::SolveError>, infos: &mut Vec<Info>| match r {
        Ok(i) => infos.push(i),
        Err(e) => infos.push(e.info().clone()),
    };
    for k in 0..nc {
        let mut unit = vec![0.0; nc];
        unit[k] = 1.0;
        let values = op.target_values(&unit, false);
        let b = op.rhs(&values, false);
        let mut x = match (warm, coarse) {
            (Some(w), _) => w.unit[k].clone(),
            (None, Some(c)) => c.unit(k, &op),
            (None, None) => parallel::zeros(n),
        };
        let solver = with_charge_scale(&solver_params, &links, &values);
        record(
            prepared.solve_in(&op.stencil, &b, &mut x, &solver, &mut scratch),
            &mut infos,
        );
        response[k] = op.reactions(&x, &values, false);
        if params.keep_warm_start {
            keep.unit.push(x.clone());
        }
        match design.conductors[k].drive {
            Drive::Fixed(v) => {
                if v != 0.0 {
                    superpose(&mut phi, v, x);
                }
            }
            Drive::Floating => kept.push((k, x)),
        }
    }
    let zero = vec![0.0; nc];
    let values0 = op.target_values(&zero, true);
    // The background's right-hand side, unless every term of it is zero (then so is it).
    let b0 = op
        .rhs_may_be_nonzero(&values0, true)
        .then(|| op.rhs(&values0, true));
    let background = if let Some(b0) = b0.filter(|b0| b0.iter().any(|&v| v != 0.0)) {
        let mut x0 = match (warm, coarse) {
            (Some(w), _) => w.background.clone(),
            (None, Some(c)) => c.background(&op),
            (None, None) => None,
        }
        .unwrap_or_else(|| parallel::zeros(n));
        let solver = with_charge_scale(&solver_params, &links, &values0);
        record(
            prepared.solve_in(&op.stencil, &b0, &mut x0, &solver, &mut scratch),
            &mut infos,
        );
        if params.keep_warm_start {
            keep.background = Some(x0.clone());
        }
        let q = op.reactions(&x0, &values0, true);
        // 1.0 * x is x: the same bits as adding x.
        superpose(&mut phi, 1.0, x0);
        q
    } else {
        vec![0.0; op.n_targets()]
    };
    drop((scratch, prepared));
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
        for (k, x) in kept {
            superpose(&mut phi, potentials[k], x);
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
    let mut phi = phi.unwrap_or_else(|| parallel::zeros(n));
    // Fixed nodes hold their own potentials.
    let side_values = op.target_values(&potentials, true);
    let (nx, ny) = (grid.nx, grid.ny);
    parallel::for_each_row(&mut phi, nx, |j, row| {
        for (i, v) in row.iter_mut().enumerate() {
            let p = i + j * nx;
            if op.stencil.unknown[p] {
                continue;
            }
            let k = raster.conductor[p];
            *v = if k != NO_CONDUCTOR {
                potentials[k as usize]
            } else {
                let s = operator::fixed_side(&op.side_potential, nx, ny, i, j)
                    .expect("a fixed free node lies on a fixed side");
                side_values[op.side_target(s) as usize]
            };
        }
    });
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
        warm: params.keep_warm_start.then_some(keep),
    })
}

/// Adds `w x` to the superposed potential `phi`, which takes the storage of `x` when it has
/// no term yet: each entry then becomes `w x + 0.0`, the same bits as `0.0 + w x` added to a
/// zeroed vector (a `-0.0` product becomes `+0.0` either way), without allocating, zeroing
/// and reading a separate lattice vector (32 MB at 2049 x 2049 nodes).
fn superpose(phi: &mut Option<Vec<f64>>, w: f64, mut x: Vec<f64>) {
    match phi {
        Some(acc) => parallel::add_scaled(acc, w, &x),
        None => {
            x.par_iter_mut().for_each(|v| *v = w * *v + 0.0);
            *phi = Some(x);
        }
    }
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

#[cfg(test)]
mod tests {
    use super::*;
    use crate::design::{Background, Conductor, Domain, Shape, Side, Sides};

    #[test]
    fn superpose_takes_the_first_term_with_the_bits_of_adding_it_to_zeros() {
        let x: Vec<f64> = [-0.0, 0.0, 1.5, -2.25, 1e-300, f64::MIN_POSITIVE, 3.0e7]
            .iter()
            .cycle()
            .take(5000)
            .enumerate()
            .map(|(i, v)| v * (1.0 + i as f64 * 1e-3))
            .collect();
        let y: Vec<f64> = x.iter().map(|v| 0.7 - v).collect();
        for (w1, w2) in [(1.0, -1.0), (-1.0, 0.5), (-0.3, 1.0), (2.0, 0.0)] {
            let mut want = parallel::zeros(x.len());
            parallel::add_scaled(&mut want, w1, &x);
            let mut phi = None;
            superpose(&mut phi, w1, x.clone());
            let first = phi.clone().expect("one term");
            assert!(first
                .iter()
                .zip(&want)
                .all(|(a, b)| a.to_bits() == b.to_bits()));
            // A -0.0 product lands as +0.0, as in the zeroed vector.
            assert!(first.iter().all(|v| v.to_bits() != (-0.0f64).to_bits()));
            parallel::add_scaled(&mut want, w2, &y);
            superpose(&mut phi, w2, y.clone());
            let phi = phi.expect("two terms");
            assert!(phi
                .iter()
                .zip(&want)
                .all(|(a, b)| a.to_bits() == b.to_bits()));
        }
    }

    /// Two plates in a box whose top side is at `top` volts.
    fn plates(top: f64) -> Design {
        let plate = |name: &str, y: [f64; 2]| Conductor {
            name: name.into(),
            drive: Drive::Fixed(1.0),
            joined: Vec::new(),
            shape: Shape::Rect {
                x: [0.3, 0.7],
                y,
                round: 0.0,
            },
        };
        Design {
            domain: Domain {
                x: [0.0, 1.0],
                y: [0.0, 1.0],
                cell: 0.05,
            },
            sides: Sides {
                top: Side::Fixed(top),
                ..Sides::default()
            },
            background: Background {
                permittivity: 1.0,
                strength: None,
            },
            conductors: vec![plate("low", [0.2, 0.3]), plate("high", [0.6, 0.7])],
            ..Design::default()
        }
    }

    #[test]
    fn the_background_rhs_is_skipped_only_when_it_is_zero() {
        for top in [0.0, 2.0] {
            let d = plates(top);
            let grid = Grid::fit(d.domain.x, d.domain.y, d.domain.cell).expect("a grid");
            let op = operator::assemble(&d, &raster::rasterize(&d, &grid)).expect("definite");
            for (unit, sides) in [([0.0, 0.0], true), ([0.0, 0.0], false), ([0.0, 1.0], false)] {
                let values = op.target_values(&unit, sides);
                let nonzero = op.rhs(&values, sides).iter().any(|&v| v != 0.0);
                let may = op.rhs_may_be_nonzero(&values, sides);
                assert_eq!(may, nonzero, "top {top}, unit {unit:?}, sides {sides}");
            }
        }
    }
}
