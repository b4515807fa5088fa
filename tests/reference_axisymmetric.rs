//! Reference checks of the axisymmetric (r-z) solver against closed-form results.
//! Each check names its source beside it.

use fieldgrid_solver::EPS0;
use fieldgrid_tests::{design, rel_err, solve};
use std::f64::consts::PI;

fn concentric_spheres(cells_per_mm: f64) -> String {
    format!(
        r#"
unit = "mm"
mode = "axisymmetric"
[grid]
x = [0.0, 3.0]
y = [-3.0, 3.0]
cell = {}
[[conductor]]
name = "inner"
potential = 1.0
circle = {{ center = [0.0, 0.0], radius = 1.0 }}
[[conductor]]
name = "shell"
potential = 0.0
ring = {{ center = [0.0, 0.0], inner = 2.0, outer = 3.0 }}
"#,
        1.0 / cells_per_mm
    )
}

#[test]
fn concentric_spheres_match_spherical_capacitor() {
    // Spherical capacitor C = 4 pi eps0 / (1/a - 1/b) (D. J. Griffiths, Introduction to
    // Electrodynamics, 4th ed., 2017, sec. 2.5.4).
    let s = solve(&design(&concentric_spheres(20.0)));
    let want = 4.0 * PI * EPS0 / (1.0 / 1e-3 - 1.0 / 2e-3);
    let got = s.capacitance.matrix[0][0];
    eprintln!("concentric spheres: error {:e}", rel_err(got, want));
    assert!(
        rel_err(got, want) < 1e-3,
        "C = {got:e} F, want {want:e} F ({:e})",
        rel_err(got, want)
    );
    assert!(rel_err(-s.capacitance.matrix[0][1], want) < 1e-3);
}

#[test]
fn point_charge_in_grounded_sphere_matches_coulomb_with_image_term() {
    // Potential of a point charge at the centre of a grounded sphere of radius b:
    // phi = q/(4 pi eps0) (1/r - 1/b), field q/(4 pi eps0 r^2) (Griffiths 2017, sec. 2.3 and
    // sec. 3.2 method of images; the image term is the constant -q/(4 pi eps0 b)).
    let text = r#"
unit = "mm"
mode = "axisymmetric"
[grid]
x = [0.0, 5.5]
y = [-5.5, 5.5]
cell = 0.05
[[conductor]]
name = "sphere"
potential = 0.0
ring = { center = [0.0, 0.0], inner = 5.0, outer = 5.5 }
[[charge]]
name = "q"
at = [0.0, 0.0]
amount = 1.0e-12
[[probe]]
name = "p"
at = [1.5, 2.0]
"#;
    let s = solve(&design(text));
    let (q, b, r): (f64, f64, f64) = (1e-12, 5e-3, 2.5e-3);
    let k = q / (4.0 * PI * EPS0);
    let p = &s.probes[0];
    let want_v = k * (1.0 / r - 1.0 / b);
    let want_e = k / (r * r);
    let e = p.field[0].hypot(p.field[1]);
    eprintln!(
        "point charge in sphere: potential error {:e}, field error {:e}",
        rel_err(p.potential, want_v),
        rel_err(e, want_e)
    );
    assert!(
        rel_err(p.potential, want_v) < 1e-2,
        "potential {} vs {want_v}",
        p.potential
    );
    assert!(rel_err(e, want_e) < 1e-2, "field {e} vs {want_e}");
    assert!(
        rel_err(-s.conductors[0].charge, q) < 1e-6,
        "induced {}",
        s.conductors[0].charge
    );
}

#[test]
fn thin_toroidal_line_agrees_with_planar_coax_times_circumference() {
    // A coaxial torus of large major radius R behaves locally as a planar coaxial line:
    // C ~ 2 pi R * 2 pi eps0 / ln(b/a) (Griffiths 2017, sec. 2.5; the planar cross-section
    // per unit length times the circumference, with curvature corrections of order (b/R)^2).
    let text = r#"
unit = "mm"
mode = "axisymmetric"
[grid]
x = [0.0, 23.0]
y = [-3.0, 3.0]
cell = 0.1
[[conductor]]
name = "core"
potential = 1.0
circle = { center = [20.0, 0.0], radius = 1.0 }
[[conductor]]
name = "sheath"
potential = 0.0
ring = { center = [20.0, 0.0], inner = 2.5, outer = 3.0 }
"#;
    let s = solve(&design(text));
    let want = 2.0 * PI * 20e-3 * 2.0 * PI * EPS0 / (2.5f64).ln();
    let got = s.capacitance.matrix[0][0];
    eprintln!("torus vs planar coax: error {:e}", rel_err(got, want));
    assert!(rel_err(got, want) < 1e-2, "C = {got:e} F, want {want:e} F");
}
