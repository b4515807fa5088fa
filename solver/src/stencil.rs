//! The linear-algebra view of the discrete operator: a symmetric five-point stencil on the
//! full node lattice, which is all the solvers see.
//!
//! Invariants: couplings are non-negative (the matrix entry is their negative); a node that
//! is not an unknown (conductor or Dirichlet side) has `diag = 1`, zero couplings to and from
//! it, and a zero right-hand side, so the full-lattice matrix is block-diagonal
//! `[A_free, 0; 0, I]` and SPD whenever every free region reaches a fixed potential.
//! `east[p]` couples p and p+1 (zero on the last column), `north[p]` couples p and p+nx
//! (zero on the last row). `cross` adds a symmetric correction with zero row sums among free
//! nodes only, in the few cells an oblique dielectric interface cuts
//! (`crate::operator`'s interface cells); the five-point part alone stays SPD and is what
//! multigrid hierarchies and smoothers are built from, preconditioning the whole.

use crate::parallel;
use rayon::prelude::*;

/// Symmetric five-point operator in stencil form.
#[derive(Clone, Debug, PartialEq)]
pub struct Stencil5 {
    /// Nodes along x.
    pub nx: usize,
    /// Nodes along y.
    pub ny: usize,
    /// Diagonal, > 0 everywhere.
    pub diag: Vec<f64>,
    /// Coupling of p to p+1, >= 0.
    pub east: Vec<f64>,
    /// Coupling of p to p+nx, >= 0.
    pub north: Vec<f64>,
    /// True where the node is an unknown (free node); false for fixed nodes.
    pub unknown: Vec<bool>,
    /// Matrix entries added to the five-point part, (row, column, value) sorted by (row,
    /// column), each pair once, symmetric, between free nodes; empty for most operators.
    pub cross: Vec<(u32, u32, f64)>,
}

impl Stencil5 {
    /// Number of nodes (rows of the full-lattice matrix).
    pub fn len(&self) -> usize {
        self.nx * self.ny
    }

    /// True when the lattice is empty.
    pub fn is_empty(&self) -> bool {
        self.len() == 0
    }

    /// Number of unknowns.
    pub fn unknowns(&self) -> usize {
        self.unknown.iter().filter(|&&u| u).count()
    }

    /// `y = A x` over the full lattice. Deterministic for any thread count.
    pub fn apply(&self, x: &[f64], y: &mut [f64]) {
        let nx = self.nx;
        let ny = self.ny;
        assert_eq!(x.len(), self.len());
        assert_eq!(y.len(), self.len());
        y.par_chunks_mut(nx).enumerate().for_each(|(j, row)| {
            let base = j * nx;
            for (i, out) in row.iter_mut().enumerate() {
                let p = base + i;
                let mut s = self.diag[p] * x[p];
                if i + 1 < nx {
                    s -= self.east[p] * x[p + 1];
                }
                if i > 0 {
                    s -= self.east[p - 1] * x[p - 1];
                }
                if j + 1 < ny {
                    s -= self.north[p] * x[p + nx];
                }
                if j > 0 {
                    s -= self.north[p - nx] * x[p - nx];
                }
                *out = s;
            }
        });
        self.add_cross(x, y);
    }

    /// `y += C x` for the correction `cross` (sequential: it is small).
    pub fn add_cross(&self, x: &[f64], y: &mut [f64]) {
        for &(p, q, w) in &self.cross {
            y[p as usize] += w * x[q as usize];
        }
    }

    /// `r = b - A x`, returning the Euclidean norm of r (deterministic).
    pub fn residual(&self, b: &[f64], x: &[f64], r: &mut [f64]) -> f64 {
        self.apply(x, r);
        r.par_iter_mut()
            .zip(b.par_iter())
            .for_each(|(ri, bi)| *ri = bi - *ri);
        parallel::norm2(r)
    }

    /// The assembled matrix over the unknowns only, in CSR form, with the map from unknown
    /// number to lattice index. For tests, small problems and external checks.
    pub fn to_csr(&self) -> (sprs::CsMat<f64>, Vec<usize>) {
        let mut number = vec![usize::MAX; self.len()];
        let mut nodes = Vec::new();
        for p in 0..self.len() {
            if self.unknown[p] {
                number[p] = nodes.len();
                nodes.push(p);
            }
        }
        let n = nodes.len();
        let mut tri = sprs::TriMat::new((n, n));
        let nx = self.nx;
        for (row, &p) in nodes.iter().enumerate() {
            tri.add_triplet(row, row, self.diag[p]);
            let (i, j) = (p % nx, p / nx);
            let mut nb = |q: usize, c: f64| {
                if number[q] != usize::MAX && c != 0.0 {
                    tri.add_triplet(row, number[q], -c);
                }
            };
            if i + 1 < nx {
                nb(p + 1, self.east[p]);
            }
            if i > 0 {
                nb(p - 1, self.east[p - 1]);
            }
            if j + 1 < self.ny {
                nb(p + nx, self.north[p]);
            }
            if j > 0 {
                nb(p - nx, self.north[p - nx]);
            }
        }
        for &(p, q, w) in &self.cross {
            let (p, q) = (number[p as usize], number[q as usize]);
            if p != usize::MAX && q != usize::MAX {
                tri.add_triplet(p, q, w);
            }
        }
        (tri.to_csr(), nodes)
    }

    /// A test operator: -Laplacian (unit couplings) on an nx x ny lattice with the boundary
    /// ring fixed; `eps(i, j)` gives a node permittivity, faces take the harmonic mean.
    pub fn dirichlet_box(nx: usize, ny: usize, eps: impl Fn(usize, usize) -> f64) -> Stencil5 {
        let n = nx * ny;
        let mut s = Stencil5 {
            nx,
            ny,
            diag: vec![1.0; n],
            east: vec![0.0; n],
            north: vec![0.0; n],
            unknown: vec![false; n],
            cross: Vec::new(),
        };
        let hm = |a: f64, b: f64| 2.0 * a * b / (a + b);
        for j in 1..ny - 1 {
            for i in 1..nx - 1 {
                let p = i + j * nx;
                s.unknown[p] = true;
                let e = eps(i, j);
                let w = [
                    hm(e, eps(i - 1, j)),
                    hm(e, eps(i + 1, j)),
                    hm(e, eps(i, j - 1)),
                    hm(e, eps(i, j + 1)),
                ];
                s.diag[p] = w.iter().sum();
                if i + 1 < nx - 1 {
                    s.east[p] = w[1];
                }
                if j + 1 < ny - 1 {
                    s.north[p] = w[3];
                }
            }
        }
        s
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn apply_matches_assembled_matrix() {
        let s = Stencil5::dirichlet_box(7, 6, |i, j| 1.0 + (i * j % 3) as f64);
        let (a, nodes) = s.to_csr();
        let x: Vec<f64> = (0..s.len())
            .map(|p| if s.unknown[p] { (p as f64).sin() } else { 0.0 })
            .collect();
        let mut y = vec![0.0; s.len()];
        s.apply(&x, &mut y);
        let xu: Vec<f64> = nodes.iter().map(|&p| x[p]).collect();
        let yu = &a * &ndarray::Array1::from(xu);
        for (k, &p) in nodes.iter().enumerate() {
            assert!((y[p] - yu[k]).abs() < 1e-12);
        }
        // Symmetry of the assembled matrix.
        let at = a.transpose_view().to_csr();
        for (v, (r, c)) in a.iter() {
            assert_eq!(at.get(r, c).copied(), Some(*v));
        }
    }
}
