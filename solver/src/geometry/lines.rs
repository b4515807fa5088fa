//! The closed sets an outline cuts out of each line of a whole family of parallel lines at
//! once: what the rasteriser classifies nodes and cuts edges with.
//!
//! Lines are given as a sorted slice of x values (vertical lines); horizontal lines are
//! handled by transposing the outline. The crossings come from [`hits`], whose rules
//! (`HIT_A`, `HIT_B`, `HIT_ON`) count each side of a line apart: each rule alone gives an
//! even number of crossings per closed loop, whose sorted pairs are the cross-section of the
//! filled region on one side of the line; the union of both sides and the pieces on the line
//! is the closed cross-section (the region with its boundary).

use super::crossings::{hits, Hit, HIT_A, HIT_B, HIT_ON};
use super::outline::Outline;

/// Sorts closed intervals and merges those that overlap or touch.
pub(crate) fn merge(v: &mut Vec<[f64; 2]>) {
    v.sort_by(|p, q| p[0].total_cmp(&q[0]).then(p[1].total_cmp(&q[1])));
    let mut w = 0;
    for k in 0..v.len() {
        if w > 0 && v[k][0] <= v[w - 1][1] {
            v[w - 1][1] = v[w - 1][1].max(v[k][1]);
        } else {
            v[w] = v[k];
            w += 1;
        }
    }
    v.truncate(w);
}

/// Sorted intervals in compressed rows: line m (relative to `first`) owns
/// `data[off[m]..off[m + 1]]`.
#[derive(Clone, Debug, Default)]
struct Rows {
    off: Vec<u32>,
    data: Vec<[f64; 2]>,
}

impl Rows {
    fn push_line(&mut self, v: &[[f64; 2]]) {
        if self.off.is_empty() {
            self.off.push(0);
        }
        self.data.extend_from_slice(v);
        self.off.push(self.data.len() as u32);
    }

    fn get(&self, m: usize) -> &[[f64; 2]] {
        if m + 1 < self.off.len() {
            &self.data[self.off[m] as usize..self.off[m + 1] as usize]
        } else {
            &[]
        }
    }
}

/// The cross-sections of one outline along a family of parallel lines.
#[derive(Clone, Debug, Default)]
pub(crate) struct LineSets {
    /// Index of the first line with data; lines before and after it meet nothing.
    first: usize,
    /// The closed cross-section (region and boundary; for an open outline its points).
    closed: Rows,
    /// The cross-section just below the line (x = c - 0), when built with sides.
    lower: Rows,
    /// The cross-section just above the line (x = c + 0), when built with sides.
    upper: Rows,
}

impl LineSets {
    /// Cross-sections of `outline` along the vertical lines x = `lines[m]`; with `sides`,
    /// also the one-sided sections (closed outlines only).
    pub(crate) fn build(outline: &Outline, lines: &[f64], sides: bool) -> LineSets {
        let hits = hits(outline.pieces(), lines);
        let mut s = LineSets::default();
        let Some(h0) = hits.first() else { return s };
        s.first = h0.line as usize;
        let mut k = 0;
        let (mut lo, mut up, mut cl) = (Vec::new(), Vec::new(), Vec::new());
        for m in s.first..=hits.last().map_or(0, |h| h.line as usize) {
            let start = k;
            while k < hits.len() && hits[k].line as usize == m {
                k += 1;
            }
            let g = &hits[start..k];
            cl.clear();
            if outline.open {
                cl.extend(g.iter().map(|h| [h.at, h.to]));
            } else {
                lo.clear();
                up.clear();
                pair(g, HIT_A, &mut lo);
                pair(g, HIT_B, &mut up);
                cl.extend_from_slice(&lo);
                cl.extend_from_slice(&up);
                cl.extend(
                    g.iter()
                        .filter(|h| h.flags & HIT_ON != 0)
                        .map(|h| [h.at, h.to]),
                );
                if sides {
                    s.lower.push_line(&lo);
                    s.upper.push_line(&up);
                }
            }
            merge(&mut cl);
            s.closed.push_line(&cl);
        }
        s
    }

    /// The closed cross-sections of the union of several regions (the pieces of one
    /// conductor): on each line the union of their closed intervals, overlapping or touching
    /// ones merged. Closed sections only: the one-sided ones are left empty.
    pub(crate) fn union(parts: &[LineSets]) -> LineSets {
        let spans: Vec<(usize, usize)> = parts
            .iter()
            .map(LineSets::span)
            .filter(|s| s.0 < s.1)
            .collect();
        let mut s = LineSets::default();
        let (Some(lo), Some(hi)) = (
            spans.iter().map(|s| s.0).min(),
            spans.iter().map(|s| s.1).max(),
        ) else {
            return s;
        };
        s.first = lo;
        let mut cl = Vec::new();
        for m in lo..hi {
            cl.clear();
            parts.iter().for_each(|p| cl.extend_from_slice(p.closed(m)));
            merge(&mut cl);
            s.closed.push_line(&cl);
        }
        s
    }

    /// Index of the first line that meets the outline, and one past the last.
    pub(crate) fn span(&self) -> (usize, usize) {
        (
            self.first,
            self.first + self.closed.off.len().saturating_sub(1),
        )
    }

    /// The closed cross-section on line m: sorted, disjoint closed intervals.
    pub(crate) fn closed(&self, m: usize) -> &[[f64; 2]] {
        m.checked_sub(self.first)
            .map_or(&[], |r| self.closed.get(r))
    }

    /// The cross-section just below line m (sorted, from the half-open rule `HIT_A`).
    pub(crate) fn lower(&self, m: usize) -> &[[f64; 2]] {
        m.checked_sub(self.first).map_or(&[], |r| self.lower.get(r))
    }

    /// The cross-section just above line m.
    pub(crate) fn upper(&self, m: usize) -> &[[f64; 2]] {
        m.checked_sub(self.first).map_or(&[], |r| self.upper.get(r))
    }
}

/// Pairs the sorted crossings carrying `flag` into intervals (even-odd rule). The count is
/// even for closed loops; an odd last crossing (never produced by a closed outline) is
/// dropped.
fn pair(g: &[Hit], flag: u8, out: &mut Vec<[f64; 2]>) {
    let mut open: Option<f64> = None;
    for h in g.iter().filter(|h| h.flags & flag != 0) {
        match open.take() {
            None => open = Some(h.at),
            Some(s) => out.push([s, h.at]),
        }
    }
    debug_assert!(
        open.is_none(),
        "odd number of crossings on a closed outline"
    );
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::design::Shape;
    use crate::geometry::outline;

    #[test]
    fn rect_on_grid_lines_gives_closed_sections() {
        let o = outline(&Shape::Rect {
            x: [1.0, 2.0],
            y: [0.5, 1.5],
            round: 0.0,
        })
        .unwrap();
        let lines = [0.5, 1.0, 1.5, 2.0, 2.5];
        let s = LineSets::build(&o, &lines, true);
        assert_eq!(s.span(), (1, 4));
        assert!(s.closed(0).is_empty() && s.closed(4).is_empty());
        for m in 1..4 {
            assert_eq!(s.closed(m), &[[0.5, 1.5]]);
        }
        // The left side has the region only above x = 1, the right side only below x = 2.
        assert!(s.lower(1).is_empty() && s.upper(1) == [[0.5, 1.5]]);
        assert!(s.lower(3) == [[0.5, 1.5]] && s.upper(3).is_empty());
    }

    #[test]
    fn circle_tangent_line_gives_a_point() {
        let o = outline(&Shape::Circle {
            center: [0.0, 0.0],
            radius: 1.0,
        })
        .unwrap();
        let s = LineSets::build(&o, &[-1.0, 0.0, 1.0], false);
        assert_eq!(s.closed(0), &[[0.0, 0.0]]);
        assert_eq!(s.closed(1), &[[-1.0, 1.0]]);
        assert_eq!(s.closed(2), &[[0.0, 0.0]]);
    }

    #[test]
    fn polyline_sections_are_points_and_segments_on_the_line() {
        let o = outline(&Shape::Polyline(vec![
            [0.0, 0.0],
            [1.0, 1.0],
            [1.0, 2.0],
            [2.0, 2.0],
        ]))
        .unwrap();
        let s = LineSets::build(&o, &[0.0, 0.5, 1.0, 2.0], false);
        assert_eq!(s.closed(0), &[[0.0, 0.0]]);
        assert_eq!(s.closed(1), &[[0.5, 0.5]]);
        assert_eq!(s.closed(2), &[[1.0, 2.0]]);
        assert_eq!(s.closed(3), &[[2.0, 2.0]]);
    }

    #[test]
    fn union_of_touching_and_overlapping_pieces_is_the_merged_region() {
        let rect = |x: [f64; 2], y: [f64; 2]| outline(&Shape::Rect { x, y, round: 0.0 }).unwrap();
        let lines = [0.0, 1.0, 2.0, 3.0, 4.0];
        // A pour [0, 4] x [0, 1] with a post [1, 2] x [1, 3] standing on it, and a post
        // [3, 4] x [0.5, 2] sunk into it: the union equals the one outline of them all.
        let parts: Vec<LineSets> = [
            rect([0.0, 4.0], [0.0, 1.0]),
            rect([1.0, 2.0], [1.0, 3.0]),
            rect([3.0, 4.0], [0.5, 2.0]),
        ]
        .iter()
        .map(|o| LineSets::build(o, &lines, false))
        .collect();
        let whole = outline(&Shape::Polygon {
            outer: vec![
                [0.0, 0.0],
                [4.0, 0.0],
                [4.0, 2.0],
                [3.0, 2.0],
                [3.0, 1.0],
                [2.0, 1.0],
                [2.0, 3.0],
                [1.0, 3.0],
                [1.0, 1.0],
                [0.0, 1.0],
            ],
            holes: vec![],
            round: 0.0,
            corners: None,
        })
        .unwrap();
        let one = LineSets::build(&whole, &lines, false);
        let u = LineSets::union(&parts);
        assert_eq!(u.span(), one.span());
        for m in 0..lines.len() {
            assert_eq!(u.closed(m), one.closed(m), "line {m}");
        }
    }

    #[test]
    fn merge_joins_touching_intervals() {
        let mut v = vec![[3.0, 4.0], [0.0, 1.0], [1.0, 2.0], [3.5, 3.6]];
        merge(&mut v);
        assert_eq!(v, vec![[0.0, 2.0], [3.0, 4.0]]);
    }
}
