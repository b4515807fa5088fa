//! Lines over a map: equipotentials (iso-value lines, labelled on their longest pieces) and
//! field lines seeded on the conductors, with an arrowhead along E.
//!
//! Invariants: no line is drawn over a pixel the caller's mask excludes (no value, inside a
//! conductor, off the plot); a contour label takes a box only where it is free; lengths and
//! positions are image pixels.

use fieldgrid_solver::design::Point;
use image::RgbImage;

use super::canvas::{Layer, P};
use super::labels::{boxed_label, label_box, Taken};
use super::layout::Plot;
use super::overlay::contrast_ink;
use super::text::{self, Style};
use super::{contour, fieldlines, sample, FieldLines, MapInput, INK};

/// Draws the iso-value lines and their labels.
pub(super) fn draw_contours(
    img: &mut RgbImage,
    plot: &Plot,
    samples: &sample::Samples,
    levels: &[(f64, String)],
    mask: &dyn Fn(usize, usize) -> bool,
    taken: &mut Taken,
) {
    let values: Vec<f64> = levels.iter().map(|l| l.0).collect();
    let lines = contour::trace(samples, &values);
    let (w, h) = img.dimensions();
    let mut layer = Layer::new(w, h);
    let off = [plot.x0 as f64, plot.y0 as f64];
    for iso in &lines {
        for piece in &iso.pieces {
            let pts: Vec<P> = piece
                .iter()
                .map(|p| [p[0] + off[0], p[1] + off[1]])
                .collect();
            layer.polyline(&pts, 1.3, false);
        }
    }
    layer.composite_with(img, 0.85, mask, contrast_ink);
    // Labels: up to two per level, on the longest pieces, clear of everything placed so far.
    let st = Style::new(11.0, INK);
    for (iso, (_, label)) in lines.iter().zip(levels) {
        let mut order: Vec<(f64, usize)> = iso
            .pieces
            .iter()
            .enumerate()
            .map(|(k, p)| (length(p), k))
            .collect();
        order.sort_by(|a, b| b.0.total_cmp(&a.0).then(a.1.cmp(&b.1)));
        let lw = text::measure(label, st).width as f64;
        let mut placed = 0;
        for (len, k) in order {
            if placed >= 2 || len < 3.0 * lw + 30.0 {
                break;
            }
            for frac in [0.5, 0.3, 0.7, 0.15, 0.85] {
                let p = point_at(&iso.pieces[k], frac * len);
                let (ix, iy) = (p[0] + off[0], p[1] + off[1]);
                let b = label_box(label, st, ix as f32, iy as f32, 2.0);
                let centre_free = !mask(ix as usize, iy as usize);
                if centre_free && plot.holds(b) && taken.free(b) {
                    taken.0.push(b);
                    boxed_label(img, label, st, b, 0.75);
                    placed += 1;
                    break;
                }
            }
        }
    }
}

/// Traces and draws field lines with an arrowhead half-way along each.
pub(super) fn draw_field_lines(
    img: &mut RgbImage,
    plot: &Plot,
    input: &MapInput,
    fl: &FieldLines,
    map_samples: &sample::Samples,
    masked: &dyn Fn(usize, usize) -> bool,
) {
    let grid = input.grid;
    assert_eq!(
        fl.potential.len(),
        grid.len(),
        "one potential per grid node"
    );
    let own;
    let phi = if std::ptr::eq(fl.potential, input.values) {
        map_samples
    } else {
        own = sample::resample(grid, fl.potential, plot.xr, plot.yr, plot.w, plot.h);
        &own
    };
    let Some(filled) = contour::fill_missing(phi) else {
        return;
    };
    let filled = sample::Samples {
        w: phi.w,
        h: phi.h,
        v: filled,
    };
    let k = [
        plot.w as f64 / (plot.xr[1] - plot.xr[0]),
        plot.h as f64 / (plot.yr[1] - plot.yr[0]),
    ];
    let eps_samples = fl.permittivity.map(|e| {
        assert_eq!(e.len(), grid.len(), "one permittivity per grid node");
        sample::resample(grid, e, plot.xr, plot.yr, plot.w, plot.h)
    });
    let pot = fieldlines::Potential::new(&filled, k);
    let pot = match &eps_samples {
        Some(e) => pot.with_permittivity(e),
        None => pot,
    };
    let (ox, oy) = (plot.x0 as f64, plot.y0 as f64);
    // A point counts as inside a conductor as soon as one of the four samples its field is
    // interpolated from is: the filled values there carry no normal field, and a line would
    // creep along the surface instead of ending on it.
    let inside = |p: P| {
        fieldlines::stencil_blocked(phi.w, phi.h, p, |x, y| {
            masked(x + plot.x0 as usize, y + plot.y0 as usize) || phi.at(x, y).is_nan()
        })
    };
    let local = |pts: &[Point]| -> Vec<P> {
        pts.iter()
            .map(|&q| plot.px(q))
            .map(|q| [q[0] - ox, q[1] - oy])
            .collect()
    };
    let rings: Vec<Vec<P>> = input
        .conductors
        .iter()
        .flat_map(|c| c.rings.iter().map(|r| local(r)))
        .collect();
    let lines: Vec<Vec<P>> = input
        .conductors
        .iter()
        .flat_map(|c| c.lines.iter().map(|l| local(l)))
        .collect();
    // Seeds sit just clear of the value-less band round a conductor on coarse grids.
    let cell_px = (grid.max_dx() * k[0]).max(grid.max_dy() * k[1]);
    let offset = (0.75 * cell_px + 1.0).max(2.5);
    let seeds = fieldlines::seeds(&pot, &rings, &lines, fl.count, offset, &inside);
    let (w, h) = img.dimensions();
    let mut layer = Layer::new(w, h);
    for seed in seeds {
        let line = fieldlines::trace(&pot, seed, &inside);
        let pts: Vec<P> = line.points.iter().map(|p| [p[0] + ox, p[1] + oy]).collect();
        layer.polyline(&pts, 0.9, false);
        let len = length(&pts);
        if len > 40.0 {
            // Arrowhead pointing along E at the middle.
            let tip = point_at(&pts, 0.5 * len + 4.0);
            let back = point_at(&pts, 0.5 * len - 4.0);
            let d = [tip[0] - back[0], tip[1] - back[1]];
            let n = d[0].hypot(d[1]);
            if n > 0.0 {
                let u = [d[0] / n, d[1] / n];
                for side in [1.0, -1.0] {
                    let (c, s) = (0.45f64.cos(), side * 0.45f64.sin());
                    let wing = [
                        tip[0] - 7.0 * (u[0] * c - u[1] * s),
                        tip[1] - 7.0 * (u[1] * c + u[0] * s),
                    ];
                    layer.segment(tip, wing, 1.2);
                }
            }
        }
    }
    layer.composite_with(img, 0.55, masked, contrast_ink);
}

pub(super) fn length(p: &[P]) -> f64 {
    p.windows(2)
        .map(|w| (w[1][0] - w[0][0]).hypot(w[1][1] - w[0][1]))
        .sum()
}

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
