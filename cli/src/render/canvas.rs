//! Pixel primitives: blending, anti-aliased strokes into coverage layers, scan-line polygon
//! fill.
//!
//! A stroke is first accumulated into a [`Layer`] (per-pixel coverage in [0, 1], the maximum
//! of overlapping pieces), then composited once, so joints of a polyline are not darkened twice.
//! Coordinates are image pixels, y down; pixel (x, y) covers [x, x+1) x [y, y+1) and its
//! centre is (x + 0.5, y + 0.5). Everything is clipped to the image.

use image::{Rgb, RgbImage};

/// A point in pixel coordinates.
pub type P = [f64; 2];

/// Blends `c` over pixel (x, y) with opacity `a` in [0, 1]; outside the image does nothing.
#[inline]
pub fn blend(img: &mut RgbImage, x: i64, y: i64, c: Rgb<u8>, a: f32) {
    if x < 0 || y < 0 || x >= img.width() as i64 || y >= img.height() as i64 || a <= 0.0 {
        return;
    }
    let p = img.get_pixel_mut(x as u32, y as u32);
    if a >= 1.0 {
        *p = c;
        return;
    }
    for k in 0..3 {
        let v = p[k] as f32 + (c[k] as f32 - p[k] as f32) * a;
        p[k] = v.round().clamp(0.0, 255.0) as u8;
    }
}

/// Fills the pixel rectangle [x0, x1) x [y0, y1) with `c` at opacity `a`.
pub fn fill_rect(img: &mut RgbImage, x0: i64, y0: i64, x1: i64, y1: i64, c: Rgb<u8>, a: f32) {
    let (w, h) = (img.width() as i64, img.height() as i64);
    for y in y0.max(0)..y1.min(h) {
        for x in x0.max(0)..x1.min(w) {
            blend(img, x, y, c, a);
        }
    }
}

/// One-pixel outline of the pixel rectangle [x0, x1) x [y0, y1).
pub fn rect_outline(img: &mut RgbImage, x0: i64, y0: i64, x1: i64, y1: i64, c: Rgb<u8>) {
    fill_rect(img, x0, y0, x1, y0 + 1, c, 1.0);
    fill_rect(img, x0, y1 - 1, x1, y1, c, 1.0);
    fill_rect(img, x0, y0, x0 + 1, y1, c, 1.0);
    fill_rect(img, x1 - 1, y0, x1, y1, c, 1.0);
}

/// Side of a [`Layer`]'s tiles, px.
const TILE: usize = 64;

/// Per-pixel coverage over an image-sized area, with the box that has been touched. Kept in
/// tiles of [`TILE`] x [`TILE`] pixels made on the first touch, so a layer costs what its
/// strokes cover, not the image's size.
#[derive(Clone, Debug)]
pub struct Layer {
    w: usize,
    h: usize,
    /// Tiles per row of tiles.
    across: usize,
    /// Row-major tiles; `None` while untouched (coverage 0).
    tiles: Vec<Option<Box<[f32; TILE * TILE]>>>,
    // Touched box [x0, x1) x [y0, y1); empty while x0 >= x1.
    bx: [usize; 4],
}

impl Layer {
    /// An empty layer of `w` x `h` pixels.
    pub fn new(w: u32, h: u32) -> Layer {
        let (w, h) = (w as usize, h as usize);
        let across = w.div_ceil(TILE);
        Layer {
            w,
            h,
            across,
            tiles: vec![None; across * h.div_ceil(TILE)],
            bx: [w, 0, h, 0],
        }
    }

    /// Coverage of pixel (x, y); (x, y) is read as the row-major index x + y w, which must
    /// lie on the layer.
    pub fn get(&self, x: usize, y: usize) -> f32 {
        let (x, y) = if x < self.w {
            (x, y)
        } else {
            let k = x + y * self.w;
            (k % self.w, k / self.w)
        };
        assert!(y < self.h, "pixel on the layer");
        match &self.tiles[(y / TILE) * self.across + x / TILE] {
            Some(t) => t[(y % TILE) * TILE + x % TILE],
            None => 0.0,
        }
    }

    #[inline]
    fn put(&mut self, x: i64, y: i64, c: f32) {
        if x < 0 || y < 0 || x >= self.w as i64 || y >= self.h as i64 || c <= 0.0 {
            return;
        }
        let (x, y) = (x as usize, y as usize);
        let tile = self.tiles[(y / TILE) * self.across + x / TILE]
            .get_or_insert_with(|| Box::new([0.0; TILE * TILE]));
        let v = &mut tile[(y % TILE) * TILE + x % TILE];
        if c > *v {
            *v = c.min(1.0);
        }
        self.bx = [
            self.bx[0].min(x),
            self.bx[1].max(x + 1),
            self.bx[2].min(y),
            self.bx[3].max(y + 1),
        ];
    }

    /// Anti-aliased segment of `width` px with round caps.
    pub fn segment(&mut self, a: P, b: P, width: f64) {
        let r = width / 2.0 + 0.5;
        let (dx, dy) = (b[0] - a[0], b[1] - a[1]);
        let len2 = dx * dx + dy * dy;
        let cov = |q: P| -> f32 {
            let t = if len2 > 0.0 {
                (((q[0] - a[0]) * dx + (q[1] - a[1]) * dy) / len2).clamp(0.0, 1.0)
            } else {
                0.0
            };
            let (ex, ey) = (q[0] - a[0] - t * dx, q[1] - a[1] - t * dy);
            (r - (ex * ex + ey * ey).sqrt()).clamp(0.0, 1.0) as f32
        };
        // Walk the major axis; on each step visit the band across the line that the stroke can
        // reach (|minor offset| <= r / cos(angle) + 1).
        let major_x = dx.abs() >= dy.abs();
        let (ma, mb, na, nb) = if major_x {
            (a[0], b[0], a[1], b[1])
        } else {
            (a[1], b[1], a[0], b[0])
        };
        let (dm, dn) = (mb - ma, nb - na);
        let len = len2.sqrt();
        let span = if len > 0.0 {
            r * len / dm.abs().max(1e-12)
        } else {
            r
        };
        let span = span.min(r * 1.5) + 1.0;
        let (m0, m1) = (ma.min(mb) - r, ma.max(mb) + r);
        for m in (m0.floor() as i64)..=(m1.ceil() as i64) {
            let mc = m as f64 + 0.5;
            let t = if dm != 0.0 {
                ((mc - ma) / dm).clamp(0.0, 1.0)
            } else {
                0.0
            };
            let nc = na + t * dn;
            for n in ((nc - span).floor() as i64)..=((nc + span).ceil() as i64) {
                let (x, y) = if major_x { (m, n) } else { (n, m) };
                let c = cov([x as f64 + 0.5, y as f64 + 0.5]);
                self.put(x, y, c);
            }
        }
    }

    /// Anti-aliased polyline; `closed` joins the last point to the first.
    pub fn polyline(&mut self, pts: &[P], width: f64, closed: bool) {
        for w in pts.windows(2) {
            self.segment(w[0], w[1], width);
        }
        if closed && pts.len() > 2 {
            self.segment(pts[pts.len() - 1], pts[0], width);
        }
        if pts.len() == 1 {
            self.segment(pts[0], pts[0], width);
        }
    }

    /// Dashed polyline: `dash` px drawn, `gap` px left out, measured along the path.
    pub fn dashed(&mut self, pts: &[P], width: f64, closed: bool, dash: f64, gap: f64) {
        let mut path: Vec<P> = pts.to_vec();
        if closed && pts.len() > 2 {
            path.push(pts[0]);
        }
        let period = dash + gap;
        let mut s = 0.0; // arc length at the start of the current segment
        for w in path.windows(2) {
            let (a, b) = (w[0], w[1]);
            let l = ((b[0] - a[0]).powi(2) + (b[1] - a[1]).powi(2)).sqrt();
            if l == 0.0 {
                continue;
            }
            let at = |u: f64| [a[0] + (b[0] - a[0]) * u / l, a[1] + (b[1] - a[1]) * u / l];
            let mut u = 0.0;
            while u < l {
                let phase = (s + u) % period;
                if phase < dash {
                    let end = (u + dash - phase).min(l);
                    self.segment(at(u), at(end), width);
                    u = end;
                } else {
                    u += period - phase;
                }
            }
            s += l;
        }
    }

    /// Anti-aliased filled disc.
    pub fn disc(&mut self, c: P, radius: f64) {
        let r = radius + 0.5;
        for y in ((c[1] - r).floor() as i64)..=((c[1] + r).ceil() as i64) {
            for x in ((c[0] - r).floor() as i64)..=((c[0] + r).ceil() as i64) {
                let d = ((x as f64 + 0.5 - c[0]).powi(2) + (y as f64 + 0.5 - c[1]).powi(2)).sqrt();
                self.put(x, y, (r - d).clamp(0.0, 1.0) as f32);
            }
        }
    }

    /// Sets full coverage on every pixel whose centre is inside the rings (even-odd rule).
    pub fn fill(&mut self, rings: &[Vec<P>]) {
        let (w, h) = (self.w, self.h);
        scan_fill(rings, w, h, |y, x0, x1| {
            for x in x0..x1 {
                self.put(x as i64, y as i64, 1.0);
            }
        });
    }

    /// Blends `c` at opacity `alpha` times coverage onto `img`, except on pixels where
    /// `skip(x, y)` holds.
    pub fn composite(
        &self,
        img: &mut RgbImage,
        c: Rgb<u8>,
        alpha: f32,
        skip: impl Fn(usize, usize) -> bool,
    ) {
        self.composite_with(img, alpha, skip, |_| c);
    }

    /// Like [`Layer::composite`] with the ink chosen per pixel from the colour underneath.
    pub fn composite_with(
        &self,
        img: &mut RgbImage,
        alpha: f32,
        skip: impl Fn(usize, usize) -> bool,
        ink: impl Fn(Rgb<u8>) -> Rgb<u8>,
    ) {
        for y in self.bx[2]..self.bx[3] {
            for x in self.bx[0]..self.bx[1] {
                let c = self.get(x, y);
                if c > 0.0 && !skip(x, y) {
                    let under = *img.get_pixel(x as u32, y as u32);
                    blend(img, x as i64, y as i64, ink(under), c * alpha);
                }
            }
        }
    }
}

/// Visits, row by row, the runs [x0, x1) of pixels whose centres lie inside the rings by the
/// even-odd rule, clipped to a `w` x `h` image. Each run is visited once, rows in order.
pub fn scan_fill(rings: &[Vec<P>], w: usize, h: usize, mut run: impl FnMut(usize, usize, usize)) {
    let mut ymin = f64::INFINITY;
    let mut ymax = f64::NEG_INFINITY;
    for r in rings {
        for p in r {
            ymin = ymin.min(p[1]);
            ymax = ymax.max(p[1]);
        }
    }
    if !(ymin.is_finite() && ymax.is_finite()) {
        return;
    }
    let y0 = (ymin - 0.5).ceil().max(0.0) as usize;
    let y1 = ((ymax - 0.5).floor() + 1.0).clamp(0.0, h as f64) as usize;
    let mut xs: Vec<f64> = Vec::new();
    for y in y0..y1 {
        let yc = y as f64 + 0.5;
        xs.clear();
        for r in rings {
            let n = r.len();
            if n < 3 {
                continue;
            }
            for k in 0..n {
                let (a, b) = (r[k], r[(k + 1) % n]);
                if (a[1] <= yc) != (b[1] <= yc) {
                    xs.push(a[0] + (yc - a[1]) * (b[0] - a[0]) / (b[1] - a[1]));
                }
            }
        }
        xs.sort_by(|p, q| p.total_cmp(q));
        for pair in xs.chunks_exact(2) {
            // Pixels with centre in [xa, xb).
            let xa = (pair[0] - 0.5).ceil().clamp(0.0, w as f64) as usize;
            let xb = (pair[1] - 0.5).ceil().clamp(0.0, w as f64) as usize;
            if xb > xa {
                run(y, xa, xb);
            }
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn scan_fill_covers_pixel_centres_inside_and_honours_holes() {
        let outer = vec![[2.0, 2.0], [12.0, 2.0], [12.0, 12.0], [2.0, 12.0]];
        let hole = vec![[5.0, 5.0], [9.0, 5.0], [9.0, 9.0], [5.0, 9.0]];
        let mut n = 0;
        scan_fill(&[outer, hole], 20, 20, |y, x0, x1| {
            for x in x0..x1 {
                let inside_hole = (5..9).contains(&x) && (5..9).contains(&y);
                assert!((2..12).contains(&x) && (2..12).contains(&y) && !inside_hole);
                n += 1;
            }
        });
        assert_eq!(n, 100 - 16);
    }

    #[test]
    fn segment_covers_its_line_and_not_far_pixels() {
        let mut l = Layer::new(50, 50);
        l.segment([5.0, 10.0], [45.0, 30.0], 2.0);
        // On the line: full coverage; 5 px away: none.
        assert!(l.get(25, 20) > 0.9);
        assert_eq!(l.get(25, 26), 0.0);
        let mut steep = Layer::new(50, 50);
        steep.segment([10.0, 2.0], [12.0, 48.0], 1.0);
        for y in 3..47 {
            let best = (0..50).map(|x| steep.get(x, y)).fold(0.0, f32::max);
            assert!(best > 0.4, "gap at row {y}");
        }
    }

    #[test]
    fn strokes_across_tile_edges_cover_as_within_one_tile() {
        // The same strokes inside the first tile and moved across the corner of four tiles
        // (coordinates in eighths of a pixel, so the move is exact).
        let draw = |l: &mut Layer, d: f64| {
            l.segment([4.0 + d, 6.125 + d], [40.5 + d, 30.875 + d], 1.3);
            l.disc([20.25 + d, 12.0 + d], 4.5);
        };
        let (mut a, mut b) = (Layer::new(200, 150), Layer::new(200, 150));
        draw(&mut a, 0.0);
        draw(&mut b, 45.0);
        for y in 0..150 - 45 {
            for x in 0..200 - 45 {
                assert_eq!(a.get(x, y), b.get(x + 45, y + 45), "({x}, {y})");
            }
        }
        assert!((0..45).all(|k| b.get(k, k) == 0.0 && b.get(199, 149 - k) == 0.0));
        // A column past the edge reads as the row-major index it names.
        assert_eq!(b.get(200 + 70, 60), b.get(70, 61));
    }

    #[test]
    fn dashes_leave_gaps() {
        let mut l = Layer::new(100, 10);
        l.dashed(&[[0.0, 5.5], [100.0, 5.5]], 1.0, false, 6.0, 4.0);
        let on: Vec<bool> = (0..100).map(|x| l.get(x, 5) > 0.5).collect();
        assert!(on[2] && !on[8] && on[12] && !on[18]);
    }
}
