//! Equipotential (iso-value) lines at round levels, traced on the pixel samples by marching
//! squares ([`super::marching`]).
//!
//! Invariants: levels lie strictly inside the value range (a level equal to an electrode's
//! potential would only trace its outline); lines are returned in plot pixel coordinates
//! (origin at the plot's top-left corner); pieces that run along the raster's outer frame, an
//! artefact of the padding the tracer adds, are removed. Samples without a value are filled
//! from their neighbours before tracing so no spurious line rings them; the caller masks those
//! pixels when drawing.

use rayon::prelude::*;

use super::axes::{multiples, nice_step};
use super::canvas::P;
use super::marching::Raster;
use super::sample::Samples;

/// Round levels strictly inside (lo, hi): 1-2-5 steps giving about `target` lines.
pub fn linear_levels(lo: f64, hi: f64, target: usize) -> (f64, Vec<f64>) {
    if hi.partial_cmp(&lo) != Some(std::cmp::Ordering::Greater) {
        return (1.0, Vec::new());
    }
    let step = nice_step((hi - lo) / target.max(1) as f64);
    (step, strictly_inside(multiples(lo, hi, step), lo, hi))
}

/// Levels at a fixed `step` strictly inside (lo, hi); none for a non-positive step or when
/// they would be more than `cap`.
pub fn stepped_levels(lo: f64, hi: f64, step: f64, cap: usize) -> Vec<f64> {
    if !(step > 0.0 && step.is_finite() && hi > lo) || (hi - lo) / step > cap as f64 {
        return Vec::new();
    }
    strictly_inside(multiples(lo, hi, step), lo, hi)
}

/// Levels for a logarithmic scale over (lo, hi), lo > 0: 1, 2 and 5 per decade when hi / lo is at
/// most a thousand, otherwise whole decades.
pub fn log_levels(lo: f64, hi: f64) -> Vec<f64> {
    if !(lo > 0.0 && hi > lo) {
        return Vec::new();
    }
    let (d0, d1) = (lo.log10().floor() as i32, hi.log10().ceil() as i32);
    let mantissas: &[f64] = if (hi / lo).log10() <= 3.0 + 1e-9 {
        &[1.0, 2.0, 5.0]
    } else {
        &[1.0]
    };
    let mut out = Vec::new();
    for d in d0..=d1 {
        for &m in mantissas {
            out.push(m * 10f64.powi(d));
        }
    }
    strictly_inside(out, lo, hi)
}

fn strictly_inside(v: Vec<f64>, lo: f64, hi: f64) -> Vec<f64> {
    let slack = 1e-6 * (hi - lo);
    v.into_iter()
        .filter(|&x| x > lo + slack && x < hi - slack)
        .collect()
}

/// One level's lines: polylines in plot pixel coordinates.
#[derive(Clone, Debug, PartialEq)]
pub struct Isoline {
    /// The value on the line.
    pub level: f64,
    /// Open or closed polylines (a closed one repeats its first point).
    pub pieces: Vec<Vec<P>>,
}

/// Traces every level on the samples.
pub fn trace(s: &Samples, levels: &[f64]) -> Vec<Isoline> {
    if levels.is_empty() || s.w < 2 || s.h < 2 {
        return Vec::new();
    }
    let Some(filled) = fill_missing(s) else {
        return Vec::new();
    };
    let raster = Raster::new(&filled, s.w, s.h);
    let (w, h) = (s.w as f64, s.h as f64);
    // Levels are independent; collecting in order keeps the result deterministic.
    levels
        .par_iter()
        .map(|&level| {
            let mut pieces = Vec::new();
            for ring in raster.rings(level) {
                split_off_frame(&ring, w, h, &mut pieces);
            }
            Isoline { level, pieces }
        })
        .collect()
}

/// Keeps the runs of a traced ring that stay off the frame of a `w` x `h` raster (the tracer
/// closes rings along the frame, half a pixel outside the outermost sample centres); runs of
/// fewer than two points are dropped.
fn split_off_frame(pts: &[P], w: f64, h: f64, out: &mut Vec<Vec<P>>) {
    let on_frame = |p: &P| p[0] <= 1e-9 || p[1] <= 1e-9 || p[0] >= w - 1e-9 || p[1] >= h - 1e-9;
    let mut cur: Vec<P> = Vec::new();
    for p in pts {
        if on_frame(p) {
            if cur.len() >= 2 {
                out.push(std::mem::take(&mut cur));
            }
            cur.clear();
        } else {
            cur.push(*p);
        }
    }
    if cur.len() >= 2 {
        out.push(cur);
    }
}

/// The samples with every NaN replaced: three rounds of averaging the valued 8-neighbours grow
/// the field smoothly into the holes, the rest take the smallest value. `None` if no sample
/// has a value.
pub fn fill_missing(s: &Samples) -> Option<Vec<f64>> {
    let mut v = s.v.clone();
    let lo = v
        .iter()
        .copied()
        .filter(|x| x.is_finite())
        .min_by(|a, b| a.total_cmp(b))?;
    let (w, h) = (s.w, s.h);
    let mut holes: Vec<usize> = (0..v.len()).filter(|&k| !v[k].is_finite()).collect();
    for _ in 0..3 {
        if holes.is_empty() {
            break;
        }
        let mut updates = Vec::new();
        let mut rest = Vec::new();
        for &k in &holes {
            let (x, y) = ((k % w) as i64, (k / w) as i64);
            let (mut sum, mut n) = (0.0, 0);
            for dy in -1..=1 {
                for dx in -1..=1 {
                    let (xx, yy) = (x + dx, y + dy);
                    if (dx, dy) != (0, 0) && xx >= 0 && yy >= 0 && xx < w as i64 && yy < h as i64 {
                        let q = v[xx as usize + yy as usize * w];
                        if q.is_finite() {
                            sum += q;
                            n += 1;
                        }
                    }
                }
            }
            if n > 0 {
                updates.push((k, sum / n as f64));
            } else {
                rest.push(k);
            }
        }
        for (k, val) in updates {
            v[k] = val;
        }
        holes = rest;
    }
    for k in holes {
        v[k] = lo;
    }
    Some(v)
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn levels_are_round_and_strictly_inside() {
        let (step, l) = linear_levels(0.0, 1.0, 10);
        assert!((step - 0.1).abs() < 1e-15);
        assert_eq!(l.len(), 9);
        assert!((l[0] - 0.1).abs() < 1e-12 && (l[8] - 0.9).abs() < 1e-12);
        let (_, l) = linear_levels(-3.7, 12.2, 8);
        assert!(l.iter().all(|&x| x > -3.7 && x < 12.2) && l.len() >= 4 && l.len() <= 10);
        assert_eq!(log_levels(1.0e3, 1.0e5), vec![2e3, 5e3, 1e4, 2e4, 5e4]);
        assert_eq!(log_levels(1.0, 1.0e6).len(), 5);
        // Three decades from anywhere (a margin map's range) take 1-2-5 steps.
        assert_eq!(
            log_levels(1.27, 1270.0),
            vec![2.0, 5.0, 10.0, 20.0, 50.0, 100.0, 200.0, 500.0, 1000.0]
        );
        assert!(stepped_levels(0.0, 1.0, 1e-9, 1000).is_empty());
    }

    #[test]
    fn a_ramp_gives_straight_vertical_lines_at_the_right_place() {
        // v = x / w on a 40 x 20 raster: the 0.5 line sits at pixel x = 20 (between centres
        // 19.5 and 20.5), and no piece runs along the frame.
        let (w, h) = (40, 20);
        let v = (0..w * h)
            .map(|k| ((k % w) as f64 + 0.5) / w as f64)
            .collect();
        let s = Samples { w, h, v };
        let lines = trace(&s, &[0.5]);
        assert_eq!(lines.len(), 1);
        let pts: Vec<P> = lines[0].pieces.iter().flatten().copied().collect();
        assert!(!pts.is_empty());
        for p in &pts {
            assert!((p[0] - 20.0).abs() < 1e-9, "{p:?}");
        }
        let ys: Vec<f64> = pts.iter().map(|p| p[1]).collect();
        let (y0, y1) = ys
            .iter()
            .fold((f64::MAX, f64::MIN), |(a, b), &y| (a.min(y), b.max(y)));
        assert!(
            y0 <= 0.5 + 1e-9 && y1 >= h as f64 - 0.5 - 1e-9,
            "the line spans the raster: {y0}..{y1}"
        );
    }

    #[test]
    fn holes_do_not_grow_lines_along_their_border() {
        // A ramp v = x / w with a 10 x 10 hole well right of the 0.25 line (x = 7.5): the filled
        // hole may carry lines only deep inside (where the caller masks them), never along its
        // border or elsewhere.
        let (w, h) = (30, 30);
        let mut v: Vec<f64> = (0..w * h)
            .map(|k| ((k % w) as f64 + 0.5) / w as f64)
            .collect();
        for y in 10..20 {
            for x in 10..20 {
                v[x + y * w] = f64::NAN;
            }
        }
        let s = Samples { w, h, v };
        let lines = trace(&s, &[0.25]);
        let pts: Vec<P> = lines[0].pieces.iter().flatten().copied().collect();
        assert!(pts.iter().any(|p| (p[0] - 7.5).abs() < 1e-9));
        for p in &pts {
            let deep = (12.0..=18.0).contains(&p[0]) && (12.0..=18.0).contains(&p[1]);
            assert!((p[0] - 7.5).abs() < 1e-9 || deep, "stray point {p:?}");
        }
    }
}
