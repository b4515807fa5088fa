//! Cutting the lattice edges of one node line (a column for y-edges, a row for x-edges).
//!
//! Invariants, given that no free node lies in a closed conductor interval of its line (one
//! within rounding of a surface may; its stretch then has the smallest positive theta):
//! - a half-link's stretch starts at its free node and ends at the first conductor interval
//!   met, or at the other end; so `theta` is in (0, 1] and is 1 exactly when the stretch
//!   reaches the other end;
//! - an edge between two free nodes with nothing between them records the same half-link for
//!   both ends (same stretch, same permittivity), so the operator's coupling is symmetric.

use super::{Axis, CutEdge, DirectLink, HalfLink, NO_CONDUCTOR};
use crate::geometry::lines::LineSets;

/// Per-node data the walk reads.
pub(super) struct Nodes<'a> {
    /// Conductor per node.
    pub conductor: &'a [u16],
    /// Material per node.
    pub material: &'a [u16],
    /// Relative permittivity per material index.
    pub eps_of: &'a [f64],
}

/// One node line and what lies on it.
pub(super) struct Line<'a> {
    /// Node coordinates along the line.
    along: &'a [f64],
    /// Node k of the line is `base + k * stride`.
    base: usize,
    stride: usize,
    axis: Axis,
    /// Closed conductor intervals on the line, sorted by start: (start, end, conductor).
    conductors: Vec<(f64, f64, u16)>,
    /// Relative permittivity along the line, piecewise constant: (start, eps, on an
    /// interface), sorted by start, the first start being -inf. On an interface the line
    /// runs along a dielectric boundary and eps is the mean of the two sides weighted by the
    /// shares of the control-volume face on each side ([`Banks`]).
    profile: Vec<(f64, f64, bool)>,
}

/// How a node line's control-volume faces split between its two sides: the share of the
/// face on the lower side (smaller coordinate across the line) and on the upper side. Interior
/// lines take half of each neighbouring cell; the lines on the domain's sides have one side
/// only (share 0 on the other).
#[derive(Clone, Copy, Debug, PartialEq)]
pub(super) struct Banks {
    /// Share of the face below the line, in [0, 1].
    lower: f64,
    /// Share of the face above the line, in [0, 1].
    upper: f64,
}

impl Banks {
    /// For line `m` of `count`, `cell(k)` the width of the cell between lines k and k+1.
    pub(super) fn of(m: usize, count: usize, cell: impl Fn(usize) -> f64) -> Banks {
        if m == 0 {
            Banks {
                lower: 0.0,
                upper: 1.0,
            }
        } else if m + 1 == count {
            Banks {
                lower: 1.0,
                upper: 0.0,
            }
        } else {
            Banks::split(0.5 * cell(m - 1), 0.5 * cell(m))
        }
    }

    /// An interior line whose face has half-widths `lo` below and `up` above.
    pub(super) fn split(lo: f64, up: f64) -> Banks {
        Banks {
            lower: lo / (lo + up),
            upper: up / (lo + up),
        }
    }
}

/// A sorted list of closed intervals on a line.
type Section<'s> = &'s [[f64; 2]];

fn contains(set: Section, x: f64) -> bool {
    let k = set.partition_point(|iv| iv[1] < x);
    k < set.len() && set[k][0] <= x
}

impl<'a> Line<'a> {
    /// Line number `m` of the sections, nodes at `along`, node k at `base + k * stride`.
    #[allow(clippy::too_many_arguments)]
    pub(super) fn new<'s>(
        along: &'a [f64],
        m: usize,
        base: usize,
        stride: usize,
        axis: Axis,
        cond: impl Iterator<Item = &'s LineSets>,
        diel: impl Iterator<Item = &'s LineSets>,
        eps_of: &[f64],
        banks: Banks,
    ) -> Line<'a> {
        let mut conductors: Vec<(f64, f64, u16)> = Vec::new();
        for (k, s) in cond.enumerate() {
            conductors.extend(s.closed(m).iter().map(|iv| (iv[0], iv[1], k as u16)));
        }
        conductors.sort_by(|p, q| p.0.total_cmp(&q.0).then(p.2.cmp(&q.2)));
        let sides: Vec<(Section, Section)> = diel.map(|s| (s.lower(m), s.upper(m))).collect();
        let mut cuts: Vec<f64> = sides
            .iter()
            .flat_map(|(lo, up)| lo.iter().chain(up.iter()))
            .flat_map(|iv| [iv[0], iv[1]])
            .collect();
        cuts.sort_by(f64::total_cmp);
        cuts.dedup();
        let bg = eps_of[0];
        let mut profile = vec![(f64::NEG_INFINITY, bg, false)];
        for (w, &s) in cuts.iter().enumerate() {
            let piece = match cuts.get(w + 1) {
                None => (s, bg, false),
                Some(&e) => {
                    let mid = 0.5 * (s + e);
                    let (mut lo, mut up) = (bg, bg);
                    for (d, (l, u)) in sides.iter().enumerate() {
                        if contains(l, mid) {
                            lo = eps_of[d + 1];
                        }
                        if contains(u, mid) {
                            up = eps_of[d + 1];
                        }
                    }
                    // A line on a domain side runs along an interface only if the
                    // material inside the domain changes there.
                    if banks.lower == 0.0 {
                        lo = up;
                    } else if banks.upper == 0.0 {
                        up = lo;
                    }
                    if lo == up {
                        (s, lo, false)
                    } else {
                        // Each part of the face carries its own side's permittivity.
                        (s, banks.lower * lo + banks.upper * up, true)
                    }
                }
            };
            let prev = profile[profile.len() - 1];
            if (piece.1, piece.2) != (prev.1, prev.2) {
                profile.push(piece);
            }
        }
        Line {
            along,
            base,
            stride,
            axis,
            conductors,
            profile,
        }
    }

    /// `∑ length / eps` over the stretch [p, q] of the line.
    fn resistance(&self, p: f64, q: f64) -> f64 {
        let prof = &self.profile;
        let mut k = prof.partition_point(|x| x.0 <= p) - 1;
        let mut sum = 0.0;
        let mut pos = p;
        while k < prof.len() && prof[k].0 < q {
            let end = prof.get(k + 1).map_or(q, |n| n.0.min(q));
            sum += (end - pos) / prof[k].1;
            pos = end;
            k += 1;
        }
        sum
    }

    /// Harmonic-mean permittivity of the stretch [p, q], p < q; exactly the profile's value
    /// when the stretch lies in one piece.
    fn eps(&self, p: f64, q: f64) -> f64 {
        let prof = &self.profile;
        let k = prof.partition_point(|x| x.0 <= p) - 1;
        if prof.get(k + 1).is_none_or(|n| n.0 >= q) {
            return prof[k].1;
        }
        (q - p) / self.resistance(p, q)
    }

    /// The fraction along [u0, u1] of the one permittivity change inside it, when there is
    /// exactly one and the line runs along no interface there.
    fn single_change(&self, u0: f64, u1: f64) -> Option<f64> {
        let prof = &self.profile;
        let k = prof.partition_point(|x| x.0 <= u0) - 1;
        let next = prof.get(k + 1)?;
        let single = prof.get(k + 2).is_none_or(|n| n.0 >= u1);
        (next.0 < u1 && single && !prof[k].2 && !next.2).then(|| (next.0 - u0) / (u1 - u0))
    }

    /// Every cut edge of the line, in order. Only candidate edges are visited: those holding
    /// or touching a conductor interval end or a permittivity change (and their neighbours,
    /// against rounding), those along a stretch where the line runs on an interface, and
    /// `changes`, the edges whose end nodes differ in conductor or material.
    pub(super) fn cut_edges(&self, nodes: &Nodes, changes: &[u32]) -> Vec<CutEdge> {
        let n = self.along.len();
        if n < 2 || (self.conductors.is_empty() && self.profile.len() == 1 && changes.is_empty()) {
            return Vec::new();
        }
        let last = n - 2;
        // The edge holding coordinate u (clamped to the line).
        let edge_of = |u: f64| {
            self.along
                .partition_point(|&a| a <= u)
                .saturating_sub(1)
                .min(last)
        };
        let mut cand: Vec<usize> = changes.iter().map(|&j| j as usize).collect();
        let around = |u: f64, cand: &mut Vec<usize>| {
            let j = edge_of(u);
            cand.extend([j.saturating_sub(1), j, (j + 1).min(last)]);
        };
        for iv in &self.conductors {
            around(iv.0, &mut cand);
            around(iv.1, &mut cand);
        }
        let prof = &self.profile;
        for (k, piece) in prof.iter().enumerate().skip(1) {
            around(piece.0, &mut cand);
            if piece.2 {
                let end = prof.get(k + 1).map_or(f64::INFINITY, |p| p.0);
                cand.extend(edge_of(piece.0)..=edge_of(end));
            }
        }
        cand.sort_unstable();
        cand.dedup();
        let ints = &self.conductors;
        let mut out = Vec::new();
        for j in cand {
            let (u0, u1) = (self.along[j], self.along[j + 1]);
            let (pa, pb) = (
                self.base + j * self.stride,
                self.base + (j + 1) * self.stride,
            );
            let (ca, cb) = (nodes.conductor[pa], nodes.conductor[pb]);
            if ca != NO_CONDUCTOR && ca == cb {
                continue;
            }
            let ci = ints.partition_point(|iv| iv.1 < u0);
            if ca == NO_CONDUCTOR && cb == NO_CONDUCTOR {
                let pk = prof.partition_point(|x| x.0 <= u0) - 1;
                let crossed = ints[ci..]
                    .iter()
                    .take_while(|iv| iv.0 <= u1)
                    .any(|iv| iv.1 >= u0);
                let uniform = prof.get(pk + 1).is_none_or(|n| n.0 >= u1);
                let (ma, mb) = (nodes.material[pa], nodes.material[pb]);
                if !crossed && uniform && ma == mb && prof[pk].1 == nodes.eps_of[ma as usize] {
                    continue;
                }
            }
            out.push(self.cut(pa, u0, u1, ca, cb, ci));
        }
        out
    }

    /// The record of the edge [u0, u1] from node `pa`, conductor intervals from `ci` on.
    fn cut(&self, pa: usize, u0: f64, u1: f64, ca: u16, cb: u16, ci: usize) -> CutEdge {
        // Conductor blocks on the edge (merged where they touch), with the conductor met
        // first from below and last from above: (start, end, first, last).
        let mut blocks: Vec<(f64, f64, u16, u16)> = Vec::new();
        let mut add = |s: f64, e: f64, k: u16| match blocks.last_mut() {
            Some(b) if s <= b.1 => {
                if e > b.1 {
                    b.1 = e;
                    b.3 = k;
                }
            }
            _ => blocks.push((s, e, k, k)),
        };
        if ca != NO_CONDUCTOR {
            add(u0, u0, ca);
        }
        for &(s, e, k) in self.conductors[ci..]
            .iter()
            .take_while(|iv| iv.0 <= u1)
            .filter(|iv| iv.1 >= u0)
        {
            add(s.max(u0), e.min(u1), k);
        }
        if cb != NO_CONDUCTOR {
            add(u1, u1, cb);
        }
        let len = u1 - u0;
        let fraction = |d: f64| {
            if d >= len {
                1.0
            } else {
                (d / len).max(f64::MIN_POSITIVE)
            }
        };
        let mut rec = CutEdge {
            node: pa as u32,
            axis: self.axis,
            from_a: None,
            from_b: None,
            direct: None,
            interface: None,
        };
        if blocks.is_empty() {
            rec.interface = self.single_change(u0, u1);
            let h = HalfLink {
                theta: 1.0,
                eps: self.eps(u0, u1),
                ends_on: None,
            };
            rec.from_a = Some(h);
            rec.from_b = Some(h);
            return rec;
        }
        if ca == NO_CONDUCTOR {
            let b = blocks[0];
            rec.from_a = Some(HalfLink {
                theta: fraction(b.0 - u0),
                eps: self.eps(u0, b.0),
                ends_on: Some(b.2),
            });
        }
        if cb == NO_CONDUCTOR {
            let b = blocks[blocks.len() - 1];
            rec.from_b = Some(HalfLink {
                theta: fraction(u1 - b.1),
                eps: self.eps(b.1, u1),
                ends_on: Some(b.3),
            });
        }
        if ca != NO_CONDUCTOR && cb != NO_CONDUCTOR && ca != cb {
            let (mut free, mut res) = (0.0, 0.0);
            for w in blocks.windows(2) {
                if w[1].0 > w[0].1 {
                    free += w[1].0 - w[0].1;
                    res += self.resistance(w[0].1, w[1].0);
                }
            }
            // Conductors do not touch in a valid design, so there is free length; should
            // rounding leave none, the whole edge stands in for the gap.
            let (gap, eps) = if free > 0.0 {
                (fraction(free), free / res)
            } else {
                (1.0, self.eps(u0, u1))
            };
            rec.direct = Some(DirectLink {
                a: ca,
                b: cb,
                gap,
                eps,
            });
        }
        rec
    }
}
