//! Conductors drawn in several pieces: `[[conductor]]` tables sharing a name are one conductor
//! (one net), whose pieces may touch and overlap. They are rasterised as their union, give one
//! row of the capacitance matrix and one charge, and equal the same metal drawn as one outline.
//! (The refusals of pieces at different potentials, of touching conductors of two nets and of
//! a piece outside the domain are in the bad-input catalogue.)

use fieldgrid_solver::post::sharp_corners;
use fieldgrid_tests::cli::{expect, run, scratch, summary, write};
use fieldgrid_tests::{design, solve};

/// The prefix of this file's scratch directories.
const SCRATCH: &str = "fieldgrid-nets";

/// A trace over a ground pour on a uniform grid whose lines hold every edge. `ground` draws
/// the ground metal; the posts of the fence stand on the pour (x 1..1.5 mm) and sink into it
/// (x 8.5..9 mm, from y = 0.5 mm).
fn pour_design(ground: &str) -> String {
    format!(
        r#"
unit = "mm"
{grid}
lattice = "uniform"
[sides]
top = "open"
[[conductor]]
name = "trace"
potential = 1.0
rect = {{ x = [4.0, 6.0], y = [2.0, 2.2] }}
{ground}
"#,
        grid = fieldgrid_tests::designs::grid_table([0.0, 10.0], [0.0, 6.0], 0.1)
    )
}

/// The pour and its fence as three tables of one name.
const PIECES: &str = r#"
[[conductor]]
name = "gnd"
potential = 0.0
rect = { x = [0.0, 10.0], y = [0.0, 1.0] }
[[conductor]]
name = "gnd"
potential = 0.0
rect = { x = [1.0, 1.5], y = [1.0, 3.0] }
[[conductor]]
name = "gnd"
potential = 0.0
rect = { x = [8.5, 9.0], y = [0.5, 3.0] }
"#;

/// The same metal as one polygon outlining the pour and both posts.
const MERGED: &str = r#"
[[conductor]]
name = "gnd"
potential = 0.0
polygon = [[0.0, 0.0], [10.0, 0.0], [10.0, 1.0], [9.0, 1.0], [9.0, 3.0], [8.5, 3.0],
           [8.5, 1.0], [1.5, 1.0], [1.5, 3.0], [1.0, 3.0], [1.0, 1.0], [0.0, 1.0]]
"#;

#[test]
fn touching_pour_and_fence_solve_as_one_net_equal_to_one_merged_polygon() {
    let pieces = design(&pour_design(PIECES));
    let merged = design(&pour_design(MERGED));
    assert_eq!(
        pieces.conductors.len(),
        2,
        "the three gnd tables are one conductor"
    );
    assert_eq!(pieces.conductors[1].joined.len(), 2);

    // The union is the polygon's region: the same nodes and cut edges, so the same operator.
    let (a, b) = (solve(&pieces), solve(&merged));
    assert_eq!(a.raster.conductor, b.raster.conductor);
    assert_eq!(a.raster.cut_edges, b.raster.cut_edges);

    // One row per net; the same capacitance as the merged polygon to the solver's
    // reproducibility (the same operator solved twice).
    assert_eq!(a.capacitance.names, ["trace", "gnd"]);
    for (ra, rb) in a.capacitance.matrix.iter().zip(&b.capacitance.matrix) {
        for (x, y) in ra.iter().zip(rb) {
            assert!((x - y).abs() <= 1e-9 * y.abs(), "{x:e} vs {y:e}");
        }
    }
    for (ca, cb) in a.conductors.iter().zip(&b.conductors) {
        assert!((ca.charge - cb.charge).abs() <= 1e-9 * cb.charge.abs());
    }

    // The sharp corners of the union are the polygon's convex corners: a post's corners on
    // the pour or inside it are not singular points.
    let key = |mut v: Vec<[f64; 2]>| {
        v.sort_by(|p, q| p.partial_cmp(q).unwrap());
        v
    };
    assert_eq!(key(sharp_corners(&pieces)), key(sharp_corners(&merged)));

    // No surface sample of the pieces lies inside the metal of another piece: the sampled
    // surface of gnd is as long as the polygon's.
    let length = |s: &fieldgrid_solver::study::Solution| -> f64 {
        s.surface
            .iter()
            .filter(|p| p.kind == fieldgrid_solver::surface::SurfaceKind::Conductor(1))
            .map(|p| p.length)
            .sum()
    };
    let (la, lb) = (length(&a), length(&b));
    assert!((la - lb).abs() <= 1e-9 * lb, "surface {la} m vs {lb} m");
}

#[test]
fn impedance_of_a_trace_over_a_pour_in_pieces_reports_one_ground_net() {
    let dir = scratch(SCRATCH, "impedance");
    let path = write(&dir, "pour.toml", &pour_design(PIECES));
    let out = dir.join("out");
    expect(
        run(&[
            "impedance",
            &path,
            "--signal",
            "trace",
            "--out",
            out.to_str().unwrap(),
            "--quiet",
        ]),
        0,
    );
    let s = summary(&out);
    let names: Vec<&str> = s["capacitance"]["names"]
        .as_array()
        .unwrap()
        .iter()
        .map(|n| n.as_str().unwrap())
        .collect();
    assert_eq!(names, ["trace", "gnd"]);
    let warnings = s["warnings"].as_array().unwrap();
    assert!(
        warnings
            .iter()
            .all(|w| !w.as_str().unwrap().contains("gnd")),
        "{warnings:?}"
    );
}
