//! A field map as a whole: lays out the plot and the colour bar, paints the resampled values,
//! then the overlays and lines in a fixed order, the axes, the bar and the title.
//!
//! Invariants: one value per grid node; a map's frame depends on the grid, the length unit
//! and the options only; with a zoom window the colour range follows the nodes in the window
//! (and one node line around it); drawing order is colours, conductor fill, field lines,
//! contours, dielectric outlines, another revision's outlines, conductor outlines, names,
//! pins, marks, axes, bar, title.

use fieldgrid_solver::grid::Grid;
use image::RgbImage;
use rayon::prelude::*;

use super::canvas::{Layer, P};
use super::color_scale::{bar_rect, bar_ticks, draw_bar, ColorScale, BAR_BLOCK};
use super::colormap::NO_VALUE;
use super::labels::{draw_names, place_names, place_pin_labels, Owners};
use super::layout::{draw_axes, draw_title, layout, Frame, Layout, Plot};
use super::lines::{draw_contours, draw_field_lines};
use super::overlay::{
    conductor_layers, draw_markers, draw_pins, mark_boxes, outline_dielectrics, outline_former,
};
use super::{sample, LengthUnit, MapInput, PinKind, RenderOptions, INK, PAPER};

/// The frame [`render_map`] uses for a grid: it depends on the grid, the length unit and the
/// options only, not on the values.
pub fn map_frame(grid: &Grid, length_unit: LengthUnit, opts: &RenderOptions) -> Frame {
    let l = map_layout(grid, length_unit, opts);
    Frame::of(
        &l.plot,
        [l.width as u32, l.height as u32],
        bar_rect(&l.plot),
    )
}

pub(super) fn map_layout(grid: &Grid, unit: LengthUnit, opts: &RenderOptions) -> Layout {
    let (x, y) = opts.shown([grid.x0(), grid.x1()], [grid.y0(), grid.y1()], unit);
    layout(x, y, unit, BAR_BLOCK, opts)
}

/// With a zoom window in `opts`, the values of the nodes in it (and one node line around it)
/// with NaN for the others, as the colour range sees them; `None` without a window.
pub fn shown_values(
    grid: &Grid,
    values: &[f64],
    unit: LengthUnit,
    opts: &RenderOptions,
) -> Option<Vec<f64>> {
    let whole = ([grid.x0(), grid.x1()], [grid.y0(), grid.y1()]);
    let (x, y) = opts.shown(whole.0, whole.1, unit);
    ((x, y) != whole).then(|| in_window(grid, values, x, y))
}

/// The values of the nodes in the window `x` by `y` and one node line around it; NaN for the
/// others (they set no colour range).
fn in_window(grid: &Grid, values: &[f64], x: [f64; 2], y: [f64; 2]) -> Vec<f64> {
    let span = |lines: &[f64], r: [f64; 2]| {
        let a = lines.partition_point(|&v| v < r[0]).saturating_sub(1);
        let b = (lines.partition_point(|&v| v <= r[1]) + 1).min(lines.len());
        a..b
    };
    let (xs, ys) = (span(grid.xs(), x), span(grid.ys(), y));
    let mut out = vec![f64::NAN; values.len()];
    for j in ys {
        for i in xs.clone() {
            out[grid.idx(i, j)] = values[grid.idx(i, j)];
        }
    }
    out
}
/// Draws a field map.
pub fn render_map(input: &MapInput, opts: &RenderOptions) -> RgbImage {
    draw_map(input, opts).0
}

pub(super) fn draw_map(input: &MapInput, opts: &RenderOptions) -> (RgbImage, Plot) {
    let grid = input.grid;
    assert_eq!(input.values.len(), grid.len(), "one value per grid node");
    let Layout {
        plot,
        axes: ax,
        left,
        width,
        height,
    } = map_layout(grid, input.length_unit, opts);
    let whole = plot.xr == [grid.x0(), grid.x1()] && plot.yr == [grid.y0(), grid.y1()];
    let cs = if whole {
        ColorScale::new(input)
    } else {
        let shown = in_window(grid, input.values, plot.xr, plot.yr);
        ColorScale::new(&MapInput {
            values: &shown,
            ..*input
        })
    };
    let bar_ticks = bar_ticks(&cs, plot.h);
    let (xr, yr, pw, ph) = (plot.xr, plot.yr, plot.w, plot.h);
    let mut img = RgbImage::from_pixel(width as u32, height as u32, PAPER);

    // Field colours, up to the conductors' outlines.
    let cl = conductor_layers(&img, &plot, input.conductors);
    let mut samples = sample::resample(grid, input.values, xr, yr, pw, ph);
    let on_conductor = |x: usize, y: usize| {
        cl.fill.get(x, y) > 0.0 || cl.edge.get(x, y) > 0.0 || cl.thin.get(x, y) > 0.0
    };
    let (iw, ih) = (img.width() as i64, img.height() as i64);
    sample::fill_band(
        &mut samples,
        grid,
        input.values,
        xr,
        yr,
        |node| {
            // A node on an outline lies on its ink, within a pixel of the fill.
            let p = plot.px(node);
            let (cx, cy) = (p[0].floor() as i64, p[1].floor() as i64);
            (-1..=1).any(|dy| {
                (-1..=1).any(|dx| {
                    let (x, y) = (cx + dx, cy + dy);
                    x >= 0 && y >= 0 && x < iw && y < ih && on_conductor(x as usize, y as usize)
                })
            })
        },
        |lx, ly| cl.fill.get(plot.x0 as usize + lx, plot.y0 as usize + ly) > 0.0,
    );
    // Rows on their own: the same pixels on any number of threads.
    let (x0, y0) = (plot.x0 as usize, plot.y0 as usize);
    let stride = 3 * img.width() as usize;
    let raw: &mut [u8] = &mut img;
    raw.par_chunks_mut(stride)
        .skip(y0)
        .take(ph)
        .enumerate()
        .for_each(|(ly, row)| {
            for (lx, px) in row[3 * x0..][..3 * pw].chunks_exact_mut(3).enumerate() {
                px.copy_from_slice(&cs.color(samples.at(lx, ly)).0);
            }
        });

    // Conductor fill, then lines (kept off conductors and value-less pixels), then outlines,
    // names and marks on top. Marks and names are placed before contour labels so that the
    // labels give way to them.
    // Shapes may reach past the domain (a sphere centred on the axis): clip to the plot.
    let off_plot = |x: usize, y: usize| plot.local(x, y).is_none();
    cl.fill.composite(&mut img, NO_VALUE, 1.0, off_plot);
    let masked = |x: usize, y: usize| match plot.local(x, y) {
        Some((lx, ly)) => {
            samples.at(lx, ly).is_nan() || cl.fill.get(x, y) > 0.0 || cl.thin.get(x, y) > 0.0
        }
        None => true,
    };
    let mut taken = mark_boxes(&plot, input.markers, input.pins);
    let owners = Owners::new(&img, &plot, input.conductors);
    let mut names = place_pin_labels(&plot, input.pins, PinKind::WorstMargin, &owners, &mut taken);
    names.extend(place_names(
        &plot,
        input.conductors,
        input.dielectrics,
        input.former,
        &owners,
        &mut taken,
    ));
    names.extend(place_pin_labels(
        &plot,
        input.pins,
        PinKind::Probe,
        &owners,
        &mut taken,
    ));
    if let Some(fl) = input.field_lines {
        draw_field_lines(&mut img, &plot, input, &fl, &samples, &masked);
    }
    let levels = cs.levels(input.contours, input.unit);
    if !levels.is_empty() {
        // Contour labels keep off conductors, every outline and value-less pixels.
        let mut outlines = Layer::new(img.width(), img.height());
        for o in input.dielectrics.iter().chain(input.former) {
            for r in &o.rings {
                let pts: Vec<P> = r.iter().map(|&p| plot.px(p)).collect();
                outlines.polyline(&pts, 1.5, true);
            }
            for l in &o.lines {
                let pts: Vec<P> = l.iter().map(|&p| plot.px(p)).collect();
                outlines.polyline(&pts, 1.5, false);
            }
        }
        let blocked = |x: usize, y: usize| {
            masked(x, y)
                || cl.edge.get(x, y) > 0.0
                || cl.thin.get(x, y) > 0.0
                || outlines.get(x, y) > 0.0
        };
        draw_contours(
            &mut img, &plot, &samples, &levels, &masked, &blocked, &mut taken,
        );
    }
    outline_dielectrics(&mut img, &plot, input.dielectrics, &masked);
    outline_former(&mut img, &plot, input.former, &off_plot);
    cl.edge.composite(&mut img, INK, 1.0, off_plot);
    cl.thin.composite(&mut img, INK, 1.0, off_plot);
    draw_pins(&mut img, &plot, input.pins);
    draw_names(&mut img, &names);
    draw_markers(&mut img, &plot, input.markers, &mut taken, &on_conductor);

    draw_axes(&mut img, &plot, &ax, input.length_unit, input.axis_names);
    let unit = cs.unit(input.unit);
    let bar_label = match (input.quantity.is_empty(), unit.is_empty()) {
        (false, false) => format!("{} ({unit})", input.quantity),
        (false, true) => input.quantity.to_string(),
        (true, _) => unit,
    };
    draw_bar(&mut img, &plot, &cs, &bar_ticks, &bar_label, input.unit);
    draw_title(&mut img, input.title, (left + 10) as i64, plot.distorted);
    (img, plot)
}
