//! Designs and demo files shared by several test modules, so that one scenario is written
//! once. Dimensions are in millimetres (each design says `unit = "mm"`); every design here is
//! our own scenario.

use std::path::Path;

/// Starts a design in a 4 x 2 mm planar box (cell 0.1 mm, 41 x 21 nodes) with mirror
/// (symmetry) sides left and right, and appends the string literals given: the remaining
/// sides first (they continue the `[sides]` table), then the bodies. Expands to a string
/// literal, so the result can be a `const`.
#[macro_export]
macro_rules! mirror_box_4x2_mm {
    ($($rest:literal),* $(,)?) => {
        concat!(
            "\nunit = \"mm\"\n[grid]\nx = [0.0, 4.0]\ny = [0.0, 2.0]\ncell = 0.1\n",
            "[sides]\nleft = \"symmetry\"\nright = \"symmetry\"\n",
            $($rest),*
        )
    };
}

/// A coaxial line, inner radius 1 mm at 1 V, outer conductor a grounded ring from 2.5 to
/// 2.8 mm reaching the sides of the square box, cells of `cell` mm.
pub fn coax(cell: f64) -> String {
    format!(
        r#"
unit = "mm"
[grid]
x = [-2.8, 2.8]
y = [-2.8, 2.8]
cell = {cell}
[[conductor]]
name = "inner"
potential = 1.0
circle = {{ center = [0.0, 0.0], radius = 1.0 }}
[[conductor]]
name = "outer"
potential = 0.0
ring = {{ center = [0.0, 0.0], inner = 2.5, outer = 2.8 }}
"#
    )
}

/// An axisymmetric design whose right, bottom and top sides are open, the box reaching
/// `reach` mm from the axis and from z = 0, with square cells of about `cell` mm; `body` holds
/// the conductors and materials.
pub fn axisymmetric_in_open_space(reach: f64, cell: f64, body: &str) -> String {
    format!(
        r#"
unit = "mm"
mode = "axisymmetric"
[grid]
x = [0.0, {reach}]
y = [-{reach}, {reach}]
cell = {cell}
[sides]
right = "open"
bottom = "open"
top = "open"
{body}
"#
    )
}

/// A sphere of radius 1 mm at 1 V centred on the axis at z = 0 (a body for
/// [`axisymmetric_in_open_space`]).
pub const UNIT_SPHERE: &str = r#"
[[conductor]]
name = "sphere"
potential = 1.0
circle = { center = [0.0, 0.0], radius = 1.0 }
"#;

/// The path of a demo design in `geometries/`, as a command-line argument.
pub fn demo_path(name: &str) -> String {
    Path::new(env!("CARGO_MANIFEST_DIR"))
        .join("../geometries")
        .join(name)
        .display()
        .to_string()
}

/// The text of a demo design in `geometries/`.
pub fn demo_text(name: &str) -> String {
    let path = demo_path(name);
    std::fs::read_to_string(&path).unwrap_or_else(|e| panic!("{path}: {e}"))
}
