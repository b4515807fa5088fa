//! Which pictures a command draws, from a solution or a design, through [`crate::render`].

use crate::design_file::DesignSource;
use crate::render::{
    self, ContourStyle, FieldLines, LengthUnit, MapInput, Marker, Material, Outline, PreviewInput,
    RenderOptions, Scale,
};
use fieldgrid_solver::design::{Design, Mode};
use fieldgrid_solver::post::FieldEval;
use fieldgrid_solver::study::Solution;
use image::RgbImage;

/// Outline flattening tolerance: a fraction of the domain so outlines look smooth at any size.
fn tolerance(design: &Design) -> f64 {
    let d = &design.domain;
    1e-4 * (d.x[1] - d.x[0]).max(d.y[1] - d.y[0])
}

fn outlines(design: &Design) -> (Vec<Outline>, Vec<Outline>) {
    let tol = tolerance(design);
    let conductors = design
        .conductors
        .iter()
        .map(|c| Outline::from_shape(&c.name, &c.shape, tol))
        .collect();
    let dielectrics = design
        .dielectrics
        .iter()
        .map(|d| Outline::from_shape(&d.name, &d.shape, tol))
        .collect();
    (conductors, dielectrics)
}

fn axis_names(design: &Design) -> [&'static str; 2] {
    match design.mode {
        Mode::Planar => ["x", "y"],
        Mode::Axisymmetric => ["r", "z"],
    }
}

/// `potential.png` and `field.png` of a solution.
pub fn field_maps(src: &DesignSource, sol: &Solution, log_field: bool) -> (RgbImage, RgbImage) {
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
    let opts = RenderOptions::default();
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
        .map(|&m| fieldgrid_solver::raster::Raster::permittivity(design, m))
        .collect();
    map.field_lines = Some(FieldLines {
        potential: &potential,
        count: 24,
        permittivity: Some(&eps),
    });
    let pot_img = render::render_map(&map, &opts);

    let v: Vec<f64> = sol.conductors.iter().map(|c| c.potential).collect();
    let field = FieldEval::new(&sol.operator, &sol.raster, &sol.potential, &v);
    let magnitude: Vec<f64> = (0..sol.grid.len()).map(|p| field.magnitude(p)).collect();
    let mut map = MapInput::new(&sol.grid, &magnitude);
    map.title = if log_field {
        "Field magnitude (logarithmic scale)"
    } else {
        "Field magnitude"
    };
    map.quantity = "|E|";
    map.unit = "V/m";
    map.length_unit = unit;
    map.axis_names = axis_names(design);
    map.conductors = &conductors;
    map.dielectrics = &dielectrics;
    map.markers = &markers;
    map.contours = ContourStyle::None;
    map.scale = if log_field { Scale::Log } else { Scale::Linear };
    let field_img = render::render_map(&map, &opts);
    (pot_img, field_img)
}

/// The geometry preview of `check`.
pub fn preview(src: &DesignSource) -> RgbImage {
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
    render::render_preview(&input, &RenderOptions::default())
}
