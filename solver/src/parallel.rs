//! Deterministic parallel work: results are bit-identical whatever the thread count.
//!
//! Invariants: a reduction splits its input into fixed chunks of [`CHUNK`] elements (never a
//! function of the thread count), reduces each chunk sequentially, and adds the chunk partial
//! sums in chunk order; per-row work ([`for_each_row`]) writes each lattice row from that row's
//! inputs alone, and [`map`] computes each item's result from that item alone, so the order in
//! which threads take rows or items cannot show in the result.

use rayon::prelude::*;

/// Elements per reduction chunk. Fixed: changing it changes the last bits of every result.
pub const CHUNK: usize = 8192;

/// Sum of `f(i)` for i in 0..n, deterministic.
pub fn sum_by(n: usize, f: impl Fn(usize) -> f64 + Sync) -> f64 {
    let chunks = n.div_ceil(CHUNK);
    let partial: Vec<f64> = (0..chunks)
        .into_par_iter()
        .map(|c| {
            let mut s = 0.0;
            for i in c * CHUNK..((c + 1) * CHUNK).min(n) {
                s += f(i);
            }
            s
        })
        .collect();
    partial.iter().sum()
}

/// Sum of `values` (for example per-row partial sums), deterministic.
pub fn sum(values: &[f64]) -> f64 {
    sum_by(values.len(), |j| values[j])
}

/// Calls `f(j, row)` for every row `j` of `out` (rows of `nx` elements), in parallel.
pub fn for_each_row<T: Send>(out: &mut [T], nx: usize, f: impl Fn(usize, &mut [T]) + Sync) {
    assert!(nx > 0 && out.len() % nx == 0, "whole rows of nx elements");
    out.par_chunks_mut(nx)
        .enumerate()
        .for_each(|(j, row)| f(j, row));
}

/// `f` of every item, in the items' order, in parallel; each result depends on its item
/// alone, so the thread count cannot show in the output.
pub fn map<T: Sync, U: Send>(items: &[T], f: impl Fn(&T) -> U + Sync) -> Vec<U> {
    items.par_iter().map(&f).collect()
}

/// `f` of every fixed chunk of [`CHUNK`] indices of `0..n`, in chunk order, in parallel: a
/// fold whose chunk results are then combined in this order does not depend on the thread
/// count.
pub fn chunks<U: Send>(n: usize, f: impl Fn(std::ops::Range<usize>) -> U + Sync) -> Vec<U> {
    (0..n.div_ceil(CHUNK))
        .into_par_iter()
        .map(|c| f(c * CHUNK..((c + 1) * CHUNK).min(n)))
        .collect()
}

/// A vector of `n` zeros written by every thread. Its pages are first touched by these
/// writes, spread over the threads; a zeroed allocation that is read before it is written
/// (a starting guess, an accumulator) maps the shared zero page first and faults again to
/// copy it on the first write.
pub fn zeros(n: usize) -> Vec<f64> {
    let mut v = Vec::with_capacity(n);
    v.par_extend(rayon::iter::repeat_n(0.0, n));
    v
}

/// `acc[i] += w * x[i]` for every i, in parallel (each entry from its own inputs alone).
pub fn add_scaled(acc: &mut [f64], w: f64, x: &[f64]) {
    assert_eq!(acc.len(), x.len(), "vectors of one length");
    acc.par_iter_mut().zip(x).for_each(|(a, x)| *a += w * x);
}

/// Dot product, deterministic.
pub fn dot(a: &[f64], b: &[f64]) -> f64 {
    assert_eq!(a.len(), b.len());
    sum_by(a.len(), |i| a[i] * b[i])
}

/// Euclidean norm, deterministic.
pub fn norm2(a: &[f64]) -> f64 {
    dot(a, a).sqrt()
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn reductions_do_not_depend_on_thread_count() {
        let a: Vec<f64> = (0..100_003)
            .map(|i| ((i as f64) * 0.37).sin() * 1e3)
            .collect();
        let run = |t: usize| {
            rayon::ThreadPoolBuilder::new()
                .num_threads(t)
                .build()
                .unwrap()
                .install(|| dot(&a, &a))
        };
        assert_eq!(run(1).to_bits(), run(2).to_bits());
        assert_eq!(run(1).to_bits(), run(3).to_bits());
        let mapped = |t: usize| {
            rayon::ThreadPoolBuilder::new()
                .num_threads(t)
                .build()
                .unwrap()
                .install(|| map(&a[..1000], |v| v.sqrt().to_bits()))
        };
        assert_eq!(mapped(1), mapped(3));
        assert_eq!(mapped(2)[7], a[7].sqrt().to_bits());
        let ranges = |t: usize| {
            rayon::ThreadPoolBuilder::new()
                .num_threads(t)
                .build()
                .unwrap()
                .install(|| chunks(2 * CHUNK + 5, |r| (r.start, r.end)))
        };
        assert_eq!(ranges(1), ranges(3));
        assert_eq!(ranges(2)[2], (2 * CHUNK, 2 * CHUNK + 5));
    }

    #[test]
    fn zeros_and_scaled_sums_equal_the_serial_loops_bit_for_bit() {
        let n = 3 * CHUNK + 11;
        let x: Vec<f64> = (0..n).map(|i| ((i as f64) * 0.71).cos() * 3.0).collect();
        let run = |t: usize| {
            rayon::ThreadPoolBuilder::new()
                .num_threads(t)
                .build()
                .unwrap()
                .install(|| {
                    let mut acc = zeros(n);
                    assert!(acc.len() == n && acc.iter().all(|v| v.to_bits() == 0));
                    add_scaled(&mut acc, -0.3, &x);
                    add_scaled(&mut acc, 1.0, &x);
                    acc
                })
        };
        let mut serial = vec![0.0; n];
        for w in [-0.3, 1.0] {
            serial.iter_mut().zip(&x).for_each(|(a, x)| *a += w * x);
        }
        for t in [1, 2, 3] {
            assert!(run(t)
                .iter()
                .zip(&serial)
                .all(|(a, b)| a.to_bits() == b.to_bits()));
        }
    }
}
