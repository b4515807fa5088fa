//! The geometry preview of `check`: materials painted by permittivity, optionally the grid's
//! node lines, conductors filled and named, marks, axes, and a legend of the materials
//! beside the plot.
//!
//! Invariants: dielectrics are painted in the given order (a later one covers an earlier
//! one); a permittivity's colour is monotone on a log scale between the design's extremes,
//! palest for the lowest; legend entries that do not fit are counted ("… n more").

use image::{Rgb, RgbImage};

use super::canvas::{self, fill_rect, rect_outline, P};
use super::colormap::{self, NO_VALUE};
use super::labels::{boxed_label, draw_names, place_names, place_pin_labels, Owners, Taken};
use super::layout::{draw_axes, draw_title, ellipsize, layout, Frame, Layout, Plot};
use super::overlay::{conductor_layers, draw_markers, draw_pins, mark_boxes, outline_dielectrics};
use super::text::{self, HAlign, Style, VAlign};
use super::{Outline, PinKind, PreviewInput, RenderOptions, GREY_INK, INK, PAPER};

/// The frame [`render_preview`] uses for this input.
pub fn preview_frame(input: &PreviewInput, opts: &RenderOptions) -> Frame {
    let (l, _) = preview_layout(input, opts);
    Frame::of(
        &l.plot,
        [l.width as u32, l.height as u32],
        swatch_rect(&l.plot, 0),
    )
}

/// Vertical distance between legend swatches of the preview, px.
pub const LEGEND_PITCH: u32 = 20;

pub(super) fn permittivity_text(e: f64) -> String {
    let s = if e.abs() >= 1000.0 {
        format!("{e:.0}")
    } else {
        format!("{e:.3}")
    };
    let s = if s.contains('.') {
        s.trim_end_matches('0').trim_end_matches('.').to_string()
    } else {
        s
    };
    format!("εr = {s}")
}

/// Draws the geometry preview.
pub fn render_preview(input: &PreviewInput, opts: &RenderOptions) -> RgbImage {
    draw_preview(input, opts).0
}

/// The preview's legend: swatch colour and text per entry.
pub(super) struct Legend {
    pub(super) entries: Vec<(Rgb<u8>, String)>,
    /// Permittivity range, for colouring.
    pub(super) eps: [f64; 2],
}

impl Legend {
    pub(super) fn new(input: &PreviewInput) -> Legend {
        let (emin, emax) = std::iter::once(input.background_permittivity)
            .chain(input.dielectrics.iter().map(|d| d.permittivity))
            .filter(|e| e.is_finite() && *e > 0.0)
            .fold((f64::INFINITY, 0.0f64), |(a, b), e| (a.min(e), b.max(e)));
        let mut l = Legend {
            entries: Vec::new(),
            eps: [emin, emax],
        };
        let bg = input.background_permittivity;
        l.entries.push((
            l.color(bg),
            format!("background, {}", permittivity_text(bg)),
        ));
        for d in input.dielectrics {
            let name = if d.outline.name.is_empty() {
                "dielectric"
            } else {
                &d.outline.name
            };
            l.entries.push((
                l.color(d.permittivity),
                format!("{name}, {}", permittivity_text(d.permittivity)),
            ));
        }
        if !input.conductors.is_empty() {
            l.entries.push((NO_VALUE, "conductor".to_string()));
        }
        l
    }

    /// The colour of a permittivity: the light end of the sequential map, palest for the
    /// lowest, on a logarithmic scale between the design's extremes.
    pub(super) fn color(&self, e: f64) -> Rgb<u8> {
        let [lo, hi] = self.eps;
        let u = if hi > lo && e > 0.0 {
            ((e / lo).ln() / (hi / lo).ln()).clamp(0.0, 1.0)
        } else {
            0.0
        };
        colormap::sequential().at_or_fill(0.97 - 0.6 * u)
    }

    pub(super) fn width(&self) -> usize {
        let widest = self
            .entries
            .iter()
            .map(|l| text::measure(&l.1, legend_style()).width)
            .fold(0.0f32, f32::max);
        22 + 16 + 8 + widest.min(260.0).ceil() as usize + 10
    }
}

pub(super) fn legend_style() -> Style {
    Style::new(12.0, INK)
}

/// Ink of the result pictures' window on the preview: a blue no material swatch takes.
pub const WINDOW_INK: Rgb<u8> = Rgb([20, 80, 200]);

/// What the dashed window on the preview is.
const WINDOW_LABEL: &str = "window of the result pictures";

/// Outlines the window `w` ([x0, x1, y0, y1], m) cut to the domain, dashed, and labels it
/// just above its top left corner (just below, inside, when the plot's top is too near);
/// nothing when it covers the whole domain.
fn draw_window(
    img: &mut RgbImage,
    plot: &Plot,
    input: &PreviewInput,
    w: [f64; 4],
    taken: &mut Taken,
) {
    let cut = |a: f64, b: f64, ends: [f64; 2]| [a.min(b).max(ends[0]), a.max(b).min(ends[1])];
    let (x, y) = (cut(w[0], w[1], input.x), cut(w[2], w[3], input.y));
    if x[1] <= x[0] || y[1] <= y[0] || (x == input.x && y == input.y) {
        return;
    }
    let corners = [[x[0], y[0]], [x[1], y[0]], [x[1], y[1]], [x[0], y[1]]].map(|p| plot.px(p));
    let mut layer = canvas::Layer::new(img.width(), img.height());
    layer.dashed(&corners, 2.0, true, 10.0, 6.0);
    layer.composite(img, WINDOW_INK, 1.0, |x, y| plot.local(x, y).is_none());
    let st = Style::new(13.0, WINDOW_INK);
    let [left, top] = corners[3].map(|v| v as f32);
    let above = text::bounds(
        WINDOW_LABEL,
        st,
        left + 2.0,
        top - 4.0,
        HAlign::Left,
        VAlign::Bottom,
    );
    let b = if above[1] >= plot.y0 as f32 + 2.0 {
        above
    } else {
        text::bounds(
            WINDOW_LABEL,
            st,
            left + 6.0,
            top + 6.0,
            HAlign::Left,
            VAlign::Top,
        )
    };
    let b = [b[0] - 3.0, b[1] - 1.0, b[2] + 3.0, b[3] + 1.0];
    boxed_label(img, WINDOW_LABEL, st, b, 0.85);
    taken.0.push(b);
}

pub(super) fn swatch_rect(plot: &Plot, k: usize) -> [i64; 4] {
    [
        plot.right() + 22,
        plot.y0 + 2 + k as i64 * LEGEND_PITCH as i64,
        16,
        14,
    ]
}

/// Thin lines at the node columns `xs` and rows `ys` across the plot (where lines are closer
/// than a pixel they merge into a shade that shows the refinement).
fn grid_layer(plot: &Plot, [w, h]: [usize; 2], xs: &[f64], ys: &[f64]) -> canvas::Layer {
    let mut layer = canvas::Layer::new(w as u32, h as u32);
    let (x, y) = (plot.xr, plot.yr);
    for &c in xs {
        layer.segment(plot.px([c, y[0]]), plot.px([c, y[1]]), 1.0);
    }
    for &c in ys {
        layer.segment(plot.px([x[0], c]), plot.px([x[1], c]), 1.0);
    }
    layer
}

pub(super) fn preview_layout(input: &PreviewInput, opts: &RenderOptions) -> (Layout, Legend) {
    let legend = Legend::new(input);
    let (x, y) = opts.shown(input.x, input.y, input.length_unit);
    (
        layout(x, y, input.length_unit, legend.width(), opts),
        legend,
    )
}

pub(super) fn draw_preview(input: &PreviewInput, opts: &RenderOptions) -> (RgbImage, Plot) {
    let (
        Layout {
            plot,
            axes: ax,
            left: ox,
            width,
            height,
        },
        legend,
    ) = preview_layout(input, opts);
    let color_of = |e: f64| legend.color(e);
    let distorted = plot.distorted;
    let mut img = RgbImage::from_pixel(width as u32, height as u32, PAPER);

    // Materials, painted in order.
    fill_rect(
        &mut img,
        plot.x0,
        plot.y0,
        plot.right(),
        plot.bottom(),
        color_of(input.background_permittivity),
        1.0,
    );
    let (iw, ih) = (img.width() as usize, img.height() as usize);
    for d in input.dielectrics {
        let rings: Vec<Vec<P>> = d
            .outline
            .rings
            .iter()
            .map(|r| r.iter().map(|&p| plot.px(p)).collect())
            .collect();
        let c = color_of(d.permittivity);
        canvas::scan_fill(&rings, iw, ih, |y, x0, x1| {
            for x in x0..x1 {
                if plot.local(x, y).is_some() {
                    img.put_pixel(x as u32, y as u32, c);
                }
            }
        });
    }
    let outlines: Vec<Outline> = input
        .dielectrics
        .iter()
        .map(|d| d.outline.clone())
        .collect();
    // Shapes may reach past the domain (a sphere centred on the axis): clip to the plot.
    let off_plot = |x: usize, y: usize| plot.local(x, y).is_none();
    if let Some([xs, ys]) = input.grid_lines {
        grid_layer(&plot, [iw, ih], xs, ys).composite(&mut img, GREY_INK, 0.6, off_plot);
    }
    let cl = conductor_layers(&img, &plot, input.conductors);
    cl.fill.composite(&mut img, NO_VALUE, 1.0, off_plot);
    outline_dielectrics(&mut img, &plot, &outlines, &|x, y| {
        plot.local(x, y).is_none() || cl.fill.get(x, y) > 0.0
    });
    cl.edge.composite(&mut img, INK, 1.0, off_plot);
    cl.thin.composite(&mut img, INK, 1.0, off_plot);
    let mut taken = mark_boxes(&plot, input.markers, input.pins);
    if let Some(w) = input.window {
        draw_window(&mut img, &plot, input, w, &mut taken);
    }
    let owners = Owners::new(&img, &plot, input.conductors);
    let mut names = place_names(&plot, input.conductors, &outlines, &[], &owners, &mut taken);
    names.extend(place_pin_labels(
        &plot,
        input.pins,
        PinKind::Probe,
        &owners,
        &mut taken,
    ));
    draw_pins(&mut img, &plot, input.pins);
    draw_names(&mut img, &names);
    let ink = |x: usize, y: usize| {
        cl.fill.get(x, y) > 0.0 || cl.edge.get(x, y) > 0.0 || cl.thin.get(x, y) > 0.0
    };
    draw_markers(&mut img, &plot, input.markers, &mut taken, &ink);
    draw_axes(&mut img, &plot, &ax, input.length_unit, input.axis_names);

    // Legend, top-aligned beside the plot; what does not fit is counted.
    let st = legend_style();
    let fits = ((plot.h as i64 - 4) / LEGEND_PITCH as i64).max(1) as usize;
    let n = legend.entries.len();
    let shown = if n > fits { fits - 1 } else { n };
    for (k, (c, s)) in legend.entries.iter().take(shown).enumerate() {
        let [x, y, w, h] = swatch_rect(&plot, k);
        fill_rect(&mut img, x, y, x + w, y + h, *c, 1.0);
        rect_outline(&mut img, x, y, x + w, y + h, GREY_INK);
        let t = ellipsize(s, st, 260.0);
        text::draw(
            &mut img,
            &t,
            st,
            (x + w + 8) as f32,
            y as f32 + 7.0,
            HAlign::Left,
            VAlign::Middle,
        );
    }
    if shown < n {
        let [x, y, w, _] = swatch_rect(&plot, shown);
        let more = format!("… {} more", n - shown);
        text::draw(
            &mut img,
            &more,
            st,
            (x + w + 8) as f32,
            y as f32 + 7.0,
            HAlign::Left,
            VAlign::Middle,
        );
    }
    draw_title(&mut img, input.title, (ox + 10) as i64, distorted);
    (img, plot)
}
