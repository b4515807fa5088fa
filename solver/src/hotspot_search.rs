//! The hot-spot search over the readings of a solved field: the lattice's |E| at every node
//! and the surface's readings (maxima along the outlines and every sample), ranked by margin
//! or by field, the persistent maxima taken with a separation between them.
//!
//! The search ([`search`]) ranks only as many lattice maxima as the hot spots need: the
//! persistent lattice maxima come highest first ([`crate::peaks::persistent`]) and the search
//! stops once nothing lower can rank before the last hot spot taken. It gives what ranking
//! every reading gives ([`search_exhaustive`], the reference its tests compare with).
//!
//! Invariants: readings are compared in a fixed sequence (nodes by index, then the surface's
//! readings in their order), so ties fall the same way in both searches; node readings that
//! are not finite or not positive are no readings; positions in m, fields in V/m.

use crate::design::Point;
use crate::grid::Grid;
use crate::post::HotspotParams;

/// A place the field is read: position, |E|, material, persistence.
pub(crate) type Reading = (Point, f64, u16, f64);

/// What the search gives of a reading: position, |E|, material.
pub(crate) type Found = (Point, f64, u16);

fn found(c: Reading) -> Found {
    (c.0, c.1, c.2)
}

/// What the hot-spot search reads: |E| at the nodes (not finite or not positive where the
/// lattice has no reading), the landscape the lattice maxima and their persistence are read
/// on, their materials, the surface's readings, and each material's breakdown strength
/// (index as in [`crate::raster::Raster::material`]).
pub(crate) struct Readings<'a> {
    pub grid: &'a Grid,
    pub magnitude: &'a [f64],
    /// |E| as the maxima's persistence reads it: `magnitude` wherever that is a reading; at
    /// nodes without one it may carry a value from elsewhere (the surface a node faces), so
    /// that a node beside them is no maximum against it. Never below `magnitude` where both
    /// are readings.
    pub landscape: &'a [f64],
    pub material: &'a [u16],
    pub surface: &'a [Reading],
    pub strength: &'a [Option<f64>],
}

impl Readings<'_> {
    /// The reading at node p with persistence q, when the lattice has one there.
    fn node(&self, p: usize, q: f64) -> Option<Reading> {
        self.node_at(p, p % self.grid.nx, p / self.grid.nx, q)
    }

    /// [`Readings::node`] at node p = i + j nx.
    fn node_at(&self, p: usize, i: usize, j: usize, q: f64) -> Option<Reading> {
        let (g, m) = (self.grid, self.magnitude[p]);
        (m.is_finite() && m > 0.0).then(|| ([g.x(i), g.y(j)], m, self.material[p], q))
    }

    /// Rank key: margin (lowest first, materials without a strength after them by field)
    /// when any material has a strength, else field (highest first).
    fn key(&self, c: &Reading) -> (u8, f64) {
        let by_margin = self.strength.iter().any(Option::is_some);
        match (by_margin, self.strength[c.2 as usize]) {
            (true, Some(s)) => (0, s / c.1),
            (true, None) => (1, -c.1),
            (false, _) => (0, -c.1),
        }
    }

    /// Rank order: key, then position.
    fn order(&self, a: &Reading, b: &Reading) -> std::cmp::Ordering {
        let (ka, kb) = (self.key(a), self.key(b));
        ka.0.cmp(&kb.0)
            .then(ka.1.total_cmp(&kb.1))
            .then(a.0[0].total_cmp(&b.0[0]))
            .then(a.0[1].total_cmp(&b.0[1]))
    }

    /// Every reading in the search's fixed sequence (nodes by index, then the surface's),
    /// without persistence; `seq` numbers them in that sequence.
    fn each(&self, mut f: impl FnMut(usize, Reading)) {
        for p in 0..self.magnitude.len() {
            if let Some(c) = self.node(p, 0.0) {
                f(p, c);
            }
        }
        let n = self.magnitude.len();
        for (k, c) in self.surface.iter().enumerate() {
            f(n + k, *c);
        }
    }

    /// The highest field (ties to the lower x, then y; the last of equals in sequence) and,
    /// ranking by margin, the first reading in rank order (the first of equals), by sequence.
    fn peak_and_first(&self) -> (Option<Reading>, Option<(usize, Reading)>) {
        let by_margin = self.strength.iter().any(Option::is_some);
        let higher = |a: &Reading, b: &Reading| {
            a.1.total_cmp(&b.1)
                .then(b.0[0].total_cmp(&a.0[0]))
                .then(b.0[1].total_cmp(&a.0[1]))
        };
        type Best = (Option<Reading>, Option<(usize, Reading)>);
        let take_peak = |best: &mut Best, c: Reading| {
            if best
                .0
                .is_none_or(|p| higher(&p, &c) != std::cmp::Ordering::Greater)
            {
                best.0 = Some(c);
            }
        };
        let take_first = |best: &mut Best, seq: usize, c: Reading| {
            if best
                .1
                .is_none_or(|f| self.order(&f.1, &c) == std::cmp::Ordering::Greater)
            {
                best.1 = Some((seq, c));
            }
        };
        let take = |best: &mut Best, seq: usize, c: Reading| {
            take_peak(best, c);
            if by_margin {
                take_first(best, seq, c);
            }
        };
        // The nodes by fixed chunks in parallel; each chunk's two bests are taken in chunk
        // order by the same rules (the last highest, the first lowest in rank), so the result
        // is that of one pass in sequence; then the surface's readings.
        let nx = self.grid.nx;
        let chunks = crate::parallel::chunks(self.magnitude.len(), |range| {
            let mut best: Best = (None, None);
            // Node p's column and row, stepped along (no division per node).
            let (mut i, mut j) = (range.start % nx, range.start / nx);
            for p in range {
                if let Some(c) = self.node_at(p, i, j, 0.0) {
                    take(&mut best, p, c);
                }
                i += 1;
                if i == nx {
                    (i, j) = (0, j + 1);
                }
            }
            best
        });
        let mut best: Best = (None, None);
        for (peak, first) in chunks {
            if let Some(c) = peak {
                take_peak(&mut best, c);
            }
            if let Some((seq, c)) = first {
                take_first(&mut best, seq, c);
            }
        }
        let n = self.magnitude.len();
        for (k, c) in self.surface.iter().enumerate() {
            take(&mut best, n + k, *c);
        }
        best
    }
}

/// The hot spots among `cand` (sorted in rank order): each at least the separation from every
/// one taken before it, at most `count`.
fn choose(
    cand: impl Iterator<Item = Reading>,
    grid: &Grid,
    params: &HotspotParams,
) -> Vec<Reading> {
    let mut chosen: Vec<Reading> = Vec::new();
    for c in cand {
        if chosen.len() >= params.count {
            break;
        }
        let sep = params.separation_cells * grid.spacing_at(c.0);
        if chosen
            .iter()
            .all(|q| (q.0[0] - c.0[0]).hypot(q.0[1] - c.0[1]) >= sep)
        {
            chosen.push(c);
        }
    }
    chosen
}

/// The peak reading and the chosen hot spots, every node's persistence computed and every
/// reading ranked: the reference the lazy search ([`search`]) reproduces, and the search
/// itself when every reading is persistent (a persistence threshold of 0 or less).
pub(crate) fn search_exhaustive(
    r: &Readings,
    params: &HotspotParams,
) -> (Option<Found>, Vec<Found>) {
    let g = r.grid;
    let mut persistence = vec![0.0; g.len()];
    for pk in crate::peaks::peaks(r.landscape, g.nx, g.ny) {
        persistence[pk.node] = pk.persistence;
    }
    let (mut cand, mut seqs) = (Vec::new(), Vec::new());
    r.each(|seq, c| {
        let q = if seq < g.len() { persistence[seq] } else { c.3 };
        cand.push((c.0, c.1, c.2, q));
        seqs.push(seq);
    });
    let (peak, first) = r.peak_and_first();
    let first = first.and_then(|f| seqs.iter().position(|&s| s == f.0));
    // Only the persistent candidates and the first in rank order (the lowest margin) can be
    // chosen: those are sorted (stably, so in the order a sort of every candidate gives them).
    let mut cand: Vec<Reading> = cand
        .iter()
        .enumerate()
        .filter(|&(k, c)| c.3 >= params.persistence || Some(k) == first)
        .map(|(k, c)| (c.0, c.1, c.2, if Some(k) == first { 1.0 } else { c.3 }))
        .collect();
    cand.sort_by(|a, b| r.order(a, b));
    let chosen = choose(
        cand.into_iter().filter(|c| c.3 >= params.persistence),
        g,
        params,
    );
    (peak.map(found), chosen.into_iter().map(found).collect())
}

/// The peak reading and the chosen hot spots, as [`search_exhaustive`] gives them, ranking
/// only as many lattice maxima as they need: the persistent maxima of the landscape come
/// highest first ([`crate::peaks::persistent`]), in batches (those without a reading of their
/// own give no hot spot); after each the readings so far are ranked and
/// chosen, and the search ends when the last hot spot chosen ranks strictly before anything
/// a lower maximum could give (by field: its value; by margin: the lowest strength over its
/// value), since no later reading can then change the choice.
pub(crate) fn search(r: &Readings, params: &HotspotParams) -> (Option<Found>, Vec<Found>) {
    let min = params.persistence;
    if min.is_nan() || min <= 0.0 {
        return search_exhaustive(r, params);
    }
    let g = r.grid;
    let n = g.len();
    let (peak, first) = r.peak_and_first();
    // (sequence number, reading) of every reading that can be chosen so far.
    let mut pool: Vec<(usize, Reading)> = r
        .surface
        .iter()
        .enumerate()
        .filter(|(_, c)| c.3 >= min)
        .map(|(k, c)| (n + k, *c))
        .collect();
    let first_seq = first.map(|f| f.0);
    if let Some((seq, c)) = first.filter(|_| 1.0 >= min) {
        pool.retain(|e| e.0 != seq);
        pool.push((seq, (c.0, c.1, c.2, 1.0)));
    }
    let by_margin = r.strength.iter().any(Option::is_some);
    let weakest = r
        .strength
        .iter()
        .flatten()
        .copied()
        .fold(f64::INFINITY, f64::min);
    let mut maxima = crate::peaks::persistent(r.landscape, g.nx, g.ny, min);
    let (mut batch, mut lowest, mut done) = (4 * params.count.max(1), f64::INFINITY, false);
    loop {
        for _ in 0..batch {
            let Some(p) = maxima.next() else {
                done = true;
                break;
            };
            lowest = r.landscape[p];
            if Some(p) != first_seq {
                if let Some(c) = r.node(p, min) {
                    pool.push((p, c));
                }
            }
        }
        batch *= 2;
        pool.sort_by(|a, b| r.order(&a.1, &b.1).then(a.0.cmp(&b.0)));
        let chosen = choose(pool.iter().map(|e| e.1), g, params);
        // The best key a lattice maximum not yet taken could have.
        let bound = if by_margin {
            (0, weakest / lowest)
        } else {
            (0, -lowest)
        };
        let settled = chosen.len() >= params.count
            && chosen.last().is_some_and(|c| {
                let k = r.key(c);
                k.0.cmp(&bound.0).then(k.1.total_cmp(&bound.1)) == std::cmp::Ordering::Less
            });
        if done || settled {
            return (peak.map(found), chosen.into_iter().map(found).collect());
        }
    }
}

/// The field a coarser solve gives near `at` in material `m`: the largest of its surface
/// readings and lattice readings within `radius` (its own cell and a half). Only the nodes
/// of the box around the circle are visited (the box a little wider than the circle, so that
/// no node the distance test accepts lies outside it).
pub(crate) fn coarse_value(
    grid: &Grid,
    magnitude: &[f64],
    material: &[u16],
    surface: &[Reading],
    at: Point,
    m: u16,
    radius: f64,
) -> Option<f64> {
    let near = |x: Point| (x[0] - at[0]).hypot(x[1] - at[1]) <= radius;
    let wide = radius * (1.0 + 1e-9) + f64::MIN_POSITIVE;
    let mut best: Option<f64> = None;
    let mut take = |v: f64| best = Some(best.map_or(v, |b| b.max(v)));
    if let (Some(cols), Some(rows)) = (
        grid.columns_within(at[0] - wide, at[0] + wide),
        grid.rows_within(at[1] - wide, at[1] + wide),
    ) {
        for j in rows {
            for i in cols.clone() {
                let p = grid.idx(i, j);
                let v = magnitude[p];
                if v.is_finite() && v > 0.0 && material[p] == m && near([grid.x(i), grid.y(j)]) {
                    take(v);
                }
            }
        }
    }
    for c in surface.iter().filter(|c| c.2 == m && near(c.0)) {
        take(c.1);
    }
    best
}

#[cfg(test)]
mod tests;
