//! The nodes a surface fit reads: those within its reach of the point, on the node lines
//! that [`thinned`] keeps along each axis (the line nearest to each mark half a cell apart,
//! and closer in one per halving of the distance), so that a fit on a graded lattice reads
//! about as many nodes as on a uniform one.
//!
//! Invariants: nodes come row by row upwards, each row left to right (the order the fit's
//! sums run in); where the lines of an axis lie at least a step apart every one of them is
//! kept, so a uniform lattice of square cells gives the nodes, and the fits, it always did.

use crate::design::Point;
use crate::grid::Grid;

/// Calls `f(node, position)` for every node within `radius` of `at` on the node lines that
/// [`thinned`] keeps with marks `step` apart (every line when `step` is 0), rows upwards,
/// each row's nodes left to right.
pub(super) fn for_nodes_near(
    g: &Grid,
    at: Point,
    radius: f64,
    step: f64,
    mut f: impl FnMut(usize, Point),
) {
    let Some(cols) = g.columns_within(at[0] - radius, at[0] + radius) else {
        return;
    };
    let Some(rows) = g.rows_within(at[1] - radius, at[1] + radius) else {
        return;
    };
    // The spacing of the lines at the point along each axis (the finer of the cells beside it).
    let fine = |d: &dyn Fn(usize) -> f64, k: usize| d(k).min(if k > 0 { d(k - 1) } else { d(k) });
    let fx = fine(&|i| g.dx(i), g.cell_x(at[0]));
    let fy = fine(&|j| g.dy(j), g.cell_y(at[1]));
    let cols = thinned(g.xs(), cols, at[0], step, fx);
    let rows = thinned(g.ys(), rows, at[1], step, fy);
    // The squared distance decides all but the nodes within rounding of the circle, which
    // `hypot` decides as it always has.
    let r2 = radius * radius;
    let (inside, outside) = (r2 * (1.0 - 1e-9), r2 * (1.0 + 1e-9));
    let careful = !(r2 > 1e-200 && r2.is_finite());
    for &j in &rows {
        let (y, dy) = (g.y(j), g.y(j) - at[1]);
        for &i in &cols {
            let x = [g.x(i), y];
            let dx = x[0] - at[0];
            let d2 = dx * dx + dy * dy;
            let near = if careful || (d2 > inside && d2 <= outside) {
                dx.hypot(dy) <= radius
            } else {
                d2 <= inside
            };
            if near {
                f(g.idx(i, j), x);
            }
        }
    }
}

/// Of the lines `at[range]` (increasing), in increasing order, the line nearest to each mark:
/// the marks `c + k step` (k whole) that span the range, and, closer in, the marks at
/// `c +- step / 2^m` (m >= 1) down to half the spacing `fine` of the lines at `c`. Every line
/// of the range when `step` is not positive.
///
/// A line whose neighbours both lie more than `step` away is always kept (its half-way
/// interval holds a mark), so where lines are no closer than `step` all are kept; where they
/// crowd closer, about one per `step` is, and near `c` one per halving of the distance: the
/// nodes of a fit then stand about as densely as on a uniform lattice whatever the grading,
/// the many closely spaced lines of a graded edge do not outweigh the rest of the fit's
/// reach, and a thin layer at the point keeps lines inside it.
fn thinned(
    at: &[f64],
    range: std::ops::RangeInclusive<usize>,
    c: f64,
    step: f64,
    fine: f64,
) -> Vec<usize> {
    let (lo, hi) = (*range.start(), *range.end());
    // A hair under `step`, so that lines exactly `step` apart keep marks strictly inside
    // their half-way intervals.
    let step = step * (1.0 - 1e-6);
    if step.is_nan() || step <= 0.0 || hi <= lo {
        return range.collect();
    }
    let first = ((at[lo] - c) / step).floor() as i64;
    let last = ((at[hi] - c) / step).ceil() as i64;
    let mut marks: Vec<f64> = (first..=last).map(|k| c + k as f64 * step).collect();
    let mut d = 0.5 * step;
    while d >= 0.5 * fine && marks.len() < 256 {
        marks.extend([c - d, c + d]);
        d *= 0.5;
    }
    marks.sort_by(f64::total_cmp);
    let mut out = Vec::with_capacity(marks.len().min(hi - lo + 1));
    let mut i = lo;
    for m in marks {
        while i < hi && (at[i + 1] - m).abs() <= (at[i] - m).abs() {
            i += 1;
        }
        if out.last() != Some(&i) {
            out.push(i);
        }
    }
    out
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn thinning_keeps_lines_at_least_a_step_apart_and_about_one_per_step_where_they_crowd() {
        // Lines 0.1 apart are all kept at a step of 0.05 and of 0.1 (the same nodes as
        // without thinning on a uniform lattice whose cell is the fit's).
        let even: Vec<f64> = (0..41).map(|k| 0.1 * k as f64).collect();
        for step in [0.05, 0.1] {
            assert_eq!(
                thinned(&even, 5..=35, 2.03, step, 0.1),
                (5..=35).collect::<Vec<_>>()
            );
        }
        // Lines graded geometrically (ratio 1.2) away from 1.0 on both sides, finest 1e-4:
        // at a step of 0.1, about one line per 0.1 far from the point and one per halving of
        // the distance near it, the lines at and next to the point among them.
        let mut at = vec![1.0];
        let (mut d, mut x) = (1e-4, 0.0);
        while x < 1.0 {
            x += d;
            d *= 1.2;
            at.push(1.0 + x);
            at.insert(0, 1.0 - x);
        }
        let c = at.len() / 2;
        let kept = thinned(&at, 0..=at.len() - 1, 1.0, 0.1, 1e-4);
        assert!(kept.windows(2).all(|w| w[0] < w[1]), "{kept:?}");
        assert!(kept.contains(&c) && kept.contains(&(c - 1)) && kept.contains(&(c + 1)));
        // 21 marks a step apart and 2 per halving from 0.05 down to 5e-5 (11 halvings).
        assert!(kept.len() <= 21 + 22, "{} of {}", kept.len(), at.len());
        // No gap wider than a step plus the widest cell crossed.
        for w in kept.windows(2) {
            assert!(at[w[1]] - at[w[0]] <= 0.1 + 0.2, "{w:?}");
        }
        // A thin layer at the point keeps lines inside it: 4 cells of 2.5e-6 below 1.0.
        let layer = [
            0.0,
            0.5,
            1.0 - 1e-5,
            1.0 - 7.5e-6,
            1.0 - 5e-6,
            1.0 - 2.5e-6,
            1.0,
            1.5,
        ];
        let kept = thinned(&layer, 0..=7, 1.0, 0.05, 2.5e-6);
        assert!(
            kept.iter().filter(|&&k| (2..6).contains(&k)).count() >= 3,
            "{kept:?}"
        );
        // No step: every line.
        assert_eq!(
            thinned(&layer, 1..=6, 1.0, 0.0, 2.5e-6),
            (1..=6).collect::<Vec<_>>()
        );
    }
}
