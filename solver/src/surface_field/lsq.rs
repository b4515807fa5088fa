//! Weighted linear least squares by Householder reflections, for the surface fits: rows of
//! coefficients and a value, each already times its weight, solved for the coefficients.
//!
//! A fit on a graded grid can take thousands of rows of ten columns, thousands of times per
//! study, so the rows live in one row-major buffer with the right-hand side as their last
//! column, written in place, and each reflection reads the rows twice: once for the
//! reflector's length and the projections of every column on it together, once to apply it
//! while summing the next column's norm; the number of columns is a constant of the code
//! there (2 to 18), so that the running sums stay in registers. Each of these sums still runs
//! over the rows in order from the same start as `Iterator::sum`, so the solution is, bit for
//! bit, that of the plain form with one pass per sum (the reference the tests compare with).
//! Each thread keeps its last fit's buffer for the next, so rows do not reallocate as they
//! grow.
//!
//! Invariants: `None` when there are fewer rows than columns, when every coefficient is zero,
//! or when a column's remaining norm falls to 1e-11 of the largest coefficient (rank
//! deficient); otherwise every returned value is finite.

use std::cell::Cell;

/// Calls `$f::<N>` for the columns' count `N` from `$k` on (2 to 18: every fit's, the
/// right-hand side included, an interface fit of degree 3 having 17 coefficients), or its
/// slice form beyond: with `N` known the sums stay in registers.
macro_rules! dispatch {
    ($cols:expr, $f:ident($($arg:expr),*)) => {
        match $cols {
            2 => $f::<2>($($arg),*),
            3 => $f::<3>($($arg),*),
            4 => $f::<4>($($arg),*),
            5 => $f::<5>($($arg),*),
            6 => $f::<6>($($arg),*),
            7 => $f::<7>($($arg),*),
            8 => $f::<8>($($arg),*),
            9 => $f::<9>($($arg),*),
            10 => $f::<10>($($arg),*),
            11 => $f::<11>($($arg),*),
            12 => $f::<12>($($arg),*),
            13 => $f::<13>($($arg),*),
            14 => $f::<14>($($arg),*),
            15 => $f::<15>($($arg),*),
            16 => $f::<16>($($arg),*),
            17 => $f::<17>($($arg),*),
            18 => $f::<18>($($arg),*),
            _ => $f::<0>($($arg),*),
        }
    };
}

thread_local! {
    /// The buffer of this thread's last fit, kept for its next.
    static SPARE: Cell<Vec<f64>> = const { Cell::new(Vec::new()) };
}

/// A least-squares problem being assembled.
pub(super) struct Lsq {
    cols: usize,
    /// Row-major, `cols + 1` values per row: the coefficients and the value, each times the
    /// row's weight.
    a: Vec<f64>,
}

impl Drop for Lsq {
    fn drop(&mut self) {
        let mut a = std::mem::take(&mut self.a);
        a.clear();
        SPARE.set(a);
    }
}

impl Lsq {
    pub(super) fn new(cols: usize) -> Lsq {
        let mut a = SPARE.take();
        a.clear();
        Lsq { cols, a }
    }

    /// Appends a row: `cols` coefficients and the value, each times `weight`.
    pub(super) fn row(&mut self, coeffs: impl IntoIterator<Item = f64>, value: f64, weight: f64) {
        let before = self.a.len();
        self.a.extend(coeffs.into_iter().map(|c| c * weight));
        debug_assert_eq!(self.a.len() - before, self.cols);
        self.a.push(value * weight);
    }

    /// Appends a row written by `fill` into `cols` zeroed coefficients, with the value; each
    /// times `weight`.
    pub(super) fn row_with(&mut self, value: f64, weight: f64, fill: impl FnOnce(&mut [f64])) {
        let before = self.a.len();
        self.a.resize(before + self.cols, 0.0);
        fill(&mut self.a[before..]);
        for c in &mut self.a[before..] {
            *c *= weight;
        }
        self.a.push(value * weight);
    }

    /// The coefficients minimising the weighted residual; `None` when rank-deficient.
    pub(super) fn solve(mut self) -> Option<Vec<f64>> {
        solve_rows(self.cols, &mut self.a)
    }
}

/// Solves the rows `a` (row-major, `n + 1` wide, the value last) in place; see [`Lsq::solve`].
fn solve_rows(n: usize, a: &mut [f64]) -> Option<Vec<f64>> {
    let w = n + 1;
    let m = a.len() / w;
    if m < n {
        return None;
    }
    // The largest |coefficient|: per column, then over the columns (a maximum does not
    // depend on the order it is taken in).
    let mut top = vec![0.0f64; n];
    for row in a.chunks_exact(w) {
        for (t, c) in top.iter_mut().zip(row) {
            *t = t.max(c.abs());
        }
    }
    let scale = top.iter().fold(0.0f64, |s, &t| s.max(t));
    if scale == 0.0 {
        return None;
    }
    // The value `Iterator::sum` starts from, so that the sums below are its sums.
    let zero = std::iter::empty::<f64>().sum::<f64>();
    let column_norm2 = |a: &[f64], k: usize| {
        a[k * w..]
            .chunks_exact(w)
            .fold(zero, |acc, row| acc + row[k] * row[k])
    };
    let mut s = vec![0.0; w];
    // Squared norm of column k from row k down.
    let mut norm2 = column_norm2(a, 0);
    for k in 0..n {
        let norm = norm2.sqrt();
        if norm <= 1e-11 * scale {
            return None;
        }
        let x0 = a[k * w + k];
        let alpha = if x0 > 0.0 { -norm } else { norm };
        // The reflector is column k from row k down with its first entry v0.
        let v0 = x0 - alpha;
        let s = &mut s[k..];
        let vv = dispatch!(w - k, project(&a[k * w..], w, k, v0, zero, s));
        if vv == 0.0 {
            if k + 1 < n {
                norm2 = column_norm2(a, k + 1);
            }
            continue;
        }
        for acc in s.iter_mut() {
            *acc = *acc * 2.0 / vv;
        }
        let (first, rest) = a[k * w..].split_at_mut(w);
        for (x, sc) in first[k..].iter_mut().zip(s.iter()) {
            *x -= sc * v0;
        }
        norm2 = dispatch!(w - k, reflect(rest, w, k, s, k + 1 < n, zero));
    }
    let mut x = vec![0.0; n];
    for k in (0..n).rev() {
        let s: f64 = (k + 1..n).map(|c| a[k * w + c] * x[c]).sum();
        x[k] = (a[k * w + n] - s) / a[k * w + k];
    }
    x.iter().all(|v| v.is_finite()).then_some(x)
}

/// The reflector's squared length and, into `s`, the projections of columns `k..` of `rows`
/// (row-major, `w` wide, the reflector's first row first) on it; the reflector is column
/// `k` with its first entry replaced by `v0`. Every sum runs over the rows in order from
/// `zero`. `N` is the number of columns from `k` on, or 0 for any.
fn project<const N: usize>(
    rows: &[f64],
    w: usize,
    k: usize,
    v0: f64,
    zero: f64,
    s: &mut [f64],
) -> f64 {
    let mut vv = zero + v0 * v0;
    if N == 0 {
        for (acc, x) in s.iter_mut().zip(&rows[k..w]) {
            *acc = zero + v0 * x;
        }
        for row in rows[w..].chunks_exact(w) {
            let vi = row[k];
            vv += vi * vi;
            for (acc, x) in s.iter_mut().zip(&row[k..]) {
                *acc += vi * x;
            }
        }
        return vv;
    }
    let mut acc = [zero; N];
    for (a, x) in acc.iter_mut().zip(&rows[k..w]) {
        *a = zero + v0 * x;
    }
    for row in rows[w..].chunks_exact(w) {
        let x: &[f64; N] = row[k..].try_into().expect("N columns from k");
        let vi = x[0];
        vv += vi * vi;
        for c in 0..N {
            acc[c] += vi * x[c];
        }
    }
    s.copy_from_slice(&acc);
    vv
}

/// Applies the reflection with scaled projections `s` to columns `k..` of `rows` (every row
/// below the reflector's first, whose column `k` entry is the reflector there), and returns
/// the squared norm of the reflected column `k + 1` over these rows when `next` (else
/// `zero`), summed in order from `zero`. `N` as for [`project`].
fn reflect<const N: usize>(
    rows: &mut [f64],
    w: usize,
    k: usize,
    s: &[f64],
    next: bool,
    zero: f64,
) -> f64 {
    let mut norm2 = zero;
    if N == 0 {
        for row in rows.chunks_exact_mut(w) {
            let vi = row[k];
            for (x, sc) in row[k..].iter_mut().zip(s.iter()) {
                *x -= sc * vi;
            }
            if next {
                norm2 += row[k + 1] * row[k + 1];
            }
        }
        return norm2;
    }
    let s: &[f64; N] = s.try_into().expect("N projections");
    for row in rows.chunks_exact_mut(w) {
        let x: &mut [f64; N] = (&mut row[k..]).try_into().expect("N columns from k");
        let vi = x[0];
        for c in 0..N {
            x[c] -= s[c] * vi;
        }
        if next {
            norm2 += x[1] * x[1];
        }
    }
    norm2
}

#[cfg(test)]
mod tests {
    use super::*;

    /// The plain form: rows and values apart, one pass per sum, the reflector copied out.
    fn reference(rows: &[f64], rhs: &[f64], n: usize) -> Option<Vec<f64>> {
        let m = rhs.len();
        if m < n {
            return None;
        }
        let scale = rows.iter().fold(0.0f64, |s, v| s.max(v.abs()));
        if scale == 0.0 {
            return None;
        }
        let w = n + 1;
        let mut a = Vec::with_capacity(m * w);
        for (row, &r) in rows.chunks_exact(n).zip(rhs) {
            a.extend_from_slice(row);
            a.push(r);
        }
        let zero = std::iter::empty::<f64>().sum::<f64>();
        let (mut v, mut s) = (vec![0.0; m], vec![0.0; w]);
        for k in 0..n {
            let v = &mut v[..m - k];
            for (i, x) in v.iter_mut().enumerate() {
                *x = a[(k + i) * w + k];
            }
            let norm = v.iter().map(|x| x.powi(2)).sum::<f64>().sqrt();
            if norm <= 1e-11 * scale {
                return None;
            }
            let alpha = if v[0] > 0.0 { -norm } else { norm };
            v[0] -= alpha;
            let vv: f64 = v.iter().map(|x| x * x).sum();
            if vv == 0.0 {
                continue;
            }
            let s = &mut s[k..];
            s.fill(zero);
            for (row, &vi) in a[k * w..].chunks_exact(w).zip(v.iter()) {
                for (acc, x) in s.iter_mut().zip(&row[k..]) {
                    *acc += vi * x;
                }
            }
            for acc in s.iter_mut() {
                *acc = *acc * 2.0 / vv;
            }
            for (row, &vi) in a[k * w..].chunks_exact_mut(w).zip(v.iter()) {
                for (x, sc) in row[k..].iter_mut().zip(s.iter()) {
                    *x -= sc * vi;
                }
            }
        }
        let mut x = vec![0.0; n];
        for k in (0..n).rev() {
            let s: f64 = (k + 1..n).map(|c| a[k * w + c] * x[c]).sum();
            x[k] = (a[k * w + n] - s) / a[k * w + k];
        }
        x.iter().all(|v| v.is_finite()).then_some(x)
    }

    /// SplitMix64 in [-1, 1).
    fn uniform(state: &mut u64) -> f64 {
        *state = state.wrapping_add(0x9E37_79B9_7F4A_7C15);
        let mut z = *state;
        z = (z ^ (z >> 30)).wrapping_mul(0xBF58_476D_1CE4_E5B9);
        z = (z ^ (z >> 27)).wrapping_mul(0x94D0_49BB_1331_11EB);
        z ^= z >> 31;
        (z >> 11) as f64 / (1u64 << 52) as f64 - 1.0
    }

    #[test]
    fn the_fused_reflections_give_the_plain_forms_bits_on_seeded_random_fits() {
        let mut state = 12345u64;
        let mut solved = 0;
        for case in 0..400 {
            // 3 to 11 columns, 17 (an interface fit's), and 19 (the slice form).
            let n = match case % 10 {
                8 => 17,
                9 => 19,
                _ => 3 + case % 9,
            };
            let m = n + (case * 7) % 300;
            let (mut rows, mut rhs) = (Vec::new(), Vec::new());
            let mut lsq = Lsq::new(n);
            for i in 0..m {
                // Weights spanning many decades as the Gaussian weights and exact rows do;
                // some cases with repeated or zero columns (rank deficient).
                let weight = 30.0 * (-6.0 * uniform(&mut state).abs()).exp();
                let coeffs: Vec<f64> = (0..n)
                    .map(|c| match (case % 5, c) {
                        (4, 1) => 0.0,
                        (3, 2) if i % 2 == 0 => 1.0,
                        _ => uniform(&mut state) * (1.0 + c as f64),
                    })
                    .collect();
                let value = uniform(&mut state);
                rows.extend(coeffs.iter().map(|c| c * weight));
                rhs.push(value * weight);
                if i % 2 == 0 {
                    lsq.row(coeffs.iter().copied(), value, weight);
                } else {
                    lsq.row_with(value, weight, |r| r.copy_from_slice(&coeffs));
                }
            }
            let want = reference(&rows, &rhs, n);
            let got = lsq.solve();
            let bits = |x: &Option<Vec<f64>>| {
                x.as_ref()
                    .map(|v| v.iter().map(|f| f.to_bits()).collect::<Vec<_>>())
            };
            assert_eq!(bits(&got), bits(&want), "case {case}: {n} x {m}");
            solved += usize::from(got.is_some());
        }
        // Both kinds of outcome are exercised.
        assert!(solved > 200 && solved < 400, "{solved}");
    }

    #[test]
    fn too_few_rows_or_no_coefficients_give_no_fit() {
        let mut lsq = Lsq::new(3);
        lsq.row([1.0, 2.0, 3.0], 1.0, 1.0);
        assert!(lsq.solve().is_none());
        let mut lsq = Lsq::new(2);
        for _ in 0..4 {
            lsq.row([0.0, 0.0], 1.0, 1.0);
        }
        assert!(lsq.solve().is_none());
    }

    #[test]
    fn an_overdetermined_consistent_system_is_solved_exactly() {
        // y = 2 + 3 t at t = 0..5, weights 1 and 4.
        let mut lsq = Lsq::new(2);
        for t in 0..6 {
            let t = f64::from(t);
            lsq.row([1.0, t], 2.0 + 3.0 * t, if t < 3.0 { 1.0 } else { 4.0 });
        }
        let u = lsq.solve().unwrap();
        assert!(
            (u[0] - 2.0).abs() < 1e-12 && (u[1] - 3.0).abs() < 1e-12,
            "{u:?}"
        );
    }
}
