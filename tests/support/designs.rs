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

/// The `[grid]` table of a design: the domain `x` by `y` and the cell size, in the design's
/// unit, without a line break at its end (it stands on a line of its own in a design's text).
pub fn grid_table(x: [f64; 2], y: [f64; 2], cell: f64) -> String {
    format!(
        "[grid]\nx = [{:?}, {:?}]\ny = [{:?}, {:?}]\ncell = {cell:?}",
        x[0], x[1], y[0], y[1]
    )
}

/// Two plates 0.2 mm thick spanning the whole width of a 4 mm box between mirror sides, the
/// lower grounded and the upper at 1 V, `g` mm apart (a parameter, 0.5 mm): the field between
/// them is uniform, so their coupling per metre is exactly -eps0 W / g (W = 4 mm).
pub const GAP_PLATES: &str = r#"
unit = "mm"
[parameters]
g = 0.5
[grid]
x = [0.0, 4.0]
y = [0.0, "g + 0.6"]
cell = 0.1
[sides]
left = "symmetry"
right = "symmetry"
[[conductor]]
name = "lower"
potential = 0.0
rect = { x = [0.0, 4.0], y = [0.0, 0.2] }
[[conductor]]
name = "upper"
potential = 1.0
rect = { x = [0.0, 4.0], y = ["0.2 + g", "0.4 + g"] }
"#;

/// The demo microstrip (trace 1.35 mm wide on 0.6 mm laminate, half of it beside a mirror
/// side) with the permittivity a parameter `eps` (3.5), `room` mm of air beside and above
/// the trace and cells of `cell` mm.
pub fn microstrip_eps_parameter(room: f64, cell: f64) -> String {
    format!(
        r#"
unit = "mm"
[parameters]
h = 0.6
w = 1.35
eps = 3.5
room = {room:?}
[grid]
x = [0.0, "w/2 + room"]
y = [0.0, "h + room"]
cell = {cell:?}
[sides]
left = "symmetry"
right = "open"
top = "open"
bottom = "ground"
[[dielectric]]
name = "laminate"
permittivity = "eps"
rect = {{ x = [0.0, "w/2 + room"], y = [0.0, "h"] }}
[[conductor]]
name = "trace"
potential = 1.0
polyline = [[0.0, "h"], ["w/2", "h"]]
"#
    )
}

/// A coaxial line with its radii as parameters (inner `a` = 1 mm at 1 V, the grounded outer
/// ring from `b` = 2.5 mm to 2.8 mm), cells of 0.05 mm; the domain, reaching the ring's
/// outside, does not move with the radii, so every lattice has the same node counts.
pub const COAX_RADII: &str = r#"
unit = "mm"
[parameters]
a = 1.0
b = 2.5
[grid]
x = [-2.8, 2.8]
y = [-2.8, 2.8]
cell = 0.05
[[conductor]]
name = "inner"
potential = 1.0
circle = { center = [0.0, 0.0], radius = "a" }
[[conductor]]
name = "outer"
potential = 0.0
ring = { center = [0.0, 0.0], inner = "b", outer = 2.8 }
"#;

/// Parallel plates spanning the whole width of a 4 x 3 mm box between mirror sides: the lower
/// grounded from the bottom (grounded) to `lower_top` mm, the upper at 100 V from
/// `upper_bottom` mm to the top (at 100 V), cells of `cell` mm. The field between them is
/// uniform: the gap's pressure is eps0 E^2 / 2 wherever the faces lie on the lattice.
pub fn plates_at_100_v(lower_top: f64, upper_bottom: f64, cell: f64) -> String {
    format!(
        r#"
unit = "mm"
{grid}
[sides]
left = "symmetry"
right = "symmetry"
top = 100.0
bottom = "ground"
[[conductor]]
name = "lower"
potential = 0.0
rect = {{ x = [0.0, 4.0], y = [0.0, {lower_top:?}] }}
[[conductor]]
name = "upper"
potential = 100.0
rect = {{ x = [0.0, 4.0], y = [{upper_bottom:?}, 3.0] }}
"#,
        grid = grid_table([0.0, 4.0], [0.0, 3.0], cell)
    )
}

/// A coaxial line, inner radius 1 mm at 1 V, outer conductor a grounded ring from 2.5 to
/// 2.8 mm reaching the sides of the square box, cells of `cell` mm.
pub fn coax(cell: f64) -> String {
    format!(
        r#"
unit = "mm"
{grid}
[[conductor]]
name = "inner"
potential = 1.0
circle = {{ center = [0.0, 0.0], radius = 1.0 }}
[[conductor]]
name = "outer"
potential = 0.0
ring = {{ center = [0.0, 0.0], inner = 2.5, outer = 2.8 }}
"#,
        grid = grid_table([-2.8, 2.8], [-2.8, 2.8], cell)
    )
}

/// Shift of [`eccentric_rod`]'s rod from the tube's axis, mm.
pub const ECCENTRIC_SHIFT: f64 = 0.5;

/// An eccentric coaxial line: inner rod radius 1 mm at 100 V, shifted by [`ECCENTRIC_SHIFT`]
/// mm along x from the axis of a grounded tube of inner radius 2.5 mm, centred at (0.0137,
/// -0.0291) mm (off the node lines); `n` cells across the rod's radius, on a uniform lattice.
pub fn eccentric_rod(n: f64) -> String {
    format!(
        r#"
unit = "mm"
[grid]
x = [-2.8, 2.8]
y = [-2.8, 2.8]
cell = {}
lattice = "uniform"
[[conductor]]
name = "rod"
potential = 100.0
circle = {{ center = [{}, -0.0291], radius = 1.0 }}
[[conductor]]
name = "tube"
potential = 0.0
ring = {{ center = [0.0137, -0.0291], inner = 2.5, outer = 2.75 }}
"#,
        1.0 / n,
        0.0137 + ECCENTRIC_SHIFT
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
{grid}
[sides]
right = "open"
bottom = "open"
top = "open"
{body}
"#,
        grid = grid_table([0.0, reach], [-reach, reach], cell)
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
