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
//!
//! This file holds what callers pass in; the drawing is split by concern: `layout` places the
//! plot, axes and title (and reports the [`Frame`]), `color_scale` maps values to colours and
//! draws the bar, `overlay` draws conductors, outlines, names and marks and keeps labels
//! apart, `lines` draws equipotentials and field lines, and `map` and `preview` put the two
//! kinds of picture together.

pub mod axes;
pub mod canvas;
mod color_scale;
pub mod colormap;
pub mod contour;
pub mod fieldlines;
mod layout;
mod lines;
mod map;
pub mod outline;
mod overlay;
mod preview;
pub mod sample;
pub mod text;

use fieldgrid_solver::design::Point;
use fieldgrid_solver::grid::Grid;
use image::Rgb;

pub use layout::Frame;
pub use map::{map_frame, render_map};
pub use outline::Outline;
pub use preview::{preview_frame, render_preview, LEGEND_PITCH};

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
    /// Node lines to draw over the materials: x of the columns and y of the rows, m.
    pub grid_lines: Option<[&'a [f64]; 2]>,
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
            grid_lines: None,
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

#[cfg(test)]
mod tests;
