//! Reference checks of open sides (the far-field condition of `solver/src/open.rs`) against
//! closed-form results for unbounded space. Each check names its source beside it.

use fieldgrid_solver::study::{self, StudyError};
use fieldgrid_solver::warning::Warning;
use fieldgrid_solver::EPS0;
use fieldgrid_tests::designs::{axisymmetric_in_open_space, UNIT_SPHERE};
use fieldgrid_tests::{design, params, rel_err, solve, solve_every_method};
use std::f64::consts::PI;

/// Wire radius and height of its centre above the ground plane, mm.
const A: f64 = 0.5;
const H: f64 = 1.5;

/// A wire over a grounded bottom side, the other sides open `reach * H` beyond the wire.
fn wire_over_ground(reach: f64, cell: f64) -> String {
    let w = reach * H;
    let (x0, left) = (-w, "open");
    format!(
        r#"
unit = "mm"
[grid]
x = [{x0}, {w}]
y = [0.0, {top}]
cell = {cell}
[sides]
left = "{left}"
right = "open"
top = "open"
bottom = "ground"
[[conductor]]
name = "wire"
potential = 1.0
circle = {{ center = [0.0, {H}], radius = {A} }}
"#,
        top = H + w
    )
}

fn wire_over_ground_closed_form() -> f64 {
    // Wire of radius a with its axis at height h over a conducting plane, by the method of
    // images: C' = 2 pi eps0 / acosh(h / a) (S. Ramo, J. R. Whinnery, T. Van Duzer, Fields
    // and Waves in Communication Electronics, 3rd ed., Wiley, 1994, table of common
    // transmission lines; cited from memory).
    2.0 * PI * EPS0 / (H / A).acosh()
}

#[test]
fn wire_over_ground_plane_with_open_sides_matches_image_solution() {
    let want = wire_over_ground_closed_form();
    let s = solve(&design(&wire_over_ground(2.0, 0.05)));
    let got = s.capacitance.matrix[0][0];
    let err = rel_err(got, want);
    println!("wire over ground, open sides 2h away: C' = {got:.6e}, closed form {want:.6e}, error {err:.2e}");
    assert!(err < 1e-2, "error {err:e}");
}

#[test]
fn moving_open_sides_out_twice_changes_wire_capacitance_little() {
    // The far-field condition is exact for the field of the wire and its image (a dipole on
    // the plane), so the answer hardly depends on where the open sides are.
    let near = solve(&design(&wire_over_ground(2.0, 0.05)))
        .capacitance
        .matrix[0][0];
    let far = solve(&design(&wire_over_ground(4.0, 0.05)))
        .capacitance
        .matrix[0][0];
    let moved = rel_err(far, near);
    println!(
        "wire over ground: open sides 2h -> 4h away changes C' by {moved:.2e}; far error {:.2e}",
        rel_err(far, wire_over_ground_closed_form())
    );
    assert!(moved < 5e-3, "moved {moved:e}");
}

/// Two wires of radius A with centres D = 2H apart, at +V/2 and -V/2, every side open
/// `reach * H` beyond the wires.
fn two_wire_line(reach: f64, cell: f64) -> String {
    let w = H + reach * H;
    format!(
        r#"
unit = "mm"
[grid]
x = [{x0}, {w}]
y = [{y0}, {y1}]
cell = {cell}
[sides]
left = "open"
right = "open"
top = "open"
bottom = "open"
[[conductor]]
name = "plus"
potential = 0.5
circle = {{ center = [{xm}, 0.0], radius = {A} }}
[[conductor]]
name = "minus"
potential = -0.5
circle = {{ center = [{H}, 0.0], radius = {A} }}
"#,
        x0 = -w,
        y0 = -reach * H,
        y1 = reach * H,
        xm = -H
    )
}

#[test]
fn two_wire_line_in_open_space_matches_closed_form() {
    // Two parallel wires of radius a, centres D apart: C' = pi eps0 / acosh(D / (2a))
    // (Ramo, Whinnery & Van Duzer 1994, table of common transmission lines; from memory).
    let want = PI * EPS0 / (2.0 * H / (2.0 * A)).acosh();
    // With every side open the far-field condition is exact for a dipole of any direction,
    // so the sides can be close: one wire spacing beyond the wires.
    let s = solve(&design(&two_wire_line(2.0, 0.05)));
    // Charge on the +V/2 wire per volt between the wires.
    let got = s.conductors[0].charge / 1.0;
    let err = rel_err(got, want);
    println!(
        "two-wire line in open space: C' = {got:.6e}, closed form {want:.6e}, error {err:.2e}"
    );
    assert!(err < 1e-2, "error {err:e}");
    // Balanced: no net charge, so nothing at this operating point depends on the box; but
    // the matrix refers to infinity, which the study says.
    // (To rounding of the mirrored outlines on the lattice: 2e-6 of the charge.)
    let net = s.conductors[0].charge + s.conductors[1].charge;
    assert!(net.abs() < 1e-4 * got, "net {net:e}");
    assert!(
        s.warnings
            .iter()
            .any(|w| matches!(w, Warning::ReferenceAtInfinity { .. })),
        "{:?}",
        s.warnings
    );
    assert!(!s
        .warnings
        .iter()
        .any(|w| matches!(w, Warning::NetChargeOpenSides { .. })));
    // Closer still, and twice as far.
    for reach in [1.0, 4.0] {
        let c = solve(&design(&two_wire_line(reach, 0.05))).conductors[0].charge;
        println!(
            "two-wire line, open sides {reach} x D/2 beyond the wires: error {:.2e}",
            rel_err(c, want)
        );
        assert!(rel_err(c, got) < 5e-3, "reach {reach}: {c:e} vs {got:e}");
    }
}

#[test]
fn open_sides_keep_gauss_law_over_the_box() {
    // The charge beyond the open sides balances the wire and the plane (Gauss's law).
    let s = solve(&design(&wire_over_ground(2.0, 0.05)));
    let total: f64 = s.side_charge.iter().sum::<f64>() + s.conductors[0].charge;
    assert!(total.abs() < 1e-8 * s.conductors[0].charge, "net {total:e}");
    // Sides: left, right, bottom, top; the open ones carry the charge at infinity beyond.
    let beyond = s.side_charge[0] + s.side_charge[1] + s.side_charge[3];
    assert!(beyond < 0.0, "charge beyond the open sides {beyond:e}");
}

#[test]
fn region_reaching_only_open_sides_is_anchored() {
    // An isolated wire with every side open: the far-field terms anchor the potential (no
    // "touches no fixed potential" error), and the net charge draws a warning.
    let text = r#"
unit = "mm"
[grid]
x = [-3.0, 3.0]
y = [-3.0, 3.0]
cell = 0.1
[sides]
left = "open"
right = "open"
top = "open"
bottom = "open"
[[conductor]]
name = "wire"
potential = 1.0
circle = { center = [0.0, 0.0], radius = 0.5 }
"#;
    let s = solve(&design(text));
    assert!(s.conductors[0].charge > 0.0);
    assert!(
        s.warnings
            .iter()
            .any(|w| matches!(w, Warning::NetChargeOpenSides { .. })),
        "{:?}",
        s.warnings
    );
    // A line charge alone: anchored by open sides, undetermined with symmetry sides only.
    let charge_only = r#"
unit = "mm"
[grid]
x = [-3.0, 3.0]
y = [-3.0, 3.0]
cell = 0.1
[sides]
left = "open"
right = "open"
top = "open"
bottom = "open"
[[charge]]
name = "line"
at = [0.0, 0.0]
amount = 1.0e-10
"#;
    let p = params(fieldgrid_solver::solvers::Method::default());
    assert!(study::run(&design(charge_only), &p).is_ok());
    let closed = charge_only.replace("\"open\"", "\"symmetry\"");
    assert!(matches!(
        study::run(&design(&closed), &p),
        Err(StudyError::Operator(_))
    ));
}

/// A sphere of radius 1 mm on the axis, the open sides `reach` mm from its centre.
fn isolated_sphere(reach: f64) -> String {
    axisymmetric_in_open_space(reach, 0.05, UNIT_SPHERE)
}

#[test]
fn isolated_sphere_with_open_sides_matches_capacitance_to_infinity() {
    // Isolated sphere of radius a: C = 4 pi eps0 a (Griffiths 2017, sec. 2.5.4, the
    // spherical capacitor with the outer radius at infinity). In a body of revolution the
    // far field of a net charge falls off as 1/r, which the open condition takes exactly.
    let want = 4.0 * PI * EPS0 * 1e-3;
    let near = solve(&design(&isolated_sphere(3.0))).capacitance.matrix[0][0];
    let far = solve(&design(&isolated_sphere(6.0))).capacitance.matrix[0][0];
    let (err, moved) = (rel_err(near, want), rel_err(far, near));
    println!(
        "isolated sphere, open sides 3 radii away: C = {near:.6e} F, closed form {want:.6e} F, \
         error {err:.2e}; 6 radii: error {:.2e}",
        rel_err(far, want)
    );
    assert!(err < 1e-2, "error {err:e}");
    assert!(
        moved < 5e-3,
        "moving the open sides out changed C by {moved:e}"
    );
}

#[test]
fn every_solver_agrees_with_open_sides() {
    // The far-field terms are part of the one operator every solver sees.
    for text in [wire_over_ground(1.0, 0.1), two_wire_line(1.0, 0.1)] {
        solve_every_method(&design(&text), 1e-7);
    }
}
