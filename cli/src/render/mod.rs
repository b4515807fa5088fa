//! The pictures: field maps (`potential.png`, `field.png`) and the geometry preview of
//! `check`, drawn into 8-bit RGB images. Writing the PNG file is the caller's business.
//!
//! A map is the node values resampled to the plot's pixels ([`sample`]), coloured with one of
//! our perceptually uniform maps ([`colormap`]), with equipotential lines at round values
//! ([`contour`]), optional field lines seeded by surface charge ([`fieldlines`]), conductors
//! filled grey, outlined and named, dielectric outlines dashed, hot spots marked and numbered,
//! round axis ticks in the design's length unit ([`axes`]), a colour bar with values and the
//! SI unit, and a title, in an embedded open font ([`text`]).
//!
//! Invariants:
//! - The output is a pure function of the input: same input, same pixels.
//! - The plot keeps the domain's aspect ratio unless that would make one side shorter than
//!   [`MIN_PLOT`] pixels; then the short side is stretched and the title says the axes are not
//!   to scale. Picture width is [`RenderOptions::width`]; its height follows the layout.
//! - Node values are sampled once per plot pixel, so the work grows with the picture size and
//!   only linearly with the node count (one pass for the value range).
//! - A pixel without a value (NaN node values, e.g. inside conductors) is painted
//!   [`colormap::NO_VALUE`], never a colour of the map; lines are not drawn over such pixels.

pub mod axes;
pub mod canvas;
pub mod colormap;
pub mod contour;
pub mod fieldlines;
pub mod outline;
pub mod sample;
pub mod text;

use fieldgrid_solver::design::Point;
use fieldgrid_solver::grid::Grid;
use image::{Rgb, RgbImage};

use canvas::{fill_rect, rect_outline, Layer, P};
use colormap::{Table, NO_VALUE};
pub use outline::Outline;
use text::{HAlign, Style, VAlign};

/// Shortest plot side, px, before the aspect ratio gives way.
pub const MIN_PLOT: usize = 160;

/// Paper colour.
pub const PAPER: Rgb<u8> = Rgb([255, 255, 255]);
/// Text, outline and tick colour.
pub const INK: Rgb<u8> = Rgb([20, 20, 20]);
/// Frame and secondary text colour.
const GREY_INK: Rgb<u8> = Rgb([90, 90, 90]);

/// A numbered mark, e.g. a hot spot (numbers match `hotspots.csv`).
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct Marker {
    /// Position, m.
    pub at: Point,
    /// Number written beside it.
    pub number: u32,
}

/// The design's length unit for tick labels.
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct LengthUnit<'a> {
    /// Symbol, e.g. "mm".
    pub label: &'a str,
    /// Metres per unit, e.g. 1e-3.
    pub metres: f64,
}

impl Default for LengthUnit<'_> {
    fn default() -> Self {
        LengthUnit {
            label: "m",
            metres: 1.0,
        }
    }
}

/// Which iso-value lines to draw.
#[derive(Clone, Copy, Debug, PartialEq)]
pub enum ContourStyle {
    /// None.
    None,
    /// Round values (1-2-5 steps), about ten lines; on a log scale 1-2-5 per decade.
    Auto,
    /// Every multiple of this step (in the quantity's SI unit); none if it would give
    /// more than 200 lines.
    Step(f64),
}

/// How values map to colours.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub enum Scale {
    /// Proportional.
    Linear,
    /// Logarithmic, over at most four decades below the maximum (values at or below the floor
    /// take the lowest colour). Falls back to linear when no value is positive.
    Log,
}

/// Which colour map.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub enum Palette {
    /// Diverging when the values take both signs on a linear scale (the smaller side beyond
    /// 1 % of the larger), sequential otherwise.
    Auto,
    /// [`colormap::sequential`].
    Sequential,
    /// [`colormap::diverging`], centred on zero.
    Diverging,
}

/// Field lines over a map, seeded on the conductors in proportion to their surface charge.
#[derive(Clone, Copy, Debug)]
pub struct FieldLines<'a> {
    /// Potential per node (index i + j*nx), V; NaN inside conductors is fine.
    pub potential: &'a [f64],
    /// About how many lines (all conductors together).
    pub count: usize,
    /// Relative permittivity per node, if the lines should follow the surface charge in
    /// dielectrics too (otherwise they follow the normal field alone).
    pub permittivity: Option<&'a [f64]>,
}

/// A field map to draw.
#[derive(Clone, Copy, Debug)]
pub struct MapInput<'a> {
    /// The node lattice; the plot spans its extent.
    pub grid: &'a Grid,
    /// One value per node (index i + j*nx); NaN for none (inside conductors).
    pub values: &'a [f64],
    /// Title line at the top.
    pub title: &'a str,
    /// What the values are, for the colour bar, e.g. "potential".
    pub quantity: &'a str,
    /// SI unit of the values, e.g. "V", "V/m"; prefixes are added as needed.
    pub unit: &'a str,
    /// Unit of the axis ticks.
    pub length_unit: LengthUnit<'a>,
    /// Names of the horizontal and vertical axes, e.g. ["x", "y"] or ["r", "z"].
    pub axis_names: [&'a str; 2],
    /// Conductors: filled grey, outlined, named.
    pub conductors: &'a [Outline],
    /// Dielectrics: dashed outline, named.
    pub dielectrics: &'a [Outline],
    /// Numbered marks.
    pub markers: &'a [Marker],
    /// Iso-value lines.
    pub contours: ContourStyle,
    /// Colour scale.
    pub scale: Scale,
    /// Colour map.
    pub palette: Palette,
    /// Value range of the colour bar (SI); `None` for the range of the values.
    pub range: Option<[f64; 2]>,
    /// Field lines, if wanted.
    pub field_lines: Option<FieldLines<'a>>,
}

impl<'a> MapInput<'a> {
    /// A map of `values` on `grid` with no title, no unit, no outlines, automatic contours, a
    /// linear scale and the automatic palette; set the other fields with struct update syntax.
    pub fn new(grid: &'a Grid, values: &'a [f64]) -> MapInput<'a> {
        MapInput {
            grid,
            values,
            title: "",
            quantity: "",
            unit: "",
            length_unit: LengthUnit::default(),
            axis_names: ["x", "y"],
            conductors: &[],
            dielectrics: &[],
            markers: &[],
            contours: ContourStyle::Auto,
            scale: Scale::Linear,
            palette: Palette::Auto,
            range: None,
            field_lines: None,
        }
    }
}

/// A dielectric region for the preview.
#[derive(Clone, Debug, PartialEq)]
pub struct Material {
    /// Its outline and name.
    pub outline: Outline,
    /// Relative permittivity.
    pub permittivity: f64,
}

/// The geometry preview of `check`: materials coloured by permittivity, conductors named.
#[derive(Clone, Copy, Debug)]
pub struct PreviewInput<'a> {
    /// Title line.
    pub title: &'a str,
    /// Domain x extent, m.
    pub x: [f64; 2],
    /// Domain y extent, m.
    pub y: [f64; 2],
    /// Unit of the axis ticks.
    pub length_unit: LengthUnit<'a>,
    /// Names of the horizontal and vertical axes.
    pub axis_names: [&'a str; 2],
    /// Relative permittivity of the background.
    pub background_permittivity: f64,
    /// Dielectrics in painting order (a later one covers an earlier one).
    pub dielectrics: &'a [Material],
    /// Conductors.
    pub conductors: &'a [Outline],
    /// Numbered marks (e.g. probes).
    pub markers: &'a [Marker],
}

impl<'a> PreviewInput<'a> {
    /// A preview of the domain `x` by `y` (m) with nothing in it yet.
    pub fn new(x: [f64; 2], y: [f64; 2]) -> PreviewInput<'a> {
        PreviewInput {
            title: "",
            x,
            y,
            length_unit: LengthUnit::default(),
            axis_names: ["x", "y"],
            background_permittivity: 1.0,
            dielectrics: &[],
            conductors: &[],
            markers: &[],
        }
    }
}

/// Picture options.
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct RenderOptions {
    /// Picture width, px (clamped to 400..=8000); a tall, narrow domain gets a narrower
    /// picture.
    pub width: u32,
}

impl Default for RenderOptions {
    fn default() -> Self {
        RenderOptions { width: 1200 }
    }
}

// ---------------------------------------------------------------------------------------------
// Layout

const TOP: usize = 48;
const BOTTOM: usize = 60;
const TICK: i64 = 5;

fn tick_style() -> Style {
    Style::new(12.0, INK)
}
fn axis_title_style() -> Style {
    Style::new(13.0, INK)
}

/// Where the plot sits and how metres map to pixels.
#[derive(Clone, Copy, Debug)]
struct Plot {
    /// Image pixel of the plot's top-left corner.
    x0: i64,
    y0: i64,
    w: usize,
    h: usize,
    xr: [f64; 2],
    yr: [f64; 2],
    distorted: bool,
}

impl Plot {
    /// Image pixel coordinates of a point in metres.
    fn px(&self, p: Point) -> P {
        [
            self.x0 as f64 + (p[0] - self.xr[0]) / (self.xr[1] - self.xr[0]) * self.w as f64,
            self.y0 as f64 + (self.yr[1] - p[1]) / (self.yr[1] - self.yr[0]) * self.h as f64,
        ]
    }

    fn right(&self) -> i64 {
        self.x0 + self.w as i64
    }

    fn bottom(&self) -> i64 {
        self.y0 + self.h as i64
    }

    fn holds(&self, b: [f32; 4]) -> bool {
        b[0] >= self.x0 as f32 + 1.0
            && b[1] >= self.y0 as f32 + 1.0
            && b[2] <= self.right() as f32 - 1.0
            && b[3] <= self.bottom() as f32 - 1.0
    }

    /// Plot-local pixel (x, y) of an image pixel, if inside.
    fn local(&self, x: usize, y: usize) -> Option<(usize, usize)> {
        let (lx, ly) = (x as i64 - self.x0, y as i64 - self.y0);
        (lx >= 0 && ly >= 0 && (lx as usize) < self.w && (ly as usize) < self.h)
            .then_some((lx as usize, ly as usize))
    }
}

/// Plot size for a domain, a picture width and the width wanted right of the plot.
fn plot_size(width: usize, xr: [f64; 2], yr: [f64; 2], right: usize) -> (usize, usize, bool) {
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
fn place_group(width: usize, group: usize) -> (usize, usize) {
    let width = if (group + 48) as f64 <= 0.8 * width as f64 {
        (group + 48).max(480)
    } else {
        width
    };
    (width, width.saturating_sub(group) / 2)
}

/// Ticks for an axis of `len_px` pixels showing [lo, hi] (design units): as many as fit with
/// `gap` px between label extents, each label's extent given by `extent`.
fn axis_ticks(
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
struct Axes {
    xticks: Vec<(f64, String)>,
    yticks: Vec<(f64, String)>,
    left: usize,
}

fn make_axes(xr: [f64; 2], yr: [f64; 2], w: usize, h: usize, unit: LengthUnit) -> Axes {
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

fn draw_axes(img: &mut RgbImage, plot: &Plot, ax: &Axes, unit: LengthUnit, names: [&str; 2]) {
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

fn draw_title(img: &mut RgbImage, title: &str, left: i64, distorted: bool) {
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
fn ellipsize(s: &str, st: Style, maxw: f32) -> String {
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

// ---------------------------------------------------------------------------------------------
// Colour scale

/// Maps values to colours and writes the colour bar's numbers.
#[derive(Clone, Debug)]
struct ColorScale {
    lo: f64,
    hi: f64,
    log: bool,
    table: &'static Table,
    /// SI prefix exponent for linear labels.
    exp3: i32,
    /// Some values lie above `hi` / below `lo` (a range narrower than the values): the bar
    /// gets a pointed cap at that end.
    over: bool,
    under: bool,
}

impl ColorScale {
    fn new(input: &MapInput) -> ColorScale {
        let found = sample::finite_range(input.values);
        let (mut lo, mut hi) = match (input.range, found) {
            (Some(r), _) if r[0].is_finite() && r[1].is_finite() && r[1] > r[0] => (r[0], r[1]),
            (_, Some(f)) => f,
            _ => (0.0, 1.0),
        };
        let log = input.scale == Scale::Log && hi > 0.0;
        if log {
            let floor = hi * 1e-4;
            let base = if input.range.is_some() && lo > 0.0 {
                lo
            } else {
                sample::min_positive(input.values).unwrap_or(floor)
            };
            lo = base.max(floor);
            if lo >= hi {
                lo = hi / 10.0;
            }
        }
        let diverging = match input.palette {
            Palette::Diverging => true,
            Palette::Sequential => false,
            Palette::Auto => {
                // Both signs, each beyond 1 % of the other: round-off below zero in a
                // one-signed field does not count.
                !log && lo < 0.0 && hi > 0.0 && lo.abs().min(hi) > 0.01 * lo.abs().max(hi)
            }
        } && !log;
        if diverging {
            let m = lo.abs().max(hi.abs());
            (lo, hi) = (-m, m);
        }
        if hi.partial_cmp(&lo) != Some(std::cmp::Ordering::Greater) {
            // A constant field: zero shows on 0..1 (never a negative magnitude), anything
            // else on +-5 % around it.
            (lo, hi) = if lo == 0.0 {
                (0.0, 1.0)
            } else {
                (lo - lo.abs() * 0.05, hi + hi.abs() * 0.05)
            };
        }
        let (over, under) = match found {
            Some((flo, fhi)) => (fhi > hi, !log && flo < lo),
            None => (false, false),
        };
        let table = if diverging {
            colormap::diverging()
        } else {
            colormap::sequential()
        };
        let exp3 = if input.unit.is_empty() {
            0
        } else {
            // Rounded up to one digit first, so 0.999 V reads as volts, not 999 mV.
            axes::prefix_exponent(axes::round_up(lo.abs().max(hi.abs())))
        };
        ColorScale {
            lo,
            hi,
            log,
            table,
            exp3,
            over,
            under,
        }
    }

    fn t(&self, v: f64) -> f64 {
        if self.log {
            (v.max(self.lo).ln() - self.lo.ln()) / (self.hi.ln() - self.lo.ln())
        } else {
            (v - self.lo) / (self.hi - self.lo)
        }
    }

    fn color(&self, v: f64) -> Rgb<u8> {
        if v.is_nan() {
            NO_VALUE
        } else {
            self.table.at_or_fill(self.t(v))
        }
    }

    fn scale(&self) -> f64 {
        10f64.powi(self.exp3)
    }

    /// The unit as written on the bar: with the prefix on a linear scale.
    fn unit(&self, unit: &str) -> String {
        if self.log {
            unit.to_string()
        } else {
            format!("{}{}", axes::prefix(self.exp3), unit)
        }
    }

    /// Bar ticks: (value, label), at most `max`.
    fn ticks(&self, max: usize) -> Vec<(f64, String)> {
        if self.log {
            let decades = (self.hi / self.lo).log10();
            let mantissas: &[f64] = if decades > 2.0 {
                &[1.0]
            } else {
                &[1.0, 2.0, 5.0]
            };
            let (d0, d1) = (
                self.lo.log10().floor() as i32,
                self.hi.log10().ceil() as i32,
            );
            let slack = 1e-9;
            let mut v: Vec<f64> = (d0..=d1)
                .flat_map(|d| mantissas.iter().map(move |m| m * 10f64.powi(d)))
                .filter(|&x| x >= self.lo * (1.0 - slack) && x <= self.hi * (1.0 + slack))
                .collect();
            while v.len() > max {
                v = v.into_iter().step_by(2).collect();
            }
            if v.len() < 2 {
                v = vec![self.lo, self.hi];
            }
            v.into_iter().map(|x| (x, axes::si(x))).collect()
        } else {
            let s = self.scale();
            let (step, t) = axes::ticks(self.lo / s, self.hi / s, max);
            t.into_iter()
                .map(|x| (x * s, axes::tick_label(x, step)))
                .collect()
        }
    }

    /// Contour levels and their labels.
    fn levels(&self, style: ContourStyle, unit: &str) -> Vec<(f64, String)> {
        let s = self.scale();
        let with_unit = |n: String| {
            if unit.is_empty() {
                n
            } else {
                format!("{n} {}", self.unit(unit))
            }
        };
        match style {
            ContourStyle::None => Vec::new(),
            ContourStyle::Auto if self.log => contour::log_levels(self.lo, self.hi)
                .into_iter()
                .map(|v| {
                    (
                        v,
                        if unit.is_empty() {
                            axes::si(v)
                        } else {
                            format!("{}{unit}", axes::si(v))
                        },
                    )
                })
                .map(|(v, l)| (v, l.replace(" ", "\u{2009}").replacen('\u{2009}', " ", 1)))
                .collect(),
            ContourStyle::Auto | ContourStyle::Step(_) => {
                let (step, levels) = match style {
                    ContourStyle::Step(st) => {
                        (st, contour::stepped_levels(self.lo, self.hi, st, 200))
                    }
                    _ => contour::linear_levels(self.lo, self.hi, 10),
                };
                let dec = axes::decimals(step / s);
                levels
                    .into_iter()
                    .map(|v| (v, with_unit(axes::fixed(v / s, dec))))
                    .collect()
            }
        }
    }
}

const BAR_GAP: i64 = 22;
const BAR_W: i64 = 18;
/// Height of the pointed cap at a saturated end of the colour bar, px.
const BAR_CAP: i64 = 12;

fn bar_label_style() -> Style {
    Style::new(12.0, INK)
}

/// Width of the colour bar block right of the plot: gap, bar, ticks, labels up to 56 px (wider
/// ones spill into the margin) and the bar's title. Fixed, so that a map's layout depends on
/// its grid and options only, never on its values.
const BAR_BLOCK: usize = BAR_GAP as usize + BAR_W as usize + 8 + 56 + 10 + 18 + 8;

/// The colour bar's ticks for a bar `h` px tall.
fn bar_ticks(cs: &ColorScale, h: usize) -> Vec<(f64, String)> {
    cs.ticks((h / 40).clamp(2, 10))
}

fn draw_bar(
    img: &mut RgbImage,
    plot: &Plot,
    cs: &ColorScale,
    ticks: &[(f64, String)],
    label: &str,
) {
    let x0 = plot.right() + BAR_GAP;
    let (y0, h) = (plot.y0, plot.h as i64);
    for r in 0..h {
        let t = 1.0 - (r as f64 + 0.5) / h as f64;
        let c = cs.table.at_or_fill(t);
        fill_rect(img, x0, y0 + r, x0 + BAR_W, y0 + r + 1, c, 1.0);
    }
    rect_outline(img, x0 - 1, y0 - 1, x0 + BAR_W + 1, y0 + h + 1, GREY_INK);
    // Pointed caps: values beyond the bar's end take its end colour.
    for (on, base, dir, t) in [(cs.over, y0 - 2, -1, 1.0), (cs.under, y0 + h + 1, 1, 0.0)] {
        if !on {
            continue;
        }
        let c = cs.table.at_or_fill(t);
        for k in 0..BAR_CAP {
            // Row k of the cap: full bar width at its base, narrowing to a point.
            let half = (BAR_W + 2) * (BAR_CAP - k) / (2 * BAR_CAP);
            let y = base + dir * k;
            let mid = x0 + BAR_W / 2;
            fill_rect(img, mid - half, y, mid + half, y + 1, c, 1.0);
            fill_rect(img, mid - half - 1, y, mid - half, y + 1, GREY_INK, 1.0);
            fill_rect(img, mid + half, y, mid + half + 1, y + 1, GREY_INK, 1.0);
        }
    }
    let st = bar_label_style();
    let mut widest = 0.0f32;
    for (v, l) in ticks {
        let t = cs.t(*v).clamp(0.0, 1.0);
        let y = (y0 as f64 + (1.0 - t) * h as f64).round() as i64;
        let y = y.clamp(y0, y0 + h - 1);
        fill_rect(
            img,
            x0 + BAR_W + 1,
            y,
            x0 + BAR_W + 1 + TICK,
            y + 1,
            GREY_INK,
            1.0,
        );
        let b = text::draw(
            img,
            l,
            st,
            (x0 + BAR_W + 8) as f32,
            y as f32 + 0.5,
            HAlign::Left,
            VAlign::Middle,
        );
        widest = widest.max(b[2] - b[0]);
    }
    let cx = (x0 + BAR_W + 8) as f32 + widest + 10.0 + 9.0;
    text::draw_vertical(
        img,
        label,
        axis_title_style(),
        cx,
        y0 as f32 + h as f32 / 2.0,
    );
}

// ---------------------------------------------------------------------------------------------
// Overlays

/// Boxes already taken by labels and marks, so later labels avoid them.
#[derive(Default)]
struct Taken(Vec<[f32; 4]>);

impl Taken {
    fn free(&self, b: [f32; 4]) -> bool {
        self.0
            .iter()
            .all(|o| b[2] < o[0] || b[0] > o[2] || b[3] < o[1] || b[1] > o[3])
    }
}

/// Text on a light box: returns the box.
fn boxed_label(img: &mut RgbImage, s: &str, st: Style, b: [f32; 4], bg_alpha: f32) {
    fill_rect(
        img,
        b[0].round() as i64,
        b[1].round() as i64,
        b[2].round() as i64,
        b[3].round() as i64,
        PAPER,
        bg_alpha,
    );
    let cx = (b[0] + b[2]) / 2.0;
    let cy = (b[1] + b[3]) / 2.0;
    text::draw(img, s, st, cx, cy, HAlign::Center, VAlign::Middle);
}

/// A label box of `s` centred on (cx, cy) with padding.
fn label_box(s: &str, st: Style, cx: f32, cy: f32, pad: f32) -> [f32; 4] {
    let m = text::measure(s, st);
    let (w, h) = (m.width + 2.0 * pad, m.height() + pad);
    [cx - w / 2.0, cy - h / 2.0, cx + w / 2.0, cy + h / 2.0]
}

/// Places a name for an outline with pixel bounds `pb`: centred inside if it fits, otherwise
/// just outside (above, below, right, left), inside the plot and clear of taken boxes.
fn place_name(
    s: &str,
    st: Style,
    pb: [f64; 4],
    plot: &Plot,
    taken: &Taken,
    inside_first: bool,
) -> Option<[f32; 4]> {
    let m = text::measure(s, st);
    let (bw, bh) = (m.width + 8.0, m.height() + 3.0);
    let pb = pb.map(|v| v as f32);
    let (cx, cy) = ((pb[0] + pb[2]) / 2.0, (pb[1] + pb[3]) / 2.0);
    let mut cands = Vec::new();
    let fits = pb[2] - pb[0] >= bw + 4.0 && pb[3] - pb[1] >= bh + 4.0;
    if fits && inside_first {
        cands.push((pb[0] + 3.0 + bw / 2.0, pb[1] + 3.0 + bh / 2.0));
    }
    if fits {
        cands.push((cx, cy));
    }
    cands.push((cx, pb[1] - 3.0 - bh / 2.0));
    cands.push((cx, pb[3] + 3.0 + bh / 2.0));
    cands.push((pb[2] + 4.0 + bw / 2.0, cy));
    cands.push((pb[0] - 4.0 - bw / 2.0, cy));
    for (x, y) in cands {
        let b = [x - bw / 2.0, y - bh / 2.0, x + bw / 2.0, y + bh / 2.0];
        if plot.holds(b) && taken.free(b) {
            return Some(b);
        }
    }
    None
}

fn pixel_bounds(o: &Outline, plot: &Plot) -> Option<[f64; 4]> {
    let b = o.bounds()?;
    let p = plot.px([b[0], b[3]]);
    let q = plot.px([b[2], b[1]]);
    Some([p[0], p[1], q[0], q[1]])
}

/// Black ink on light colours, white on dark ones.
fn contrast_ink(under: Rgb<u8>) -> Rgb<u8> {
    let l = colormap::lab_of(under).l;
    if l > 0.6 {
        Rgb([0, 0, 0])
    } else {
        Rgb([255, 255, 255])
    }
}

fn draw_markers(img: &mut RgbImage, plot: &Plot, markers: &[Marker], taken: &mut Taken) {
    let (w, h) = img.dimensions();
    let mut ring = Layer::new(w, h);
    let mut inner = Layer::new(w, h);
    let mut dot = Layer::new(w, h);
    let mut labels = Vec::new();
    let st = Style::new(12.0, INK).bold();
    for mk in markers {
        let p = plot.px(mk.at);
        let xs = plot.x0 as f64 - 0.5..=plot.right() as f64 + 0.5;
        let ys = plot.y0 as f64 - 0.5..=plot.bottom() as f64 + 0.5;
        if !(xs.contains(&p[0]) && ys.contains(&p[1])) {
            continue;
        }
        ring.disc(p, 7.0);
        inner.disc(p, 5.0);
        dot.disc(p, 1.3);
        let s = mk.number.to_string();
        let m = text::measure(&s, st);
        let (bw, bh) = (m.width + 6.0, m.height() + 2.0);
        let (px, py) = (p[0] as f32, p[1] as f32);
        let mut chosen = None;
        for (dx, dy) in [(1.0, -1.0), (1.0, 1.0), (-1.0, -1.0), (-1.0, 1.0)] {
            let cx = px + dx * (8.5 + bw / 2.0);
            let cy = py + dy * (4.0 + bh / 2.0);
            let b = [cx - bw / 2.0, cy - bh / 2.0, cx + bw / 2.0, cy + bh / 2.0];
            if plot.holds(b) && taken.free(b) {
                chosen = Some(b);
                break;
            }
        }
        let b = chosen.unwrap_or_else(|| {
            let cx = (px + 7.0 + bw / 2.0).min(plot.right() as f32 - bw / 2.0 - 1.0);
            let cy = (py - 5.0 - bh / 2.0).max(plot.y0 as f32 + bh / 2.0 + 1.0);
            [cx - bw / 2.0, cy - bh / 2.0, cx + bw / 2.0, cy + bh / 2.0]
        });
        taken.0.push(b);
        labels.push((s, b));
    }
    ring.composite(img, INK, 1.0, |_, _| false);
    inner.composite(img, PAPER, 1.0, |_, _| false);
    dot.composite(img, INK, 1.0, |_, _| false);
    for (s, b) in labels {
        boxed_label(img, &s, st, b, 0.9);
        rect_outline(
            img,
            b[0].round() as i64,
            b[1].round() as i64,
            b[2].round() as i64,
            b[3].round() as i64,
            INK,
        );
    }
}

/// Coverage layers of the conductors: filled area, ring outlines, thin (open) conductors.
struct ConductorLayers {
    fill: Layer,
    edge: Layer,
    thin: Layer,
}

fn conductor_layers(img: &RgbImage, plot: &Plot, conductors: &[Outline]) -> ConductorLayers {
    let (w, h) = img.dimensions();
    let mut l = ConductorLayers {
        fill: Layer::new(w, h),
        edge: Layer::new(w, h),
        thin: Layer::new(w, h),
    };
    for c in conductors {
        let rings: Vec<Vec<P>> = c
            .rings
            .iter()
            .map(|r| r.iter().map(|&p| plot.px(p)).collect())
            .collect();
        l.fill.fill(&rings);
        for r in &rings {
            l.edge.polyline(r, 1.6, true);
        }
        for line in &c.lines {
            let pts: Vec<P> = line.iter().map(|&p| plot.px(p)).collect();
            l.thin.polyline(&pts, 3.0, false);
        }
    }
    l
}

/// A name to write on a light box.
struct Name {
    text: String,
    style: Style,
    at: [f32; 4],
    bg_alpha: f32,
}

fn draw_names(img: &mut RgbImage, names: &[Name]) {
    for n in names {
        boxed_label(img, &n.text, n.style, n.at, n.bg_alpha);
    }
}

/// Places the names of conductors (bold, centred or beside) and dielectrics (inside their
/// top-left corner or beside), reserving their boxes.
fn place_names(
    plot: &Plot,
    conductors: &[Outline],
    dielectrics: &[Outline],
    taken: &mut Taken,
) -> Vec<Name> {
    let mut out = Vec::new();
    let groups = [
        (conductors, Style::new(13.0, INK).bold(), false, 0.85),
        (dielectrics, Style::new(12.0, Rgb([50, 50, 50])), true, 0.7),
    ];
    for (items, style, inside_first, bg_alpha) in groups {
        for o in items {
            if o.name.is_empty() {
                continue;
            }
            let Some(pb) = pixel_bounds(o, plot) else {
                continue;
            };
            // Only the part on the plot counts (a sphere centred on the axis is half shown).
            let (l, t) = (plot.x0 as f64, plot.y0 as f64);
            let (r, b) = (plot.right() as f64, plot.bottom() as f64);
            let pb = [pb[0].max(l), pb[1].max(t), pb[2].min(r), pb[3].min(b)];
            if pb[0] > pb[2] || pb[1] > pb[3] {
                continue;
            }
            // A thin conductor has no inside: its name goes beside it.
            let pb = if o.rings.is_empty() {
                [pb[0], pb[1], pb[2], pb[1]]
            } else {
                pb
            };
            if let Some(b) = place_name(&o.name, style, pb, plot, taken, inside_first) {
                taken.0.push(b);
                out.push(Name {
                    text: o.name.clone(),
                    style,
                    at: b,
                    bg_alpha,
                });
            }
        }
    }
    out
}

fn mark_boxes(plot: &Plot, markers: &[Marker]) -> Taken {
    Taken(
        markers
            .iter()
            .map(|mk| {
                let p = plot.px(mk.at);
                [
                    p[0] as f32 - 7.5,
                    p[1] as f32 - 7.5,
                    p[0] as f32 + 7.5,
                    p[1] as f32 + 7.5,
                ]
            })
            .collect(),
    )
}

fn outline_dielectrics(
    img: &mut RgbImage,
    plot: &Plot,
    dielectrics: &[Outline],
    skip: &dyn Fn(usize, usize) -> bool,
) {
    let (w, h) = img.dimensions();
    let mut layer = Layer::new(w, h);
    for d in dielectrics {
        for r in &d.rings {
            let pts: Vec<P> = r.iter().map(|&p| plot.px(p)).collect();
            layer.dashed(&pts, 1.3, true, 7.0, 4.0);
        }
    }
    layer.composite_with(img, 0.9, skip, contrast_ink);
}

/// Draws the iso-value lines and their labels.
fn draw_contours(
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
fn draw_field_lines(
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
    let cell_px = (grid.hx * k[0]).max(grid.hy * k[1]);
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

fn length(p: &[P]) -> f64 {
    p.windows(2)
        .map(|w| (w[1][0] - w[0][0]).hypot(w[1][1] - w[0][1]))
        .sum()
}

fn point_at(p: &[P], s: f64) -> P {
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

// ---------------------------------------------------------------------------------------------
// Entry points

/// Where a picture put its plot and its colour bar or legend, for probing pictures (in tests,
/// say) at known places.
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct Frame {
    /// Picture width and height, px.
    pub size: [u32; 2],
    /// Plot area: left, top, width, height, px.
    pub plot: [u32; 4],
    /// A map's colour bar (left, top, width, height, px; top row is the high end), or a
    /// preview's first legend swatch (the next ones follow [`LEGEND_PITCH`] px lower).
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

    fn of(plot: &Plot, size: [u32; 2], side: [i64; 4]) -> Frame {
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

/// Vertical distance between legend swatches of the preview, px.
pub const LEGEND_PITCH: u32 = 20;

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

/// The frame [`render_preview`] uses for this input.
pub fn preview_frame(input: &PreviewInput, opts: &RenderOptions) -> Frame {
    let (l, _) = preview_layout(input, opts);
    Frame::of(
        &l.plot,
        [l.width as u32, l.height as u32],
        swatch_rect(&l.plot, 0),
    )
}

fn bar_rect(plot: &Plot) -> [i64; 4] {
    [plot.right() + BAR_GAP, plot.y0, BAR_W, plot.h as i64]
}

/// The placement of everything in a picture.
struct Layout {
    plot: Plot,
    axes: Axes,
    /// Left edge of the group (axes, plot, bar or legend), px.
    left: usize,
    width: usize,
    height: usize,
}

/// Lays out a picture of the domain `xr` by `yr` with a block `right` px wide beside the plot.
fn layout(
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

fn map_layout(grid: &Grid, unit: LengthUnit, opts: &RenderOptions) -> Layout {
    layout(
        [grid.x0, grid.x1()],
        [grid.y0, grid.y1()],
        unit,
        BAR_BLOCK,
        opts,
    )
}

/// Draws a field map.
pub fn render_map(input: &MapInput, opts: &RenderOptions) -> RgbImage {
    draw_map(input, opts).0
}

fn draw_map(input: &MapInput, opts: &RenderOptions) -> (RgbImage, Plot) {
    let grid = input.grid;
    assert_eq!(input.values.len(), grid.len(), "one value per grid node");
    let Layout {
        plot,
        axes: ax,
        left,
        width,
        height,
    } = map_layout(grid, input.length_unit, opts);
    let cs = ColorScale::new(input);
    let bar_ticks = bar_ticks(&cs, plot.h);
    let (xr, yr, pw, ph) = (plot.xr, plot.yr, plot.w, plot.h);
    let mut img = RgbImage::from_pixel(width as u32, height as u32, PAPER);

    // Field colours.
    let samples = sample::resample(grid, input.values, xr, yr, pw, ph);
    for ly in 0..ph {
        for lx in 0..pw {
            let c = cs.color(samples.at(lx, ly));
            img.put_pixel(
                (plot.x0 as usize + lx) as u32,
                (plot.y0 as usize + ly) as u32,
                c,
            );
        }
    }

    // Conductor fill, then lines (kept off conductors and value-less pixels), then outlines,
    // names and marks on top. Marks and names are placed before contour labels so that the
    // labels give way to them.
    // Shapes may reach past the domain (a sphere centred on the axis): clip to the plot.
    let off_plot = |x: usize, y: usize| plot.local(x, y).is_none();
    let cl = conductor_layers(&img, &plot, input.conductors);
    cl.fill.composite(&mut img, NO_VALUE, 1.0, off_plot);
    let masked = |x: usize, y: usize| match plot.local(x, y) {
        Some((lx, ly)) => samples.at(lx, ly).is_nan() || cl.fill.get(x, y) > 0.0,
        None => true,
    };
    let mut taken = mark_boxes(&plot, input.markers);
    let names = place_names(&plot, input.conductors, input.dielectrics, &mut taken);
    if let Some(fl) = input.field_lines {
        draw_field_lines(&mut img, &plot, input, &fl, &samples, &masked);
    }
    let levels = cs.levels(input.contours, input.unit);
    if !levels.is_empty() {
        draw_contours(&mut img, &plot, &samples, &levels, &masked, &mut taken);
    }
    outline_dielectrics(&mut img, &plot, input.dielectrics, &masked);
    cl.edge.composite(&mut img, INK, 1.0, off_plot);
    cl.thin.composite(&mut img, INK, 1.0, off_plot);
    draw_names(&mut img, &names);
    draw_markers(&mut img, &plot, input.markers, &mut taken);

    draw_axes(&mut img, &plot, &ax, input.length_unit, input.axis_names);
    let unit = cs.unit(input.unit);
    let bar_label = match (input.quantity.is_empty(), unit.is_empty()) {
        (false, false) => format!("{} ({unit})", input.quantity),
        (false, true) => input.quantity.to_string(),
        (true, _) => unit,
    };
    draw_bar(&mut img, &plot, &cs, &bar_ticks, &bar_label);
    draw_title(&mut img, input.title, (left + 10) as i64, plot.distorted);
    (img, plot)
}

fn permittivity_text(e: f64) -> String {
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
struct Legend {
    entries: Vec<(Rgb<u8>, String)>,
    /// Permittivity range, for colouring.
    eps: [f64; 2],
}

impl Legend {
    fn new(input: &PreviewInput) -> Legend {
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
    fn color(&self, e: f64) -> Rgb<u8> {
        let [lo, hi] = self.eps;
        let u = if hi > lo && e > 0.0 {
            ((e / lo).ln() / (hi / lo).ln()).clamp(0.0, 1.0)
        } else {
            0.0
        };
        colormap::sequential().at_or_fill(0.97 - 0.6 * u)
    }

    fn width(&self) -> usize {
        let widest = self
            .entries
            .iter()
            .map(|l| text::measure(&l.1, legend_style()).width)
            .fold(0.0f32, f32::max);
        22 + 16 + 8 + widest.min(260.0).ceil() as usize + 10
    }
}

fn legend_style() -> Style {
    Style::new(12.0, INK)
}

fn swatch_rect(plot: &Plot, k: usize) -> [i64; 4] {
    [
        plot.right() + 22,
        plot.y0 + 2 + k as i64 * LEGEND_PITCH as i64,
        16,
        14,
    ]
}

fn preview_layout(input: &PreviewInput, opts: &RenderOptions) -> (Layout, Legend) {
    let legend = Legend::new(input);
    (
        layout(input.x, input.y, input.length_unit, legend.width(), opts),
        legend,
    )
}

fn draw_preview(input: &PreviewInput, opts: &RenderOptions) -> (RgbImage, Plot) {
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
    let cl = conductor_layers(&img, &plot, input.conductors);
    cl.fill.composite(&mut img, NO_VALUE, 1.0, off_plot);
    outline_dielectrics(&mut img, &plot, &outlines, &|x, y| {
        plot.local(x, y).is_none() || cl.fill.get(x, y) > 0.0
    });
    cl.edge.composite(&mut img, INK, 1.0, off_plot);
    cl.thin.composite(&mut img, INK, 1.0, off_plot);
    let mut taken = mark_boxes(&plot, input.markers);
    let names = place_names(&plot, input.conductors, &outlines, &mut taken);
    draw_names(&mut img, &names);
    draw_markers(&mut img, &plot, input.markers, &mut taken);
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

#[cfg(test)]
mod tests;
