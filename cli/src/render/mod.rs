//! The pictures: field maps (`potential.png`, `field.png`) and the geometry preview of
//! `check`, drawn into 8-bit RGB images. Writing the PNG file is the caller's business.
//!
//! A map is the node values resampled to the plot's pixels ([`sample`]), coloured with one of
//! our perceptually uniform maps ([`colormap`]), with equipotential lines at round values
//! ([`contour`]), optional field lines seeded by surface charge ([`fieldlines`]), conductors
//! filled grey, outlined and named (a floating one with a dashed outline), dielectric outlines
//! dashed, another revision's outlines dotted, hot spots marked and numbered, pins (probes and
//! the worst-margin point) marked and named, round axis ticks in the design's length unit
//! ([`axes`]), a colour bar with values, the SI unit and what it clips, and a title, in an
//! embedded open font ([`text`]). [`RenderOptions::zoom`] draws a window of the domain.
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
//!   The band of such pixels round a drawn conductor (its nodes on and inside the outline
//!   carry none) takes the values beside it, so the grey ends at the outline
//!   ([`sample::fill_band`]); value-less regions that are not drawn conductors keep their size.
//! - A name sits inside its own conductor or beside it (with a leader line when it had to
//!   move away), never on another conductor, another label or off the plot; a name that finds
//!   no such place is left out rather than drawn over something.
//! - A colour range narrower than the values says so on the bar ("clipped at ...").
//!
//! This file holds what callers pass in; the drawing is split by concern: `layout` places the
//! plot, axes and title (and reports the [`Frame`]), `color_scale` maps values to colours and
//! draws the bar, `overlay` draws conductors, outlines, names and marks and keeps labels
//! apart (`labels` finds the places), `lines` draws equipotentials and field lines, and `map`
//! and `preview` put the two kinds of picture together.

pub mod axes;
pub mod canvas;
mod color_scale;
pub mod colormap;
pub mod contour;
mod contour_labels;
pub mod fieldlines;
mod labels;
mod layout;
mod lines;
mod map;
mod marching;
pub mod outline;
mod overlay;
mod preview;
pub mod sample;
pub mod text;

use fieldgrid_solver::design::Point;
use fieldgrid_solver::grid::Grid;
use image::Rgb;

pub use layout::Frame;
pub use map::{map_frame, render_map, shown_values};
pub use outline::{Edge, Outline};
pub use preview::{preview_frame, render_preview, LEGEND_PITCH, WINDOW_INK};

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

/// What a [`Pin`] marks.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub enum PinKind {
    /// A probe point: a small diamond.
    Probe,
    /// The point of lowest margin to breakdown: a double ring, its label in bold.
    WorstMargin,
}

/// A named mark: a probe, or the worst-margin point.
#[derive(Clone, Debug, PartialEq)]
pub struct Pin {
    /// Position, m.
    pub at: Point,
    /// Text written beside it.
    pub label: String,
    /// Its symbol.
    pub kind: PinKind,
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
    /// Named marks (probes, the worst-margin point).
    pub pins: &'a [Pin],
    /// Outlines of another revision: dotted, not filled, named.
    pub former: &'a [Outline],
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
            pins: &[],
            former: &[],
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
    /// Numbered marks.
    pub markers: &'a [Marker],
    /// Named marks (e.g. probes).
    pub pins: &'a [Pin],
    /// Node lines to draw over the materials: x of the columns and y of the rows, m.
    pub grid_lines: Option<[&'a [f64]; 2]>,
    /// A window to outline (dashed) and label: [x0, x1, y0, y1], m, the part of the domain
    /// the result pictures draw; cut to the domain, not drawn when it covers all of it.
    pub window: Option<[f64; 4]>,
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
            pins: &[],
            grid_lines: None,
            window: None,
        }
    }
}

/// Picture options.
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct RenderOptions {
    /// Picture width, px (clamped to 400..=8000); a tall, narrow domain gets a narrower
    /// picture.
    pub width: u32,
    /// Draw only this window of the domain: [x0, x1, y0, y1] in the input's
    /// [`LengthUnit`]; cut to the domain, ignored when nothing of it is left. The colour
    /// range follows the values in the window.
    pub zoom: Option<[f64; 4]>,
}

impl Default for RenderOptions {
    fn default() -> Self {
        RenderOptions {
            width: 1200,
            zoom: None,
        }
    }
}

impl RenderOptions {
    /// The part of the domain `x` by `y` (m) shown: the zoom window (in `unit`) cut to the
    /// domain, or the whole domain.
    pub fn shown(&self, x: [f64; 2], y: [f64; 2], unit: LengthUnit) -> ([f64; 2], [f64; 2]) {
        let Some(z) = self.zoom else {
            return (x, y);
        };
        let m = unit.metres;
        let (zx, zy) = ([z[0] * m, z[1] * m], [z[2] * m, z[3] * m]);
        let cx = [zx[0].min(zx[1]).max(x[0]), zx[0].max(zx[1]).min(x[1])];
        let cy = [zy[0].min(zy[1]).max(y[0]), zy[0].max(zy[1]).min(y[1])];
        if cx[1] > cx[0] && cy[1] > cy[0] {
            (cx, cy)
        } else {
            (x, y)
        }
    }
}

#[cfg(test)]
mod tests;
