//! Storage of the coarse operators and the uniform read access the setup uses on every level.
//!
//! A coarse level holds a symmetric nine-point operator on an `nx x ny` node lattice padded by
//! one ghost node on every side, so that kernels never test for the edge. Invariants: ghost
//! nodes carry zero couplings and zero vector entries; `coef[p] = [diag, e, n, ne, nw]` with
//! `e` coupling p to p+1, `n` to p+s, `ne` to p+s+1 and `nw` to p+s-1 (s = nx + 2); a coupling
//! is the negative of the matrix entry. A fixed node has `[1, 0, 0, 0, 0]` and no coupling
//! from any neighbour, exactly as on the fine [`Stencil5`]. Coefficients are single
//! precision under point relaxation and double precision under line relaxation: there a row's
//! couplings may differ by eight orders of magnitude (cell aspect ratio 10 000), and Galerkin
//! stencils with couplings of both signs would lose their weak part to rounding.

use crate::stencil::Stencil5;

/// Storage type of coarse-level coefficients (f32 or f64); widening to f64 is exact.
pub(super) trait Real: Copy + Default + Send + Sync + Into<f64> + 'static {
    /// The nearest value of this type.
    fn from_f64(v: f64) -> Self;
}

impl Real for f32 {
    #[inline]
    fn from_f64(v: f64) -> f32 {
        v as f32
    }
}

/// `v` widened to f64 (exactly).
#[inline]
pub(super) fn wide<R: Real>(v: R) -> f64 {
    v.into()
}

impl Real for f64 {
    #[inline]
    fn from_f64(v: f64) -> f64 {
        v
    }
}

/// A raw pointer shared by threads that write disjoint entries of one vector.
#[derive(Clone, Copy)]
pub(super) struct Shared(*mut f64);
// SAFETY: users write disjoint entries and read only entries no thread writes concurrently.
unsafe impl Send for Shared {}
unsafe impl Sync for Shared {}

impl Shared {
    /// Wraps the vector's storage.
    pub fn new(v: &mut [f64]) -> Shared {
        Shared(v.as_mut_ptr())
    }
    /// Wraps a vector that will only be read through the pointer.
    #[cfg(test)]
    pub fn new_const(v: &[f64]) -> Shared {
        Shared(v.as_ptr() as *mut f64)
    }
    /// The raw pointer (a method, so closures capture the wrapper, not the pointer).
    #[inline]
    pub fn get(self) -> *mut f64 {
        self.0
    }
}

/// One coarse level: a padded symmetric nine-point operator.
pub(super) struct Level<R: Real = f32> {
    /// Nodes along x.
    pub nx: usize,
    /// Nodes along y.
    pub ny: usize,
    /// Row stride of the padded lattice, `nx + 2`.
    pub s: usize,
    /// `[diag, e, n, ne, nw]` per padded node.
    pub coef: Vec<[R; 5]>,
    /// True where the node is an unknown; false on fixed and ghost nodes.
    pub unknown: Vec<bool>,
}

impl<R: Real> Level<R> {
    /// A level with every node fixed (identity rows) and ghosts zeroed.
    pub fn identity(nx: usize, ny: usize) -> Level<R> {
        let s = nx + 2;
        let len = s * (ny + 2);
        let mut coef = vec![[R::default(); 5]; len];
        for j in 0..ny {
            for i in 0..nx {
                coef[(i + 1) + (j + 1) * s][0] = R::from_f64(1.0);
            }
        }
        Level {
            nx,
            ny,
            s,
            coef,
            unknown: vec![false; len],
        }
    }

    /// Length of a padded vector on this level.
    #[inline]
    pub fn padded_len(&self) -> usize {
        self.s * (self.ny + 2)
    }

    /// Padded index of node (i, j).
    #[inline]
    pub fn idx(&self, i: usize, j: usize) -> usize {
        (i + 1) + (j + 1) * self.s
    }

    /// Bytes held by the operator.
    pub fn bytes(&self) -> usize {
        self.coef.len() * std::mem::size_of::<[R; 5]>() + self.unknown.len()
    }
}

/// Read access to a symmetric operator on a node lattice, common to the fine five-point
/// stencil and the coarse nine-point levels (used by the setup and the transfer operators).
pub(super) trait Couplings: Sync {
    /// Offsets (di, dj) of the possibly non-zero couplings, centre first.
    const OFFSETS: &'static [(isize, isize)];
    /// Nodes along x and y.
    fn dims(&self) -> (usize, usize);
    /// True when node (i, j) is an unknown.
    fn is_unknown(&self, i: usize, j: usize) -> bool;
    /// Diagonal entry of node (i, j).
    fn diag_at(&self, i: usize, j: usize) -> f64;
    /// Coupling of (i, j) to (i + di, j + dj), di, dj in {-1, 0, 1}, not both 0; zero when
    /// the neighbour lies outside the lattice.
    fn coupling(&self, i: usize, j: usize, di: isize, dj: isize) -> f64;
    /// Matrix entries of row (i, j) towards `OFFSETS` (diagonal first, then the negated
    /// couplings), padded with zeros to nine.
    #[inline]
    fn row(&self, i: usize, j: usize) -> [f64; 9] {
        let mut r = [0.0; 9];
        r[0] = self.diag_at(i, j);
        for (k, &(di, dj)) in Self::OFFSETS.iter().enumerate().skip(1) {
            r[k] = -self.coupling(i, j, di, dj);
        }
        r
    }
}

impl Couplings for Stencil5 {
    const OFFSETS: &'static [(isize, isize)] = &[(0, 0), (1, 0), (-1, 0), (0, 1), (0, -1)];
    #[inline]
    fn dims(&self) -> (usize, usize) {
        (self.nx, self.ny)
    }
    #[inline]
    fn is_unknown(&self, i: usize, j: usize) -> bool {
        self.unknown[i + j * self.nx]
    }
    #[inline]
    fn diag_at(&self, i: usize, j: usize) -> f64 {
        self.diag[i + j * self.nx]
    }
    #[inline]
    fn coupling(&self, i: usize, j: usize, di: isize, dj: isize) -> f64 {
        let nx = self.nx;
        let p = i + j * nx;
        match (di, dj) {
            (1, 0) if i + 1 < nx => self.east[p],
            (-1, 0) if i > 0 => self.east[p - 1],
            (0, 1) if j + 1 < self.ny => self.north[p],
            (0, -1) if j > 0 => self.north[p - nx],
            _ => 0.0,
        }
    }
}

impl<R: Real> Couplings for Level<R> {
    const OFFSETS: &'static [(isize, isize)] = &[
        (0, 0),
        (1, 0),
        (-1, 0),
        (0, 1),
        (0, -1),
        (1, 1),
        (-1, -1),
        (-1, 1),
        (1, -1),
    ];
    #[inline]
    fn dims(&self) -> (usize, usize) {
        (self.nx, self.ny)
    }
    #[inline]
    fn is_unknown(&self, i: usize, j: usize) -> bool {
        self.unknown[self.idx(i, j)]
    }
    #[inline]
    fn diag_at(&self, i: usize, j: usize) -> f64 {
        self.coef[self.idx(i, j)][0].into()
    }
    #[inline]
    fn coupling(&self, i: usize, j: usize, di: isize, dj: isize) -> f64 {
        let p = self.idx(i, j);
        let s = self.s;
        let c = &self.coef;
        match (di, dj) {
            (1, 0) => c[p][1].into(),
            (-1, 0) => c[p - 1][1].into(),
            (0, 1) => c[p][2].into(),
            (0, -1) => c[p - s][2].into(),
            (1, 1) => c[p][3].into(),
            (-1, -1) => c[p - s - 1][3].into(),
            (-1, 1) => c[p][4].into(),
            (1, -1) => c[p - s + 1][4].into(),
            _ => 0.0,
        }
    }
}
