//! Conjugate gradients preconditioned by the V-cycle, with its vector work fused into as few
//! passes over the lattice as possible.
//!
//! The iteration is that of `cg::pcg` (same recurrences, stopping rules and final check of
//! the true residual) but: the search-direction update `p = z + beta p` runs row-interleaved
//! with `A p`, whose result overwrites z (no longer needed); `x` and `r` are updated in one
//! pass that also sums `r . r`; `r . z` is summed by the V-cycle's last stage. So one
//! iteration reads the fine operator three times (V-cycle twice, `A p` once) and needs three
//! work vectors. Invariant: every dot product is a sum of per-row partial sums (each row
//! summed left to right) added in row order through [`crate::parallel`], so results do not
//! depend on the thread count.

use super::cycle::{vcycle, Workspace};
use super::hierarchy::Hierarchy;
use super::level::Shared;
use super::smoother::{wavefront, Stage};
use super::transfer::{each, PARALLEL_MIN};
use crate::parallel;
use crate::solvers::{
    charge::ChargeStop, curvature_breakdown, krylov_outcome, Info, Method, Params, Progress,
    SolveError, StopReason,
};
use crate::stencil::Stencil5;

/// Row j of `y = A x` (five-point stencil), returning the row's sum of `x . y`.
///
/// # Safety
/// `x` and `y` point to lattice vectors; rows j-1..=j+1 of x are not being written and row j
/// of y is written by no one else.
#[inline]
unsafe fn apply_row(a: &Stencil5, x: *const f64, y: *mut f64, j: usize) -> f64 {
    let (nx, ny) = (a.nx, a.ny);
    let (d, e, n) = (&a.diag[..], &a.east[..], &a.north[..]);
    let base = j * nx;
    let mut dot = 0.0;
    let edge = |i: usize| -> f64 {
        let p = base + i;
        let mut s = d.get_unchecked(p) * *x.add(p);
        if i + 1 < nx {
            s -= e.get_unchecked(p) * *x.add(p + 1);
        }
        if i > 0 {
            s -= e.get_unchecked(p - 1) * *x.add(p - 1);
        }
        if j + 1 < ny {
            s -= n.get_unchecked(p) * *x.add(p + nx);
        }
        if j > 0 {
            s -= n.get_unchecked(p - nx) * *x.add(p - nx);
        }
        s
    };
    if j == 0 || j + 1 == ny || nx < 3 {
        for i in 0..nx {
            let v = edge(i);
            *y.add(base + i) = v;
            dot += *x.add(base + i) * v;
        }
        return dot;
    }
    let v = edge(0);
    *y.add(base) = v;
    dot += *x.add(base) * v;
    for i in 1..nx - 1 {
        let p = base + i;
        let v = d.get_unchecked(p) * *x.add(p)
            - e.get_unchecked(p) * *x.add(p + 1)
            - e.get_unchecked(p - 1) * *x.add(p - 1)
            - n.get_unchecked(p) * *x.add(p + nx)
            - n.get_unchecked(p - nx) * *x.add(p - nx);
        *y.add(p) = v;
        dot += *x.add(p) * v;
    }
    let v = edge(nx - 1);
    *y.add(base + nx - 1) = v;
    dot += *x.add(base + nx - 1) * v;
    dot
}

/// CG's own vectors of one solve with a fine lattice: residual, preconditioned residual
/// (whose storage then takes `A p`), search direction and per-row partial sums. They may hold
/// anything on entry to [`pcg`]: it writes r, zw and the partial sums before reading them,
/// and its first search direction does not read p, so one set serves any number of solves in
/// turn with the same bits as fresh zeroed vectors.
pub(super) struct Vectors {
    pub(super) r: Vec<f64>,
    pub(super) zw: Vec<f64>,
    pub(super) p: Vec<f64>,
    pub(super) partial: Vec<f64>,
}

impl Vectors {
    /// Vectors for an nx x ny fine lattice.
    pub(super) fn new(nx: usize, ny: usize) -> Vectors {
        let n = nx * ny;
        Vectors {
            r: vec![0.0; n],
            zw: vec![0.0; n],
            p: vec![0.0; n],
            partial: vec![0.0; ny],
        }
    }

    /// True when they fit the lattice of `a`.
    fn fits(&self, a: &Stencil5) -> bool {
        self.r.len() == a.len() && self.partial.len() == a.ny
    }
}

/// `p = z + beta p` and then `w = A p` (w shares its storage with z), returning `p . A p`;
/// the five-point part fused with the update, the operator's correction added after it. The
/// first direction (`beta` None) is `z + 0.0`, the same bits as `z + 0 * p` with p zero, and
/// reads nothing of p.
fn direction_and_apply(
    a: &Stencil5,
    zw: &mut [f64],
    p: &mut [f64],
    beta: Option<f64>,
    partial: &mut [f64],
) -> f64 {
    let nx = a.nx;
    let (zp, pp, sp) = (Shared::new(zw), Shared::new(p), Shared::new(partial));
    // SAFETY: the caller checked the lengths; stage 0 touches row j of p and z only, stage 1
    // reads rows j-1..=j+1 of p and writes row j of w and one partial sum; `wavefront` keeps
    // the stage-by-stage order, in which z is read before w overwrites it.
    let update = |j: usize| unsafe {
        let (z, p) = (zp.get(), pp.get());
        match beta {
            Some(beta) => {
                for q in j * nx..(j + 1) * nx {
                    *p.add(q) = *z.add(q) + beta * *p.add(q);
                }
            }
            None => {
                for q in j * nx..(j + 1) * nx {
                    *p.add(q) = *z.add(q) + 0.0;
                }
            }
        }
    };
    let apply = |j: usize| unsafe {
        *sp.get().add(j) = apply_row(a, pp.get(), zp.get(), j);
    };
    let stages: [Stage; 2] = [&update, &apply];
    wavefront(a.ny, a.len() >= PARALLEL_MIN, &stages);
    let mut pap = parallel::sum(partial);
    if !a.cross.is_empty() {
        // The correction's part of `A p` and of `p . A p`, in its row order.
        for &(r, c, v) in &a.cross {
            let t = v * p[c as usize];
            zw[r as usize] += t;
            pap += p[r as usize] * t;
        }
    }
    pap
}

/// `x += alpha p`, `r -= alpha w`, returning `r . r`.
fn step(
    a: &Stencil5,
    x: &mut [f64],
    r: &mut [f64],
    p: &[f64],
    w: &[f64],
    alpha: f64,
    partial: &mut [f64],
) -> f64 {
    let nx = a.nx;
    let big = a.len() >= PARALLEL_MIN;
    let (xp, rp, sp) = (Shared::new(x), Shared::new(r), Shared::new(partial));
    each(big, a.ny, |j| {
        let (x, r) = (xp.get(), rp.get());
        let mut s = 0.0;
        // SAFETY: lengths checked by the caller; each call touches row j only.
        unsafe {
            for q in j * nx..(j + 1) * nx {
                *x.add(q) += alpha * p[q];
                let v = *r.add(q) - alpha * w[q];
                *r.add(q) = v;
                s += v * v;
            }
            *sp.get().add(j) = s;
        }
    });
    parallel::sum(partial)
}

/// Solves `A x = b` by CG preconditioned with one V-cycle of `h` per iteration, in the
/// scratch `ws` and `v`.
pub(super) fn pcg(
    h: &Hierarchy,
    a: &Stencil5,
    b: &[f64],
    x: &mut [f64],
    params: &Params,
    ws: &mut Workspace,
    v: &mut Vectors,
) -> Result<Info, SolveError> {
    const METHOD: Method = Method::Multigrid;
    let n = a.len();
    assert!(
        b.len() == n && x.len() == n,
        "vector length differs from the lattice"
    );
    assert!(v.fits(a), "scratch made for another lattice");
    let bnorm = parallel::norm2(b);
    if bnorm == 0.0 {
        x.fill(0.0);
        return Ok(Info::zero_rhs(METHOD));
    }
    let max_iter = params.iteration_limit(20 * (a.nx + a.ny) + 1000);
    let Vectors { r, zw, p, partial } = v;
    let rel0 = a.residual(b, x, r) / bnorm;
    let mut progress = Progress::new(rel0, params.tol, 200);
    let mut iterations = 0usize;
    // One iteration cuts the residual about tenfold: ten without halving the charge test's
    // ratio are its rounding floor.
    let mut charge = ChargeStop::new(params.charge_scale.as_ref(), params.tol, 10);
    let mut reason = if rel0 <= params.tol && charge.may_stop(r, x, 0) {
        Some(StopReason::Converged)
    } else {
        None
    };
    if reason.is_none() {
        let mut rz = vcycle(h, a, ws, r, zw, partial);
        let mut beta = None;
        loop {
            if iterations >= max_iter {
                // Held by the charge test alone, the relative residual met: converged.
                reason = Some(if progress.met() {
                    StopReason::Converged
                } else {
                    StopReason::MaxIterations
                });
                break;
            }
            let pap = direction_and_apply(a, zw, p, beta, partial);
            if let Some(stop) = curvature_breakdown(pap) {
                reason = Some(stop);
                break;
            }
            let alpha = rz / pap;
            let rel = step(a, x, r, p, zw, alpha, partial).sqrt() / bnorm;
            iterations += 1;
            if let Some(m) = &params.monitor {
                m(iterations, rel);
            }
            if let Some(stop) = progress.record(rel, 1) {
                if stop != StopReason::Converged || charge.may_stop(r, x, iterations) {
                    reason = Some(stop);
                    break;
                }
            }
            let rz_new = vcycle(h, a, ws, r, zw, partial);
            beta = Some(rz_new / rz);
            rz = rz_new;
        }
    }
    let true_rel = a.residual(b, x, r) / bnorm;
    let charge_residual = charge.ratio(r, x);
    krylov_outcome(
        METHOD,
        iterations,
        reason,
        true_rel,
        charge_residual,
        params.tol,
    )
}
