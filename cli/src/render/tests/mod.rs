//! Pixel-probe tests of the pictures, with the scenes they share. Set FIELDGRID_PICTURE_DIR
//! to a directory to also keep the pictures as PNG files for a look.

mod field_lines;
mod maps;
mod shapes;

use super::canvas::P;
use super::color_scale::{bar_ticks, ColorScale, BAR_GAP, BAR_W};
use super::colormap::{diverging, sequential, LEN, NO_VALUE};
use super::layout::{Plot, BOTTOM, TOP};
use super::map::draw_map;
use super::preview::draw_preview;
use super::*;
use image::RgbImage;

const MM: f64 = 1e-3;

fn keep(name: &str, img: &RgbImage) {
    if let Some(dir) = std::env::var_os("FIELDGRID_PICTURE_DIR") {
        let path = std::path::Path::new(&dir).join(format!("{name}.png"));
        img.save(&path).expect("picture saved");
    }
}

/// Potential of a line charge above a grounded plane y = 0, in volts per lambda/(2 pi eps0):
/// ln(r_image / r), the method of images (common practice). The core r < 0.2 mm is capped.
fn line_charge(g: &Grid, at: Point) -> Vec<f64> {
    (0..g.len())
        .map(|k| {
            let (x, y) = (g.x(k % g.nx), g.y(k / g.nx));
            let r = (x - at[0]).hypot(y - at[1]).max(0.2 * MM);
            let ri = (x - at[0]).hypot(y + at[1]);
            (ri / r).ln()
        })
        .collect()
}

struct Scene {
    grid: Grid,
    values: Vec<f64>,
    conductors: Vec<Outline>,
    dielectrics: Vec<Outline>,
    markers: Vec<Marker>,
}

/// A 20 x 10 mm domain, a line charge at (6, 5) mm, a conductor 12..16 x 3..7 mm without
/// values inside, a dielectric slab below y = 2 mm and a hot spot near the charge.
fn scene() -> Scene {
    let grid = Grid::regular([0.0, 0.0], [0.05 * MM, 0.05 * MM], [401, 201]);
    let mut values = line_charge(&grid, [6.0 * MM, 5.0 * MM]);
    for j in 0..grid.ny {
        for i in 0..grid.nx {
            let (x, y) = (grid.x(i), grid.y(j));
            if (12.0 * MM..=16.0 * MM).contains(&x) && (3.0 * MM..=7.0 * MM).contains(&y) {
                values[grid.idx(i, j)] = f64::NAN;
            }
        }
    }
    let rect =
        |x: [f64; 2], y: [f64; 2]| vec![[x[0], y[0]], [x[1], y[0]], [x[1], y[1]], [x[0], y[1]]];
    Scene {
        grid,
        values,
        conductors: vec![Outline::polygon(
            "shield",
            rect([12.0 * MM, 16.0 * MM], [3.0 * MM, 7.0 * MM]),
        )],
        dielectrics: vec![Outline::polygon(
            "substrate",
            rect([0.0, 20.0 * MM], [0.0, 2.0 * MM]),
        )],
        markers: vec![Marker {
            at: [6.5 * MM, 5.5 * MM],
            number: 1,
        }],
    }
}

fn input(s: &Scene) -> MapInput<'_> {
    MapInput {
        title: "potential, line charge over ground",
        quantity: "potential",
        unit: "V",
        length_unit: LengthUnit {
            label: "mm",
            metres: MM,
        },
        conductors: &s.conductors,
        dielectrics: &s.dielectrics,
        markers: &s.markers,
        ..MapInput::new(&s.grid, &s.values)
    }
}

fn px(img: &RgbImage, p: P) -> Rgb<u8> {
    *img.get_pixel(p[0].floor() as u32, p[1].floor() as u32)
}

fn dark(c: Rgb<u8>) -> bool {
    c.0.iter().all(|&v| v < 70)
}

fn neutral(c: Rgb<u8>) -> bool {
    let [r, g, b] = c.0.map(i32::from);
    (r - g).abs() <= 1 && (g - b).abs() <= 1 && (r - b).abs() <= 1
}
