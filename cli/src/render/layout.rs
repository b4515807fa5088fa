//! Where everything in a picture goes: the plot rectangle and its metres-to-pixels mapping,
//! the axis ticks and names around it, the picture title, and the [`Frame`] that tells
//! callers where the plot ended up.
//!
//! Invariants: a layout depends on the domain, the length unit, the width of the block beside
//! the plot and the options only, never on the values drawn; the plot keeps the domain's
//! aspect ratio unless a side would fall below `MIN_PLOT` px; pixel y runs down.

use fieldgrid_solver::design::Point;
use image::RgbImage;

use super::canvas::{fill_rect, rect_outline, P};
use super::text::{self, HAlign, Style, VAlign};
use super::{axes, LengthUnit, RenderOptions, GREY_INK, INK, MIN_PLOT};

pub(super) const TOP: usize = 48;
pub(super) const BOTTOM: usize = 60;
pub(super) const TICK: i64 = 5;

pub(super) fn tick_style() -> Style {
    Style::new(12.0, INK)
}
pub(super) fn axis_title_style() -> Style {
    Style::new(13.0, INK)
}

/// Where the plot sits and how metres map to pixels.
#[derive(Clone, Copy, Debug)]
pub(super) struct Plot {
    /// Image pixel of the plot's top-left corner.
    pub(super) x0: i64,
    pub(super) y0: i64,
    pub(super) w: usize,
    pub(super) h: usize,
    pub(super) xr: [f64; 2],
    pub(super) yr: [f64; 2],
    pub(super) distorted: bool,
}

impl Plot {
    /// A 400 x 300 px plot at (10, 10) showing 40 x 30 m, for the renderer's unit tests.
    #[cfg(test)]
    pub(super) fn for_tests() -> Plot {
        Plot {
            x0: 10,
            y0: 10,
            w: 400,
            h: 300,
            xr: [0.0, 40.0],
            yr: [0.0, 30.0],
            distorted: false,
        }
    }

    /// Image pixel coordinates of a point in metres.
    pub(super) fn px(&self, p: Point) -> P {
        [
            self.x0 as f64 + (p[0] - self.xr[0]) / (self.xr[1] - self.xr[0]) * self.w as f64,
            self.y0 as f64 + (self.yr[1] - p[1]) / (self.yr[1] - self.yr[0]) * self.h as f64,
        ]
    }

    pub(super) fn right(&self) -> i64 {
        self.x0 + self.w as i64
    }

    pub(super) fn bottom(&self) -> i64 {
        self.y0 + self.h as i64
    }

    pub(super) fn holds(&self, b: [f32; 4]) -> bool {
        b[0] >= self.x0 as f32 + 1.0
            && b[1] >= self.y0 as f32 + 1.0
            && b[2] <= self.right() as f32 - 1.0
            && b[3] <= self.bottom() as f32 - 1.0
    }

    /// Plot-local pixel (x, y) of an image pixel, if inside.
    pub(super) fn local(&self, x: usize, y: usize) -> Option<(usize, usize)> {
        let (lx, ly) = (x as i64 - self.x0, y as i64 - self.y0);
        (lx >= 0 && ly >= 0 && (lx as usize) < self.w && (ly as usize) < self.h)
            .then_some((lx as usize, ly as usize))
    }
}

/// Plot size for a domain, a picture width and the width wanted right of the plot.
pub(super) fn plot_size(
    width: usize,
    xr: [f64; 2],
    yr: [f64; 2],
    right: usize,
) -> (usize, usize, bool) {
    let avail = width.saturating_sub(110 + right).max(MIN_PLOT);
    let max_h = (width as f64 * 0.75) as usize;
    let aspect = (xr[1] - xr[0]) / (yr[1] - yr[0]);
    let aspect = if aspect.is_finite() && aspect > 0.0 {
        aspect
    } else {
        1.0
    };
    let mut w = (avail as f64).min(max_h as f64 * aspect);
    let mut h = w / aspect;
    let mut distorted = false;
    if h < MIN_PLOT as f64 {
        h = MIN_PLOT as f64;
        distorted = true;
    }
    if w < MIN_PLOT as f64 {
        w = MIN_PLOT as f64;
        distorted = true;
    }
    // Keep within one pixel of the true aspect when not distorted.
    (
        w.round().max(1.0) as usize,
        h.round().max(1.0) as usize,
        distorted,
    )
}

/// Picture width and the left edge of the centred group (axes, plot, bar or legend) of width
/// `group`: a narrow group (a tall domain) gets a narrower picture, at least 480 px.
pub(super) fn place_group(width: usize, group: usize) -> (usize, usize) {
    let width = if (group + 48) as f64 <= 0.8 * width as f64 {
        (group + 48).max(480)
    } else {
        width
    };
    (width, width.saturating_sub(group) / 2)
}

/// Ticks for an axis of `len_px` pixels showing [lo, hi] (design units): as many as fit with
/// `gap` px between label extents, each label's extent given by `extent`.
pub(super) fn axis_ticks(
    lo: f64,
    hi: f64,
    len_px: f64,
    per_px: f64,
    gap: f64,
    extent: impl Fn(&str) -> f64,
) -> Vec<(f64, String)> {
    let mut max = ((len_px / per_px) as usize + 1).clamp(2, 12);
    loop {
        let (step, ticks) = axes::ticks(lo, hi, max);
        let labels: Vec<(f64, String)> = ticks
            .iter()
            .map(|&v| (v, axes::tick_label(v, step)))
            .collect();
        let spacing = step / (hi - lo) * len_px;
        let widest = labels.iter().map(|l| extent(&l.1)).fold(0.0, f64::max);
        if spacing >= widest + gap || max <= 2 {
            return labels;
        }
        max -= 1;
    }
}

/// Everything around the plot: ticks, axis names.
pub(super) struct Axes {
    pub(super) xticks: Vec<(f64, String)>,
    pub(super) yticks: Vec<(f64, String)>,
    pub(super) left: usize,
}

pub(super) fn make_axes(xr: [f64; 2], yr: [f64; 2], w: usize, h: usize, unit: LengthUnit) -> Axes {
    let st = tick_style();
    let m = unit.metres;
    let xticks = axis_ticks(xr[0] / m, xr[1] / m, w as f64, 100.0, 14.0, |s| {
        text::measure(s, st).width as f64
    });
    let th = text::measure("0", st).height() as f64;
    let yticks = axis_ticks(yr[0] / m, yr[1] / m, h as f64, 55.0, 10.0, |_| th);
    let widest = yticks
        .iter()
        .map(|t| text::measure(&t.1, st).width)
        .fold(0.0f32, f32::max);
    let left = 10 + 18 + 10 + widest.ceil() as usize + 4 + TICK as usize;
    Axes {
        xticks,
        yticks,
        left,
    }
}

pub(super) fn draw_axes(
    img: &mut RgbImage,
    plot: &Plot,
    ax: &Axes,
    unit: LengthUnit,
    names: [&str; 2],
) {
    let st = tick_style();
    let m = unit.metres;
    rect_outline(
        img,
        plot.x0 - 1,
        plot.y0 - 1,
        plot.right() + 1,
        plot.bottom() + 1,
        GREY_INK,
    );
    for (v, label) in &ax.xticks {
        let x = plot.px([v * m, plot.yr[0]])[0].round() as i64;
        let x = x.clamp(plot.x0 - 1, plot.right());
        fill_rect(
            img,
            x,
            plot.bottom() + 1,
            x + 1,
            plot.bottom() + 1 + TICK,
            GREY_INK,
            1.0,
        );
        text::draw(
            img,
            label,
            st,
            x as f32 + 0.5,
            (plot.bottom() + TICK + 3) as f32,
            HAlign::Center,
            VAlign::Top,
        );
    }
    for (v, label) in &ax.yticks {
        let y = plot.px([plot.xr[0], v * m])[1].round() as i64;
        let y = y.clamp(plot.y0 - 1, plot.bottom());
        fill_rect(
            img,
            plot.x0 - 1 - TICK,
            y,
            plot.x0 - 1,
            y + 1,
            GREY_INK,
            1.0,
        );
        text::draw(
            img,
            label,
            st,
            (plot.x0 - TICK - 5) as f32,
            y as f32 + 0.5,
            HAlign::Right,
            VAlign::Middle,
        );
    }
    let at = axis_title_style();
    let cx = plot.x0 as f32 + plot.w as f32 / 2.0;
    let xt = format!("{} ({})", names[0], unit.label);
    text::draw(
        img,
        &xt,
        at,
        cx,
        (plot.bottom() + 44) as f32,
        HAlign::Center,
        VAlign::Baseline,
    );
    let widest = ax
        .yticks
        .iter()
        .map(|t| text::measure(&t.1, st).width)
        .fold(0.0f32, f32::max);
    let yt = format!("{} ({})", names[1], unit.label);
    let cx = plot.x0 as f32 - (TICK as f32 + 5.0 + widest + 10.0 + 9.0);
    text::draw_vertical(img, &yt, at, cx, plot.y0 as f32 + plot.h as f32 / 2.0);
}

pub(super) fn draw_title(img: &mut RgbImage, title: &str, left: i64, distorted: bool) {
    let st = Style::new(19.0, INK).bold();
    let mut x = left.max(8) as f32;
    let maxw = img.width() as f32 - x - 8.0;
    let t = ellipsize(title, st, maxw);
    if !t.is_empty() {
        let b = text::draw(img, &t, st, x, 30.0, HAlign::Left, VAlign::Baseline);
        x = b[2] + 12.0;
    }
    if distorted {
        let note = Style::new(13.0, GREY_INK);
        text::draw(
            img,
            "(axes not to scale)",
            note,
            x,
            30.0,
            HAlign::Left,
            VAlign::Baseline,
        );
    }
}

/// `s`, shortened with an ellipsis to fit `maxw` px.
pub(super) fn ellipsize(s: &str, st: Style, maxw: f32) -> String {
    if text::measure(s, st).width <= maxw {
        return s.to_string();
    }
    let mut chars: Vec<char> = s.chars().collect();
    while !chars.is_empty() {
        chars.pop();
        let t: String = chars.iter().collect::<String>() + "…";
        if text::measure(&t, st).width <= maxw {
            return t;
        }
    }
    String::new()
}

/// Where a picture put its plot and its colour bar or legend, for probing pictures (in tests,
/// say) at known places.
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct Frame {
    /// Picture width and height, px.
    pub size: [u32; 2],
    /// Plot area: left, top, width, height, px.
    pub plot: [u32; 4],
    /// A map's colour bar (left, top, width, height, px; top row is the high end), or a
    /// preview's first legend swatch (the next ones follow
    /// [`LEGEND_PITCH`](super::LEGEND_PITCH) px lower).
    pub side: [u32; 4],
    /// Domain shown, m.
    pub x: [f64; 2],
    /// Domain shown, m.
    pub y: [f64; 2],
    /// True when the axes are not to scale.
    pub distorted: bool,
}

impl Frame {
    /// Picture pixel coordinates (x right, y down, fractional) of a point in metres.
    pub fn pixel(&self, p: Point) -> [f64; 2] {
        let [x0, y0, w, h] = self.plot.map(f64::from);
        [
            x0 + (p[0] - self.x[0]) / (self.x[1] - self.x[0]) * w,
            y0 + (self.y[1] - p[1]) / (self.y[1] - self.y[0]) * h,
        ]
    }

    pub(super) fn of(plot: &Plot, size: [u32; 2], side: [i64; 4]) -> Frame {
        Frame {
            size,
            plot: [plot.x0 as u32, plot.y0 as u32, plot.w as u32, plot.h as u32],
            side: side.map(|v| v.max(0) as u32),
            x: plot.xr,
            y: plot.yr,
            distorted: plot.distorted,
        }
    }
}

/// The placement of everything in a picture.
pub(super) struct Layout {
    pub(super) plot: Plot,
    pub(super) axes: Axes,
    /// Left edge of the group (axes, plot, bar or legend), px.
    pub(super) left: usize,
    pub(super) width: usize,
    pub(super) height: usize,
}

/// Lays out a picture of the domain `xr` by `yr` with a block `right` px wide beside the plot.
pub(super) fn layout(
    xr: [f64; 2],
    yr: [f64; 2],
    unit: LengthUnit,
    right: usize,
    opts: &RenderOptions,
) -> Layout {
    let width = opts.width.clamp(400, 8000) as usize;
    let (pw, ph, distorted) = plot_size(width, xr, yr, right + 30);
    let axes = make_axes(xr, yr, pw, ph, unit);
    let (width, left) = place_group(width, axes.left + pw + right);
    let plot = Plot {
        x0: (left + axes.left) as i64,
        y0: TOP as i64,
        w: pw,
        h: ph,
        xr,
        yr,
        distorted,
    };
    Layout {
        plot,
        axes,
        left,
        width,
        height: TOP + ph + BOTTOM,
    }
}
