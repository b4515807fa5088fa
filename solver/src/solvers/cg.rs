//! Jacobi-preconditioned conjugate gradients on the five-point operator.
//!
//! Invariants: the search runs on the full lattice; fixed rows have `diag = 1` and a zero
//! right-hand side, so their entries stay zero. The reported residual is recomputed from
//! `b - A x` at exit, not taken from the recurrence.

use super::{
    charge::ChargeStop, curvature_breakdown, krylov_outcome, Info, Method, Params, Progress,
    SolveError, StopReason,
};
use crate::parallel;
use crate::stencil::Stencil5;
use rayon::prelude::*;

/// Solves `A x = b` by Jacobi-preconditioned CG from the starting guess in `x`.
pub fn solve(a: &Stencil5, b: &[f64], x: &mut [f64], params: &Params) -> Result<Info, SolveError> {
    let inv_diag: Vec<f64> = a.diag.par_iter().map(|d| 1.0 / d).collect();
    pcg(a, b, x, params, Method::Cg, |r, z| {
        z.par_iter_mut()
            .zip(r.par_iter())
            .zip(inv_diag.par_iter())
            .for_each(|((z, r), d)| *z = r * d);
    })
}

/// Preconditioned CG with the preconditioner `precond(r, z)` (z = M^-1 r, M symmetric
/// positive definite). Shared by the Jacobi and multigrid variants.
pub(crate) fn pcg(
    a: &Stencil5,
    b: &[f64],
    x: &mut [f64],
    params: &Params,
    method: Method,
    mut precond: impl FnMut(&[f64], &mut [f64]),
) -> Result<Info, SolveError> {
    let n = a.len();
    let bnorm = parallel::norm2(b);
    if bnorm == 0.0 {
        x.fill(0.0);
        return Ok(Info::zero_rhs(method));
    }
    let max_iter = params.iteration_limit(20 * (a.nx + a.ny) + 1000);
    let mut r = vec![0.0; n];
    let rel0 = a.residual(b, x, &mut r) / bnorm;
    let mut z = vec![0.0; n];
    let mut p = vec![0.0; n];
    let mut ap = vec![0.0; n];
    // The residual's norm is not monotone in CG: on a strongly graded lattice (cells next to
    // a junction 1e-6 of the largest) it stands still for hundreds of iterations while the
    // error still falls, about as many as the lattice has lines; stagnation waits that long.
    let window = (2 * (a.nx + a.ny)).max(200);
    let mut progress = Progress::new(rel0, params.tol, window);
    let mut iterations = 0;
    let mut charge = ChargeStop::new(params.charge_scale.as_ref(), params.tol, window);
    let mut reason = if rel0 <= params.tol && charge.may_stop(&r, x, 0) {
        Some(StopReason::Converged)
    } else {
        None
    };
    if reason.is_none() {
        precond(&r, &mut z);
        p.copy_from_slice(&z);
        let mut rz = parallel::dot(&r, &z);
        while reason.is_none() {
            if iterations >= max_iter {
                // Held by the charge test alone, the relative residual met: converged.
                reason = Some(if progress.met() {
                    StopReason::Converged
                } else {
                    StopReason::MaxIterations
                });
                break;
            }
            a.apply(&p, &mut ap);
            let pap = parallel::dot(&p, &ap);
            if let Some(stop) = curvature_breakdown(pap) {
                reason = Some(stop);
                break;
            }
            let alpha = rz / pap;
            x.par_iter_mut()
                .zip(p.par_iter())
                .for_each(|(x, p)| *x += alpha * p);
            r.par_iter_mut()
                .zip(ap.par_iter())
                .for_each(|(r, ap)| *r -= alpha * ap);
            iterations += 1;
            let rel = parallel::norm2(&r) / bnorm;
            if let Some(m) = &params.monitor {
                m(iterations, rel);
            }
            if let Some(stop) = progress.record(rel, 1) {
                if stop != StopReason::Converged || charge.may_stop(&r, x, iterations) {
                    reason = Some(stop);
                    break;
                }
            }
            precond(&r, &mut z);
            let rz_new = parallel::dot(&r, &z);
            let beta = rz_new / rz;
            rz = rz_new;
            p.par_iter_mut()
                .zip(z.par_iter())
                .for_each(|(p, z)| *p = z + beta * *p);
        }
    }
    let true_rel = a.residual(b, x, &mut r) / bnorm;
    let charge_residual = charge.ratio(&r, x);
    krylov_outcome(
        method,
        iterations,
        reason,
        true_rel,
        charge_residual,
        params.tol,
    )
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::solvers::testing::jump_problem;

    #[test]
    fn converges_on_jump_problem() {
        let (a, b) = jump_problem(33, 50.0);
        let mut x = vec![0.0; a.len()];
        let info = solve(&a, &b, &mut x, &Params::default()).unwrap();
        assert!(info.relative_residual <= 1e-8, "{info:?}");
        let mut r = vec![0.0; a.len()];
        let rel = a.residual(&b, &x, &mut r) / parallel::norm2(&b);
        assert!(rel <= 1e-8);
    }

    #[test]
    fn iteration_limit_is_reported_as_error_with_last_iterate() {
        let (a, b) = jump_problem(33, 1.0);
        let mut x = vec![0.0; a.len()];
        let err = solve(
            &a,
            &b,
            &mut x,
            &Params {
                max_iter: Some(3),
                ..Params::default()
            },
        )
        .unwrap_err();
        assert_eq!(err.info().reason, StopReason::MaxIterations);
        assert_eq!(err.info().iterations, 3);
        assert!(x.iter().any(|&v| v != 0.0));
    }
}
