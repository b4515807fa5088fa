//! Direct solve on the coarsest level: a banded Cholesky factorisation of the whole lattice
//! (fixed nodes included as identity rows), ordered along the shorter axis so the band is
//! at most min(nx, ny) + 1 wide.
//!
//! Invariant: a pivot that is not clearly positive (a floating region without any fixed
//! potential makes the operator only semi-definite) is dropped, and the solve returns zero in
//! that direction, so the preconditioner stays bounded and symmetric.

use super::level::Couplings;

/// A banded Cholesky factor `A = L L^T` of a lattice operator.
pub(super) struct BandCholesky {
    nx: usize,
    ny: usize,
    /// True when nodes are numbered along y first (nx > ny).
    by_columns: bool,
    /// Half bandwidth.
    bw: usize,
    /// Row k of L at `l[k * (bw + 1) ..]`, entry for column `k - bw + t` at offset t; the
    /// diagonal at offset bw holds the reciprocal pivot (zero for a dropped pivot).
    l: Vec<f64>,
}

impl BandCholesky {
    /// Factorises the operator `a`.
    pub fn new(a: &impl Couplings) -> BandCholesky {
        let (nx, ny) = a.dims();
        let by_columns = nx > ny;
        let line = if by_columns { ny } else { nx };
        let n = nx * ny;
        let bw = (line + 1).min(n.saturating_sub(1));
        let w = bw + 1;
        let node = |k: usize| {
            if by_columns {
                (k / ny, k % ny)
            } else {
                (k % nx, k / nx)
            }
        };
        let number = |i: usize, j: usize| if by_columns { j + i * ny } else { i + j * nx };
        // Lower band of A.
        let mut l = vec![0.0; n * w];
        for k in 0..n {
            let (i, j) = node(k);
            l[k * w + bw] = a.diag_at(i, j);
            for dj in -1isize..=1 {
                for di in -1isize..=1 {
                    if di == 0 && dj == 0 {
                        continue;
                    }
                    let (qi, qj) = (i as isize + di, j as isize + dj);
                    if qi < 0 || qj < 0 || qi as usize >= nx || qj as usize >= ny {
                        continue;
                    }
                    let m = number(qi as usize, qj as usize);
                    if m < k {
                        l[k * w + bw - (k - m)] = -a.coupling(i, j, di, dj);
                    }
                }
            }
        }
        let mut scale = vec![0.0; n];
        for k in 0..n {
            scale[k] = l[k * w + bw].abs();
        }
        for k in 0..n {
            let m0 = k.saturating_sub(bw);
            for m in m0..=k {
                let t0 = m0.max(m.saturating_sub(bw));
                let mut s = l[k * w + bw - (k - m)];
                for t in t0..m {
                    s -= l[k * w + bw - (k - t)] * l[m * w + bw - (m - t)];
                }
                if m < k {
                    // Diagonal slot of row m holds its reciprocal pivot.
                    l[k * w + bw - (k - m)] = s * l[m * w + bw];
                } else {
                    l[k * w + bw] = if s > 1e-12 * scale[k] {
                        1.0 / s.sqrt()
                    } else {
                        0.0
                    };
                }
            }
        }
        BandCholesky {
            nx,
            ny,
            by_columns,
            bw,
            l,
        }
    }

    /// Bytes held by the factor.
    pub fn bytes(&self) -> usize {
        self.l.len() * 8
    }

    /// Solves `A x = b`; `index(i, j)` maps a node to its position in `b` and `x`.
    pub fn solve(&self, b: &[f64], x: &mut [f64], index: impl Fn(usize, usize) -> usize) {
        let (nx, ny, bw) = (self.nx, self.ny, self.bw);
        let n = nx * ny;
        let w = bw + 1;
        let node = |k: usize| {
            if self.by_columns {
                (k / ny, k % ny)
            } else {
                (k % nx, k / nx)
            }
        };
        let l = &self.l;
        let mut y = vec![0.0; n];
        for k in 0..n {
            let (i, j) = node(k);
            let mut s = b[index(i, j)];
            for t in k.saturating_sub(bw)..k {
                s -= l[k * w + bw - (k - t)] * y[t];
            }
            y[k] = s * l[k * w + bw];
        }
        for k in (0..n).rev() {
            let mut s = y[k];
            for t in k + 1..(k + bw + 1).min(n) {
                s -= l[t * w + bw - (t - k)] * y[t];
            }
            y[k] = s * l[k * w + bw];
        }
        for (k, &v) in y.iter().enumerate() {
            let (i, j) = node(k);
            x[index(i, j)] = v;
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::stencil::Stencil5;

    #[test]
    fn band_cholesky_solves_the_assembled_system() {
        for (nx, ny) in [(7, 5), (4, 9), (1, 6), (6, 1)] {
            let mut s = Stencil5::dirichlet_box(nx.max(3), ny.max(3), |i, j| {
                1.0 + ((i + 2 * j) % 3) as f64
            });
            // Shrink degenerate shapes: keep only the first nx x ny block as its own lattice.
            if nx < 3 || ny < 3 {
                s = Stencil5 {
                    nx,
                    ny,
                    diag: vec![2.5; nx * ny],
                    east: (0..nx * ny)
                        .map(|p| if p % nx + 1 < nx { 1.0 } else { 0.0 })
                        .collect(),
                    north: (0..nx * ny)
                        .map(|p| if p / nx + 1 < ny { 1.0 } else { 0.0 })
                        .collect(),
                    unknown: vec![true; nx * ny],
                    cross: Vec::new(),
                };
            }
            let chol = BandCholesky::new(&s);
            let xs: Vec<f64> = (0..s.len())
                .map(|p| ((p * 7 % 11) as f64 - 5.0) * if s.unknown[p] { 1.0 } else { 0.0 })
                .collect();
            let mut b = vec![0.0; s.len()];
            s.apply(&xs, &mut b);
            let mut x = vec![0.0; s.len()];
            let nxx = s.nx;
            chol.solve(&b, &mut x, |i, j| i + j * nxx);
            for p in 0..s.len() {
                assert!(
                    (x[p] - xs[p]).abs() < 1e-12 * 10.0,
                    "{nx}x{ny} node {p}: {} vs {}",
                    x[p],
                    xs[p]
                );
            }
        }
    }
}
