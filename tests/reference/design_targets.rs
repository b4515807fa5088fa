//! Design targets, sensitivities and tolerances (`fieldgrid target`, `--sensitivity`,
//! `--tolerance`) against closed forms: the parallel-plate gap for a wanted capacitance, the
//! microstrip width for 50 ohm against Hammerstad and Jensen's formulas, the coaxial line's
//! dC/da against the derivative of its exact capacitance and against independent solves, the
//! stripline pair's gap for a 100 ohm differential impedance against Cohn's closed form, and
//! the microstrip's worst case and RSS spread against the closed form's derivatives. Each
//! check names its source beside it.

use crate::line::hammerstad_jensen;
use fieldgrid_solver::EPS0;
use fieldgrid_tests::cli::{expect, read_json, run, s, scratch, summary, write};
use fieldgrid_tests::designs::{microstrip_eps_parameter, COAX_RADII, GAP_PLATES};
use fieldgrid_tests::uniform;
use std::f64::consts::PI;

/// The prefix of this file's scratch directories.
const SCRATCH: &str = "fieldgrid-targets";

#[test]
fn plate_gap_for_a_wanted_capacitance_matches_the_closed_form() {
    let dir = scratch(SCRATCH, "gap");
    let design = write(&dir, "plates.toml", GAP_PLATES);
    let out = dir.join("out");
    // Maxwell coupling C[lower,upper] = -eps0 W / g (uniform field between the plates:
    // common practice, the parallel-plate capacitor without fringing, which the mirror sides
    // remove). Wanted -5e-11 F/m: g = eps0 * 4e-3 / 5e-11 = 0.7083 mm.
    let wanted = -5e-11;
    let value = wanted.to_string();
    expect(
        run(&[
            "target",
            &design,
            "--quantity",
            "C[lower,upper]",
            "--value",
            &value,
            "--vary",
            "g=0.3:1.5",
            "--value-tol",
            "1e-15",
            "--out",
            s(&out),
            "--quiet",
        ]),
        0,
    );
    let t = read_json(&out.join("target.json"));
    let g = t["value"].as_f64().unwrap();
    let want_g = EPS0 * 4e-3 / -wanted * 1e3;
    println!("gap for C = {wanted:e} F/m: {g:.6} mm (closed form {want_g:.6} mm), {t}");
    assert_eq!(t["parameter"], "g");
    assert!((t["achieved"].as_f64().unwrap() - wanted).abs() <= 1e-15);
    // The cut-cell operator holds a linear potential exactly, so only the solver tolerance
    // (1e-8 relative residual) and the value tolerance (2e-5 relative) separate them.
    assert!(
        (g - want_g).abs() / want_g < 1e-4,
        "gap {g} mm, closed form {want_g} mm"
    );
    // The final solve's files sit beside target.json, at the gap found.
    let sum = summary(&out);
    let p = &sum["parameters"][0];
    assert_eq!(
        (p["name"].as_str(), p["value"].as_f64()),
        (Some("g"), Some(g))
    );
}

/// H&J's Z0 of a zero-thickness microstrip of width w on height h (same units).
fn hj_z0(w: f64, h: f64, eps_r: f64) -> f64 {
    hammerstad_jensen(w / h, eps_r).0
}

/// The width ratio u = w/h for which H&J's Z0 is `z0` (bisection: Z0 falls with u).
fn hj_synthesis(z0: f64, eps_r: f64) -> f64 {
    let (mut lo, mut hi) = (0.1, 10.0);
    for _ in 0..100 {
        let mid = 0.5 * (lo + hi);
        if hj_z0(mid, 1.0, eps_r) > z0 {
            lo = mid;
        } else {
            hi = mid;
        }
    }
    0.5 * (lo + hi)
}

#[test]
fn microstrip_width_for_50_ohm_matches_hammerstad_jensen() {
    let dir = scratch(SCRATCH, "microstrip");
    let out = dir.join("out");
    let design = fieldgrid_tests::designs::demo_path("microstrip.toml");
    expect(
        run(&[
            "target",
            &design,
            "--signal",
            "trace",
            "--quantity",
            "Z0",
            "--value",
            "50",
            "--vary",
            "w=0.8:2.0",
            "--out",
            s(&out),
            "--quiet",
        ]),
        0,
    );
    let t = read_json(&out.join("target.json"));
    let w = t["value"].as_f64().unwrap();
    let achieved = t["achieved"].as_f64().unwrap();
    let err = t["error_estimate"].as_f64().unwrap();
    let f_tol = t["tolerance"].as_f64().unwrap();
    assert!((achieved - 50.0).abs() <= f_tol, "{t}");
    // The demo: h = 0.6 mm, eps_r = 3.5. E. Hammerstad, O. Jensen, "Accurate models for
    // microstrip computer-aided design", IEEE MTT-S 1980 (Z01 and eps_eff, inverted here by
    // bisection). The width may differ by the Z0 difference the line reference accepts
    // between solver and closed form (1 %, `line.rs`), plus the search's tolerance and the
    // estimated discretisation error, turned into width by H&J's dZ0/dw.
    let (h, eps_r) = (0.6, 3.5);
    let w_hj = hj_synthesis(50.0, eps_r) * h;
    let dz_dw = (hj_z0(w_hj + 1e-4, h, eps_r) - hj_z0(w_hj - 1e-4, h, eps_r)) / 2e-4;
    let allowed = (0.01 * 50.0 + f_tol + err) / dz_dw.abs();
    println!(
        "50 ohm microstrip: w = {w:.5} mm, H&J {w_hj:.5} mm (allowed +/- {allowed:.4} mm), {t}"
    );
    assert!((w - w_hj).abs() <= allowed, "w {w} mm, H&J {w_hj} mm");
    // An independent solve at the width found gives the same impedance.
    let check = dir.join("check");
    let set = format!("w={w}");
    expect(
        run(&[
            "impedance",
            &design,
            "--signal",
            "trace",
            "--set",
            &set,
            "--out",
            s(&check),
            "--quiet",
        ]),
        0,
    );
    let z = summary(&check)["line"]["z0"].as_f64().unwrap();
    assert!((z - 50.0).abs() <= f_tol, "independent solve: Z0 = {z} ohm");
}

fn c_inner(out: &std::path::Path) -> f64 {
    summary(out)["capacitance"]["matrix"][0][0]
        .as_f64()
        .unwrap()
}

#[test]
fn coax_sensitivity_matches_the_derivative_of_the_exact_capacitance() {
    let dir = scratch(SCRATCH, "coax");
    let design = write(&dir, "coax.toml", COAX_RADII);
    let out = dir.join("out");
    expect(
        run(&[
            "solve",
            &design,
            "--sensitivity",
            "a,b",
            "--out",
            s(&out),
            "--quiet",
            "--no-error-estimate",
        ]),
        0,
    );
    let sum = summary(&out);
    let d = &sum["sensitivities"];
    let dca = d["a"]["C[inner,inner]"].as_f64().unwrap();
    let dcb = d["b"]["C[inner,inner]"].as_f64().unwrap();
    // C = 2 pi eps0 / ln(b/a) (common practice: the coaxial capacitor per length, Gauss's
    // law); dC/da = C / (a ln(b/a)), dC/db = -C / (b ln(b/a)), per metre of radius; the
    // parameters are in mm, so per mm multiply by 1e-3.
    let (a, b): (f64, f64) = (1e-3, 2.5e-3);
    let l = (b / a).ln();
    let c = 2.0 * PI * EPS0 / l;
    let (want_a, want_b) = (c / (a * l) * 1e-3, -c / (b * l) * 1e-3);
    println!("coax dC/da = {dca:e} (exact {want_a:e}), dC/db = {dcb:e} (exact {want_b:e})");
    // The capacitance itself is within 0.1 % at 20 cells per radius (planar reference);
    // its derivative takes a difference over four cells, so a few tenths of a percent more.
    assert!((dca - want_a).abs() / want_a < 1e-2, "dC/da {dca:e}");
    assert!((dcb - want_b).abs() / want_b.abs() < 1e-2, "dC/db {dcb:e}");
    assert!(sum["sensitivity_steps"]["a"].as_f64().unwrap() > 0.0);
    let csv = std::fs::read_to_string(out.join("sensitivities.csv")).unwrap();
    assert!(csv
        .lines()
        .any(|l| l.starts_with("\"C[inner,inner]\",F/m,a,")));

    // Against central differences of independent solves, with a step of its own (0.15 mm):
    // the same derivative within the curvature between the two steps.
    let mut at = Vec::new();
    for v in ["0.85", "1.15"] {
        let o = dir.join(format!("a{v}"));
        let set = format!("a={v}");
        expect(
            run(&[
                "solve",
                &design,
                "--set",
                &set,
                "--out",
                s(&o),
                "--quiet",
                "--no-error-estimate",
            ]),
            0,
        );
        at.push(c_inner(&o));
    }
    let independent = (at[1] - at[0]) / 0.3;
    println!("independent central difference: {independent:e}");
    assert!((dca - independent).abs() / independent < 1e-2);
}

#[test]
fn sensitivities_started_from_the_nominal_solves_agree_with_cold_solves() {
    let dir = scratch(SCRATCH, "coax-warm");
    // Warm starts need the same nodes at every step; a graded lattice follows the circle as
    // `a` moves, so the subject is taken on a uniform lattice by name.
    let design = write(&dir, "coax.toml", &uniform(COAX_RADII));
    let out = dir.join("out");
    // A tight solver tolerance, so that agreement "to the solver tolerance" is a sharp test.
    let tol = "1e-12";
    let quiet = ["--quiet", "--no-error-estimate", "--tol", tol];
    let mut args = vec!["solve", &design, "--sensitivity", "a", "--out", s(&out)];
    args.extend(quiet);
    expect(run(&args), 0);
    let sum = summary(&out);
    // The domain does not move with the inner radius: every perturbed solve (a +/- h and
    // a +/- 2h) started from the nominal solves.
    let solves = &sum["perturbed_solves"];
    assert_eq!(solves["studies"], 4, "{solves}");
    assert_eq!(solves["warm_starts"], 4, "{solves}");
    let h = sum["sensitivity_steps"]["a"].as_f64().unwrap();
    // The same derivative from two independent solves at the same stepped values, each
    // started from zero.
    let (up, down) = (
        fieldgrid_solver::sensitivity::stepped(1.0, h),
        fieldgrid_solver::sensitivity::stepped(1.0, -h),
    );
    let mut at = Vec::new();
    for v in [up, down] {
        let o = dir.join(format!("cold-{v}"));
        let set = format!("a={v}");
        let mut args = vec!["solve", &design, "--set", &set, "--out", s(&o)];
        args.extend(quiet);
        expect(run(&args), 0);
        at.push(c_inner(&o));
    }
    let cold = (at[0] - at[1]) / (up - down);
    let warm = sum["sensitivities"]["a"]["C[inner,inner]"]
        .as_f64()
        .unwrap();
    println!("dC/da started from the nominal solves {warm:e}, from zero {cold:e}, {solves}");
    // Both stop at a relative residual of 1e-12: the capacitances agree to about 1e-11
    // (measured), their difference over 4 % of C to about 1e-10 (measured 5e-11).
    assert!(
        (warm - cold).abs() <= 1e-9 * cold.abs(),
        "{warm:e} {cold:e}"
    );
}

#[test]
fn microstrip_tolerances_match_hammerstad_jensen_derivatives() {
    let dir = scratch(SCRATCH, "tolerances");
    let design = write(
        &dir,
        "microstrip.toml",
        &microstrip_eps_parameter(4.2, 0.02),
    );
    let out = dir.join("out");
    let tol = [("w", 0.05), ("h", 0.06), ("eps", 0.2)];
    let args: Vec<String> = tol.iter().map(|(n, t)| format!("{n}={t}")).collect();
    let mut cmd = vec![
        "impedance",
        &design,
        "--signal",
        "trace",
        "--out",
        s(&out),
        "--quiet",
        "--no-error-estimate",
    ];
    for a in &args {
        cmd.extend(["--tolerance", a.as_str()]);
    }
    expect(run(&cmd), 0);
    let sum = summary(&out);
    let z = &sum["tolerances"]["quantities"]["Z0"];
    let nominal = z["nominal"].as_f64().unwrap();
    // Derivatives of Hammerstad and Jensen's Z0 (IEEE MTT-S 1980) by central differences of
    // the closed form itself.
    let (w, h, eps) = (1.35, 0.6, 3.5);
    let dz = [
        (hj_z0(w + 1e-5, h, eps) - hj_z0(w - 1e-5, h, eps)) / 2e-5,
        (hj_z0(w, h + 1e-5, eps) - hj_z0(w, h - 1e-5, eps)) / 2e-5,
        (hj_z0(w, h, eps + 1e-5) - hj_z0(w, h, eps - 1e-5)) / 2e-5,
    ];
    let contrib: Vec<f64> = dz
        .iter()
        .zip(&tol)
        .map(|(d, (_, t))| (d * t).abs())
        .collect();
    let want_worst: f64 = contrib.iter().sum();
    let want_rss = contrib.iter().map(|c| c * c).sum::<f64>().sqrt();
    let worst = z["worst_high"].as_f64().unwrap() - nominal;
    let rss = z["rss"].as_f64().unwrap();
    let mut widened = Vec::new();
    for (i, (n, t)) in tol.iter().enumerate() {
        let d = sum["sensitivities"][n]["Z0"].as_f64().unwrap();
        let e = sum["sensitivity_errors"][n]["Z0"].as_f64().unwrap();
        println!("dZ0/d{n} = {d:.4} +/- {e:.4} (H&J {:.4})", dz[i]);
        // The closed form's values are within 0.2-1 % of exact (the line reference sees
        // under 1 %) and its slopes were not fitted themselves, so 2 % is allowed for each
        // derivative: loose, for that reason (0.4 % was seen when this was written).
        assert!(
            (d - dz[i]).abs() / dz[i].abs() < 2e-2,
            "dZ0/d{n} {d}, H&J {}",
            dz[i]
        );
        widened.push((d.abs() + e) * t);
    }
    println!(
        "Z0 {nominal:.3} ohm: worst case +/- {worst:.4} (H&J {want_worst:.4}), RSS {rss:.4} \
         (H&J {want_rss:.4})"
    );
    // The spreads are those of the derivatives widened by their error estimates ...
    let sum_w: f64 = widened.iter().sum();
    let rss_w = widened.iter().map(|c| c * c).sum::<f64>().sqrt();
    assert!((worst - sum_w).abs() <= 1e-9 * sum_w && (rss - rss_w).abs() <= 1e-9 * rss_w);
    // ... so never narrower than the closed form's (less its 2 % allowance), and wider only
    // by the error estimates.
    assert!(worst >= 0.98 * want_worst && rss >= 0.98 * want_rss);
    let allowance: f64 = tol
        .iter()
        .map(|(n, t)| sum["sensitivity_errors"][n]["Z0"].as_f64().unwrap() * t)
        .sum();
    assert!(
        worst <= 1.02 * want_worst + allowance,
        "worst {worst}, allowance {allowance}"
    );
    assert!((z["worst_low"].as_f64().unwrap() - (nominal - worst)).abs() < 1e-9);
    // The height (relative tolerance 10 %) moves Z0 most here, as the closed form says.
    let dominant = contrib
        .iter()
        .enumerate()
        .max_by(|a, b| a.1.total_cmp(b.1))
        .unwrap()
        .0;
    assert_eq!(z["dominant"], tol[dominant].0);
}

#[test]
fn coax_radius_for_a_wanted_capacitance_warm_started_matches_the_closed_form() {
    let dir = scratch(SCRATCH, "coax-target");
    // Uniform by name, as in the test above: warm starts need the same nodes at every step.
    let design = write(&dir, "coax.toml", &uniform(COAX_RADII));
    let out = dir.join("out");
    // The domain does not move with the inner radius, so every solve after the first starts
    // from the previous one's solutions.
    let wanted = 7e-11;
    expect(
        run(&[
            "target",
            &design,
            "--quantity",
            "C[inner,inner]",
            "--value",
            "7e-11",
            "--vary",
            "a=0.5:2.0",
            "--out",
            s(&out),
            "--quiet",
        ]),
        0,
    );
    let t = read_json(&out.join("target.json"));
    let a = t["value"].as_f64().unwrap();
    // C = 2 pi eps0 / ln(b/a) (common practice, as above): a = b exp(-2 pi eps0 / C).
    let want_a = 2.5 * (-2.0 * PI * EPS0 / wanted).exp();
    println!("coax inner radius for {wanted:e} F/m: {a:.5} mm (closed form {want_a:.5}), {t}");
    assert!(t["warm_starts"].as_u64().unwrap() >= 3, "{t}");
    // The capacitance is within 0.5 % at these cells (the sensitivity check above sees
    // 0.4 % in its derivative); a relative error e in C moves a by e ln(b/a), under 0.5 %.
    assert!(
        (a - want_a).abs() / want_a < 5e-3,
        "a {a} mm, closed form {want_a} mm"
    );
    // The final solve, started from its neighbour's solutions, needed no more iterations
    // than the same design solved from zero.
    let cold = dir.join("cold");
    let set = format!("a={a}");
    expect(
        run(&[
            "solve",
            &design,
            "--set",
            &set,
            "--out",
            s(&cold),
            "--quiet",
        ]),
        0,
    );
    let iterations = |o: &std::path::Path| summary(o)["solver"]["iterations"].as_u64().unwrap();
    println!(
        "iterations: warm {}, cold {}",
        iterations(&out),
        iterations(&cold)
    );
    assert!(iterations(&out) <= iterations(&cold));
    let c = |o: &std::path::Path| summary(o)["capacitance"]["matrix"][0][0].as_f64().unwrap();
    // Both stop at the same relative residual (1e-8): the same capacitance to about that.
    assert!((c(&out) - c(&cold)).abs() / c(&cold) < 1e-6);
}

/// The edge-coupled stripline pair of `geometries/coupled_stripline.toml` at a coarser cell:
/// zero-thickness strips w = 0.16 mm wide midway between planes b = 0.5 mm apart, eps_r 3.8.
const PAIR: &str = r#"
unit = "mm"
[parameters]
b = 0.5
w = 0.16
s = 0.2
room = 1.5
[grid]
x = ["-(s/2 + w + room)", "s/2 + w + room"]
y = [0.0, "b"]
cell = 0.005
[sides]
left = "open"
right = "open"
bottom = "ground"
top = "ground"
[background]
permittivity = 3.8
[[conductor]]
name = "p"
potential = 0.5
polyline = [["-(s/2 + w)", "b/2"], ["-s/2", "b/2"]]
[[conductor]]
name = "n"
potential = -0.5
polyline = [["s/2", "b/2"], ["s/2 + w", "b/2"]]
"#;

#[test]
fn stripline_pair_spacing_for_100_ohm_differential_matches_cohn() {
    let dir = scratch(SCRATCH, "pair");
    let design = write(&dir, "pair.toml", PAIR);
    let out = dir.join("out");
    expect(
        run(&[
            "target",
            &design,
            "--signal",
            "p,n",
            "--quantity",
            "Z_diff",
            "--value",
            "100",
            "--vary",
            "s=0.05:0.6",
            "--value-tol",
            "0.5",
            "--out",
            s(&out),
            "--quiet",
        ]),
        0,
    );
    let t = read_json(&out.join("target.json"));
    let gap = t["value"].as_f64().unwrap();
    let achieved = t["achieved"].as_f64().unwrap();
    let err = t["error_estimate"].as_f64().unwrap();
    let f_tol = t["tolerance"].as_f64().unwrap();
    assert!((achieved - 100.0).abs() <= f_tol, "{t}");
    // S. B. Cohn, "Shielded coupled-strip transmission line", IRE Trans. MTT 3 (1955) 29-38:
    // Z_diff = 2 Z_odd, inverted for the gap by bisection (Z_odd rises with the gap).
    let (w, b, eps_r) = (0.16, 0.5, 3.8);
    let z_diff = |gap: f64| 2.0 * crate::line::cohn_coupled(w, gap, b, eps_r).1;
    let (mut lo, mut hi) = (0.01, 2.0);
    for _ in 0..200 {
        let mid = 0.5 * (lo + hi);
        if z_diff(mid) < 100.0 {
            lo = mid;
        } else {
            hi = mid;
        }
    }
    let gap_cohn = 0.5 * (lo + hi);
    let dz_ds = (z_diff(gap_cohn + 1e-4) - z_diff(gap_cohn - 1e-4)) / 2e-4;
    // The gap may differ by the Z difference the line reference accepts between solver and
    // closed form (1 %, `line.rs`), plus the search's tolerance and the estimated
    // discretisation error, turned into gap by Cohn's dZ_diff/ds.
    let allowed = (0.01 * 100.0 + f_tol + err) / dz_ds.abs();
    println!(
        "100 ohm pair: s = {gap:.5} mm, Cohn {gap_cohn:.5} mm (allowed +/- {allowed:.4} mm), {t}"
    );
    assert!(
        (gap - gap_cohn).abs() <= allowed,
        "s {gap} mm, Cohn {gap_cohn} mm"
    );
    // An independent solve at the gap found gives the same differential impedance.
    let check = dir.join("check");
    let set = format!("s={gap}");
    expect(
        run(&[
            "impedance",
            &design,
            "--signal",
            "p,n",
            "--set",
            &set,
            "--out",
            s(&check),
            "--quiet",
        ]),
        0,
    );
    let z = summary(&check)["line"]["z_diff"].as_f64().unwrap();
    assert!(
        (z - 100.0).abs() <= f_tol,
        "independent solve: Z_diff = {z} ohm"
    );
}
