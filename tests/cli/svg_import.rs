//! Outlines imported from an SVG drawing (`svg = { file, id }`): a path, a rect and a circle
//! come in as polygons whose areas match the drawn shapes within the flattening tolerance,
//! with the documented axis mapping; bad references are exit-2 input errors naming the key.

use fieldgrid_cli::design_file::read_design;
use fieldgrid_solver::design::Shape;
use fieldgrid_tests::cli::{expect, run, s};
use fieldgrid_tests::polygon_area;
use std::path::PathBuf;

/// A fresh scratch directory for the test `name`, with the `art/` folder the designs'
/// SVG references point into.
fn scratch(name: &str) -> PathBuf {
    let d = fieldgrid_tests::cli::scratch("fieldgrid-svg", name);
    std::fs::create_dir_all(d.join("art")).unwrap();
    d
}

// User units are millimetres here (the design says unit = "mm"); the viewBox is 20 x 10, so
// y_design = 10 - y_svg.
const DRAWING: &str = r#"<?xml version="1.0" encoding="UTF-8"?>
<svg xmlns="http://www.w3.org/2000/svg" width="20mm" height="10mm" viewBox="0 0 20 10">
  <!-- a disc of radius 2 about (5, 5) drawn as four cubic Béziers (handle 0.5523 r) -->
  <path id="round_pad" d="M 7 5 C 7 6.1046 6.1046 7 5 7 C 3.8954 7 3 6.1046 3 5 C 3 3.8954 3.8954 3 5 3 C 6.1046 3 7 3.8954 7 5 Z"/>
  <path id="arc_pad" d="M 3 5 A 2 2 0 1 0 7 5 A 2 2 0 1 0 3 5 Z"/>
  <g transform="translate(10 1)">
    <rect id="square_pad" x="0" y="1" width="3" height="2"/>
  </g>
  <circle id="dot" cx="16" cy="7" r="1.5"/>
  <path id="quad" d="M 1 9 Q 3 7 5 9 Z"/>
  <polyline id="wire" points="12,9 14,9 14,8"/>
  <text id="label" x="1" y="1">pads</text>
</svg>
"#;

fn design(shapes: &str) -> String {
    format!(
        r#"unit = "mm"
[grid]
x = [0.0, 20.0]
y = [0.0, 10.0]
cell = 0.1
{shapes}"#
    )
}

fn polygon(s: &Shape) -> &[[f64; 2]] {
    match s {
        Shape::Polygon { outer, holes, .. } => {
            assert!(holes.is_empty());
            outer
        }
        other => panic!("not a polygon: {other:?}"),
    }
}

#[test]
fn svg_path_rect_and_circle_import_with_matching_areas() {
    let dir = scratch("areas");
    std::fs::write(dir.join("art/pads.svg"), DRAWING).unwrap();
    let text = design(
        r#"
[[conductor]]
name = "round"
potential = 1.0
svg = { file = "art/pads.svg", id = "round_pad" }
[[conductor]]
name = "square"
potential = 0.0
svg = { file = "art/pads.svg", id = "square_pad" }
[[dielectric]]
name = "dot"
permittivity = 3.0
svg = { file = "art/pads.svg", id = "dot" }
[[charge]]
name = "lens"
density = 1.0e-3
svg = { file = "art/pads.svg", id = "quad" }
[[conductor]]
name = "wire"
potential = 0.5
svg = { file = "art/pads.svg", id = "wire" }
"#,
    );
    let file = dir.join("board.toml");
    std::fs::write(&file, &text).unwrap();
    let src = read_design(&text, file.to_str().unwrap(), &[]).expect("design reads");
    let d = &src.design;
    // The flattening tolerance is a tenth of the cell: 0.01 mm = 1e-5 m.
    let tol = 1e-5;
    let mm2 = 1e-6;

    // Disc of radius 2 mm drawn as four cubic Béziers with handles 0.5523 r, which deviate
    // from the circle by under 3e-4 r (common practice for quarter-circle Béziers; the
    // figure is from memory), then chorded. The chord polygon lies within tol + 3e-4 r of the circle,
    // so the area is within the perimeter times that.
    let r = 2e-3;
    let round = polygon(&d.conductors[0].shape);
    let want = std::f64::consts::PI * r * r;
    let slack = 2.0 * std::f64::consts::PI * r * (tol + 3e-4 * r);
    let got = polygon_area(round);
    assert!(
        (got - want).abs() <= slack,
        "disc area {got} vs {want} (slack {slack})"
    );
    // Centre (5, 5) in SVG is (5, 10 - 5) = (5, 5) mm in the design; every vertex is
    // within the tolerance band of radius 2 mm.
    for p in round {
        let rho = (p[0] - 5e-3).hypot(p[1] - 5e-3);
        assert!(
            (rho - r).abs() <= tol + 3e-4 * r,
            "vertex {p:?} at radius {rho}"
        );
    }

    // Rect 3 x 2 at (0, 1) inside translate(10, 1): x 10..13, y_svg 2..4, y_design 6..8.
    let sq = polygon(&d.conductors[1].shape);
    assert_eq!(sq.len(), 4);
    assert!((polygon_area(sq) - 6.0 * mm2).abs() < 1e-12 * mm2 * 1e6);
    let (xs, ys): (Vec<f64>, Vec<f64>) = sq.iter().map(|p| (p[0], p[1])).unzip();
    let lo = |v: &[f64]| v.iter().cloned().fold(f64::INFINITY, f64::min);
    let hi = |v: &[f64]| v.iter().cloned().fold(f64::NEG_INFINITY, f64::max);
    assert!((lo(&xs) - 10e-3).abs() < 1e-12 && (hi(&xs) - 13e-3).abs() < 1e-12);
    assert!(
        (lo(&ys) - 6e-3).abs() < 1e-12 && (hi(&ys) - 8e-3).abs() < 1e-12,
        "{ys:?}"
    );

    // Circle r = 1.5 mm: an inscribed polygon whose chords' sagitta is at most tol.
    let r = 1.5e-3;
    let dot = polygon(&d.dielectrics[0].shape);
    let want = std::f64::consts::PI * r * r;
    let got = polygon_area(dot);
    assert!(got < want && want - got <= 2.0 * std::f64::consts::PI * r * tol);

    // Quadratic from (1, 9) over control (3, 7) to (5, 9), closed by the chord: the segment
    // area is 2/3 of the triangle (1,9) (3,7) (5,9) (Archimedes' quadrature of the
    // parabola), 2/3 * 4 = 8/3 mm².
    let Some(fieldgrid_solver::design::Charge::Region { shape, .. }) = d.charges.first() else {
        panic!("charge region expected");
    };
    let lens = polygon(shape);
    let want = 8.0 / 3.0 * mm2;
    let got = polygon_area(lens);
    // Chord length 4 mm, deviation at most tol: the area is off by at most 4 mm * tol.
    assert!(
        (got - want).abs() <= 4e-3 * tol,
        "lens area {got} vs {want}"
    );

    // An open polyline stays open on a conductor.
    match &d.conductors[2].shape {
        Shape::Polyline(p) => {
            assert_eq!(p.len(), 3);
            assert!((p[0][0] - 12e-3).abs() < 1e-12 && (p[0][1] - 1e-3).abs() < 1e-12);
        }
        other => panic!("not a polyline: {other:?}"),
    }

    // The whole thing solves.
    let out = dir.join("out");
    expect(run(&["check", s(&file)]), 0);
    let _ = out;
}

#[test]
fn bad_svg_references_are_input_errors_naming_the_key() {
    let dir = scratch("errors");
    std::fs::write(dir.join("art/pads.svg"), DRAWING).unwrap();
    for (shape, key, fragment) in [
        (
            r#"svg = { file = "art/missing.svg", id = "x" }"#,
            "dielectric.svg.file",
            "cannot read the SVG file",
        ),
        (
            r#"svg = { file = "art/pads.svg", id = "nothing" }"#,
            "dielectric.svg.id",
            "no element with id \"nothing\"",
        ),
        (
            r#"svg = { file = "art/pads.svg", id = "label" }"#,
            "dielectric.svg.file",
            "cannot be an outline",
        ),
        (
            r#"svg = { file = "art/pads.svg", id = "wire" }"#,
            "dielectric.svg.id",
            "conductors only",
        ),
        (
            r#"svg = { file = "art/pads.svg", id = "arc_pad" }"#,
            "dielectric.svg.file",
            "elliptical arc",
        ),
        (
            r#"svg = { file = "art/pads.svg" }"#,
            "dielectric.svg.id",
            "missing `id`",
        ),
    ] {
        let text = design(&format!(
            "[[dielectric]]\nname = \"d\"\npermittivity = 2.0\n{shape}\n"
        ));
        let file = dir.join("bad.toml");
        std::fs::write(&file, &text).unwrap();
        let e = read_design(&text, file.to_str().unwrap(), &[]).unwrap_err();
        assert_eq!(e.line, 9, "{e}");
        assert_eq!(e.key, key, "{e}");
        assert!(e.message.contains(fragment), "{e}");
        expect(run(&["check", s(&file)]), 2);
    }
}
