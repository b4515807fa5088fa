//! Lines over a map: equipotentials (iso-value lines, labelled where `contour_labels` finds
//! a clear stretch) and field lines seeded on the conductors, with an arrowhead along E.
//!
//! Invariants: no line is drawn over a pixel the caller's mask excludes (no value, inside a
//! conductor, off the plot); a contour label takes a box only where it is clear of what the
//! caller blocks, of other lines and of other labels; lengths and positions are image pixels.

use fieldgrid_solver::design::Point;
use image::RgbImage;
use rayon::prelude::*;

use super::canvas::{Layer, P};
use super::contour_labels::{self, length, point_at, Obstacles};
use super::labels::{boxed_label, label_box, Taken};
use super::layout::Plot;
use super::overlay::contrast_ink;
use super::text::Style;
use super::{contour, fieldlines, sample, FieldLines, MapInput, INK};

/// Draws the iso-value lines and their labels; `blocked` tells the pixels no label may cover
/// (conductors, outlines, no value). Returns each label's level and box.
pub(super) fn draw_contours(
    img: &mut RgbImage,
    plot: &Plot,
    samples: &sample::Samples,
    levels: &[(f64, String)],
    mask: &dyn Fn(usize, usize) -> bool,
    blocked: &dyn Fn(usize, usize) -> bool,
    taken: &mut Taken,
) -> Vec<(usize, [f32; 4])> {
    let values: Vec<f64> = levels.iter().map(|l| l.0).collect();
    let lines = contour::trace(samples, &values);
    let (w, h) = img.dimensions();
    let mut layer = Layer::new(w, h);
    let off = [plot.x0 as f64, plot.y0 as f64];
    let shifted: Vec<Vec<Vec<P>>> = lines
        .iter()
        .map(|iso| {
            iso.pieces
                .iter()
                .map(|piece| {
                    piece
                        .iter()
                        .map(|p| [p[0] + off[0], p[1] + off[1]])
                        .collect()
                })
                .collect()
        })
        .collect();
    for pts in shifted.iter().flatten() {
        layer.polyline(pts, 1.3, false);
    }
    layer.composite_with(img, 0.85, mask, contrast_ink);
    let st = Style::new(11.0, INK);
    let sizes: Vec<(f32, f32)> = levels
        .iter()
        .map(|(_, label)| {
            let b = label_box(label, st, 0.0, 0.0, 2.0);
            (b[2] - b[0], b[3] - b[1])
        })
        .collect();
    let obstacles = Obstacles::new(w as usize, h as usize, blocked, &shifted);
    let placed = contour_labels::place(plot, &shifted, &sizes, &obstacles, taken);
    for &(k, b) in &placed {
        boxed_label(img, &levels[k].1, st, b, 0.75);
    }
    placed
}

/// Distance of the field lines' seeds from a conductor's outline, px: clear of its ink.
const SEED_OFFSET: f64 = 3.0;

/// Closest two arrowheads on field lines may come, px. Lines crowd where the charge is dense
/// (under a trace in a laminate): arrowheads side by side there would read as a zigzag band.
const ARROW_SPACING: f64 = 36.0;

/// Where along `line` (px, arc length of the arrowhead's middle) an arrowhead goes: the first
/// of the middle and points stepping away from it towards both ends that is at least
/// [`ARROW_SPACING`] from every arrowhead in `taken`; `None` on a line shorter than 40 px or
/// with no such point (the line goes without one).
pub(super) fn arrow_place(line: &[P], taken: &[P]) -> Option<f64> {
    let len = length(line);
    if len <= 40.0 {
        return None;
    }
    [0.5, 0.4, 0.6, 0.3, 0.7, 0.2, 0.8]
        .iter()
        .map(|f| f * len)
        .find(|&s| {
            let p = point_at(line, s);
            taken
                .iter()
                .all(|q| (p[0] - q[0]).hypot(p[1] - q[1]) >= ARROW_SPACING)
        })
}

/// Traces and draws field lines with an arrowhead along each, clear of the others'
/// ([`arrow_place`]).
pub(super) fn draw_field_lines(
    img: &mut RgbImage,
    plot: &Plot,
    input: &MapInput,
    fl: &FieldLines,
    map_samples: &sample::Samples,
    masked: &(dyn Fn(usize, usize) -> bool + Sync),
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
    // Seeds sit just clear of the conductors' ink and fill.
    let seeds = fieldlines::seeds(&pot, &rings, &lines, fl.count, SEED_OFFSET, &inside);
    let (w, h) = img.dimensions();
    let mut layer = Layer::new(w, h);
    let mut arrows: Vec<P> = Vec::new();
    // Each line traced on its own (on every thread), then drawn in the seeds' order.
    let traced: Vec<fieldlines::FieldLine> = seeds
        .par_iter()
        .map(|&seed| fieldlines::trace(&pot, seed, &inside))
        .collect();
    for line in traced {
        let pts: Vec<P> = line.points.iter().map(|p| [p[0] + ox, p[1] + oy]).collect();
        layer.polyline(&pts, 0.9, false);
        let Some(mid) = arrow_place(&pts, &arrows) else {
            continue;
        };
        let tip = point_at(&pts, mid + 4.0);
        let back = point_at(&pts, mid - 4.0);
        arrows.push(point_at(&pts, mid));
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
    layer.composite_with(img, 0.55, masked, contrast_ink);
}
