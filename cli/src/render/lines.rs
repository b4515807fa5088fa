//! Lines over a map: equipotentials (iso-value lines, labelled where `contour_labels` finds
//! a clear stretch) and field lines seeded on the conductors, with an arrowhead along E.
//!
//! Invariants: no line is drawn over a pixel the caller's mask excludes (no value, inside a
//! conductor, off the plot); a contour label takes a box only where it is clear of what the
//! caller blocks, of other lines and of other labels; lengths and positions are image pixels.

use fieldgrid_solver::design::Point;
use image::RgbImage;

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
