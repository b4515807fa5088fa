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
//! Invariants: nodes are 8-connected; values that are not finite or not positive (conductor
//! interiors, fixed nodes) are not part of the lattice; ties in value are broken by node index,
//! lower first, so that the result does not depend on anything but the values.

/// One peak: node index (i + j*nx) and its relative persistence in (0, 1].
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct Peak {
    /// Node index.
    pub node: usize,
    /// Relative persistence (m - d) / m, 1 for the top of a connected part.
    pub persistence: f64,
}

const NONE: u32 = u32::MAX;

fn find(parent: &mut [u32], mut p: u32) -> u32 {
    while parent[p as usize] != p {
        let gp = parent[parent[p as usize] as usize];
        parent[p as usize] = gp;
        p = gp;
    }
    p
}

/// Every local maximum of `values` on an `nx` x `ny` lattice with its relative persistence,
/// highest value first.
pub fn peaks(values: &[f64], nx: usize, ny: usize) -> Vec<Peak> {
    assert_eq!(values.len(), nx * ny, "one value per node");
    assert!(
        values.len() < NONE as usize,
        "lattice too large for u32 indices"
    );
    let mut order: Vec<u32> = (0..values.len() as u32)
        .filter(|&p| {
            let v = values[p as usize];
            v.is_finite() && v > 0.0
        })
        .collect();
    // Highest first; equal values by index, lower first.
    order.sort_unstable_by(|&a, &b| {
        values[b as usize]
            .total_cmp(&values[a as usize])
            .then(a.cmp(&b))
    });
    // parent[p]: NONE until p is added; a root's `top` is the highest node of its region,
    // which (by the sweep order) is the region's first node.
    let mut parent = vec![NONE; values.len()];
    let mut top = vec![NONE; values.len()];
    let mut out: Vec<Peak> = Vec::new();
    // rank[k] of a node: its position in `order`, to compare peaks without re-reading values.
    let mut rank = vec![NONE; values.len()];
    for (k, &p) in order.iter().enumerate() {
        rank[p as usize] = k as u32;
    }
    for &p in &order {
        parent[p as usize] = p;
        top[p as usize] = p;
        let (i, j) = (p as usize % nx, p as usize / nx);
        let level = values[p as usize];
        for dj in -1i64..=1 {
            for di in -1i64..=1 {
                let (qi, qj) = (i as i64 + di, j as i64 + dj);
                if (di, dj) == (0, 0) || qi < 0 || qj < 0 || qi >= nx as i64 || qj >= ny as i64 {
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
                // The region whose top comes later in the order (the lower peak) ends here.
                let (tp, tq) = (top[rp as usize], top[rq as usize]);
                let (keep, end) = if rank[tp as usize] < rank[tq as usize] {
                    (rp, rq)
                } else {
                    (rq, rp)
                };
                let ended = top[end as usize];
                let m = values[ended as usize];
                // A node that joins a region at once (not a maximum) ends at its own height.
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
    // The tops of the regions that never ended.
    for &p in &order {
        if parent[p as usize] == p {
            out.push(Peak {
                node: p as usize,
                persistence: 1.0,
            });
        }
    }
    out.sort_by(|a, b| {
        values[b.node]
            .total_cmp(&values[a.node])
            .then(a.node.cmp(&b.node))
    });
    out
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
}
