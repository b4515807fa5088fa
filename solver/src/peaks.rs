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
//! The sweep orders the nodes lazily: one counting pass places them in buckets of nearby
//! values (the leading bits of the value's offset from the lowest, which order positive
//! doubles), and a bucket is sorted only when the sweep reaches it. The counting runs in
//! parts on every thread (integer counts, whatever the parting), and the buckets are filled
//! in groups each owning its stretch of the order, every group taking its nodes by index. A caller that needs only
//! the highest persistent peaks ([`persistent`]) sorts and joins only the nodes above the
//! level where those peaks are decided: a peak of height m is known to reach persistence q
//! once the sweep level is below m (1 - q). The work is linear in the nodes plus the sorting
//! of the buckets swept.
//!
//! Invariants: nodes are 8-connected; values that are not finite or not positive (conductor
//! interiors, fixed nodes) are not part of the lattice; ties in value are broken by node index,
//! lower first, so that the result does not depend on anything but the values (nor on how the
//! sweep is bucketed).

use rayon::prelude::*;
use std::cmp::Ordering;

/// One peak: node index (i + j*nx) and its relative persistence in (0, 1].
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct Peak {
    /// Node index.
    pub node: usize,
    /// Relative persistence (m - d) / m, 1 for the top of a connected part.
    pub persistence: f64,
}

const NONE: u32 = u32::MAX;

/// A maximum met by the sweep, in sweep order (highest first).
#[derive(Clone, Copy, Debug)]
struct Born {
    node: u32,
    /// Relative persistence once the region has ended; `None` while it lives. A region that
    /// ends at its own height (a plateau's second node) is no peak: [`ENDED_FLAT`].
    end: Option<f64>,
}

/// Persistence marker of a region that ended at its own height: not a peak.
const ENDED_FLAT: f64 = -1.0;

/// The union-find sweep from the highest value down.
struct Sweep<'a> {
    values: &'a [f64],
    nx: usize,
    ny: usize,
    /// The lattice's nodes, bucket by bucket from the highest values down; within a bucket
    /// by index until the sweep sorts it.
    order: Vec<u32>,
    /// Bucket r (the r-th highest) is `order[starts[r]..starts[r + 1]]`.
    starts: Vec<u32>,
    /// The bucket being swept; `order[..end]` is sorted, `next` the first node not joined.
    bucket: usize,
    end: usize,
    next: usize,
    /// `NONE` until the node has joined; a root is its own parent.
    parent: Vec<u32>,
    /// Index into `born` of the peak of each root's region (its highest node).
    peak_of: Vec<u32>,
    born: Vec<Born>,
}

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

impl<'a> Sweep<'a> {
    fn new(values: &'a [f64], nx: usize, ny: usize) -> Sweep<'a> {
        assert_eq!(values.len(), nx * ny, "one value per node");
        assert!(
            values.len() < NONE as usize,
            "lattice too large for u32 indices"
        );
        // A positive finite double's bits order like its value; the leading `bits` of the
        // span of bits the values cover pick the bucket (about one bucket per four nodes, at
        // most 2^20), so that the buckets spread over the values present, not over every
        // double.
        let bits = (values.len() / 4).max(2).ilog2().clamp(4, 20);
        let buckets = 1usize << bits;
        let (lo, hi) = crate::parallel::chunks(values.len(), |range| {
            values[range]
                .iter()
                .filter(|v| on_lattice(**v))
                .fold((u64::MAX, 0u64), |(lo, hi), v| {
                    (lo.min(v.to_bits()), hi.max(v.to_bits()))
                })
        })
        .into_iter()
        .fold((u64::MAX, 0u64), |(lo, hi), (a, b)| (lo.min(a), hi.max(b)));
        let span = hi.saturating_sub(lo);
        let shift = (u64::BITS - span.leading_zeros()).saturating_sub(bits);
        let rank = |v: f64| buckets - 1 - ((v.to_bits() - lo) >> shift) as usize;
        // Counted in parts, one per thread: the counts are integers, so how the nodes are
        // parted cannot show in them.
        let parts = rayon::current_num_threads().clamp(1, 8);
        let per = values.len().div_ceil(parts).max(1);
        let counts: Vec<Vec<u32>> = values
            .par_chunks(per)
            .map(|part| {
                let mut c = vec![0u32; buckets];
                for &v in part.iter().filter(|v| on_lattice(**v)) {
                    c[rank(v)] += 1;
                }
                c
            })
            .collect();
        let mut starts = vec![0u32; buckets + 1];
        for r in 0..buckets {
            starts[r + 1] = starts[r] + counts.iter().map(|c| c[r]).sum::<u32>();
        }
        // Filled in groups of whole buckets with about as many nodes each: a group owns its
        // stretch of `order` and takes its nodes in index order, as one pass would.
        let total = starts[buckets] as usize;
        let mut cuts: Vec<usize> = (1..parts)
            .map(|k| starts.partition_point(|&s| (s as usize) < k * total / parts))
            .map(|r| r.min(buckets))
            .collect();
        cuts.insert(0, 0);
        cuts.push(buckets);
        cuts.dedup();
        let mut order = vec![0u32; total];
        let mut groups: Vec<(usize, usize, &mut [u32])> = Vec::new();
        let mut rest = &mut order[..];
        for w in cuts.windows(2) {
            let len = (starts[w[1]] - starts[w[0]]) as usize;
            let (group, tail) = rest.split_at_mut(len);
            groups.push((w[0], w[1], group));
            rest = tail;
        }
        groups.into_par_iter().for_each(|(r0, r1, group)| {
            let base = starts[r0];
            let mut fill: Vec<u32> = starts[r0..r1].iter().map(|s| s - base).collect();
            for (p, &v) in values.iter().enumerate() {
                if on_lattice(v) {
                    let r = rank(v);
                    if (r0..r1).contains(&r) {
                        group[fill[r - r0] as usize] = p as u32;
                        fill[r - r0] += 1;
                    }
                }
            }
        });
        Sweep {
            values,
            nx,
            ny,
            order,
            starts,
            bucket: 0,
            end: 0,
            next: 0,
            parent: vec![NONE; values.len()],
            peak_of: vec![NONE; values.len()],
            born: Vec::new(),
        }
    }

    /// The next node of the sweep order without joining it, `None` at the end.
    fn peek(&mut self) -> Option<u32> {
        while self.next == self.end {
            if self.bucket + 1 >= self.starts.len() {
                return None;
            }
            let values = self.values;
            let (a, b) = (
                self.starts[self.bucket] as usize,
                self.starts[self.bucket + 1] as usize,
            );
            self.order[a..b].sort_unstable_by(|&p, &q| order(values, p, q));
            self.bucket += 1;
            self.end = b;
        }
        Some(self.order[self.next])
    }

    /// Joins the next node; false at the end of the sweep.
    fn step(&mut self) -> bool {
        let Some(p) = self.peek() else {
            return false;
        };
        self.next += 1;
        let (nx, ny) = (self.nx, self.ny);
        let (i, j) = (p as usize % nx, p as usize / nx);
        let level = self.values[p as usize];
        for dj in -1i64..=1 {
            for di in -1i64..=1 {
                let (qi, qj) = (i as i64 + di, j as i64 + dj);
                if (di, dj) == (0, 0) || qi < 0 || qj < 0 || qi >= nx as i64 || qj >= ny as i64 {
                    continue;
                }
                let q = (qi as usize + qj as usize * nx) as u32;
                if self.parent[q as usize] == NONE {
                    continue;
                }
                let rq = find(&mut self.parent, q);
                if self.parent[p as usize] == NONE {
                    // p joins the first region it touches at once: it is no maximum.
                    self.parent[p as usize] = rq;
                    continue;
                }
                let rp = find(&mut self.parent, p);
                if rp == rq {
                    continue;
                }
                // The region whose peak came later in the sweep (the lower one) ends here.
                let (bp, bq) = (self.peak_of[rp as usize], self.peak_of[rq as usize]);
                let (keep, end, ended) = if bp < bq { (rp, rq, bq) } else { (rq, rp, bp) };
                let m = self.values[self.born[ended as usize].node as usize];
                self.born[ended as usize].end = Some(if m > level {
                    (m - level) / m
                } else {
                    ENDED_FLAT
                });
                self.parent[end as usize] = keep;
            }
        }
        if self.parent[p as usize] == NONE {
            self.parent[p as usize] = p;
            self.peak_of[p as usize] = self.born.len() as u32;
            self.born.push(Born { node: p, end: None });
        }
        true
    }
}

/// Every local maximum of `values` on an `nx` x `ny` lattice with its relative persistence,
/// highest value first.
pub fn peaks(values: &[f64], nx: usize, ny: usize) -> Vec<Peak> {
    let mut s = Sweep::new(values, nx, ny);
    while s.step() {}
    s.born
        .iter()
        .filter(|b| b.end != Some(ENDED_FLAT))
        .map(|b| Peak {
            node: b.node as usize,
            persistence: b.end.unwrap_or(1.0),
        })
        .collect()
}

/// The nodes of the local maxima whose relative persistence reaches `min`, highest value
/// first (the peaks of [`peaks`] with `persistence >= min`, in the same order). The sweep runs
/// only as far as the peaks taken so far need.
pub fn persistent(values: &[f64], nx: usize, ny: usize, min: f64) -> Persistent<'_> {
    Persistent {
        sweep: Sweep::new(values, nx, ny),
        min,
        front: 0,
    }
}

/// Iterator of [`persistent`].
pub struct Persistent<'a> {
    sweep: Sweep<'a>,
    min: f64,
    /// The first peak of `sweep.born` not yet given out or passed over.
    front: usize,
}

impl Iterator for Persistent<'_> {
    type Item = usize;

    fn next(&mut self) -> Option<usize> {
        loop {
            let s = &mut self.sweep;
            if self.front == s.born.len() {
                // The next peak is not born yet.
                if !s.step() {
                    return None;
                }
                continue;
            }
            let b = s.born[self.front];
            let m = s.values[b.node as usize];
            let reached = match b.end {
                Some(q) => Some(q != ENDED_FLAT && q >= self.min),
                None => match s.peek() {
                    None => Some(1.0 >= self.min),
                    // Every later end lies at or below `level`, and the persistence only
                    // grows as the level falls.
                    Some(next) => {
                        let level = s.values[next as usize];
                        (m > level && (m - level) / m >= self.min).then_some(true)
                    }
                },
            };
            match reached {
                Some(yes) => {
                    self.front += 1;
                    if yes {
                        return Some(b.node as usize);
                    }
                }
                None => {
                    s.step();
                }
            }
        }
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
        let mut state = seed;
        let mut rnd = move || {
            state = state
                .wrapping_mul(6364136223846793005)
                .wrapping_add(1442695040888963407);
            (state >> 11) as f64 / (1u64 << 53) as f64
        };
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
    fn the_lazy_persistent_sweep_gives_the_filtered_peaks_in_order() {
        // 40 000 nodes: the sweep sorts them in many buckets.
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
    /// module), kept as the reference the bucketed sweep must reproduce.
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
    fn bucketed_sweep_gives_the_peaks_of_a_full_sort() {
        for seed in [4, 5, 6, 7] {
            let v = rough(250, 160, seed);
            assert_eq!(
                peaks(&v, 250, 160),
                full_sort_peaks(&v, 250, 160),
                "seed {seed}"
            );
        }
        let v = rough(3, 2, 8);
        assert_eq!(peaks(&v, 3, 2), full_sort_peaks(&v, 3, 2));
    }

    #[test]
    fn the_sweep_counted_and_filled_in_parts_does_not_depend_on_the_thread_count() {
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
