//! The samples whose fields a reading near given points can come from, so that a study
//! evaluates the fits of only those where nothing else needs the rest (the coarse study of an
//! error estimate, whose side and interface readings serve only the hot spots' estimates).
//!
//! Invariants: a reading of [`crate::surface_results`] within a point's distance (a sample, or
//! a maximum refined between a sample and its neighbour) depends only on samples marked here;
//! samples are ordered by curve as [`super::sample`] makes them.

use super::SurfaceSample;
use crate::design::Point;

/// Which samples a reading within `points` (position, distance; m) can come from: a sample
/// within the distance plus the distance to its farther neighbour along its curve (a
/// maximum between two samples lies within half that of one of them), and the neighbours of
/// such a sample (which decide whether it is a maximum and refine it). Neighbours are the
/// next and previous samples of the same curve, the first and last of a whole loop too.
pub fn near_readings(samples: &[SurfaceSample], points: &[(Point, f64)]) -> Vec<bool> {
    let n = samples.len();
    // The first and last index of each sample's curve (a curve's samples are consecutive).
    let (mut first, mut last) = (vec![0; n], vec![0; n]);
    let mut start = 0;
    while start < n {
        let curve = samples[start].curve;
        let end = start + samples[start..].partition_point(|s| s.curve == curve);
        first[start..end].fill(start);
        last[start..end].fill(end - 1);
        start = end;
    }
    let neighbours = |i: usize| -> [Option<usize>; 2] {
        let (first, last) = (first[i], last[i]);
        let whole = samples[i].whole_loop && last > first;
        let prev = if i > first {
            Some(i - 1)
        } else {
            whole.then_some(last)
        };
        let next = if i < last {
            Some(i + 1)
        } else {
            whole.then_some(first)
        };
        [prev, next]
    };
    let dist = |a: &SurfaceSample, p: Point| (a.x - p[0]).hypot(a.y - p[1]);
    let mut out = vec![false; n];
    for i in 0..n {
        let reach = neighbours(i)
            .into_iter()
            .flatten()
            .map(|j| dist(&samples[i], [samples[j].x, samples[j].y]))
            .fold(0.0, f64::max);
        let core = points
            .iter()
            .any(|&(p, r)| dist(&samples[i], p) <= r * (1.0 + 1e-9) + reach);
        if core {
            out[i] = true;
            for j in neighbours(i).into_iter().flatten() {
                out[j] = true;
            }
        }
    }
    out
}
