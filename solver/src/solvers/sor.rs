//! Red-black successive over-relaxation on the five-point operator.
//!
//! Invariant: within one colour, every update reads only nodes of the other colour, so the
//! rows of a colour can be updated in parallel with results independent of the thread count.
//! Nodes with rows in the operator's correction (`Stencil5::cross`) are left out of the
//! colour passes and updated one by one after them with their whole row, so every sweep is
//! point SOR on the whole operator in one fixed order (convergent for SPD matrices).

use super::{charge::ChargeStop, Info, Method, Params, Progress, SolveError, StopReason};
use crate::parallel;
use crate::stencil::Stencil5;
use rayon::prelude::*;

/// Raw pointer that may be shared between threads updating disjoint entries.
#[derive(Clone, Copy)]
pub(crate) struct SharedMut(pub *mut f64);
// SAFETY: users only write disjoint entries and read entries no thread writes concurrently.
unsafe impl Send for SharedMut {}
unsafe impl Sync for SharedMut {}

impl SharedMut {
    /// The pointer (a method, so closures capture the whole `Send` wrapper).
    #[inline]
    pub(crate) fn get(self) -> *mut f64 {
        self.0
    }
}

/// The optimal SOR factor for the Laplacian on this lattice (a good default for the
/// variable-coefficient operator too).
pub fn default_omega(a: &Stencil5) -> f64 {
    let n = a.nx.max(a.ny) as f64;
    2.0 / (1.0 + (std::f64::consts::PI / n).sin())
}

/// One red-black sweep (red then black) with relaxation `omega`. With `reverse`, black then
/// red (the adjoint sweep, used to make a symmetric smoother).
pub(crate) fn sweep(a: &Stencil5, b: &[f64], x: &mut [f64], omega: f64, reverse: bool) {
    let colours = if reverse { [1usize, 0] } else { [0usize, 1] };
    let mut skip = vec![false; if a.cross.is_empty() { 0 } else { a.len() }];
    for &(p, _, _) in &a.cross {
        skip[p as usize] = true;
    }
    for colour in colours {
        colour_sweep(a, b, x, omega, colour, &skip);
    }
    cross_sweep(a, b, x, omega);
}

/// Point SOR updates of the nodes with rows in the correction, in row order, each with its
/// whole row (five-point part and correction).
fn cross_sweep(a: &Stencil5, b: &[f64], x: &mut [f64], omega: f64) {
    let (nx, ny) = (a.nx, a.ny);
    let mut k = 0;
    while k < a.cross.len() {
        let p = a.cross[k].0 as usize;
        let (i, j) = (p % nx, p / nx);
        let mut s = b[p];
        if i + 1 < nx {
            s += a.east[p] * x[p + 1];
        }
        if i > 0 {
            s += a.east[p - 1] * x[p - 1];
        }
        if j + 1 < ny {
            s += a.north[p] * x[p + nx];
        }
        if j > 0 {
            s += a.north[p - nx] * x[p - nx];
        }
        let mut d = a.diag[p];
        while k < a.cross.len() && a.cross[k].0 as usize == p {
            let (_, q, w) = a.cross[k];
            if q as usize == p {
                d += w;
            } else {
                s -= w * x[q as usize];
            }
            k += 1;
        }
        x[p] += omega * (s / d - x[p]);
    }
}

fn colour_sweep(a: &Stencil5, b: &[f64], x: &mut [f64], omega: f64, colour: usize, skip: &[bool]) {
    let (nx, ny) = (a.nx, a.ny);
    let ptr = SharedMut(x.as_mut_ptr());
    (0..ny).into_par_iter().for_each(|j| {
        let x = ptr.get();
        let start = (colour + j) % 2;
        for i in (start..nx).step_by(2) {
            let p = i + j * nx;
            if !a.unknown[p] || skip.get(p).copied().unwrap_or(false) {
                continue;
            }
            // SAFETY: p has this colour; all reads below are of the other colour, which no
            // thread writes during this colour's pass; writes are to distinct p.
            unsafe {
                let mut s = b[p];
                if i + 1 < nx {
                    s += a.east[p] * *x.add(p + 1);
                }
                if i > 0 {
                    s += a.east[p - 1] * *x.add(p - 1);
                }
                if j + 1 < ny {
                    s += a.north[p] * *x.add(p + nx);
                }
                if j > 0 {
                    s += a.north[p - nx] * *x.add(p - nx);
                }
                let old = *x.add(p);
                *x.add(p) = old + omega * (s / a.diag[p] - old);
            }
        }
    });
}

/// Solves `A x = b` by red-black SOR from the starting guess in `x`.
pub fn solve(a: &Stencil5, b: &[f64], x: &mut [f64], params: &Params) -> Result<Info, SolveError> {
    const METHOD: Method = Method::Sor;
    let bnorm = parallel::norm2(b);
    if bnorm == 0.0 {
        x.fill(0.0);
        return Ok(Info::zero_rhs(METHOD));
    }
    let omega = params.omega.unwrap_or_else(|| default_omega(a));
    let max_iter = params.iteration_limit(50 * (a.nx + a.ny) + 2000);
    let check_every = 10;
    let mut r = vec![0.0; a.len()];
    let rel0 = a.residual(b, x, &mut r) / bnorm;
    let window = 2000;
    let mut progress = Progress::new(rel0, params.tol, window);
    let mut charge = ChargeStop::new(params.charge_scale.as_ref(), params.tol, window);
    let (mut rel, mut iterations) = (rel0, 0);
    let reason = loop {
        if rel <= params.tol && charge.may_stop(&r, x, iterations) {
            break StopReason::Converged;
        }
        if iterations >= max_iter {
            // Held by the charge test alone, the relative residual met: converged.
            break if rel <= params.tol {
                StopReason::Converged
            } else {
                StopReason::MaxIterations
            };
        }
        let steps = check_every.min(max_iter - iterations);
        for _ in 0..steps {
            sweep(a, b, x, omega, false);
        }
        iterations += steps;
        rel = a.residual(b, x, &mut r) / bnorm;
        if let Some(m) = &params.monitor {
            m(iterations, rel);
        }
        match progress.record(rel, steps) {
            Some(StopReason::Converged) | None => {}
            Some(stop) => break stop,
        }
    };
    Info {
        method: METHOD,
        iterations,
        relative_residual: rel,
        reason,
        charge_residual: charge.ratio(&r, x),
    }
    .into_result()
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::solvers::testing::jump_problem;

    #[test]
    fn sor_agrees_with_cg() {
        let (a, b) = jump_problem(33, 20.0);
        let mut xs = vec![0.0; a.len()];
        let mut xc = vec![0.0; a.len()];
        let p = Params {
            tol: 1e-10,
            ..Params::default()
        };
        solve(&a, &b, &mut xs, &p).unwrap();
        crate::solvers::cg::solve(&a, &b, &mut xc, &p).unwrap();
        let scale = xc.iter().fold(0.0f64, |m, v| m.max(v.abs()));
        let diff = xs
            .iter()
            .zip(&xc)
            .fold(0.0f64, |m, (a, b)| m.max((a - b).abs()));
        assert!(diff < 1e-7 * scale, "diff {diff}");
    }
}
