//! Which pictures a command draws, from a solution or a design, through [`crate::render`].

use crate::design_file::DesignSource;
use crate::hotspot_marks::marked_hotspots;
use crate::render::{
    self, axes, sample, ContourStyle, Edge, FieldLines, LengthUnit, MapInput, Marker, Material,
    Outline, Palette, Pin, PinKind, PreviewInput, RenderOptions, Scale,
};
use fieldgrid_solver::design::{Design, Drive, Mode};
use fieldgrid_solver::grid::Grid;
use fieldgrid_solver::margin_map;
use fieldgrid_solver::post::Hotspot;
use fieldgrid_solver::study::Solution;
use image::RgbImage;
use rayon::prelude::*;

/// Outline flattening tolerance: a fraction of the domain so outlines look smooth at any size.
fn tolerance(design: &Design) -> f64 {
    Outline::picture_tolerance(design.domain.x, design.domain.y)
}

/// The outlines of the conductors and of the dielectrics, for drawing: one per conductor in
/// its order, then the further pieces of conductors drawn in several (unnamed, so each
/// conductor's name is placed once).
pub fn outlines(design: &Design) -> (Vec<Outline>, Vec<Outline>) {
    let tol = tolerance(design);
    let mut conductors: Vec<Outline> = design
        .conductors
        .iter()
        .map(|c| Outline::from_shape(&c.name, &c.shape, tol))
        .collect();
    conductors.extend(
        design
            .conductors
            .iter()
            .flat_map(|c| &c.joined)
            .map(|s| Outline::from_shape("", s, tol)),
    );
    let dielectrics = design
        .dielectrics
        .iter()
        .map(|d| Outline::from_shape(&d.name, &d.shape, tol))
        .collect();
    (conductors, dielectrics)
}

/// The conductors' outlines named with their potentials ("rod, 50 kV"); a floating conductor
/// dashed and named "foil, floating" or, with the solve's `settled` potentials (one per
/// conductor, design order), "foil, floating at 34.1 kV". One per conductor in its order,
/// then the further pieces of conductors drawn in several, unnamed and in their
/// conductor's edge style.
pub fn named_conductors(design: &Design, settled: Option<&[f64]>) -> Vec<Outline> {
    let tol = tolerance(design);
    let edge_of = |c: &fieldgrid_solver::design::Conductor| match c.drive {
        Drive::Fixed(_) => Edge::Solid,
        Drive::Floating => Edge::Dashed,
    };
    let pieces = design.conductors.iter().flat_map(|c| {
        c.joined.iter().map(move |s| Outline {
            edge: edge_of(c),
            ..Outline::from_shape("", s, tol)
        })
    });
    let volts = Volts::of(design);
    design
        .conductors
        .iter()
        .enumerate()
        .map(|(k, c)| {
            let (name, edge) = match (c.drive, settled) {
                (Drive::Fixed(v), _) => (
                    format!("{}, {}", c.name, volts.write(v, false)),
                    Edge::Solid,
                ),
                (Drive::Floating, Some(v)) => (
                    format!("{}, floating at {}", c.name, volts.write(v[k], true)),
                    Edge::Dashed,
                ),
                (Drive::Floating, None) => (format!("{}, floating", c.name), Edge::Dashed),
            };
            Outline {
                edge,
                ..Outline::from_shape(name, &c.shape, tol)
            }
        })
        .chain(pieces)
        .collect()
}

/// How a picture writes potentials: finely enough to tell the design's fixed potentials
/// (conductors and sides) apart, in a form read at face value. A pad 0.9 V above sides at
/// 1 kV reads "1000.9 V" beside "1000.0 V" (not "1.0009 kV"); potentials far apart keep three
/// digits ("50 kV").
struct Volts {
    /// Largest magnitude among the fixed potentials, V.
    top: f64,
    /// Smallest difference between two of them, V (infinite when they do not differ).
    step: f64,
}

impl Volts {
    fn of(design: &Design) -> Volts {
        let sides = [
            design.sides.left,
            design.sides.right,
            design.sides.bottom,
            design.sides.top,
        ];
        let known: Vec<f64> = design
            .conductors
            .iter()
            .filter_map(|c| match c.drive {
                Drive::Fixed(v) => Some(v),
                Drive::Floating => None,
            })
            .chain(sides.iter().filter_map(|s| s.potential()))
            .collect();
        let top = known.iter().fold(0.0f64, |a, x| a.max(x.abs()));
        let mut step = f64::INFINITY;
        for (i, a) in known.iter().enumerate() {
            for b in &known[i + 1..] {
                let d = (a - b).abs();
                if d > 0.0 {
                    step = step.min(d);
                }
            }
        }
        Volts { top, step }
    }

    /// `v` with its unit; `finer` (a result such as a settled floating potential or a probe
    /// reading, which may lie between the fixed ones) to a tenth of the step.
    fn write(&self, v: f64, finer: bool) -> String {
        let step = if finer { self.step / 10.0 } else { self.step };
        let s = axes::si_step(v, step, self.top.max(v.abs()));
        if s.ends_with(|c: char| c.is_ascii_digit()) {
            format!("{s} V")
        } else {
            format!("{s}V")
        }
    }
}

/// The names of a design's axes: x, y in the plane, r, z in axisymmetric mode.
pub fn axis_names(design: &Design) -> [&'static str; 2] {
    match design.mode {
        Mode::Planar => ["x", "y"],
        Mode::Axisymmetric => ["r", "z"],
    }
}

/// Share of the free nodes whose field magnitude sets the top of a linear `field.png` scale
/// (unless a hot spot off the sharp corners is higher): the few nodes at sharp corners, whose
/// values are singular, saturate instead of washing out the rest of the map.
pub const FIELD_PERCENTILE: f64 = 0.995;

/// Samples along the longer side of the even raster that colour-scale quantiles are read from.
const AREA_SAMPLES: usize = 512;

/// `values` (one per node of `grid`) sampled at the centres of an even raster over the window
/// `x` by `y` (m), [`AREA_SAMPLES`] along its longer side: each sample stands for the same
/// area however the lattice is graded, so a quantile of them is a share of the picture, not of
/// the nodes (a graded lattice crowds its nodes at corners and trace ends, where the field is
/// singular). The raster does not depend on the picture's size.
pub fn area_samples(grid: &Grid, values: &[f64], x: [f64; 2], y: [f64; 2]) -> Vec<f64> {
    let (wx, wy) = (x[1] - x[0], y[1] - y[0]);
    let long = wx.max(wy);
    if long.is_nan() || long <= 0.0 {
        return Vec::new();
    }
    let n = |side: f64| ((AREA_SAMPLES as f64 * side / long).round() as usize).max(1);
    sample::resample(grid, values, x, y, n(wx), n(wy)).v
}

/// The top of a linear field colour scale: the larger of the [`FIELD_PERCENTILE`] quantile of
/// the finite `area` samples (see [`area_samples`]) and `floor` (the largest hot spot off the
/// sharp corners, V/m), or `None` (the whole range) when `peak` (the largest node value shown)
/// is within 1.5 times of it and saturating would hide more than it shows.
pub fn field_saturation(area: &[f64], peak: f64, floor: f64) -> Option<f64> {
    let mut m: Vec<f64> = area.iter().copied().filter(|v| v.is_finite()).collect();
    if m.len() < 2 {
        return None;
    }
    let k = ((m.len() - 1) as f64 * FIELD_PERCENTILE).round() as usize;
    let q = sample::rank(&mut m, k)?;
    let top = q.max(floor);
    (top > 0.0 && peak > 1.5 * top).then_some(top)
}

/// The field magnitude a picture shows: the solution's, with the nodes on a side of fixed
/// potential (which carry none) given the value of their neighbour inside the domain, so the
/// sides are not painted as if they were conductors. Nodes of conductors keep none.
pub fn shown_field(sol: &Solution) -> Vec<f64> {
    let e = sol.field_magnitude();
    let g = &sol.grid;
    let (nx, ny) = (g.nx, g.ny);
    let mut out: Vec<f64> = e.par_iter().copied().collect();
    if nx < 3 || ny < 3 {
        return out;
    }
    let mut side = |i: usize, j: usize| {
        let k = g.idx(i, j);
        if out[k].is_nan() && sol.raster.conductor[k] == fieldgrid_solver::raster::NO_CONDUCTOR {
            let v = e[g.idx(i.clamp(1, nx - 2), j.clamp(1, ny - 2))];
            if v.is_finite() {
                out[k] = v;
            }
        }
    };
    for i in 0..nx {
        side(i, 0);
        side(i, ny - 1);
    }
    for j in 1..ny - 1 {
        side(0, j);
        side(nx - 1, j);
    }
    out
}

/// `v` with an SI prefix and its unit: "721 V/m", "4.8 kV/m".
fn with_unit(v: f64, unit: &str) -> String {
    let s = axes::si(v);
    if s.ends_with(|c: char| c.is_ascii_digit()) {
        format!("{s} {unit}")
    } else {
        format!("{s}{unit}")
    }
}

/// What every picture of a solution shares: outlines, marks, units.
struct Scene<'a> {
    conductors: Vec<Outline>,
    dielectrics: Vec<Outline>,
    markers: Vec<Marker>,
    unit: LengthUnit<'a>,
    axis_names: [&'static str; 2],
    /// " (3 of 8 hot spots marked; all in hotspots.csv)" when not all are marked.
    marks_note: String,
}

impl<'a> Scene<'a> {
    fn new(src: &'a DesignSource, sol: &Solution, opts: &RenderOptions) -> Scene<'a> {
        let design = &src.design;
        let unit = LengthUnit {
            label: src.unit.name(),
            metres: src.unit.scale(),
        };
        let settled: Vec<f64> = sol.conductors.iter().map(|c| c.potential).collect();
        let (_, dielectrics) = outlines(design);
        // Hot spots in the picture's window, in their ranking; those near the top marked.
        let (x, y) = opts.shown(design.domain.x, design.domain.y, unit);
        let inside = |h: &&Hotspot| (x[0]..=x[1]).contains(&h.x) && (y[0]..=y[1]).contains(&h.y);
        let shown: Vec<(usize, &Hotspot)> = sol
            .hotspots
            .iter()
            .enumerate()
            .filter(|(_, h)| inside(h))
            .collect();
        let spots: Vec<&Hotspot> = shown.iter().map(|s| s.1).collect();
        let marked = marked_hotspots(&spots);
        let markers = marked
            .iter()
            .map(|&k| Marker {
                at: [shown[k].1.x, shown[k].1.y],
                number: shown[k].0 as u32 + 1,
            })
            .collect();
        let marks_note = if shown.len() > marked.len() {
            format!(
                " ({} of {} hot spots marked; all in hotspots.csv)",
                marked.len(),
                shown.len()
            )
        } else {
            String::new()
        };
        Scene {
            conductors: named_conductors(design, Some(&settled)),
            dielectrics,
            markers,
            unit,
            axis_names: axis_names(design),
            marks_note,
        }
    }

    fn map<'b>(&'b self, grid: &'b Grid, values: &'b [f64], title: &'b str) -> MapInput<'b> {
        MapInput {
            title,
            length_unit: self.unit,
            axis_names: self.axis_names,
            conductors: &self.conductors,
            dielectrics: &self.dielectrics,
            markers: &self.markers,
            ..MapInput::new(grid, values)
        }
    }
}

/// The probes as pins, each labelled by its name and, when given, its reading.
fn probe_pins(design: &Design, reading: impl Fn(usize) -> Option<String>) -> Vec<Pin> {
    design
        .probes
        .iter()
        .enumerate()
        .map(|(k, p)| Pin {
            at: p.at,
            label: match reading(k) {
                Some(r) => format!("{}: {r}", p.name),
                None => p.name.clone(),
            },
            kind: PinKind::Probe,
        })
        .collect()
}

/// The worst-margin point as a pin: "worst margin 0.30", with `field` appended when given.
fn worst_pin(sol: &Solution, field: Option<String>) -> Option<Pin> {
    let w = sol.worst_margin.as_ref()?;
    let m = w.margin?;
    Some(Pin {
        at: [w.x, w.y],
        label: match field {
            Some(f) => format!("worst margin {} at {f}", axes::plain(m)),
            None => format!("worst margin {}", axes::plain(m)),
        },
        kind: PinKind::WorstMargin,
    })
}

/// `potential.png`, `field.png` and, when [`margin_map`] draws one, `margin.png` of a
/// solution, all drawn at the same time; the field they show ([`shown_field`]) is found once.
pub fn solution_maps(
    src: &DesignSource,
    sol: &Solution,
    log_field: bool,
    opts: &RenderOptions,
) -> (RgbImage, RgbImage, Option<RgbImage>) {
    solution_maps_with(src, sol, log_field, opts, |_, img| img)
}

/// [`solution_maps`], each picture handed to `finish` with its file name as soon as it is
/// drawn (on the thread that drew it, while the others are still being drawn).
pub fn solution_maps_with<T: Send>(
    src: &DesignSource,
    sol: &Solution,
    log_field: bool,
    opts: &RenderOptions,
    finish: impl Fn(&str, RgbImage) -> T + Sync,
) -> (T, T, Option<T>) {
    let shown = shown_field(sol);
    let ((potential, field), margin) = rayon::join(
        || maps_with(src, sol, &shown, log_field, opts, &finish),
        || margin_map_of(src, sol, &shown, opts).map(|m| finish("margin.png", m)),
    );
    (potential, field, margin)
}
/// `potential.png` and `field.png` of a solution; `log_field` draws the field on a
/// logarithmic scale. The two pictures are drawn at the same time (each on its own).
pub fn field_maps(
    src: &DesignSource,
    sol: &Solution,
    log_field: bool,
    opts: &RenderOptions,
) -> (RgbImage, RgbImage) {
    maps_with(src, sol, &shown_field(sol), log_field, opts, &|_, img| img)
}

/// [`field_maps`] with the field shown, `shown` (see [`shown_field`]), each picture handed to
/// `finish` with its file name as soon as it is drawn.
fn maps_with<T: Send>(
    src: &DesignSource,
    sol: &Solution,
    shown: &[f64],
    log_field: bool,
    opts: &RenderOptions,
    finish: &(impl Fn(&str, RgbImage) -> T + Sync),
) -> (T, T) {
    let design = &src.design;
    let scene = Scene::new(src, sol, opts);
    let potential_map = || {
        let potential: Vec<f64> = sol
            .potential
            .par_iter()
            .zip(sol.raster.conductor.par_iter())
            .map(|(&v, &c)| {
                if c == fieldgrid_solver::raster::NO_CONDUCTOR {
                    v
                } else {
                    f64::NAN
                }
            })
            .collect();
        let volts = Volts::of(design);
        let pins = probe_pins(design, |k| {
            let v = sol.probes.get(k)?.potential;
            v.is_finite().then(|| volts.write(v, true))
        });
        let title = format!("Potential{}", scene.marks_note);
        let mut map = scene.map(&sol.grid, &potential, &title);
        map.quantity = "potential";
        map.unit = "V";
        map.pins = &pins;
        map.contours = ContourStyle::Auto;
        let eps: Vec<f64> = sol
            .raster
            .material
            .par_iter()
            .map(|&m| fieldgrid_solver::material::of(design, m).permittivity)
            .collect();
        // Field lines follow the whole solution, conductors' nodes at their potentials, so the
        // field is interpolated right up to a conductor's surface.
        map.field_lines = Some(FieldLines {
            potential: &sol.potential,
            count: 24,
            permittivity: Some(&eps),
        });
        finish("potential.png", render::render_map(&map, opts))
    };
    let field_map = || {
        let magnitude = shown;
        let windowed = render::shown_values(&sol.grid, magnitude, scene.unit, opts);
        let shown = windowed.as_deref().unwrap_or(magnitude);
        let peak = sample::finite_range(shown).map_or(0.0, |r| r.1);
        // Never below the largest hot spot off the sharp corners (in the window).
        let (x, y) = opts.shown(design.domain.x, design.domain.y, scene.unit);
        let floor = sol
            .hotspots
            .iter()
            .filter(|h| !h.singular && (x[0]..=x[1]).contains(&h.x) && (y[0]..=y[1]).contains(&h.y))
            .map(|h| h.magnitude)
            .fold(0.0, f64::max);
        let top = if log_field {
            None
        } else {
            field_saturation(&area_samples(&sol.grid, magnitude, x, y), peak, floor)
        };
        let worst = worst_pin(
            sol,
            sol.worst_margin.as_ref().map(|w| {
                let beyond = top.is_some_and(|t| w.magnitude > t);
                format!(
                    "{}{}",
                    with_unit(w.magnitude, "V/m"),
                    if beyond {
                        ", above the colour scale"
                    } else {
                        ""
                    }
                )
            }),
        );
        let mut pins = probe_pins(design, |k| {
            let f = sol.probes.get(k)?.field;
            let e = f[0].hypot(f[1]);
            e.is_finite().then(|| with_unit(e, "V/m"))
        });
        pins.extend(worst);
        let title = if log_field {
            format!("Field magnitude, logarithmic scale{}", scene.marks_note)
        } else {
            format!("Field magnitude{}", scene.marks_note)
        };
        let mut map = scene.map(&sol.grid, magnitude, &title);
        map.range = top.map(|q| [0.0, q]);
        map.quantity = "|E|";
        map.unit = "V/m";
        map.pins = &pins;
        map.contours = ContourStyle::None;
        map.scale = if log_field { Scale::Log } else { Scale::Linear };
        finish("field.png", render::render_map(&map, opts))
    };
    rayon::join(potential_map, field_map)
}

/// Decades of margin a `margin.png` colour bar spans above the lowest margin.
pub const MARGIN_DECADES: i32 = 3;

/// `margin.png`: the local margin to breakdown (strength over |E|) wherever a material has a
/// strength, on a logarithmic scale from the reported worst margin (the danger end; the lowest
/// node margin when no worst margin was found) up [`MARGIN_DECADES`] decades; node margins
/// below the worst margin take the bottom colour under the bar's lower cap; the worst-margin
/// point ringed. `None` when no material has a strength or the field is zero everywhere.
pub fn margin_map(src: &DesignSource, sol: &Solution, opts: &RenderOptions) -> Option<RgbImage> {
    if !margin_map::any_strength(&src.design) {
        return None;
    }
    margin_map_of(src, sol, &shown_field(sol), opts)
}

/// [`margin_map`] with the field shown, `shown` (see [`shown_field`]).
fn margin_map_of(
    src: &DesignSource,
    sol: &Solution,
    shown: &[f64],
    opts: &RenderOptions,
) -> Option<RgbImage> {
    let design = &src.design;
    let margins = margin_map::node_margins(design, &sol.raster.material, shown)?;
    // The bar starts at the reported worst margin, so the picture and the report agree; a
    // node reading lower (beside a sharp corner, or a node field on a curved surface above the
    // surface's own evaluation) takes the bottom colour, and the bar's cap says so.
    let worst = sol
        .worst_margin
        .as_ref()
        .and_then(|w| w.margin)
        .filter(|m| m.is_finite() && *m > 0.0);
    let lowest = worst.unwrap_or_else(|| {
        margins
            .iter()
            .copied()
            .filter(|m| m.is_finite() && *m > 0.0)
            .fold(f64::INFINITY, f64::min)
    });
    if !lowest.is_finite() {
        return None;
    }
    let scene = Scene::new(src, sol, opts);
    let mut pins = probe_pins(design, |_| None);
    pins.extend(worst_pin(sol, None));
    let title = format!("Margin to breakdown, strength / |E|{}", scene.marks_note);
    let mut map = scene.map(&sol.grid, &margins, &title);
    let quantity = match worst {
        Some(_) => format!("margin (worst {}, at the bottom)", axes::plain(lowest)),
        None => format!("margin (lowest {}, at the bottom)", axes::plain(lowest)),
    };
    map.quantity = &quantity;
    map.pins = &pins;
    map.scale = Scale::Log;
    map.palette = Palette::Sequential;
    map.range = Some([lowest, lowest * 10f64.powi(MARGIN_DECADES)]);
    map.contours = ContourStyle::Auto;
    Some(render::render_map(&map, opts))
}

/// The geometry preview of `check`, with the node lines of `grid` when given. With no window
/// in `opts` it draws the whole domain and outlines the design's `[pictures] zoom` window.
pub fn preview(src: &DesignSource, grid: Option<&Grid>, opts: &RenderOptions) -> RgbImage {
    let design = &src.design;
    let conductors = named_conductors(design, None);
    let tol = tolerance(design);
    let materials: Vec<Material> = design
        .dielectrics
        .iter()
        .map(|d| Material {
            outline: Outline::from_shape(&d.name, &d.shape, tol),
            permittivity: d.permittivity,
        })
        .collect();
    let pins = probe_pins(design, |_| None);
    let mut input = PreviewInput::new(design.domain.x, design.domain.y);
    input.title = "Design preview";
    input.length_unit = LengthUnit {
        label: src.unit.name(),
        metres: src.unit.scale(),
    };
    input.axis_names = axis_names(design);
    input.background_permittivity = design.background.permittivity;
    input.dielectrics = &materials;
    input.conductors = &conductors;
    input.pins = &pins;
    input.grid_lines = grid.map(|g| [g.xs(), g.ys()]);
    // Drawn whole unless a window is asked for; the design's window is outlined instead.
    if opts.zoom.is_none() {
        input.window = src.zoom.map(|z| z.map(|v| v * src.unit.scale()));
    }
    render::render_preview(&input, opts)
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn a_few_singular_nodes_saturate_the_field_scale_a_smooth_field_does_not() {
        // 1000 samples of a smooth field from 1 to 2 V/m, peaking at 2 V/m.
        let smooth: Vec<f64> = (0..1000).map(|k| 1.0 + k as f64 / 999.0).collect();
        assert_eq!(field_saturation(&smooth, 2.0, 0.0), None);
        // The same with three corner samples at 50 V/m and conductor samples (NaN).
        let mut spiky = smooth.clone();
        spiky.extend([50.0, 50.0, 50.0, f64::NAN, f64::NAN]);
        let q = field_saturation(&spiky, 50.0, 0.0).expect("saturates");
        assert!((1.9..=2.0).contains(&q), "{q}");
        // A hot spot off the corners at 20 V/m is never saturated; one at 40 V/m leaves
        // nothing worth saturating.
        assert_eq!(field_saturation(&spiky, 50.0, 20.0), Some(20.0));
        assert_eq!(field_saturation(&spiky, 50.0, 40.0), None);
        // Nothing to scale.
        assert_eq!(field_saturation(&[f64::NAN, 0.0], 0.0, 0.0), None);
        assert_eq!(field_saturation(&[0.0; 10], 0.0, 0.0), None);
    }

    #[test]
    fn the_field_scale_reads_shares_of_the_area_not_of_the_nodes() {
        // A field of 1 V/m with 100 V/m in the corner [0, 0.01]^2 of a unit square: a lattice
        // graded into that corner puts a quarter of its nodes there, so their 99.5th
        // percentile is the corner's 100 V/m and nothing would saturate; over the area the
        // corner is 1e-4 of the picture.
        let mut xs: Vec<f64> = (0..=100).map(|k| 0.01 * f64::from(k) / 100.0).collect();
        xs.extend((2..=100).map(|k| f64::from(k) / 100.0));
        let g = Grid::from_lines(xs.clone(), xs).expect("lattice");
        let e: Vec<f64> = (0..g.len())
            .map(|k| {
                let (i, j) = (k % g.nx, k / g.nx);
                if g.xs()[i] <= 0.01 && g.ys()[j] <= 0.01 {
                    100.0
                } else {
                    1.0
                }
            })
            .collect();
        assert_eq!(
            field_saturation(&e, 100.0, 0.0),
            None,
            "read from the nodes"
        );
        let area = area_samples(&g, &e, [0.0, 1.0], [0.0, 1.0]);
        assert_eq!(area.len(), AREA_SAMPLES * AREA_SAMPLES);
        let top = field_saturation(&area, 100.0, 0.0).expect("saturates");
        assert!((1.0..1.01).contains(&top), "{top}");
    }

    #[test]
    fn conductors_are_named_with_their_potentials_floating_ones_dashed() {
        use fieldgrid_solver::design::{Conductor, Shape};
        let rect = Shape::Rect {
            x: [0.0, 1.0],
            y: [0.0, 1.0],
            round: 0.0,
        };
        let mut d = Design::default();
        for (name, drive) in [("rod", Drive::Fixed(5e4)), ("foil", Drive::Floating)] {
            d.conductors.push(Conductor {
                name: name.into(),
                drive,
                shape: rect.clone(),
                joined: Vec::new(),
            });
        }
        let before = named_conductors(&d, None);
        assert_eq!(before[0].name, "rod, 50 kV");
        assert_eq!(before[0].edge, Edge::Solid);
        assert_eq!(before[1].name, "foil, floating");
        assert_eq!(before[1].edge, Edge::Dashed);
        let after = named_conductors(&d, Some(&[5e4, 34112.766]));
        assert_eq!(after[1].name, "foil, floating at 34.1 kV");
        // A potential a volt above sides at 1 kV keeps the digits that tell it apart.
        let s = fieldgrid_solver::design::Side::Fixed(1e3);
        d.sides.left = s;
        d.sides.right = s;
        d.sides.bottom = s;
        d.sides.top = s;
        d.conductors[0].drive = Drive::Fixed(1001.0);
        let offset = named_conductors(&d, Some(&[1001.0, 1000.4812]));
        assert_eq!(offset[0].name, "rod, 1001 V");
        assert_eq!(offset[1].name, "foil, floating at 1000.5 V");
        // Read at face value: 0.9 V above 1 kV is "1000.9 V", not "1.0009 kV".
        d.conductors[0].drive = Drive::Fixed(1000.9);
        assert_eq!(named_conductors(&d, None)[0].name, "rod, 1000.9 V");
    }

    #[test]
    fn values_with_units_take_a_space_only_without_a_prefix() {
        assert_eq!(with_unit(721.0, "V/m"), "721 V/m");
        assert_eq!(with_unit(4.8e3, "V/m"), "4.8 kV/m");
    }
}
