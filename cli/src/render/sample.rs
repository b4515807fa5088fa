//! Node values resampled to picture pixels.
//!
//! Invariants: one sample per pixel of the plot area, taken at the pixel centre, row 0 at the
//! top (largest y); bilinear between the four surrounding nodes, using only nodes that have a
//! value and only when they carry at least half of the bilinear weight (so regions without a
//! value keep their size); otherwise NaN ([`fill_band`] then gives the band round a drawn
//! conductor its neighbours' values). The four nodes come from the grid's coordinate
//! lines, so a graded grid is interpolated within its cells as a uniform one is. Work is
//! proportional to the pixel count plus the column and row counts (times the logarithm of
//! the line counts on a graded grid).

use fieldgrid_solver::grid::Grid;
use rayon::prelude::*;

/// Samples of a field at pixel centres, row-major, row 0 at the top.
#[derive(Clone, Debug, PartialEq)]
pub struct Samples {
    /// Columns.
    pub w: usize,
    /// Rows.
    pub h: usize,
    /// `w * h` values; NaN where there is no value.
    pub v: Vec<f64>,
}

impl Samples {
    /// The sample of pixel (x, y).
    pub fn at(&self, x: usize, y: usize) -> f64 {
        self.v[x + y * self.w]
    }
}

/// The coordinates of the centres of `n` pixels spanning [a, b] (from b down when
/// `reverse`).
fn pixel_centres(n: usize, a: f64, b: f64, reverse: bool) -> impl Iterator<Item = f64> {
    (0..n).map(move |k| {
        let f = (k as f64 + 0.5) / n as f64;
        if reverse {
            b - f * (b - a)
        } else {
            a + f * (b - a)
        }
    })
}

/// Samples `values` (one per node of `grid`, NaN for none) on a `w` x `h` pixel raster
/// covering x in `xr` and y in `yr` (metres).
pub fn resample(
    grid: &Grid,
    values: &[f64],
    xr: [f64; 2],
    yr: [f64; 2],
    w: usize,
    h: usize,
) -> Samples {
    assert_eq!(values.len(), grid.len(), "one value per grid node");
    let cols: Vec<(usize, f64)> = pixel_centres(w, xr[0], xr[1], false)
        .map(|x| grid.locate_x(x))
        .collect();
    let rows: Vec<(usize, f64)> = pixel_centres(h, yr[0], yr[1], true)
        .map(|y| grid.locate_y(y))
        .collect();
    // Rows on their own: the same samples on any number of threads.
    let mut v = vec![0.0; w * h];
    v.par_chunks_mut(w.max(1))
        .zip(&rows)
        .for_each(|(out, &row)| {
            for (o, &col) in out.iter_mut().zip(&cols) {
                *o = bilinear(grid, values, col, row);
            }
        });
    Samples { w, h, v }
}

/// The value in cell (i, j) at fractions (fx, fy) across it, from the corners that have a
/// value when they carry at least half of the weight; NaN otherwise.
fn bilinear(grid: &Grid, values: &[f64], (i, fx): (usize, f64), (j, fy): (usize, f64)) -> f64 {
    let nx = grid.nx;
    let k = i + j * nx;
    let corners = [
        (values[k], (1.0 - fx) * (1.0 - fy)),
        (values[k + 1], fx * (1.0 - fy)),
        (values[k + nx], (1.0 - fx) * fy),
        (values[k + 1 + nx], fx * fy),
    ];
    let (mut sum, mut wt) = (0.0, 0.0);
    for (val, wgt) in corners {
        if val.is_finite() {
            sum += val * wgt;
            wt += wgt;
        }
    }
    if wt >= 0.5 - 1e-12 {
        sum / wt
    } else {
        f64::NAN
    }
}

/// Gives the value-less samples of `s` (taken by [`resample`] over `xr` by `yr`) that border
/// a drawn conductor the value of their cell's nodes that have one: a pixel whose cell has a
/// node with a value and whose value-less nodes all lie on drawn conductors (`drawn(node)`,
/// node position in m) and which is not itself `covered` (plot-local pixel inside a drawn
/// conductor). The nodes on and inside a conductor carry no value, so without this the
/// conductor's grey would reach half a cell past its outline (a band along a face lying on a
/// node line of a coarse graded lattice). Value-less regions that are not drawn conductors
/// keep their size.
pub fn fill_band(
    s: &mut Samples,
    grid: &Grid,
    values: &[f64],
    xr: [f64; 2],
    yr: [f64; 2],
    drawn: impl Fn([f64; 2]) -> bool,
    covered: impl Fn(usize, usize) -> bool,
) {
    assert_eq!(values.len(), grid.len(), "one value per grid node");
    let cols: Vec<(usize, f64)> = pixel_centres(s.w, xr[0], xr[1], false)
        .map(|x| grid.locate_x(x))
        .collect();
    let rows: Vec<(usize, f64)> = pixel_centres(s.h, yr[0], yr[1], true)
        .map(|y| grid.locate_y(y))
        .collect();
    let nx = grid.nx;
    for (ly, &(j, fy)) in rows.iter().enumerate() {
        for (lx, &(i, fx)) in cols.iter().enumerate() {
            if !s.v[lx + ly * s.w].is_nan() || covered(lx, ly) {
                continue;
            }
            let k = i + j * nx;
            let corners = [
                (k, (1.0 - fx) * (1.0 - fy)),
                (k + 1, fx * (1.0 - fy)),
                (k + nx, (1.0 - fx) * fy),
                (k + 1 + nx, fx * fy),
            ];
            let (mut sum, mut wt) = (0.0, 0.0);
            let mut band = true;
            for (node, wgt) in corners {
                let v = values[node];
                if v.is_finite() {
                    sum += v * wgt;
                    wt += wgt;
                } else if !drawn([grid.x(node % nx), grid.y(node / nx)]) {
                    band = false;
                }
            }
            if band && wt > 0.0 {
                s.v[lx + ly * s.w] = sum / wt;
            }
        }
    }
}

/// `values` on the nodes of `from` carried to the nodes of `to` (a lattice over the same
/// domain) by the rule of [`resample`]; points of `to` outside `from` take its nearest edge.
pub fn onto(from: &Grid, values: &[f64], to: &Grid) -> Vec<f64> {
    assert_eq!(values.len(), from.len(), "one value per grid node");
    let cols: Vec<(usize, f64)> = to.xs().iter().map(|&x| from.locate_x(x)).collect();
    let mut v = Vec::with_capacity(to.len());
    for &y in to.ys() {
        let row = from.locate_y(y);
        v.extend(cols.iter().map(|&col| bilinear(from, values, col, row)));
    }
    v
}

/// Smallest and largest finite value, or `None` when there is none.
pub fn finite_range(values: &[f64]) -> Option<(f64, f64)> {
    let range = |vs: &[f64]| {
        let mut lo = f64::INFINITY;
        let mut hi = f64::NEG_INFINITY;
        for &v in vs {
            if v.is_finite() {
                lo = lo.min(v);
                hi = hi.max(v);
            }
        }
        (lo, hi)
    };
    // Chunks on their own, then joined in their order: the fold's result on any number of
    // threads.
    let parts: Vec<(f64, f64)> = values.par_chunks(1 << 16).map(range).collect();
    let (lo, hi) = parts
        .iter()
        .fold((f64::INFINITY, f64::NEG_INFINITY), |(lo, hi), p| {
            (lo.min(p.0), hi.max(p.1))
        });
    (lo <= hi).then_some((lo, hi))
}

/// The value of rank `k` (0: the smallest) among `values`, in linear time; `values` is
/// reordered. `None` when `k` is out of range.
pub fn rank(values: &mut [f64], k: usize) -> Option<f64> {
    (k < values.len()).then(|| *values.select_nth_unstable_by(k, f64::total_cmp).1)
}

/// Smallest finite positive value.
pub fn min_positive(values: &[f64]) -> Option<f64> {
    values
        .iter()
        .copied()
        .filter(|v| v.is_finite() && *v > 0.0)
        .min_by(|a, b| a.total_cmp(b))
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn rank_is_the_sorted_position() {
        let v = [5.0, -1.0, 3.0, 3.0, 9.0, 0.5];
        let mut sorted = v;
        sorted.sort_by(f64::total_cmp);
        for (k, want) in sorted.iter().enumerate() {
            assert_eq!(rank(&mut v.clone(), k), Some(*want));
        }
        assert_eq!(rank(&mut v.clone(), 6), None);
        assert_eq!(rank(&mut [], 0), None);
    }

    fn grid(nx: usize, ny: usize) -> Grid {
        Grid::regular([0.0, 0.0], [1.0, 1.0], [nx, ny])
    }

    #[test]
    fn linear_field_is_reproduced_and_rows_run_top_down() {
        let g = grid(5, 3);
        let vals: Vec<f64> = (0..g.len())
            .map(|k| (k % 5) as f64 + 10.0 * (k / 5) as f64)
            .collect();
        let s = resample(&g, &vals, [0.0, 4.0], [0.0, 2.0], 8, 4);
        // Pixel (0, 0) centre: x = 0.25, y = 2 - 0.25.
        assert!((s.at(0, 0) - (0.25 + 10.0 * 1.75)).abs() < 1e-12);
        assert!((s.at(7, 3) - (3.75 + 10.0 * 0.25)).abs() < 1e-12);
    }

    #[test]
    fn graded_grids_interpolate_within_their_cells() {
        // Cells from 0.05 to 2 wide: a bilinear field is reproduced at every pixel centre,
        // inside the large cells too (no blocks).
        let xs = vec![0.0, 0.05, 0.1, 0.3, 1.0, 3.0, 4.0];
        let ys = vec![-1.0, 0.5, 0.55, 1.0];
        let g = Grid::from_lines(xs.clone(), ys.clone()).unwrap();
        let f = |x: f64, y: f64| 2.0 * x - 3.0 * y + 0.5 * x * y;
        let vals: Vec<f64> = (0..g.len())
            .map(|k| f(xs[k % g.nx], ys[k / g.nx]))
            .collect();
        let (w, h) = (80, 40);
        let s = resample(&g, &vals, [0.0, 4.0], [-1.0, 1.0], w, h);
        for py in 0..h {
            for px in 0..w {
                let x = 4.0 * (px as f64 + 0.5) / w as f64;
                let y = 1.0 - 2.0 * (py as f64 + 0.5) / h as f64;
                let got = s.at(px, py);
                assert!((got - f(x, y)).abs() < 1e-12, "pixel ({px}, {py}): {got}");
            }
        }
    }

    #[test]
    fn values_carried_onto_other_lines_keep_a_bilinear_field() {
        let from = Grid::from_lines(vec![0.0, 1.0, 1.5, 4.0], vec![0.0, 0.5, 2.0]).unwrap();
        let to = Grid::from_lines(vec![0.0, 0.2, 2.0, 3.9, 4.0], vec![0.0, 1.0, 1.9, 2.0]).unwrap();
        let f = |x: f64, y: f64| 1.0 + x - 2.0 * y + 0.25 * x * y;
        let at = |g: &Grid| -> Vec<f64> {
            (0..g.len())
                .map(|k| f(g.x(k % g.nx), g.y(k / g.nx)))
                .collect()
        };
        let got = onto(&from, &at(&from), &to);
        for (g, w) in got.iter().zip(at(&to)) {
            assert!((g - w).abs() < 1e-12, "{g} vs {w}");
        }
    }

    #[test]
    fn missing_values_keep_their_extent() {
        let g = grid(3, 3);
        let mut vals = vec![1.0; 9];
        vals[4] = f64::NAN; // the centre node
        let s = resample(&g, &vals, [0.0, 2.0], [0.0, 2.0], 20, 20);
        assert!(s.at(10, 10).is_nan());
        assert_eq!(s.at(0, 0), 1.0);
        assert!(s.v.iter().all(|v| v.is_nan() || *v == 1.0));
        let nan = s.v.iter().filter(|v| v.is_nan()).count();
        assert!(nan > 20 && nan < 200, "{nan}");
    }

    #[test]
    fn the_band_round_a_drawn_conductor_takes_the_values_beside_it() {
        // Nodes x <= 1 carry no value (a conductor whose face lies on the node line x = 1);
        // the strict rule paints them half a cell past x = 1.
        let g = grid(4, 3);
        let vals: Vec<f64> = (0..g.len())
            .map(|k| if k % 4 <= 1 { f64::NAN } else { (k % 4) as f64 })
            .collect();
        let (xr, yr) = ([0.0, 3.0], [0.0, 2.0]);
        let strict = resample(&g, &vals, xr, yr, 30, 20);
        // Pixel column 13 has its centre at x = 1.35: within half a cell of the face.
        assert!(strict.at(13, 5).is_nan());
        // Drawn conductor up to x = 1: the band outside it takes the value beside it.
        let mut s = strict.clone();
        fill_band(&mut s, &g, &vals, xr, yr, |p| p[0] <= 1.0, |lx, _| lx < 10);
        assert_eq!(s.at(13, 5), 2.0);
        assert!(s.at(9, 5).is_nan(), "inside the conductor: no value");
        // Nothing drawn there: the value-less region keeps its size.
        let mut s = strict.clone();
        fill_band(&mut s, &g, &vals, xr, yr, |_| false, |_, _| false);
        assert!(s
            .v
            .iter()
            .zip(&strict.v)
            .all(|(a, b)| a.to_bits() == b.to_bits()));
    }

    #[test]
    fn ranges_skip_missing_values() {
        assert_eq!(
            finite_range(&[f64::NAN, 2.0, -1.0, f64::INFINITY]),
            Some((-1.0, 2.0))
        );
        assert_eq!(finite_range(&[f64::NAN]), None);
        assert_eq!(min_positive(&[0.0, 3.0, 0.5, -1.0]), Some(0.5));
    }
}
