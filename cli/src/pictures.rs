//! Which pictures a command draws, from a solution or a design, through [`crate::render`].

use crate::design_file::DesignSource;
use crate::render::{
    self, axes, sample, ContourStyle, FieldLines, LengthUnit, MapInput, Marker, Material, Outline,
    PreviewInput, RenderOptions, Scale,
};
use fieldgrid_solver::design::{Design, Mode};
use fieldgrid_solver::grid::Grid;
use fieldgrid_solver::study::Solution;
use image::RgbImage;

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

/// The names of a design's axes: x, y in the plane, r, z in axisymmetric mode.
pub fn axis_names(design: &Design) -> [&'static str; 2] {
    match design.mode {
        Mode::Planar => ["x", "y"],
        Mode::Axisymmetric => ["r", "z"],
    }
}

/// Share of the free nodes whose field magnitude sets the top of a linear `field.png` scale:
/// the few nodes at sharp corners, whose values are singular, saturate instead of washing out
/// the rest of the map.
pub const FIELD_PERCENTILE: f64 = 0.995;

/// The top of a linear field colour scale: the [`FIELD_PERCENTILE`] quantile of the finite
/// magnitudes, or `None` (the whole range) when the peak is within 1.5 times of it and
/// saturating would hide more than it shows.
pub fn field_saturation(magnitude: &[f64]) -> Option<f64> {
    let mut m: Vec<f64> = magnitude
        .iter()
        .copied()
        .filter(|v| v.is_finite())
        .collect();
    if m.len() < 2 {
        return None;
    }
    let k = ((m.len() - 1) as f64 * FIELD_PERCENTILE).round() as usize;
    let q = sample::rank(&mut m, k)?;
    let peak = m[k..].iter().copied().fold(q, f64::max);
    (q > 0.0 && peak > 1.5 * q).then_some(q)
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

/// `potential.png` and `field.png` of a solution; `log_field` draws the field on a
/// logarithmic scale. The two pictures are drawn at the same time (each on its own).
pub fn field_maps(
    src: &DesignSource,
    sol: &Solution,
    log_field: bool,
    opts: &RenderOptions,
) -> (RgbImage, RgbImage) {
    let design = &src.design;
    let (conductors, dielectrics) = outlines(design);
    let unit = LengthUnit {
        label: src.unit.name(),
        metres: src.unit.scale(),
    };
    let markers: Vec<Marker> = sol
        .hotspots
        .iter()
        .enumerate()
        .map(|(k, h)| Marker {
            at: [h.x, h.y],
            number: k as u32 + 1,
        })
        .collect();
    let potential_map = || {
        let potential: Vec<f64> = sol
            .potential
            .iter()
            .zip(&sol.raster.conductor)
            .map(|(&v, &c)| {
                if c == fieldgrid_solver::raster::NO_CONDUCTOR {
                    v
                } else {
                    f64::NAN
                }
            })
            .collect();
        let mut map = MapInput::new(&sol.grid, &potential);
        map.title = "Potential";
        map.quantity = "potential";
        map.unit = "V";
        map.length_unit = unit;
        map.axis_names = axis_names(design);
        map.conductors = &conductors;
        map.dielectrics = &dielectrics;
        map.markers = &markers;
        map.contours = ContourStyle::Auto;
        let eps: Vec<f64> = sol
            .raster
            .material
            .iter()
            .map(|&m| fieldgrid_solver::material::of(design, m).permittivity)
            .collect();
        map.field_lines = Some(FieldLines {
            potential: &potential,
            count: 24,
            permittivity: Some(&eps),
        });
        render::render_map(&map, opts)
    };
    let field_map = || {
        let magnitude = sol.field_magnitude();
        let top = if log_field {
            None
        } else {
            field_saturation(magnitude)
        };
        let peak = sample::finite_range(magnitude).map_or(0.0, |r| r.1);
        let title = match top {
            _ if log_field => "Field magnitude (logarithmic scale)".to_string(),
            Some(q) => format!(
                "Field magnitude (colours saturate above {}; peak {})",
                with_unit(q, "V/m"),
                with_unit(peak, "V/m")
            ),
            None => "Field magnitude".to_string(),
        };
        let mut map = MapInput::new(&sol.grid, magnitude);
        map.title = &title;
        map.range = top.map(|q| [0.0, q]);
        map.quantity = "|E|";
        map.unit = "V/m";
        map.length_unit = unit;
        map.axis_names = axis_names(design);
        map.conductors = &conductors;
        map.dielectrics = &dielectrics;
        map.markers = &markers;
        map.contours = ContourStyle::None;
        map.scale = if log_field { Scale::Log } else { Scale::Linear };
        render::render_map(&map, opts)
    };
    rayon::join(potential_map, field_map)
}

/// The geometry preview of `check`, with the node lines of `grid` when given.
pub fn preview(src: &DesignSource, grid: Option<&Grid>, opts: &RenderOptions) -> RgbImage {
    let design = &src.design;
    let (conductors, _) = outlines(design);
    let tol = tolerance(design);
    let materials: Vec<Material> = design
        .dielectrics
        .iter()
        .map(|d| Material {
            outline: Outline::from_shape(&d.name, &d.shape, tol),
            permittivity: d.permittivity,
        })
        .collect();
    let markers: Vec<Marker> = design
        .probes
        .iter()
        .enumerate()
        .map(|(k, p)| Marker {
            at: p.at,
            number: k as u32 + 1,
        })
        .collect();
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
    input.markers = &markers;
    input.grid_lines = grid.map(|g| [g.xs(), g.ys()]);
    render::render_preview(&input, opts)
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn a_few_singular_nodes_saturate_the_field_scale_a_smooth_field_does_not() {
        // 1000 nodes of a smooth field from 1 to 2 V/m.
        let smooth: Vec<f64> = (0..1000).map(|k| 1.0 + k as f64 / 999.0).collect();
        assert_eq!(field_saturation(&smooth), None);
        // The same with three corner nodes at 50 V/m and conductor nodes (NaN).
        let mut spiky = smooth.clone();
        spiky.extend([50.0, 50.0, 50.0, f64::NAN, f64::NAN]);
        let q = field_saturation(&spiky).expect("saturates");
        assert!((1.9..=2.0).contains(&q), "{q}");
        // Nothing to scale.
        assert_eq!(field_saturation(&[f64::NAN, 0.0]), None);
        assert_eq!(field_saturation(&[0.0; 10]), None);
    }

    #[test]
    fn values_with_units_take_a_space_only_without_a_prefix() {
        assert_eq!(with_unit(721.0, "V/m"), "721 V/m");
        assert_eq!(with_unit(4.8e3, "V/m"), "4.8 kV/m");
    }
}
