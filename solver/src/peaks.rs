//! Peaks of a function on the node lattice, ranked by how much they stand out.
//!
//! A local maximum of a sampled field is not always a feature: along a smooth, curved
//! electrode the field at the nodes next to the surface ripples with their distance to it,
//! and every ripple is a local maximum. What separates a real hot spot from a ripple is its
//! *persistence* (topological prominence): lower a level from the top; each maximum starts a
//! region of the nodes above the level, and when two regions meet, the one with the lower
//! peak ends there. A peak of height m that ends at level d has relative persistence
//! (m - d) / m: a ripple on a ridge ends just below its own height, a corner separated from a
//! higher one by a valley of weak field ends deep down. The highest peak of each connected
//! part of the lattice never ends: its persistence is 1 (A. Zomorodian and G. Carlsson,
//! Computing persistent homology, Discrete Comput. Geom. 33 (2005) 249-274; the
//! union-find sweep over sorted values is the zero-dimensional case, cited from memory).
//!
//! The regions are found without sorting the nodes. Every node points to its neighbour
//! first in sweep order when that one comes before it (the steepest way up), and the
//! pointers lead each node to one maximum: its basin. A node joins the region of its own
//! maximum when the sweep reaches it (its way up was swept before it), so two regions meet
//! exactly where two neighbours of different basins have both been swept: at the later of
//! the two. The union-find sweep then runs over the maxima alone, joined along those basin
//! borders in sweep order (the zero-dimensional persistence of a graph; the reduction to the
//! maxima and the saddles between their basins is common practice). The pointers and the
//! borders are found row by row on every thread, each from its own rows' values, and the
//! basins by chunks of nodes on every thread (a node's basin depends on the pointers alone);
//! the sort and the sweep cover only the maxima and the border pairs.
//!
//! Invariants: nodes are 8-connected; values that are not finite or not positive (conductor
//! interiors, fixed nodes) are not part of the lattice; ties in value are broken by node index,
//! lower first ("sweep order"), so that the result depends on nothing but the values (not on
//! the thread count nor the order in which border pairs are found).

use rayon::prelude::*;
use std::cmp::Ordering;
use std::sync::atomic::{AtomicU32, Ordering::Relaxed};

/// One peak: node index (i + j*nx) and its relative persistence in (0, 1].
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct Peak {
    /// Node index.
    pub node: usize,
    /// Relative persistence (m - d) / m, 1 for the top of a connected part.
    pub persistence: f64,
}

const NONE: u32 = u32::MAX;

/// Persistence marker of a region that ended at its own height (a plateau's second node):
/// not a peak.
const ENDED_FLAT: f64 = -1.0;

/// Whether a value belongs to the lattice.
fn on_lattice(v: f64) -> bool {
    v.is_finite() && v > 0.0
}

/// Sweep order: higher value first, equal values by lower index.
fn order(values: &[f64], a: u32, b: u32) -> Ordering {
    values[b as usize]
        .total_cmp(&values[a as usize])
        .then(a.cmp(&b))
}

fn find(parent: &mut [u32], mut p: u32) -> u32 {
    while parent[p as usize] != p {
        let gp = parent[parent[p as usize] as usize];
        parent[p as usize] = gp;
        p = gp;
    }
    p
}

/// Per node: the neighbour first in sweep order when it comes before the node, the node
/// itself at a maximum, `NONE` off the lattice. Row by row, each row from the values alone.
fn ways_up(values: &[f64], nx: usize, ny: usize) -> Vec<u32> {
    let mut up = vec![NONE; values.len()];
    crate::parallel::for_each_row(&mut up, nx, |j, row| {
        let rows = j.saturating_sub(1)..(j + 2).min(ny);
        for (i, out) in row.iter_mut().enumerate() {
            let p = i + j * nx;
            let mut top = values[p];
            if !on_lattice(top) {
                continue;
            }
            let mut best = p;
            // `top`, the value at `best`, is finite and positive: a value above it is on the
            // lattice unless infinite, one equal to it is. The node itself is never before
            // itself; the order of the comparisons does not matter (sweep order is total).
            let mut take = |q: usize, v: f64| {
                if (v > top && v < f64::INFINITY) || (v == top && q < best) {
                    best = q;
                    top = v;
                }
            };
            if rows.len() == 3 && i > 0 && i + 1 < nx {
                // Away from the lattice's sides: the eight neighbours at fixed offsets.
                let around = &values[p - nx - 1..=p + nx + 1];
                for (o, q) in [0, 1, 2, nx, nx + 2, 2 * nx, 2 * nx + 1, 2 * nx + 2]
                    .into_iter()
                    .map(|o| (o, p - nx - 1 + o))
                {
                    take(q, around[o]);
                }
                *out = best as u32;
                continue;
            }
            let cols = i.saturating_sub(1)..(i + 2).min(nx);
            for qj in rows.clone() {
                let line = &values[qj * nx..][..nx];
                for qi in cols.clone() {
                    take(qi + qj * nx, line[qi]);
                }
            }
            *out = best as u32;
        }
    });
    up
}

/// The maxima in sweep order and every node's basin, as the rank of its maximum in that
/// order (`NONE` off the lattice).
fn basins(values: &[f64], up: &[u32]) -> (Vec<u32>, Vec<u32>) {
    let mut maxima: Vec<u32> = crate::parallel::chunks(values.len(), |range| {
        range
            .filter(|&p| up[p] == p as u32)
            .map(|p| p as u32)
            .collect::<Vec<u32>>()
    })
    .concat();
    maxima.par_sort_unstable_by(|&a, &b| order(values, a, b));
    let basin: Vec<AtomicU32> = (0..values.len())
        .into_par_iter()
        .map(|_| AtomicU32::new(NONE))
        .collect();
    for (r, &m) in maxima.iter().enumerate() {
        basin[m as usize].store(r as u32, Relaxed);
    }
    // Each way up is followed to the first node with a basin, which the whole way then takes.
    // The chunks run at once and may store the same node's basin twice, but a node's basin
    // is that of its maximum, fixed by the ways up alone: every store writes the same value.
    crate::parallel::chunks(values.len(), |range| {
        let mut way: Vec<u32> = Vec::new();
        for p in range {
            if up[p] == NONE || basin[p].load(Relaxed) != NONE {
                continue;
            }
            let mut q = p as u32;
            let b = loop {
                match basin[q as usize].load(Relaxed) {
                    NONE => {
                        way.push(q);
                        q = up[q as usize];
                    }
                    b => break b,
                }
            };
            for w in way.drain(..) {
                basin[w as usize].store(b, Relaxed);
            }
        }
    });
    (
        maxima,
        basin.into_iter().map(AtomicU32::into_inner).collect(),
    )
}

/// A pair of neighbours in different basins: the later of the two in sweep order (where the
/// basins' regions meet) and the two basins.
#[derive(Clone, Copy)]
struct Border {
    at: u32,
    a: u32,
    b: u32,
}

/// Every neighbour pair whose basins differ, in sweep order of `at` (ties by basins).
fn borders(values: &[f64], nx: usize, basin: &[u32]) -> Vec<Border> {
    let n = values.len();
    let mut out: Vec<Border> = crate::parallel::chunks(n, |range| {
        let mut found = Vec::new();
        // Node p's column, stepped along (no division per node).
        let mut next = range.start % nx;
        for p in range {
            let i = next;
            next = if i + 1 == nx { 0 } else { i + 1 };
            let bp = basin[p];
            if bp == NONE {
                continue;
            }
            // Each unordered pair once: east, and the three neighbours of the row above.
            let ahead = [
                (i + 1 < nx).then(|| p + 1),
                (i > 0).then(|| p + nx - 1),
                Some(p + nx),
                (i + 1 < nx).then(|| p + nx + 1),
            ];
            for q in ahead.into_iter().flatten().filter(|&q| q < n) {
                let bq = basin[q];
                if bq != NONE && bq != bp {
                    let at = if order(values, p as u32, q as u32) == Ordering::Less {
                        q
                    } else {
                        p
                    };
                    found.push(Border {
                        at: at as u32,
                        a: bp.min(bq),
                        b: bp.max(bq),
                    });
                }
            }
        }
        found
    })
    .concat();
    out.par_sort_unstable_by(|x, y| {
        order(values, x.at, y.at)
            .then(x.a.cmp(&y.a))
            .then(x.b.cmp(&y.b))
    });
    out
}

/// Every local maximum of `values` on an `nx` x `ny` lattice with its relative persistence,
/// highest value first.
pub fn peaks(values: &[f64], nx: usize, ny: usize) -> Vec<Peak> {
    assert_eq!(values.len(), nx * ny, "one value per node");
    assert!(
        values.len() < NONE as usize,
        "lattice too large for u32 indices"
    );
    let up = ways_up(values, nx, ny);
    let (maxima, basin) = basins(values, &up);
    drop(up);
    let borders = borders(values, nx, &basin);
    drop(basin);
    // The sweep over the maxima (rank = age, lower older); a root is the oldest of its region.
    let mut parent: Vec<u32> = (0..maxima.len() as u32).collect();
    let mut end: Vec<Option<f64>> = vec![None; maxima.len()];
    for e in borders {
        let (ra, rb) = (find(&mut parent, e.a), find(&mut parent, e.b));
        if ra == rb {
            continue;
        }
        let (keep, ended) = (ra.min(rb), ra.max(rb));
        let m = values[maxima[ended as usize] as usize];
        let level = values[e.at as usize];
        end[ended as usize] = Some(if m > level {
            (m - level) / m
        } else {
            ENDED_FLAT
        });
        parent[ended as usize] = keep;
    }
    maxima
        .iter()
        .zip(end)
        .filter(|(_, e)| *e != Some(ENDED_FLAT))
        .map(|(&m, e)| Peak {
            node: m as usize,
            persistence: e.unwrap_or(1.0),
        })
        .collect()
}

/// The nodes of the local maxima whose relative persistence reaches `min`, highest value
/// first (the peaks of [`peaks`] with `persistence >= min`, in the same order).
pub fn persistent(values: &[f64], nx: usize, ny: usize, min: f64) -> Persistent {
    let mut all = peaks(values, nx, ny);
    all.retain(|p| p.persistence >= min);
    Persistent {
        peaks: all.into_iter(),
    }
}

/// Iterator of [`persistent`].
pub struct Persistent {
    peaks: std::vec::IntoIter<Peak>,
}

impl Iterator for Persistent {
    type Item = usize;

    fn next(&mut self) -> Option<usize> {
        self.peaks.next().map(|p| p.node)
    }
}
#[cfg(test)]
mod tests {
    use super::*;

    fn lattice(nx: usize, ny: usize, f: impl Fn(f64, f64) -> f64) -> Vec<f64> {
        (0..nx * ny)
            .map(|p| f((p % nx) as f64, (p / nx) as f64))
            .collect()
    }

    #[test]
    fn two_hills_give_two_peaks_with_the_valley_depth_as_persistence() {
        // Two Gaussian hills of heights 2 and 1 on a floor of 0.1, far apart.
        let v = lattice(60, 20, |x, y| {
            0.1 + 2.0 * (-((x - 15.0).powi(2) + (y - 10.0).powi(2)) / 8.0).exp()
                + (-((x - 45.0).powi(2) + (y - 10.0).powi(2)) / 8.0).exp()
        });
        let p = peaks(&v, 60, 20);
        assert_eq!(p.len(), 2, "{p:?}");
        assert_eq!(p[0].node, 15 + 10 * 60);
        assert_eq!(p[0].persistence, 1.0);
        assert_eq!(p[1].node, 45 + 10 * 60);
        // The lower hill (1.1) ends where the two regions meet, just above the 0.1 floor.
        assert!((p[1].persistence - 1.0 / 1.1).abs() < 0.01, "{p:?}");
    }

    #[test]
    fn ripples_on_a_ridge_have_small_persistence() {
        // A ridge along x with a 1 % ripple: many maxima, one of them persistent.
        let v = lattice(80, 9, |x, y| {
            (1.0 + 0.01 * (x * 1.3).sin() - 0.001 * x) * (-(y - 4.0).powi(2) / 4.0).exp()
        });
        let p = peaks(&v, 80, 9);
        assert!(p.len() > 5, "the ripple makes many maxima: {}", p.len());
        assert_eq!(p[0].persistence, 1.0);
        assert!(p[1..].iter().all(|q| q.persistence < 0.03), "{:?}", &p[..3]);
    }

    #[test]
    fn conductors_split_the_lattice_and_plateaus_give_one_peak() {
        // A wall of NaN (a conductor) splits two equal halves; a flat plateau has one peak.
        let v = lattice(21, 5, |x, _| if x == 10.0 { f64::NAN } else { 1.0 });
        let p = peaks(&v, 21, 5);
        assert_eq!(p.len(), 2, "{p:?}");
        assert!(p.iter().all(|q| q.persistence == 1.0));
        assert_eq!((p[0].node, p[1].node), (0, 11));
        assert!(peaks(&[f64::NAN, 0.0, -1.0], 3, 1).is_empty());
    }

    /// A seeded pseudo-random lattice: smooth hills on a floor, ripples, plateaus and holes.
    fn rough(nx: usize, ny: usize, seed: u64) -> Vec<f64> {
        let mut rnd = crate::seeded::uniform(seed);
        let hills: Vec<[f64; 3]> = (0..12)
            .map(|_| [rnd() * nx as f64, rnd() * ny as f64, 0.5 + rnd()])
            .collect();
        (0..nx * ny)
            .map(|p| {
                let (x, y) = ((p % nx) as f64, (p / nx) as f64);
                let r = rnd();
                if r < 0.01 {
                    return f64::NAN;
                }
                let h: f64 = hills
                    .iter()
                    .map(|c| c[2] * (-((x - c[0]).powi(2) + (y - c[1]).powi(2)) / 60.0).exp())
                    .sum();
                // Quantised so that equal values (plateaus, ties) occur.
                ((0.3 + h + 0.02 * r) * 256.0).round() / 256.0
            })
            .collect()
    }

    #[test]
    fn the_persistent_peaks_are_the_filtered_peaks_in_order() {
        for seed in [1, 2, 3] {
            let v = rough(250, 160, seed);
            let all = peaks(&v, 250, 160);
            // Many ripples and several persistent peaks: every threshold below sorts some out.
            assert!(all.len() > 100, "{}", all.len());
            let strong = all.iter().filter(|p| p.persistence >= 0.3).count();
            assert!((2..50).contains(&strong), "{strong} of {}", all.len());
            for min in [0.0, 0.01, 0.05, 0.3, 1.0, 1.5] {
                let want: Vec<usize> = all
                    .iter()
                    .filter(|p| p.persistence >= min)
                    .map(|p| p.node)
                    .collect();
                let got: Vec<usize> = persistent(&v, 250, 160, min).collect();
                assert_eq!(got, want, "seed {seed}, min {min}");
            }
        }
    }

    /// The sweep over every node sorted at once, with a rank per node (the first form of this
    /// module), kept as the reference the sweep over the basins must reproduce.
    fn full_sort_peaks(values: &[f64], nx: usize, ny: usize) -> Vec<Peak> {
        let mut order: Vec<u32> = (0..values.len() as u32)
            .filter(|&p| values[p as usize].is_finite() && values[p as usize] > 0.0)
            .collect();
        order.sort_unstable_by(|&a, &b| super::order(values, a, b));
        let mut parent = vec![NONE; values.len()];
        let mut top = vec![NONE; values.len()];
        let mut rank = vec![NONE; values.len()];
        for (k, &p) in order.iter().enumerate() {
            rank[p as usize] = k as u32;
        }
        let mut out = Vec::new();
        for &p in &order {
            parent[p as usize] = p;
            top[p as usize] = p;
            let (i, j) = (p as usize % nx, p as usize / nx);
            let level = values[p as usize];
            for dj in -1i64..=1 {
                for di in -1i64..=1 {
                    let (qi, qj) = (i as i64 + di, j as i64 + dj);
                    if (di, dj) == (0, 0) || qi < 0 || qj < 0 || qi >= nx as i64 || qj >= ny as i64
                    {
                        continue;
                    }
                    let q = (qi as usize + qj as usize * nx) as u32;
                    if parent[q as usize] == NONE {
                        continue;
                    }
                    let (rp, rq) = (find(&mut parent, p), find(&mut parent, q));
                    if rp == rq {
                        continue;
                    }
                    let (tp, tq) = (top[rp as usize], top[rq as usize]);
                    let (keep, end) = if rank[tp as usize] < rank[tq as usize] {
                        (rp, rq)
                    } else {
                        (rq, rp)
                    };
                    let ended = top[end as usize];
                    let m = values[ended as usize];
                    if m > level {
                        out.push(Peak {
                            node: ended as usize,
                            persistence: (m - level) / m,
                        });
                    }
                    parent[end as usize] = keep;
                }
            }
        }
        for &p in &order {
            if parent[p as usize] == p {
                out.push(Peak {
                    node: p as usize,
                    persistence: 1.0,
                });
            }
        }
        out.sort_by(|a, b| super::order(values, a.node as u32, b.node as u32));
        out
    }

    #[test]
    fn the_sweep_over_the_basins_gives_the_peaks_of_a_full_sort() {
        for seed in [4, 5, 6, 7] {
            let v = rough(250, 160, seed);
            assert_eq!(
                peaks(&v, 250, 160),
                full_sort_peaks(&v, 250, 160),
                "seed {seed}"
            );
            // Few distinct values: wide plateaus, ties along every border between basins.
            let coarse: Vec<f64> = v.iter().map(|x| (x * 8.0).round() / 8.0).collect();
            assert_eq!(
                peaks(&coarse, 250, 160),
                full_sort_peaks(&coarse, 250, 160),
                "seed {seed}, coarse"
            );
        }
        let v = rough(3, 2, 8);
        assert_eq!(peaks(&v, 3, 2), full_sort_peaks(&v, 3, 2));
    }

    /// The basins by one pass in node order (the first form), the reference of [`basins`].
    fn basins_in_sequence(values: &[f64], up: &[u32]) -> Vec<u32> {
        let (maxima, _) = basins(values, up);
        let mut basin = vec![NONE; values.len()];
        for (r, &m) in maxima.iter().enumerate() {
            basin[m as usize] = r as u32;
        }
        for p in 0..values.len() {
            let mut way = Vec::new();
            let mut q = p as u32;
            while up[p] != NONE && basin[q as usize] == NONE {
                way.push(q);
                q = up[q as usize];
            }
            for w in way {
                basin[w as usize] = basin[q as usize];
            }
        }
        basin
    }

    #[test]
    fn ways_up_are_the_first_neighbours_in_sweep_order_with_values_off_the_lattice() {
        // Every neighbour (the node itself too) checked for the lattice and compared in sweep
        // order, in plain form.
        let plain = |v: &[f64], nx: usize, ny: usize| -> Vec<u32> {
            (0..nx * ny)
                .map(|p| {
                    if !on_lattice(v[p]) {
                        return NONE;
                    }
                    let (i, j) = (p % nx, p / nx);
                    let mut best = p;
                    for qj in j.saturating_sub(1)..(j + 2).min(ny) {
                        for qi in i.saturating_sub(1)..(i + 2).min(nx) {
                            let q = qi + qj * nx;
                            if on_lattice(v[q]) && order(v, q as u32, best as u32).is_lt() {
                                best = q;
                            }
                        }
                    }
                    best as u32
                })
                .collect()
        };
        for (seed, (nx, ny)) in [(21, (97, 61)), (22, (1, 40)), (23, (40, 1)), (24, (2, 2))] {
            let mut v = rough(nx, ny, seed);
            let odd = [f64::INFINITY, f64::NEG_INFINITY, 0.0, -1.0, f64::MAX];
            for (k, x) in v.iter_mut().enumerate().filter(|(k, _)| k % 7 == 3) {
                *x = odd[k % odd.len()];
            }
            assert_eq!(ways_up(&v, nx, ny), plain(&v, nx, ny), "{nx} x {ny}");
        }
    }

    #[test]
    fn basins_found_by_chunks_at_once_are_those_of_one_pass() {
        for (seed, (nx, ny)) in [(11, (700, 300)), (12, (130, 900))] {
            let v = rough(nx, ny, seed);
            let up = ways_up(&v, nx, ny);
            let want = basins_in_sequence(&v, &up);
            assert!(want.iter().filter(|&&b| b != NONE).count() > nx * ny / 2);
            for threads in [1, 2, 3] {
                let pool = rayon::ThreadPoolBuilder::new()
                    .num_threads(threads)
                    .build()
                    .unwrap();
                assert_eq!(
                    pool.install(|| basins(&v, &up)).1,
                    want,
                    "{threads} threads"
                );
            }
        }
    }

    #[test]
    fn the_peaks_do_not_depend_on_the_thread_count() {
        let v = rough(250, 160, 9);
        let want = full_sort_peaks(&v, 250, 160);
        for threads in [1, 2, 3, 5] {
            let pool = rayon::ThreadPoolBuilder::new()
                .num_threads(threads)
                .build()
                .unwrap();
            assert_eq!(
                pool.install(|| peaks(&v, 250, 160)),
                want,
                "{threads} threads"
            );
            let lazy: Vec<usize> = pool.install(|| persistent(&v, 250, 160, 0.05).collect());
            let filtered: Vec<usize> = want
                .iter()
                .filter(|p| p.persistence >= 0.05)
                .map(|p| p.node)
                .collect();
            assert_eq!(lazy, filtered, "{threads} threads");
        }
    }
}
