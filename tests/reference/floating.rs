//! Floating conductors: net charge zero, potential found by the solve, folded into the
//! Maxwell matrix of the fixed conductors.

use fieldgrid_solver::EPS0;
use fieldgrid_tests::{design, rel_err, solve};

/// A floating metal slab between a grounded bottom plate and a top plate at 10 V, spanning the
/// width between symmetry sides (so the field in each gap is uniform); every surface lies off
/// the grid lines, and the gaps differ.
const SLAB: &str = r#"
unit = "mm"
[grid]
x = [0.0, 2.0]
y = [0.0, 3.0]
cell = 0.05
[sides]
left = "symmetry"
right = "symmetry"
bottom = "ground"
top = "symmetry"
[[conductor]]
name = "island"
floating = true
rect = { x = [0.0, 2.0], y = [1.013, 1.237] }
[[conductor]]
name = "top"
potential = 10.0
rect = { x = [0.0, 2.0], y = [2.561, 3.0] }
"#;

#[test]
fn floating_slab_settles_at_series_capacitor_divider_potential() {
    let s = solve(&design(SLAB));
    // Two capacitors in series share one charge, so the isolated middle plate sits at
    // V_F = V C2 / (C1 + C2), with C_k = eps0 eps_k w / d_k for a uniform-field gap
    // (D. J. Griffiths, Introduction to Electrodynamics, 4th ed., 2017, sec. 2.5.4, the
    // parallel-plate capacitor; section number from memory).
    let (w, v) = (2e-3, 10.0);
    let (d1, e1) = (1.013e-3, 1.0);
    let (d2, e2) = (2.561e-3 - 1.237e-3, 1.0);
    let (c1, c2) = (EPS0 * e1 * w / d1, EPS0 * e2 * w / d2);
    let want_v = v * c2 / (c1 + c2);
    let island = s.conductors.iter().find(|c| c.name == "island").unwrap();
    assert!(island.floating);
    let err = rel_err(island.potential, want_v);
    println!(
        "floating potential {} V, series formula {want_v} V, error {err:e}",
        island.potential
    );
    assert!(
        err < 5e-3,
        "V_F = {} V, want {want_v} V ({err:e})",
        island.potential
    );

    // Its net charge is zero, to the solver's tolerance, against the charge on the top plate.
    let top = s.conductors.iter().find(|c| c.name == "top").unwrap();
    assert!(
        island.charge.abs() < 1e-6 * top.charge.abs(),
        "island charge {:e} vs top {:e}",
        island.charge,
        top.charge
    );

    // The matrix holds only the fixed conductor, the island folded in: the series capacitance
    // C1 C2 / (C1 + C2) (same source).
    assert_eq!(s.capacitance.names, vec!["top".to_string()]);
    let want_c = c1 * c2 / (c1 + c2);
    let got_c = s.capacitance.matrix[0][0];
    let err_c = rel_err(got_c, want_c);
    println!("reduced C = {got_c:e} F/m, series formula {want_c:e} F/m, error {err_c:e}");
    assert!(err_c < 5e-3, "C = {got_c:e}, want {want_c:e} ({err_c:e})");
    // And the operating-point charge of the top plate is C V.
    assert!(rel_err(top.charge, got_c * v) < 1e-6);
}

#[test]
fn floating_conductor_without_fixed_neighbours_follows_the_sides() {
    // With the top plate replaced by a side held at 10 V, the island still divides the voltage
    // as the series formula says (Griffiths 2017, as above).
    let text = SLAB
        .replace("top = \"symmetry\"", "top = 10.0")
        .replace(
            "[[conductor]]\nname = \"top\"\npotential = 10.0\nrect = { x = [0.0, 2.0], y = [2.561, 3.0] }\n",
            "",
        );
    let s = solve(&design(&text));
    let (d1, e1, d2) = (1.013e-3, 1.0, 3.0e-3 - 1.237e-3);
    let (c1, c2) = (e1 / d1, 1.0 / d2);
    let want_v = 10.0 * c2 / (c1 + c2);
    assert!(s.capacitance.names.is_empty());
    let island = &s.conductors[0];
    let err = rel_err(island.potential, want_v);
    println!(
        "floating potential with a fixed side {} V, want {want_v} V, error {err:e}",
        island.potential
    );
    assert!(err < 5e-3, "V_F = {} V, want {want_v} V", island.potential);
}

#[test]
fn floating_slab_over_a_dielectric_layer_settles_at_series_divider_potential() {
    // A dielectric layer under the slab, its surface off the grid lines: the lower gap is two
    // capacitors in series, C1 = eps0 w / (t/eps + (d1 - t)/1) (Griffiths 2017, as above).
    let text = SLAB.replace(
        "[[conductor]]\nname = \"island\"",
        "[[dielectric]]\nname = \"layer\"\npermittivity = 3.0\nrect = { x = [0.0, 2.0], y = [0.0, 0.537] }\n\n[[conductor]]\nname = \"island\"",
    );
    let s = solve(&design(&text));
    let (t, d1, d2) = (0.537e-3, 1.013e-3, 2.561e-3 - 1.237e-3);
    let (c1, c2) = (1.0 / (t / 3.0 + (d1 - t)), 1.0 / d2);
    let want_v = 10.0 * c2 / (c1 + c2);
    let island = s.conductors.iter().find(|c| c.name == "island").unwrap();
    let err = rel_err(island.potential, want_v);
    println!(
        "floating potential over a layer {} V, want {want_v} V, error {err:e}",
        island.potential
    );
    assert!(err < 5e-3, "V_F = {} V, want {want_v} V", island.potential);
}
