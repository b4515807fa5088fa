//! Where the labels of iso-value lines go: on a nearly straight stretch of their own line,
//! clear of conductors, outlines and value-less pixels, of every other level's line and of the
//! labels and marks already placed. A level with no such stretch goes unlabelled rather than
//! crowding a narrow gap or sitting on an outline.
//!
//! Invariants: a label's box grown by [`CLEARANCE`] px holds no blocked pixel (conductor,
//! conductor or dielectric outline, no value, off the plot) and no pixel of another level's
//! line; grown by [`SPACING`] px it overlaps no box already taken; its line runs nearly
//! straight under it (chord at least [`STRAIGHT`] of the arc); a level gets at most two labels,
//! the second at least half the plot's shorter side from the first. Lengths are image pixels.

use super::canvas::P;
use super::labels::Taken;
use super::layout::Plot;

/// Free pixels kept round a label's box, px: outlines, conductors and other lines stay this far.
pub(super) const CLEARANCE: f32 = 3.0;
/// Free pixels between a label's box and any other label or mark, px.
pub(super) const SPACING: f32 = 6.0;
/// Least ratio of chord to arc of the line under a label.
pub(super) const STRAIGHT: f64 = 0.9;

/// What a label may not cover, per image pixel: blocked pixels (asked of the caller's test
/// only for the pixels of the boxes tried), and which level's line passes.
pub(super) struct Obstacles<'a> {
    w: usize,
    h: usize,
    blocked: &'a dyn Fn(usize, usize) -> bool,
    /// 0: no line; k + 1: the line of level k; `u16::MAX`: lines of several levels.
    line: Vec<u16>,
}

impl<'a> Obstacles<'a> {
    /// Obstacles of a `w` x `h` image: `blocked(x, y)` tells a pixel no label may cover, and
    /// `levels[k]` holds the pieces of level k's line (image pixel coordinates).
    pub(super) fn new(
        w: usize,
        h: usize,
        blocked: &'a dyn Fn(usize, usize) -> bool,
        levels: &[Vec<Vec<P>>],
    ) -> Obstacles<'a> {
        let mut line = vec![0u16; w * h];
        for (k, pieces) in levels.iter().enumerate() {
            let tag = (k + 1).min(u16::MAX as usize - 1) as u16;
            for piece in pieces {
                for seg in piece.windows(2) {
                    let (a, c) = (seg[0], seg[1]);
                    let n = ((c[0] - a[0]).hypot(c[1] - a[1]) * 2.0).ceil().max(1.0) as usize;
                    for s in 0..=n {
                        let t = s as f64 / n as f64;
                        let (x, y) = (a[0] + t * (c[0] - a[0]), a[1] + t * (c[1] - a[1]));
                        if x < 0.0 || y < 0.0 || x >= w as f64 || y >= h as f64 {
                            continue;
                        }
                        let i = y as usize * w + x as usize;
                        line[i] = match line[i] {
                            0 => tag,
                            o if o == tag => tag,
                            _ => u16::MAX,
                        };
                    }
                }
            }
        }
        Obstacles {
            w,
            h,
            blocked,
            line,
        }
    }

    /// True when box `b` holds no blocked pixel and no line but level `own`'s.
    fn clear(&self, b: [f32; 4], own: usize) -> bool {
        let tag = (own + 1).min(u16::MAX as usize - 1) as u16;
        let (x0, x1) = (b[0].floor() as i64, b[2].ceil() as i64);
        let (y0, y1) = (b[1].floor() as i64, b[3].ceil() as i64);
        if x0 < 0 || y0 < 0 || x1 > self.w as i64 || y1 > self.h as i64 {
            return false;
        }
        (y0 as usize..y1 as usize).all(|y| {
            (x0 as usize..x1 as usize).all(|x| {
                let i = y * self.w + x;
                (self.line[i] == 0 || self.line[i] == tag) && !(self.blocked)(x, y)
            })
        })
    }
}

fn grown(b: [f32; 4], d: f32) -> [f32; 4] {
    [b[0] - d, b[1] - d, b[2] + d, b[3] + d]
}

/// Length of a polyline, px.
pub(super) fn length(p: &[P]) -> f64 {
    p.windows(2)
        .map(|w| (w[1][0] - w[0][0]).hypot(w[1][1] - w[0][1]))
        .sum()
}

/// The point at arc length `s` along a polyline (its last point beyond its end).
pub(super) fn point_at(p: &[P], s: f64) -> P {
    let mut acc = 0.0;
    for w in p.windows(2) {
        let l = (w[1][0] - w[0][0]).hypot(w[1][1] - w[0][1]);
        if acc + l >= s && l > 0.0 {
            let f = (s - acc) / l;
            return [
                w[0][0] + (w[1][0] - w[0][0]) * f,
                w[0][1] + (w[1][1] - w[0][1]) * f,
            ];
        }
        acc += l;
    }
    *p.last().expect("non-empty polyline")
}

/// Places the labels of the levels: `sizes[k]` is the box (width, height) of level k's label,
/// `levels[k]` its pieces in image pixels. Returns (level, box) per label, taking each box
/// (grown by [`SPACING`]) in `taken`.
pub(super) fn place(
    plot: &Plot,
    levels: &[Vec<Vec<P>>],
    sizes: &[(f32, f32)],
    obstacles: &Obstacles,
    taken: &mut Taken,
) -> Vec<(usize, [f32; 4])> {
    let mut out = Vec::new();
    let apart = 0.5 * plot.w.min(plot.h) as f32;
    for (k, (pieces, &(bw, bh))) in levels.iter().zip(sizes).enumerate() {
        // Longest pieces first; ties in their order.
        let mut order: Vec<(f64, usize)> = pieces
            .iter()
            .enumerate()
            .map(|(i, p)| (length(p), i))
            .collect();
        order.sort_by(|a, b| b.0.total_cmp(&a.0).then(a.1.cmp(&b.1)));
        let half = 0.5 * f64::from(bw.max(bh));
        let mut mine: Vec<[f32; 2]> = Vec::new();
        'pieces: for (len, i) in order {
            if len < 2.0 * f64::from(bw) + 20.0 {
                break;
            }
            let piece = &pieces[i];
            // From the middle of the piece outwards, half a label apart.
            let step = f64::from(bw) / 2.0;
            let reach = ((len / 2.0 - half) / step).floor().max(0.0) as usize;
            let spots = (0..=reach).flat_map(|j| {
                let d = j as f64 * step;
                if j == 0 {
                    vec![len / 2.0]
                } else {
                    vec![len / 2.0 - d, len / 2.0 + d]
                }
            });
            for s in spots {
                if mine.len() >= 2 {
                    break 'pieces;
                }
                let p = point_at(piece, s);
                let (a, c) = (point_at(piece, s - half), point_at(piece, s + half));
                if (c[0] - a[0]).hypot(c[1] - a[1]) < STRAIGHT * 2.0 * half {
                    continue;
                }
                let (cx, cy) = (p[0] as f32, p[1] as f32);
                if mine.iter().any(|m| (m[0] - cx).hypot(m[1] - cy) < apart) {
                    continue;
                }
                let b = [cx - bw / 2.0, cy - bh / 2.0, cx + bw / 2.0, cy + bh / 2.0];
                if plot.holds(b)
                    && taken.free(grown(b, SPACING))
                    && obstacles.clear(grown(b, CLEARANCE), k)
                {
                    taken.0.push(b);
                    mine.push([cx, cy]);
                    out.push((k, b));
                }
            }
        }
    }
    out
}

#[cfg(test)]
mod tests {
    use super::*;

    fn plot() -> Plot {
        Plot::for_tests()
    }

    fn across(y: f64) -> Vec<Vec<P>> {
        vec![vec![[12.0, y], [408.0, y]]]
    }

    fn meets(a: [f32; 4], b: [f32; 4]) -> bool {
        !(a[2] < b[0] || a[0] > b[2] || a[3] < b[1] || a[1] > b[3])
    }

    #[test]
    fn labels_keep_off_outlines_and_out_of_crowded_lines() {
        // Level 0 runs alone at y = 60 under a blocked bar (a conductor) just above its
        // middle; levels 1 to 5 run 4 px apart at y = 200..216, closer than a label is tall.
        let p = plot();
        let mut levels = vec![across(60.0)];
        levels.extend((0..5).map(|k| across(200.0 + 4.0 * f64::from(k))));
        let bar = [150.0f32, 45.0, 270.0, 56.0];
        let blocked = |x: usize, y: usize| {
            let (x, y) = (x as f32 + 0.5, y as f32 + 0.5);
            (bar[0]..bar[2]).contains(&x) && (bar[1]..bar[3]).contains(&y)
        };
        let obstacles = Obstacles::new(420, 320, &blocked, &levels);
        let sizes = vec![(30.0, 14.0); levels.len()];
        let mut taken = Taken::default();
        let placed = place(&p, &levels, &sizes, &obstacles, &mut taken);
        assert!(placed.iter().all(|&(k, _)| k == 0), "{placed:?}");
        assert_eq!(placed.len(), 2, "two labels on the long, clear line");
        for &(_, b) in &placed {
            assert!(!meets(grown(b, CLEARANCE), bar), "{b:?} on the bar");
            assert!(p.holds(b));
        }
        let (a, b) = (placed[0].1, placed[1].1);
        assert!((a[0] - b[0]).abs() >= 150.0, "the two labels are apart");
        // Widened to 12 px apart, the same lines take labels.
        let spaced: Vec<Vec<Vec<P>>> = (0..5)
            .map(|k| across(140.0 + 40.0 * f64::from(k)))
            .collect();
        let obstacles = Obstacles::new(420, 320, &|_, _| false, &spaced);
        let mut taken = Taken::default();
        let placed = place(&p, &spaced, &sizes[..5], &obstacles, &mut taken);
        for k in 0..5 {
            assert!(placed.iter().any(|&(l, _)| l == k), "level {k}: {placed:?}");
        }
        for (i, &(_, a)) in placed.iter().enumerate() {
            for &(_, b) in &placed[i + 1..] {
                assert!(!meets(grown(a, SPACING - 0.5), b), "{a:?} crowds {b:?}");
            }
        }
    }

    #[test]
    fn a_label_skips_the_bends_of_its_line_and_the_boxes_already_taken() {
        // A zigzag with 20 px teeth has no straight stretch a label's width long.
        let p = plot();
        let zig: Vec<P> = (0..=40)
            .map(|k| {
                [
                    12.0 + 10.0 * f64::from(k),
                    if k % 2 == 0 { 100.0 } else { 110.0 },
                ]
            })
            .collect();
        let levels = vec![vec![zig], across(250.0)];
        let obstacles = Obstacles::new(420, 320, &|_, _| false, &levels);
        // Everything along the straight line is taken but its right end.
        let mut taken = Taken(vec![[0.0, 230.0, 330.0, 270.0]]);
        let placed = place(&p, &levels, &[(30.0, 14.0); 2], &obstacles, &mut taken);
        assert_eq!(placed.len(), 1, "{placed:?}");
        let (k, b) = placed[0];
        assert_eq!(k, 1);
        assert!(b[0] >= 330.0 + SPACING, "{b:?}");
    }
}
