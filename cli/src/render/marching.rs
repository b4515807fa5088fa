//! Marching squares on a sample raster: the rings along which the samples cross a level,
//! stitched from the cells' segments and placed between samples by linear interpolation.
//!
//! The rings are those of the `contour` crate's `ContourBuilder::lines` with smoothing (its
//! grid padded by a frame of samples below every level, cells visited row by row, segments
//! joined end to start, a ring emitted when it closes, points moved along their cell edge to
//! where the interpolated samples equal the level), point for point and in the same order, so
//! the labels placed on them and every pixel drawn from them stay the same. What differs is
//! the work: the minimum and maximum of each block of [`BLOCK`] cells in a row are found once
//! for all levels, and a level visits only the blocks its value falls within (a cell whose
//! four samples lie on one side of the level carries no segment), so the cost per level is
//! about the raster's height times its width over [`BLOCK`], plus the cells the lines cross.
//!
//! Invariants: a sample counts as inside a level's ring when it is at least the level (NaN
//! never); coordinates are raster pixels with sample (i, j) at (i + 0.5, j + 0.5); a ring
//! repeats its first point at its end.

use std::collections::HashMap;

use super::canvas::P;

/// Cells per block of a row whose extremes are kept.
const BLOCK: usize = 16;

/// The segments of each cell case (bit 0: lower-left sample at or above the level, 1:
/// lower-right, 2: upper-right, 3: upper-left; "lower" is the next row), as offsets from the
/// cell's corner, in the order they are stitched.
const CASES: [&[[[f64; 2]; 2]]; 16] = [
    &[],
    &[[[1.0, 1.5], [0.5, 1.0]]],
    &[[[1.5, 1.0], [1.0, 1.5]]],
    &[[[1.5, 1.0], [0.5, 1.0]]],
    &[[[1.0, 0.5], [1.5, 1.0]]],
    &[[[1.0, 1.5], [0.5, 1.0]], [[1.0, 0.5], [1.5, 1.0]]],
    &[[[1.0, 0.5], [1.0, 1.5]]],
    &[[[1.0, 0.5], [0.5, 1.0]]],
    &[[[0.5, 1.0], [1.0, 0.5]]],
    &[[[1.0, 1.5], [1.0, 0.5]]],
    &[[[0.5, 1.0], [1.0, 0.5]], [[1.5, 1.0], [1.0, 1.5]]],
    &[[[1.5, 1.0], [1.0, 0.5]]],
    &[[[0.5, 1.0], [1.5, 1.0]]],
    &[[[1.0, 1.5], [1.5, 1.0]]],
    &[[[0.5, 1.0], [1.0, 1.5]]],
    &[],
];

/// A `w` x `h` raster of samples (row-major, row 0 first) with the extremes of its blocks.
pub struct Raster<'a> {
    w: usize,
    h: usize,
    v: &'a [f64],
    /// Per block (row of cells y in 0..h-1, block b): the least sample with NaN as -inf, and
    /// the largest sample that is not NaN (-inf when none).
    blocks: Vec<[f64; 2]>,
    per_row: usize,
}

impl<'a> Raster<'a> {
    /// The raster of `v` (`w` x `h`, both at least 2).
    pub fn new(v: &'a [f64], w: usize, h: usize) -> Raster<'a> {
        assert!(w >= 2 && h >= 2 && v.len() == w * h, "a w x h raster");
        let per_row = (w - 1).div_ceil(BLOCK);
        // The extremes of each row's blocks (samples x0..=x1), then of each pair of rows.
        let row_blocks = |row: &[f64]| -> Vec<[f64; 2]> {
            (0..per_row)
                .map(|b| {
                    let (x0, x1) = (b * BLOCK, ((b + 1) * BLOCK).min(w - 1));
                    let (mut lo, mut hi, mut nan) = (f64::INFINITY, f64::NEG_INFINITY, false);
                    for &s in &row[x0..=x1] {
                        nan |= s.is_nan();
                        lo = if s < lo { s } else { lo };
                        hi = if s > hi { s } else { hi };
                    }
                    [if nan { f64::NEG_INFINITY } else { lo }, hi]
                })
                .collect()
        };
        let rows: Vec<Vec<[f64; 2]>> = v.chunks_exact(w).map(row_blocks).collect();
        let blocks = rows
            .windows(2)
            .flat_map(|p| {
                p[0].iter()
                    .zip(&p[1])
                    .map(|(a, b)| [a[0].min(b[0]), a[1].max(b[1])])
            })
            .collect();
        Raster {
            w,
            h,
            v,
            blocks,
            per_row,
        }
    }

    /// Whether sample (x, y) is at least `level`; samples off the raster are not.
    fn at_least(&self, x: i64, y: i64, level: f64) -> usize {
        let inside = x >= 0 && y >= 0 && (x as usize) < self.w && (y as usize) < self.h;
        usize::from(inside && self.v[y as usize * self.w + x as usize] >= level)
    }

    /// The case of cell (x, y), whose corners are samples x..=x+1 of rows y..=y+1.
    fn case(&self, x: i64, y: i64, level: f64) -> usize {
        self.at_least(x, y + 1, level)
            | self.at_least(x + 1, y + 1, level) << 1
            | self.at_least(x + 1, y, level) << 2
            | self.at_least(x, y, level) << 3
    }

    /// The rings of `level`, interpolated between samples.
    pub fn rings(&self, level: f64) -> Vec<Vec<P>> {
        let (w, h) = (self.w as i64, self.h as i64);
        let mut st = Stitcher::default();
        let mut visit = |x: i64, y: i64| {
            for seg in CASES[self.case(x, y, level)] {
                let at = |o: [f64; 2]| [o[0] + x as f64, o[1] + y as f64];
                st.add(at(seg[0]), at(seg[1]));
            }
        };
        for y in -1..h {
            if y < 0 || y == h - 1 {
                (-1..w).for_each(|x| visit(x, y));
                continue;
            }
            visit(-1, y);
            let row = &self.blocks[y as usize * self.per_row..][..self.per_row];
            for (b, &[lo, hi]) in row.iter().enumerate() {
                // All four corners below the level, or all at or above it: no segment.
                if hi < level || lo >= level {
                    continue;
                }
                let x0 = (b * BLOCK) as i64;
                (x0..(x0 + BLOCK as i64).min(w - 1)).for_each(|x| visit(x, y));
            }
            visit(w - 1, y);
        }
        let mut rings = st.rings;
        for r in &mut rings {
            self.interpolate(r, level);
        }
        rings
    }

    /// Moves each point from its cell edge's middle to where the samples either side of it,
    /// interpolated linearly, equal `level`.
    fn interpolate(&self, ring: &mut [P], level: f64) {
        let (w, h, v) = (self.w, self.h, self.v);
        for p in ring {
            let [x, y] = *p;
            // The crate's rule, kept exactly (points on the frame stay where they are).
            let (xt, yt) = (x.trunc() as usize, y.trunc() as usize);
            let ix = yt * w + xt;
            if ix >= v.len() {
                continue;
            }
            let v1 = v[ix];
            if x > 0.0 && x < w as f64 && (xt as f64 - x).abs() < f64::EPSILON {
                let v0 = v[yt * w + xt - 1];
                p[0] = x + (level - v0) / (v1 - v0) - 0.5;
            }
            if y > 0.0 && y < h as f64 && (yt as f64 - y).abs() < f64::EPSILON {
                let v0 = v[(yt - 1) * w + xt];
                p[1] = y + (level - v0) / (v1 - v0) - 0.5;
            }
        }
    }
}

/// Joins segments into rings: a segment extends the fragment that ends where it starts or
/// starts where it ends (joining two fragments when both exist); a fragment whose ends meet
/// is a ring.
#[derive(Default)]
struct Stitcher {
    /// Open fragments (None once joined or closed).
    frags: Vec<Option<Fragment>>,
    by_start: HashMap<u64, usize>,
    by_end: HashMap<u64, usize>,
    rings: Vec<Vec<P>>,
}

struct Fragment {
    start: u64,
    end: u64,
    points: std::collections::VecDeque<P>,
}

/// A point's key: its coordinates are halves from -0.5 up, so twice them plus one are small
/// whole numbers.
fn key(p: P) -> u64 {
    let k = |c: f64| (2.0 * c + 1.0) as u64;
    k(p[0]) | k(p[1]) << 32
}

impl Stitcher {
    fn open(&mut self, f: Fragment) -> usize {
        let ix = self.frags.len();
        self.by_start.insert(f.start, ix);
        self.by_end.insert(f.end, ix);
        self.frags.push(Some(f));
        ix
    }

    fn take(&mut self, ix: usize) -> Fragment {
        self.frags[ix].take().expect("an open fragment")
    }

    fn add(&mut self, start: P, end: P) {
        let (s, e) = (key(start), key(end));
        if let Some(f_ix) = self.by_end.remove(&s) {
            if let Some(g_ix) = self.by_start.remove(&e) {
                let mut f = self.take(f_ix);
                if f_ix == g_ix {
                    f.points.push_back(end);
                    self.rings.push(f.points.into());
                } else {
                    let g = self.take(g_ix);
                    f.points.extend(g.points);
                    self.open(Fragment {
                        start: f.start,
                        end: g.end,
                        points: f.points,
                    });
                }
            } else {
                let f = self.frags[f_ix].as_mut().expect("an open fragment");
                f.points.push_back(end);
                f.end = e;
                self.by_end.insert(e, f_ix);
            }
        } else if let Some(f_ix) = self.by_start.remove(&e) {
            let f = self.frags[f_ix].as_mut().expect("an open fragment");
            f.points.push_front(start);
            f.start = s;
            self.by_start.insert(s, f_ix);
        } else {
            self.open(Fragment {
                start: s,
                end: e,
                points: [start, end].into(),
            });
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use contour::ContourBuilder;

    /// Seeded uniform numbers in [0, 1) (a 64-bit linear congruential generator, Knuth's
    /// MMIX constants; common practice).
    fn uniform(seed: u64) -> impl FnMut() -> f64 {
        let mut s = seed;
        move || {
            s = s
                .wrapping_mul(6364136223846793005)
                .wrapping_add(1442695040888963407);
            (s >> 11) as f64 / (1u64 << 53) as f64
        }
    }

    /// The crate's rings of `level`, as points.
    fn crate_rings(v: &[f64], w: usize, h: usize, level: f64) -> Vec<Vec<P>> {
        let lines = ContourBuilder::new(w, h, true)
            .lines(v, &[level])
            .expect("sizes match");
        lines[0]
            .geometry()
            .0
            .iter()
            .map(|ls| ls.0.iter().map(|c| [c.x, c.y]).collect())
            .collect()
    }

    fn same(a: &[Vec<P>], b: &[Vec<P>]) -> bool {
        a.len() == b.len()
            && a.iter().zip(b).all(|(r, s)| {
                r.len() == s.len()
                    && r.iter().zip(s).all(|(p, q)| {
                        p[0].to_bits() == q[0].to_bits() && p[1].to_bits() == q[1].to_bits()
                    })
            })
    }

    #[test]
    fn the_rings_are_the_contour_crates_point_for_point() {
        // Smooth bumps, plateaus at the levels themselves, values touching the frame, holes
        // (NaN) and rasters narrower than a block, in rings that open, close and join.
        let mut u = uniform(16);
        for case in 0..40 {
            let (w, h) = (2 + (u() * 70.0) as usize, 2 + (u() * 50.0) as usize);
            let bumps: Vec<[f64; 4]> = (0..1 + case % 5)
                .map(|_| [u() * w as f64, u() * h as f64, 2.0 + u() * 10.0, u() - 0.3])
                .collect();
            let mut v: Vec<f64> = (0..w * h)
                .map(|k| {
                    let (x, y) = ((k % w) as f64, (k / w) as f64);
                    bumps
                        .iter()
                        .map(|b| {
                            b[3] * (-((x - b[0]).powi(2) + (y - b[1]).powi(2)) / b[2].powi(2)).exp()
                        })
                        .sum::<f64>()
                })
                .collect();
            if case % 3 == 0 {
                // Plateaus: values rounded to tenths, so cells sit exactly on a level.
                v.iter_mut().for_each(|x| *x = (*x * 10.0).round() / 10.0);
            }
            if case % 4 == 1 {
                let k = (u() * (w * h) as f64) as usize;
                v[k] = f64::NAN;
            }
            let raster = Raster::new(&v, w, h);
            for level in [-0.2, -0.1, 0.0, 0.05, 0.1, 0.2, 0.3, 0.5, 0.7, u() - 0.3] {
                let ours = raster.rings(level);
                let theirs = crate_rings(&v, w, h, level);
                assert!(
                    same(&ours, &theirs),
                    "case {case} ({w} x {h}), level {level}"
                );
            }
        }
    }

    #[test]
    fn a_level_off_the_values_has_no_ring_and_one_within_them_closes() {
        let (w, h) = (40, 30);
        let v: Vec<f64> = (0..w * h)
            .map(|k| {
                let (x, y) = ((k % w) as f64 - 20.0, (k / w) as f64 - 15.0);
                -(x * x + y * y).sqrt()
            })
            .collect();
        let r = Raster::new(&v, w, h);
        assert!(r.rings(1.0).is_empty());
        let rings = r.rings(-5.0);
        assert_eq!(rings.len(), 1);
        let ring = &rings[0];
        assert_eq!(ring.first(), ring.last());
        for p in ring {
            let d = (p[0] - 20.5).hypot(p[1] - 15.5);
            assert!((d - 5.0).abs() < 0.1, "{p:?} at {d}");
        }
    }
}
