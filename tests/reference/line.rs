//! Reference checks of transmission-line parameters (`solver/src/line.rs`,
//! `solver/src/line_study.rs` and the `impedance` command) against exact conformal maps and
//! published closed forms, and of the honesty of the discretisation-error estimate. Each
//! check names its source beside it.

use fieldgrid_solver::line::elliptic_k;
use fieldgrid_solver::line_study::{self, LineStudy};
use fieldgrid_solver::solvers::Method;
use fieldgrid_solver::study;
use fieldgrid_solver::{EPS0, MU0};
use fieldgrid_tests::cli::{expect, run, s, scratch, summary, write};
use fieldgrid_tests::{design, params, rel_err};
use std::f64::consts::PI;

/// Speed of light in vacuum from the library's constants, m/s.
fn c_light() -> f64 {
    1.0 / (MU0 * EPS0).sqrt()
}

/// Wave impedance of free space from the library's constants, ohms.
fn eta0() -> f64 {
    (MU0 / EPS0).sqrt()
}

/// `K(k) / K(k')`, k' = sqrt(1 - k^2).
fn k_ratio(k: f64) -> f64 {
    elliptic_k(k) / elliptic_k(((1.0 - k) * (1.0 + k)).sqrt())
}

/// Centred zero-thickness stripline of width w between plates b apart: S. B. Cohn,
/// "Characteristic impedance of the shielded-strip transmission line", IRE Trans. MTT 2
/// (1954) 52-57: Z0 = 30 pi K(k) / (sqrt(eps_r) K(k')), k = sech(pi w / (2 b)). (30 pi is
/// eta0 / 4; the exact eta0 is used.)
fn cohn_stripline(w_over_b: f64, eps_r: f64) -> f64 {
    let k = 1.0 / (PI * w_over_b / 2.0).cosh();
    eta0() / 4.0 * k_ratio(k) / eps_r.sqrt()
}

/// Edge-coupled zero-thickness strips of width w, gap s, centred between plates b apart:
/// S. B. Cohn, "Shielded coupled-strip transmission line", IRE Trans. MTT 3 (1955) 29-38:
/// Z_even = 30 pi K(k_e') / (sqrt(eps_r) K(k_e)), k_e = tanh(pi w/2b) tanh(pi (w+s)/2b);
/// Z_odd the same with k_o = tanh(pi w/2b) coth(pi (w+s)/2b). Returns (Z_even, Z_odd).
pub(crate) fn cohn_coupled(w: f64, s: f64, b: f64, eps_r: f64) -> (f64, f64) {
    let t1 = (PI * w / (2.0 * b)).tanh();
    let t2 = (PI * (w + s) / (2.0 * b)).tanh();
    let z = |k: f64| eta0() / 4.0 / k_ratio(k) / eps_r.sqrt();
    (z(t1 * t2), z(t1 / t2))
}

/// Zero-thickness microstrip of width ratio u = w/h: E. Hammerstad, O. Jensen, "Accurate
/// models for microstrip computer-aided design", IEEE MTT-S Int. Microwave Symp. Digest
/// (1980) 407-409, eqs. for Z01(u) (stated accuracy 0.01 % for u <= 1, 0.03 % for
/// u <= 1000) and eps_eff(u, eps_r) (0.2 %); cited from memory of the paper's equations.
/// Returns (Z0, eps_eff, Z0 in air).
pub(crate) fn hammerstad_jensen(u: f64, eps_r: f64) -> (f64, f64, f64) {
    let f = 6.0 + (2.0 * PI - 6.0) * (-(30.666 / u).powf(0.7528)).exp();
    let z01 = eta0() / (2.0 * PI) * (f / u + (1.0 + 4.0 / (u * u)).sqrt()).ln();
    let a = 1.0
        + ((u.powi(4) + (u / 52.0).powi(2)) / (u.powi(4) + 0.432)).ln() / 49.0
        + (1.0 + (u / 18.1).powi(3)).ln() / 18.7;
    let b = 0.564 * ((eps_r - 0.9) / (eps_r + 3.0)).powf(0.053);
    let eps_eff = (eps_r + 1.0) / 2.0 + (eps_r - 1.0) / 2.0 * (1.0 + 10.0 / u).powf(-a * b);
    (z01 / eps_eff.sqrt(), eps_eff, z01)
}

/// Coplanar waveguide, centre strip s, slots w, zero-thickness metal on a substrate of
/// thickness h (air below), grounds semi-infinite: the conformal-mapping result of
/// R. N. Simons, Coplanar Waveguide Circuits, Components, and Systems, Wiley, 2001, sec. 2.2
/// (the partial-capacitance form also in G. Ghione, C. Naldi, Electronics Letters 20 (1984)
/// 179-181): k0 = s/(s+2w), k1 = sinh(pi s/4h) / sinh(pi (s+2w)/4h),
/// eps_eff = 1 + (eps_r - 1)/2 K(k1)/K(k1') K(k0')/K(k0), Z0 = 30 pi / sqrt(eps_eff)
/// K(k0')/K(k0); cited from memory. Returns (Z0, eps_eff).
fn cpw(s: f64, w: f64, h: f64, eps_r: f64) -> (f64, f64) {
    let k0 = s / (s + 2.0 * w);
    let k1 = (PI * s / (4.0 * h)).sinh() / (PI * (s + 2.0 * w) / (4.0 * h)).sinh();
    let eps_eff = 1.0 + (eps_r - 1.0) / 2.0 * k_ratio(k1) / k_ratio(k0);
    (eta0() / 4.0 / eps_eff.sqrt() / k_ratio(k0), eps_eff)
}

fn run_line(text: &str, signals: &[&str], error_estimate: bool) -> LineStudy {
    let d = design(text);
    let signals: Vec<String> = signals.iter().map(|s| s.to_string()).collect();
    let p = params(Method::default()).with_error_estimate(error_estimate);
    let ls = line_study::run(&d, &signals, &p).expect("line study runs");
    assert!(ls.solution.solve.converged && ls.vacuum.solve.converged);
    ls
}

/// Zero-thickness strip of width w_over_b * b centred between plates b = 1 mm apart, the
/// half x >= 0 with a symmetry side through the strip, the far side open 3 b away.
fn stripline(w_over_b: f64, eps_r: f64, cell: f64) -> String {
    stripline_in(w_over_b, eps_r, cell, 3.0)
}

/// The same with the open side `room` plate spacings beyond the strip.
fn stripline_in(w_over_b: f64, eps_r: f64, cell: f64, room: f64) -> String {
    let hw = w_over_b / 2.0;
    format!(
        r#"
unit = "mm"
[grid]
x = [0.0, {x1}]
y = [0.0, 1.0]
cell = {cell}
[sides]
left = "symmetry"
right = "open"
[background]
permittivity = {eps_r}
[[conductor]]
name = "strip"
potential = 1.0
polyline = [[0.0, 0.5], [{hw}, 0.5]]
"#,
        x1 = hw + room
    )
}

#[test]
fn centred_stripline_impedance_matches_cohn_exact_map() {
    let eps_r = 2.2;
    for w_over_b in [0.25, 0.5, 1.0, 2.0] {
        // A zero-thickness edge converges at first order (it acts about 0.36 cell wider), so
        // the narrowest strip needs 40 cells across its half width for 0.5 %.
        let ls = run_line(
            &stripline_in(w_over_b, eps_r, 1.0 / 320.0, 2.0),
            &["strip"],
            false,
        );
        // Half model, unfolded across the symmetry side by the study: the whole strip.
        assert_eq!(ls.mirrored, ["left"]);
        let z0 = ls.line.z0.unwrap();
        let want = cohn_stripline(w_over_b, eps_r);
        let err = rel_err(z0, want);
        println!("stripline W/b = {w_over_b}: Z0 = {z0:.4} ohm, Cohn 1954 {want:.4} ohm, error {err:.2e}");
        assert!(err < 5e-3, "W/b = {w_over_b}: error {err:e}");
        // A homogeneous line: eps_eff is the permittivity.
        assert!(rel_err(ls.line.eps_eff.unwrap(), eps_r) < 1e-9);
    }
}

/// Zero-thickness microstrip of width u*h on a substrate h = 1 mm over a ground plane, the
/// half x >= 0, open sides `room` substrate heights beyond the strip.
fn microstrip_in(u: f64, eps_r: f64, cell: f64, room: f64) -> String {
    let hw = u / 2.0;
    format!(
        r#"
unit = "mm"
{grid}
[sides]
left = "symmetry"
right = "open"
top = "open"
bottom = "ground"
[[dielectric]]
name = "substrate"
permittivity = {eps_r}
rect = {{ x = [0.0, {x1}], y = [0.0, 1.0] }}
[[conductor]]
name = "strip"
potential = 1.0
polyline = [[0.0, 1.0], [{hw}, 1.0]]
"#,
        grid = fieldgrid_tests::designs::grid_table([0.0, hw + room], [0.0, 1.0 + room], cell),
        x1 = hw + room,
    )
}

#[test]
fn microstrip_impedance_and_effective_permittivity_match_hammerstad_jensen() {
    for (u, eps_r) in [
        (0.5, 2.2),
        (0.5, 10.0),
        (1.0, 4.4),
        (2.0, 6.15),
        (4.0, 2.2),
        (4.0, 10.0),
    ] {
        let ls = run_line(&microstrip_in(u, eps_r, 1.0 / 80.0, 4.0), &["strip"], false);
        let z0 = ls.line.z0.unwrap();
        let eps_eff = ls.line.eps_eff.unwrap();
        let (want_z, want_e, _) = hammerstad_jensen(u, eps_r);
        let (ez, ee) = (rel_err(z0, want_z), rel_err(eps_eff, want_e));
        println!(
            "microstrip W/h = {u}, eps_r = {eps_r}: Z0 = {z0:.4} ohm (H&J {want_z:.4}, error {ez:.2e}), \
             eps_eff = {eps_eff:.4} (H&J {want_e:.4}, error {ee:.2e})"
        );
        assert!(ez < 1e-2, "W/h = {u}, eps_r = {eps_r}: Z0 error {ez:e}");
        assert!(
            ee < 1e-2,
            "W/h = {u}, eps_r = {eps_r}: eps_eff error {ee:e}"
        );
    }
}

/// Two zero-thickness strips of width w, gap s, centred between plates 1 mm apart, both
/// modelled (two signals), both sides open 2 b beyond the strips.
fn coupled_stripline(w: f64, s: f64, eps_r: f64, cell: f64) -> String {
    let (a, b) = (s / 2.0, s / 2.0 + w);
    format!(
        r#"
unit = "mm"
[grid]
x = [{x0}, {x1}]
y = [0.0, 1.0]
cell = {cell}
[sides]
left = "open"
right = "open"
[background]
permittivity = {eps_r}
[[conductor]]
name = "p"
potential = 1.0
polyline = [[{nb}, 0.5], [{na}, 0.5]]
[[conductor]]
name = "n"
potential = -1.0
polyline = [[{a}, 0.5], [{b}, 0.5]]
"#,
        x0 = -(b + 2.0),
        x1 = b + 2.0,
        na = -a,
        nb = -b
    )
}

#[test]
fn edge_coupled_stripline_odd_and_even_impedances_match_cohn() {
    let eps_r = 2.2;
    for (w, s) in [(0.5, 0.25), (1.0, 0.5)] {
        let ls = run_line(
            &coupled_stripline(w, s, eps_r, 1.0 / 240.0),
            &["p", "n"],
            false,
        );
        let pair = ls.line.pair.clone().unwrap();
        assert!(pair.symmetric);
        let (want_e, want_o) = cohn_coupled(w, s, 1.0, eps_r);
        let (ee, eo) = (rel_err(pair.z_even, want_e), rel_err(pair.z_odd, want_o));
        println!(
            "coupled stripline W/b = {w}, S/b = {s}: Z_even = {:.4} (Cohn 1955 {want_e:.4}, error {ee:.2e}), \
             Z_odd = {:.4} (Cohn 1955 {want_o:.4}, error {eo:.2e}), Z_diff = {:.4}",
            pair.z_even, pair.z_odd, pair.z_diff
        );
        assert!(ee < 1e-2, "even-mode error {ee:e}");
        assert!(eo < 1e-2, "odd-mode error {eo:e}");
        assert!(rel_err(pair.z_diff, 2.0 * pair.z_odd) < 1e-12);
        // Homogeneous: both modes travel at c / sqrt(eps_r).
        for e in &ls.line.eps_eff_modes {
            assert!(rel_err(*e, eps_r) < 1e-6, "mode eps_eff {e}");
        }
    }
}

/// Coplanar waveguide: centre strip s, slots w, grounds reaching the open right side, on a
/// substrate of thickness h with air above and below; the half x >= 0, the open sides `room`
/// beyond the slot and the substrate, mm.
fn coplanar_in(s: f64, w: f64, h: f64, eps_r: f64, cell: f64, room: f64) -> String {
    let x1 = s / 2.0 + w + room;
    format!(
        r#"
unit = "mm"
[grid]
x = [0.0, {x1}]
y = [{y0}, {room}]
cell = {cell}
[sides]
left = "symmetry"
right = "open"
top = "open"
bottom = "open"
[[dielectric]]
name = "substrate"
permittivity = {eps_r}
rect = {{ x = [0.0, {x1}], y = [{yh}, 0.0] }}
[[conductor]]
name = "signal"
potential = 1.0
polyline = [[0.0, 0.0], [{hs}, 0.0]]
[[conductor]]
name = "ground"
potential = 0.0
polyline = [[{g}, 0.0], [{x1}, 0.0]]
"#,
        y0 = -h - room,
        yh = -h,
        hs = s / 2.0,
        g = s / 2.0 + w
    )
}

#[test]
fn coplanar_waveguide_on_finite_substrate_matches_conformal_mapping() {
    // Substrates at least half as thick as the slot span s + 2w, where the partial-capacitance
    // form is accurate; at h / (s + 2w) = 1/3 it is 2 % off in eps_eff.
    for (s, w, h, eps_r) in [(1.0, 0.5, 1.0, 9.8), (0.5, 0.25, 1.0, 9.8)] {
        let ls = run_line(
            &coplanar_in(s, w, h, eps_r, 1.0 / 80.0, 3.0),
            &["signal"],
            false,
        );
        let z0 = ls.line.z0.unwrap();
        let eps_eff = ls.line.eps_eff.unwrap();
        let (want_z, want_e) = cpw(s, w, h, eps_r);
        let (ez, ee) = (rel_err(z0, want_z), rel_err(eps_eff, want_e));
        println!(
            "CPW s = {s}, w = {w}, h = {h}, eps_r = {eps_r}: Z0 = {z0:.4} (Simons {want_z:.4}, error {ez:.2e}), \
             eps_eff = {eps_eff:.4} (Simons {want_e:.4}, error {ee:.2e})"
        );
        assert!(ez < 2e-2, "Z0 error {ez:e}");
        assert!(ee < 2e-2, "eps_eff error {ee:e}");
    }
}

/// Checks that the true error of `got` lies within a factor 3 of the estimate either way.
fn assert_brackets(case: &str, got: f64, estimate: f64, want: f64) {
    let true_err = (got - want).abs();
    println!(
        "{case}: true error {:.3e}, estimate {:.3e} (ratio {:.2})",
        true_err / want.abs(),
        estimate / want.abs(),
        true_err / estimate
    );
    assert!(
        true_err <= 3.0 * estimate && estimate <= 3.0 * true_err,
        "{case}: true error {true_err:e}, estimate {estimate:e}"
    );
}

fn estimated(text: &str) -> (f64, f64, f64) {
    let p = params(Method::default()).with_error_estimate(true);
    let s = study::run(&design(text), &p).expect("study runs");
    let m = s.capacitance.error_model.as_ref().expect("error model");
    (
        s.capacitance.matrix[0][0],
        s.capacitance.error_estimate.as_ref().unwrap()[0][0],
        m.order,
    )
}

#[test]
fn error_estimate_brackets_true_error_on_coax_microstrip_and_stripline() {
    // Coaxial line, inner radius 1 mm, outer 2.5 mm: C' = 2 pi eps0 / ln(b/a) (D. J.
    // Griffiths, Introduction to Electrodynamics, 4th ed., 2017, sec. 2.5).
    let coax = fieldgrid_tests::designs::coax(0.2);
    let (c, e, p) = estimated(&coax);
    assert_brackets(
        &format!("coax (order {p})"),
        c,
        e,
        2.0 * PI * EPS0 / 2.5f64.ln(),
    );
    // Microstrip in air, W/h = 1: C0 = 1 / (c0 Z01) with Z01 from Hammerstad & Jensen 1980
    // (0.01 % for u <= 1), the half model.
    // Cells chosen so that the strip's end is at a node on both grids (see README).
    let (c, e, p) = estimated(&microstrip_in(1.0, 1.0, 0.05, 4.0));
    let (_, _, z01) = hammerstad_jensen(1.0, 1.0);
    assert_brackets(
        &format!("microstrip (order {p})"),
        2.0 * c,
        2.0 * e,
        1.0 / (c_light() * z01),
    );
    // Stripline in air, W/b = 1: C = 1 / (c0 Z0) with Z0 from Cohn 1954, the half model.
    let (c, e, p) = estimated(&stripline_in(1.0, 1.0, 0.05, 2.0));
    assert_brackets(
        &format!("stripline (order {p})"),
        2.0 * c,
        2.0 * e,
        1.0 / (c_light() * cohn_stripline(1.0, 1.0)),
    );
}

/// The design with a graded lattice (`cell` then the coarsest spacing).
fn graded(text: &str) -> String {
    assert!(text.contains("[grid]\n"));
    text.replacen("[grid]\n", "[grid]\nlattice = \"graded\"\n", 1)
}

#[test]
fn graded_lattice_estimates_bracket_the_true_error() {
    // The same closed forms as above, on graded lattices: the error estimate of a graded
    // lattice uses the order observed on its family of bisections.
    let coax = graded(&fieldgrid_tests::designs::coax(0.4));
    let (c, e, p) = estimated(&coax);
    assert_brackets(
        &format!("graded coax (order {p})"),
        c,
        e,
        2.0 * PI * EPS0 / 2.5f64.ln(),
    );
    let (c, e, p) = estimated(&graded(&stripline_in(1.0, 1.0, 0.2, 2.0)));
    assert_brackets(
        &format!("graded stripline (order {p})"),
        2.0 * c,
        2.0 * e,
        1.0 / (c_light() * cohn_stripline(1.0, 1.0)),
    );
    // The microstrip demo against the finite-element value of tests/reference/
    // fem_values.json (NGSolve 6.2.2608, high order on geometrically graded meshes; see the
    // README there): Z0 within 0.1 % at the coarsest cell 0.2 mm, the estimate within a
    // factor 3 of the true error.
    let root = std::path::Path::new(env!("CARGO_MANIFEST_DIR")).join("..");
    let fem: serde_json::Value = serde_json::from_str(
        &std::fs::read_to_string(root.join("tests/reference/fem_values.json")).unwrap(),
    )
    .unwrap();
    let z0_fem = fem["microstrip"]["values"]["z0"].as_f64().unwrap();
    let text = std::fs::read_to_string(root.join("geometries/microstrip.toml")).unwrap();
    // The demo as shipped: the default graded lattice, coarsest cell 0.2 mm.
    assert!(text.contains("\ncell = 0.2\n"), "the demo's cell moved");
    let ls = run_line(&text, &["trace"], true);
    let z0 = ls.line.z0.unwrap();
    let e = ls.errors.iter().find(|e| e.0 == "z0").unwrap().1;
    assert!(rel_err(z0, z0_fem) < 1e-3, "Z0 {z0} against {z0_fem}");
    assert_brackets("graded microstrip demo Z0", z0, e, z0_fem);
}

// ---- the `impedance` command end to end ----

/// The prefix of this file's scratch directories.
const SCRATCH: &str = "fieldgrid-line";

#[test]
fn impedance_command_writes_line_parameters_for_one_and_two_signals() {
    let dir = scratch(SCRATCH, "cmd");
    // On the default graded lattice (nanometre cells at the strip's ends): the homogeneous
    // line's eps_eff is 2.2 up to the linear solver's error, which its estimate states
    // (measured |eps_eff - 2.2| at --tol 1e-8 / 1e-9 / 1e-10 / 1e-11: 2.1e-8 / 5.3e-9 /
    // 1.6e-10 / 1.3e-11). Solved to 1e-10 it is 2.2 to 1e-9. (It missed by more than 1e-9
    // while the linear solver stopped on the relative residual alone; the stop on the
    // charges' error bound holds it.)
    let one = write(&dir, "strip.toml", &stripline(1.0, 2.2, 0.05));
    let out = dir.join("one");
    expect(
        run(&[
            "impedance",
            &one,
            "--signal",
            "strip",
            "--tol",
            "1e-10",
            "--out",
            s(&out),
            "--quiet",
        ]),
        0,
    );
    for f in ["summary.json", "capacitance.csv", "line.csv"] {
        assert!(out.join(f).is_file(), "{f} missing");
    }
    let v = summary(&out);
    let line = &v["line"];
    assert_eq!(line["signals"], serde_json::json!(["strip"]));
    for k in ["c", "l", "z0", "eps_eff", "error_estimate"] {
        assert!(!line[k].is_null(), "line.{k} missing: {line}");
    }
    let eps_eff = line["eps_eff"].as_f64().unwrap();
    assert!((eps_eff - 2.2).abs() < 1e-9, "eps_eff {eps_eff}");

    let two = write(&dir, "pair.toml", &coupled_stripline(0.5, 0.25, 1.0, 0.05));
    let out2 = dir.join("two");
    expect(
        run(&[
            "impedance",
            &two,
            "--signal",
            "p,n",
            "--out",
            s(&out2),
            "--quiet",
        ]),
        0,
    );
    let v = summary(&out2);
    let line = &v["line"];
    for k in ["c", "l", "z_odd", "z_even", "z_diff"] {
        assert!(!line[k].is_null(), "line.{k} missing: {line}");
    }
    let (zo, zd) = (
        line["z_odd"].as_f64().unwrap(),
        line["z_diff"].as_f64().unwrap(),
    );
    assert!((zd - 2.0 * zo).abs() < 1e-9 * zd);
    assert_eq!(line["c"].as_array().unwrap().len(), 2);
}

#[test]
fn impedance_command_refuses_unknown_or_floating_signals_before_writing() {
    let dir = scratch(SCRATCH, "bad");
    let f = write(&dir, "strip.toml", &stripline(1.0, 1.0, 0.05));
    let out = dir.join("out");
    expect(
        run(&[
            "impedance",
            &f,
            "--signal",
            "trace",
            "--out",
            s(&out),
            "--quiet",
        ]),
        2,
    );
    assert!(!out.exists(), "nothing is written for bad input");
    let floating = stripline(1.0, 1.0, 0.05).replace("potential = 1.0", "floating = true");
    std::fs::write(&f, floating).unwrap();
    expect(
        run(&[
            "impedance",
            &f,
            "--signal",
            "strip",
            "--out",
            s(&out),
            "--quiet",
        ]),
        2,
    );
    assert!(!out.exists());
}
