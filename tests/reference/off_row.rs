//! Surface estimates of bodies that sit off the node rows: the conducting cylinder (planar)
//! and sphere (axisymmetric) of `uniform_field` in a uniform field, and the coax and the
//! concentric spheres, with their centres a fraction of a cell off the node rows and columns, where the operator's symmetric boundary
//! rows leave an error that falls at about first order beside a surface running along a
//! lattice row (the poles). A margin must never be optimistic because of the numerics: the
//! peak field and the peak surface charge may read low by no more than their estimates.
//! Each body is held at the uniform field's potential at its centre, so that it carries no
//! net charge (grounded 0.025 mm off the plates' mid-plane, the sphere's pole would read
//! 0.9 % high from its charge alone, which would hide the lattice's error).

use crate::uniform_field::{
    axisymmetric_local_field, conducting_cylinder_off, conducting_sphere_off, planar_local_field,
};
use fieldgrid_solver::EPS0;
use fieldgrid_tests::design;

/// Offsets of the centre off its node row (and column), in cells: a little, about a third
/// and half a cell (where the symmetric rows read lowest: the sphere's pole 0.11 % low at 40
/// cells and 0.19 % at 20 cells, the cylinder's 0.027 % at 40 cells).
const OFFSETS: [f64; 3] = [0.13, 0.31, 0.5];

/// Runs `case` at 10, 20 and 40 cells across the radius for each offset and returns, per
/// run, (cells, offset, peak field error, its estimate, peak surface charge error, its
/// estimate), each relative to the exact peak (errors signed: negative reads low); the
/// surface charge is the first conductor's.
fn estimates(what: &str, case: impl Fn(f64, f64) -> String, peak: f64) -> Vec<[f64; 6]> {
    let with_estimate = fieldgrid_tests::params(Default::default()).with_error_estimate(true);
    let sigma = EPS0 * peak;
    let mut out = Vec::new();
    for off in OFFSETS {
        for n in [10.0, 20.0, 40.0] {
            let s = fieldgrid_solver::study::run(&design(&case(n, off)), &with_estimate)
                .expect("study runs");
            let p = s.peak_field.as_ref().unwrap();
            let (err, est) = (
                (p.magnitude - peak) / peak,
                p.error_estimate.unwrap() / peak,
            );
            let top = s
                .surface_charge
                .iter()
                .filter(|p| p.conductor == 0)
                .max_by(|a, b| a.density.abs().total_cmp(&b.density.abs()))
                .unwrap();
            let (serr, sest) = (
                (top.density.abs() - sigma) / sigma,
                top.error_estimate.unwrap() / sigma,
            );
            eprintln!(
                "{what}, {n} cells, centre {off} cell off: peak error {err:.3e}, estimate \
                 {est:.3e}; peak surface charge error {serr:.3e}, estimate {sest:.3e}"
            );
            out.push([n, off, err, est, serr, sest]);
        }
    }
    out
}

/// Asserts that no run reads low by more than its estimate.
fn never_low_beyond(what: &str, runs: &[[f64; 6]]) {
    for [n, off, err, est, serr, sest] in runs {
        assert!(
            err + est >= 0.0,
            "{what}, {n} cells, {off} cell off: peak field {err:e} + {est:e}"
        );
        assert!(
            serr + sest >= 0.0,
            "{what}, {n} cells, {off} cell off: peak surface charge {serr:e} + {sest:e}"
        );
    }
}

#[test]
fn an_off_row_sphere_s_peak_field_and_surface_charge_are_never_low_beyond_their_estimates() {
    // A grounded sphere in a uniform field: field 3 E cos(theta), surface charge
    // 3 eps0 E cos(theta) (J. D. Jackson, Classical Electrodynamics, 3rd ed., 1999, sec. 2.5,
    // eqs. 2.14-2.15; from memory), E the field it stands in (`uniform_field`'s opener).
    let runs = estimates(
        "sphere",
        conducting_sphere_off,
        3.0 * axisymmetric_local_field(),
    );
    never_low_beyond("sphere", &runs);
}

#[test]
fn an_off_row_cylinder_s_peak_field_and_surface_charge_are_never_low_beyond_their_estimates() {
    // A grounded cylinder in a uniform field: field 2 E cos(theta), surface charge
    // 2 eps0 E cos(theta) (Jackson 1999, sec. 2.11, the r^(+-1) cos(theta) solutions of eq.
    // 2.71; from memory).
    let runs = estimates(
        "cylinder",
        |n, off| conducting_cylinder_off(n, [off, off]),
        2.0 * planar_local_field(1.0),
    );
    never_low_beyond("cylinder", &runs);
}

/// Concentric spheres of radii 1 and 2 mm (inner at 1 V, a shell to 2.9 mm grounded), their
/// centre `dy` cells off its node row, `n` cells across the inner radius, uniform lattice.
fn concentric_spheres_off(n: f64, dy: f64) -> String {
    format!(
        r#"
unit = "mm"
mode = "axisymmetric"
[grid]
x = [0.0, 3.0]
y = [-3.0, 3.0]
cell = {h}
lattice = "uniform"
[[conductor]]
name = "inner"
potential = 1.0
circle = {{ center = [0.0, {c}], radius = 1.0 }}
[[conductor]]
name = "shell"
potential = 0.0
ring = {{ center = [0.0, {c}], inner = 2.0, outer = 2.9 }}
"#,
        h = 1.0 / n,
        c = dy / n,
    )
}

/// A coax of radii 1 and 2.5 mm (inner at 1 V, a grounded sleeve to 2.7 mm), its centre `off`
/// cells off its node row and column, `n` cells across the inner radius, uniform lattice.
fn coax_off(n: f64, off: f64) -> String {
    format!(
        r#"
unit = "mm"
[grid]
x = [-2.8, 2.8]
y = [-2.8, 2.8]
cell = {h}
lattice = "uniform"
[[conductor]]
name = "inner"
potential = 1.0
circle = {{ center = [{c}, {c}], radius = 1.0 }}
[[conductor]]
name = "outer"
potential = 0.0
ring = {{ center = [{c}, {c}], inner = 2.5, outer = 2.7 }}
"#,
        h = 1.0 / n,
        c = off / n,
    )
}

#[test]
fn off_row_concentric_spheres_and_coax_inner_peaks_are_never_low_beyond_their_estimates() {
    // Spherical capacitor: E(a) = V b / (a (b - a)) on the inner sphere (D. J. Griffiths,
    // Introduction to Electrodynamics, 4th ed., 2017, sec. 2.5.4, from E = Q / (4 pi eps0 r^2)
    // and C = 4 pi eps0 / (1/a - 1/b)). Coax: E(a) = V / (a ln(b / a)) (Griffiths 2017, sec.
    // 2.2.3; common practice). The field is the same all round the inner conductor, so the
    // peak is wherever the lattice reads highest. Measured at these offsets: every peak and
    // peak surface charge reads high (by 0.011 % to 0.49 %), estimate over error 0.85 to 3.1
    // for the peak and 0.99 to 3.9 for the peak surface charge (above 3 where the surface fit's
    // bias bound or the rows' offset bound is the floor). The spheres' peak at 10 cells, whose
    // coarse lattice is below the fit's resolution, read 5.7 to 7.5 before the coarse fit's
    // bias was taken out of its difference (`FIT_RESOLVED_CELLS`), 1.9 to 2.8 since. Off by 0
    // to 0.9 cell in steps of 0.1 cell (the coax's sleeve to 2.75 mm), the same: every
    // reading high.
    let (a, b) = (1e-3, 2e-3);
    let runs = estimates("spheres", concentric_spheres_off, b / (a * (b - a)));
    never_low_beyond("spheres", &runs);
    let runs = estimates("coax", coax_off, 1.0 / (1e-3 * 2.5f64.ln()));
    never_low_beyond("coax", &runs);
    for [n, off, err, est, serr, sest] in runs {
        assert!(
            est >= err.abs() / 3.0 && sest >= serr.abs() / 3.0,
            "coax, {n} cells, {off} cell off: {est:e} for {err:e}, {sest:e} for {serr:e}"
        );
    }
}
