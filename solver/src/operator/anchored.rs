//! Whether every region of unknowns touches a fixed potential: the regions of unknowns joined
//! by positive couplings, and the first unknown (by node index) of a region that no link to a
//! fixed target reaches.
//!
//! The regions are found by union-find in bands of [`BAND`] rows, the bands on every thread
//! (each band joins only its own nodes), then joined across the band edges in band order; the
//! answer is a property of the regions alone, so neither the bands nor the thread count can
//! change it.
//!
//! Invariants: two unknowns are joined when they are neighbours along a lattice edge and the
//! edge's coupling is positive (NaN is not); a link's node anchors its own region, or, when
//! it is not an unknown, the regions of the unknowns it has a positive coupling to (as a
//! search outward from it would).

use crate::stencil::Stencil5;
use rayon::prelude::*;

/// Rows of nodes per band. Fixed: the bands never depend on the thread count.
const BAND: usize = 32;

fn find(parent: &mut [u32], mut p: usize) -> usize {
    while parent[p] as usize != p {
        let gp = parent[parent[p] as usize];
        parent[p] = gp;
        p = gp as usize;
    }
    p
}

/// Joins the regions of `a` and `b`; the lower root becomes the root of both.
fn union(parent: &mut [u32], a: usize, b: usize) {
    let (ra, rb) = (find(parent, a), find(parent, b));
    if ra != rb {
        parent[ra.max(rb)] = ra.min(rb) as u32;
    }
}

/// The root of `p` without shortening the way (for readers sharing the array).
fn root(parent: &[u32], mut p: usize) -> usize {
    while parent[p] as usize != p {
        p = parent[p] as usize;
    }
    p
}

/// The first unknown, by node index, whose region no node of `anchors` reaches; `None` when
/// every region is anchored.
pub(super) fn first_unanchored(
    s: &Stencil5,
    anchors: impl Iterator<Item = usize>,
) -> Option<usize> {
    let (nx, n) = (s.nx, s.len());
    assert!(n < u32::MAX as usize, "lattice too large for u32 indices");
    let joined_north =
        |p: usize| p + nx < n && s.north[p] > 0.0 && s.unknown[p] && s.unknown[p + nx];
    let mut parent = vec![0u32; n];
    parent
        .par_chunks_mut(BAND * nx)
        .enumerate()
        .for_each(|(b, band)| {
            let base = b * BAND * nx;
            for (k, v) in band.iter_mut().enumerate() {
                *v = k as u32;
            }
            // Row by row (no division per node), each node east then north, as one pass
            // over the band's nodes in order.
            for row in 0..band.len() / nx {
                for i in 0..nx {
                    let (k, p) = (row * nx + i, base + row * nx + i);
                    let (u, up) = (s.unknown[p], k + nx < band.len());
                    if u && i + 1 < nx && s.east[p] > 0.0 && s.unknown[p + 1] {
                        union(band, k, k + 1);
                    }
                    if u && up && s.north[p] > 0.0 && s.unknown[p + nx] {
                        union(band, k, k + nx);
                    }
                }
            }
            // Every node straight to its root, then in whole-lattice indices.
            for k in 0..band.len() {
                band[k] = find(band, k) as u32;
            }
            for v in band.iter_mut() {
                *v += base as u32;
            }
        });
    for j in (BAND..s.ny).step_by(BAND) {
        for p in (j - 1) * nx..j * nx {
            if joined_north(p) {
                union(&mut parent, p, p + nx);
            }
        }
    }
    let mut anchored = vec![false; n];
    for a in anchors {
        if s.unknown[a] {
            let r = find(&mut parent, a);
            anchored[r] = true;
            continue;
        }
        let (i, j) = (a % nx, a / nx);
        let reached = [
            (i + 1 < nx && s.east[a] > 0.0).then(|| a + 1),
            (i > 0 && s.east[a - 1] > 0.0).then(|| a - 1),
            (j + 1 < s.ny && s.north[a] > 0.0).then(|| a + nx),
            (j > 0 && s.north[a - nx] > 0.0).then(|| a - nx),
        ];
        for q in reached.into_iter().flatten().filter(|&q| s.unknown[q]) {
            let r = find(&mut parent, q);
            anchored[r] = true;
        }
    }
    crate::parallel::chunks(n, |range| {
        range
            .into_iter()
            .find(|&p| s.unknown[p] && !anchored[root(&parent, p)])
    })
    .into_iter()
    .flatten()
    .next()
}

#[cfg(test)]
mod tests {
    use super::*;

    /// The search outward from every anchor (the first form of the check), kept as the
    /// reference the banded regions must reproduce.
    fn searched(s: &Stencil5, anchors: &[usize]) -> Option<usize> {
        let (n, nx) = (s.len(), s.nx);
        let mut anchored = vec![false; n];
        let mut stack: Vec<usize> = Vec::new();
        for &p in anchors {
            if !anchored[p] {
                anchored[p] = true;
                stack.push(p);
            }
        }
        while let Some(p) = stack.pop() {
            let mut visit = |q: usize, c: f64| {
                if c > 0.0 && s.unknown[q] && !anchored[q] {
                    anchored[q] = true;
                    stack.push(q);
                }
            };
            let (i, j) = (p % nx, p / nx);
            if i + 1 < nx {
                visit(p + 1, s.east[p]);
            }
            if i > 0 {
                visit(p - 1, s.east[p - 1]);
            }
            if j + 1 < s.ny {
                visit(p + nx, s.north[p]);
            }
            if j > 0 {
                visit(p - nx, s.north[p - nx]);
            }
        }
        (0..n).find(|&p| s.unknown[p] && !anchored[p])
    }

    /// A seeded lattice: fixed nodes, missing and NaN couplings cut it into many regions.
    fn scene(nx: usize, ny: usize, seed: u64, cut: f64) -> (Stencil5, Vec<usize>) {
        let mut rnd = crate::seeded::uniform(seed);
        let n = nx * ny;
        let unknown: Vec<bool> = (0..n).map(|_| rnd() > 0.1).collect();
        let mut coupling = |_| match rnd() {
            r if r < cut => 0.0,
            r if r < cut + 0.01 => f64::NAN,
            r => r,
        };
        let east: Vec<f64> = (0..n).map(&mut coupling).collect();
        let north: Vec<f64> = (0..n).map(&mut coupling).collect();
        let anchors: Vec<usize> = (0..n).filter(|_| rnd() < 0.002).collect();
        let s = Stencil5 {
            nx,
            ny,
            diag: vec![1.0; n],
            east,
            north,
            unknown,
            cross: Vec::new(),
        };
        (s, anchors)
    }

    #[test]
    fn banded_regions_find_the_first_unanchored_unknown_of_the_search() {
        // 150 rows: several bands; from a few large regions to many small ones.
        let mut unanchored = 0;
        for (seed, cut) in [(1, 0.2), (2, 0.35), (3, 0.5), (4, 0.6), (5, 0.05)] {
            let (s, anchors) = scene(90, 150, seed, cut);
            let want = searched(&s, &anchors);
            unanchored += usize::from(want.is_some());
            for threads in [1, 3] {
                let pool = rayon::ThreadPoolBuilder::new()
                    .num_threads(threads)
                    .build()
                    .unwrap();
                let got = pool.install(|| first_unanchored(&s, anchors.iter().copied()));
                assert_eq!(got, want, "seed {seed}, {threads} threads");
            }
        }
        assert!(
            unanchored >= 3,
            "the scenes leave regions without an anchor"
        );
        // Anchored everywhere: one anchor per node.
        let (s, _) = scene(40, 70, 6, 0.3);
        assert_eq!(first_unanchored(&s, 0..s.len()), None);
        assert_eq!(searched(&s, &(0..s.len()).collect::<Vec<_>>()), None);
    }
}
