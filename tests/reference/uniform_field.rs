//! Bodies in a uniform field: the field and the surface charge on a conducting cylinder
//! (planar) and a conducting sphere (axisymmetric), and the field on both sides of the surface
//! of a dielectric cylinder, against their closed forms, with observed orders over three grids.
//!
//! The uniform field E0 = V / L is made by two plates at -V and +V a distance L below and
//! above the body's centre; the sides beyond are symmetry sides 1.5 L (planar) away. The
//! plates add images of the body's dipole p at 2 L n (n = +-1, +-2, ...), all pointing the
//! same way, and their field at the body raises the field it stands in:
//! - planar, a line dipole p (C m / m): field p / (2 pi eps0 d^2) on its axis, summed
//!   `2 sum 1/(2 L n)^2 = pi^2 / (12 L^2)` (Euler's zeta(2) = pi^2 / 6); with the cylinder's
//!   p = 2 pi eps0 a^2 K E, K = 1 for a conductor, (eps - 1) / (eps + 1) for a dielectric:
//!   `E = E0 / (1 - K (pi^2 / 12) (a / L)^2)`;
//! - axisymmetric, a point dipole: field 2 p / (4 pi eps0 d^3) on its axis, summed with
//!   zeta(3) = 1.2020569 (Apery's constant); p = 4 pi eps0 a^3 E for a conducting sphere:
//!   `E = E0 / (1 - (zeta(3) / 2) (a / L)^3)`.
//!
//! The images' field varies across the body by a share (a / L)^2 of itself, so what these
//! corrections leave out is of order (a / L)^4 = 1e-4 here (a / L = 1/10), a fiftieth of the
//! 0.5 % bound. Far along the channel the disturbance decays like exp(-pi x / L) (the lowest
//! mode vanishing on both plates), so the side walls 1.5 L away change the field at the body
//! by less than 1e-5 of it. (Common practice of the method of images; the sums are ours.)

use fieldgrid_solver::surface::SurfaceKind;
use fieldgrid_solver::EPS0;
use fieldgrid_tests::{design, rel_err, solve};
use std::f64::consts::PI;

/// Body radius a and plate distance L from its centre, mm; potential of the plates, V.
const A: f64 = 1.0;
const L: f64 = 10.0;
const V: f64 = 100.0;
/// Centre of the body, mm. The lattice is laid out from it (the plates L and the symmetry
/// sides 1.5 L away), so it lies on a node row and column at every cell used, and the poles
/// on node rows; the sphere's test says what a centre off the rows measures, and `off_row.rs`
/// places the bodies off them.
const CENTRE: [f64; 2] = [0.0137, 0.0291];

/// Planar: a body `body` (TOML of one item with a circle at CENTRE) between plates at -V and
/// +V, `n` cells across the radius, on a uniform lattice.
fn planar(n: f64, body: &str) -> String {
    format!(
        r#"
unit = "mm"
[grid]
x = [{x0}, {x1}]
y = [{y0}, {y1}]
cell = {cell}
lattice = "uniform"
[sides]
left = "symmetry"
right = "symmetry"
bottom = {mv}
top = {v}
{body}
"#,
        x0 = CENTRE[0] - 1.5 * L,
        x1 = CENTRE[0] + 1.5 * L,
        y0 = CENTRE[1] - L,
        y1 = CENTRE[1] + L,
        cell = A / n,
        mv = -V,
        v = V,
    )
}

fn conducting_cylinder(n: f64) -> String {
    conducting_cylinder_off(n, [0.0, 0.0])
}

/// The cylinder of [`conducting_cylinder`] with its centre `off` cells (x, y) off its node
/// column and row (the lattice and the plates stay where they were) and at the uniform
/// field's potential there, so that it carries no net charge.
pub(crate) fn conducting_cylinder_off(n: f64, off: [f64; 2]) -> String {
    planar(
        n,
        &format!(
            "[[conductor]]\nname = \"rod\"\npotential = {}\ncircle = {{ center = [{}, {}], radius = {A} }}\n",
            V * off[1] * A / n / L,
            CENTRE[0] + off[0] * A / n,
            CENTRE[1] + off[1] * A / n
        ),
    )
}

fn dielectric_cylinder(n: f64, eps: f64) -> String {
    planar(
        n,
        &format!(
            "[[dielectric]]\nname = \"rod\"\npermittivity = {eps}\ncircle = {{ center = [{}, {}], radius = {A} }}\n",
            CENTRE[0], CENTRE[1]
        ),
    )
}

/// Axisymmetric: a conducting sphere on the axis between plates at -V and +V.
fn conducting_sphere(n: f64) -> String {
    conducting_sphere_off(n, 0.0)
}

/// The sphere of [`conducting_sphere`] with its centre `dy` cells above its node row (the
/// lattice and the plates stay where they were) and at the uniform field's potential there,
/// so that it carries no net charge and the closed form still holds.
pub(crate) fn conducting_sphere_off(n: f64, dy: f64) -> String {
    format!(
        r#"
unit = "mm"
mode = "axisymmetric"
[grid]
x = [0.0, {r1}]
y = [{y0}, {y1}]
cell = {cell}
lattice = "uniform"
[sides]
right = "symmetry"
bottom = {mv}
top = {v}
[[conductor]]
name = "ball"
potential = {vc}
circle = {{ center = [0.0, {yc}], radius = {A} }}
"#,
        vc = V * dy * A / n / L,
        r1 = 1.5 * L,
        y0 = CENTRE[1] - L,
        y1 = CENTRE[1] + L,
        yc = CENTRE[1] + dy * A / n,
        cell = A / n,
        mv = -V,
        v = V,
    )
}

/// The field the body stands in, V/m: E0 = V / L raised by the plates' images (module
/// opening), with `k` the body's dipole factor.
pub(crate) fn planar_local_field(k: f64) -> f64 {
    let e0 = V / (L * 1e-3);
    e0 / (1.0 - k * PI * PI / 12.0 * (A / L).powi(2))
}

pub(crate) fn axisymmetric_local_field() -> f64 {
    let e0 = V / (L * 1e-3);
    e0 / (1.0 - 1.202_056_903_159_594 / 2.0 * (A / L).powi(3))
}

/// cos of the polar angle from the field's axis (y) of a surface point.
fn cos_theta(c: [f64; 2], x: f64, y: f64) -> f64 {
    let (dx, dy) = (x - c[0] * 1e-3, y - c[1] * 1e-3);
    dy / dx.hypot(dy)
}

/// Mean of the two orders observed from errors on three grids halving the cell.
fn observed(errs: &[f64]) -> f64 {
    0.5 * ((errs[0] / errs[1]).log2() + (errs[1] / errs[2]).log2())
}

/// Errors of a conductor's surface field and surface charge against `peak |cos(theta)|`:
/// (peak field, peak surface charge, worst sample of either relative to the peak).
fn conductor_errors(
    s: &fieldgrid_solver::study::Solution,
    c: [f64; 2],
    peak: f64,
) -> (f64, f64, f64) {
    let (mut top, mut worst) = (0.0f64, 0.0f64);
    for p in s
        .surface
        .iter()
        .filter(|p| p.kind == SurfaceKind::Conductor(0))
    {
        let m = p.magnitude();
        assert!(m.is_finite(), "no field at ({:e}, {:e})", p.x, p.y);
        top = top.max(m);
        let e = (m - peak * cos_theta(c, p.x, p.y).abs()) / peak;
        worst = worst.max(e.abs());
    }
    let sigma_peak = EPS0 * peak;
    let mut top_sigma = 0.0f64;
    for p in &s.surface_charge {
        top_sigma = top_sigma.max(p.density.abs());
        let want = sigma_peak * cos_theta(c, p.x, p.y).abs();
        worst = worst.max((p.density.abs() - want).abs() / sigma_peak);
    }
    (rel_err(top, peak), rel_err(top_sigma, sigma_peak), worst)
}

/// Runs `case` at 10, 20 and 40 cells across the radius against the peak field `peak`, checks
/// the peak field, the reported peak, the peak surface charge and every sample within 0.5 %
/// (of the peak) at 20 cells and the surface charge's integral, and returns the errors of the
/// peak field and of the peak surface charge on the three grids.
fn check_conductor(
    what: &str,
    case: fn(f64) -> String,
    centre: [f64; 2],
    peak: f64,
) -> (Vec<f64>, Vec<f64>) {
    let (mut fields, mut sigmas) = (Vec::new(), Vec::new());
    for n in [10.0, 20.0, 40.0] {
        let s = solve(&design(&case(n)));
        let (field, sigma, worst) = conductor_errors(&s, centre, peak);
        let reported = rel_err(s.peak_field.as_ref().unwrap().magnitude, peak);
        eprintln!(
            "{what}, {n} cells across a: peak field {field:.3e}, reported {reported:.3e}, \
             peak surface charge {sigma:.3e}, worst sample {worst:.3e} of the peak"
        );
        // The rod's net charge is zero by symmetry; its surface charge integrates to the
        // charge the operator gives it.
        let total: f64 = s.surface_charge.iter().map(|p| p.density * p.area).sum();
        let q = s.conductors[0].charge;
        let scale: f64 = s
            .surface_charge
            .iter()
            .map(|p| (p.density * p.area).abs())
            .sum();
        assert!(
            (total - q).abs() <= 1e-6 * scale,
            "integral {total:e}, charge {q:e}"
        );
        if n == 20.0 {
            assert!(field < 5e-3, "{what}: peak field error {field:e}");
            assert!(reported < 5e-3, "{what}: reported peak error {reported:e}");
            assert!(sigma < 5e-3, "{what}: peak surface charge error {sigma:e}");
            assert!(worst < 5e-3, "{what}: worst sample {worst:e} of the peak");
        }
        fields.push(field);
        sigmas.push(sigma);
    }
    eprintln!(
        "{what}: observed order {:.2} (field), {:.2} (surface charge)",
        observed(&fields),
        observed(&sigmas)
    );
    (fields, sigmas)
}

#[test]
fn conducting_cylinder_in_a_uniform_field_surface_field_is_second_order() {
    // The potential -E (r - a^2/r) cos(theta) solves Laplace's equation in polar coordinates
    // (J. D. Jackson, Classical Electrodynamics, 3rd ed., 1999, sec. 2.11, the r^(+-1)
    // cos(theta) solutions of eq. 2.71; from memory) and vanishes on r = a: the surface field
    // is 2 E cos(theta) and the surface charge 2 eps0 E cos(theta), peak 2 E.
    let (fields, sigmas) = check_conductor(
        "cylinder in a uniform field",
        conducting_cylinder,
        CENTRE,
        2.0 * planar_local_field(1.0),
    );
    // Measured: 0.33 % / 0.056 % / 0.020 % at 10 / 20 / 40 cells, order 2.0.
    let (pf, ps) = (observed(&fields), observed(&sigmas));
    assert!(pf >= 1.8, "field order {pf:.2} from {fields:?}");
    assert!(ps >= 1.8, "surface charge order {ps:.2} from {sigmas:?}");
}

#[test]
fn conducting_sphere_in_a_uniform_field_surface_field_is_second_order() {
    // A grounded sphere in a uniform field: surface charge 3 eps0 E cos(theta), field
    // 3 E cos(theta) (J. D. Jackson, Classical Electrodynamics, 3rd ed., 1999, sec. 2.5,
    // eqs. 2.14-2.15, by images; D. J. Griffiths, Introduction to Electrodynamics, 4th ed.,
    // 2017, Example 3.8; from memory).
    let (fields, sigmas) = check_conductor(
        "sphere in a uniform field",
        conducting_sphere,
        [0.0, CENTRE[1]],
        3.0 * axisymmetric_local_field(),
    );
    // The peak sits on the axis, at the poles. Measured: 0.036 % / 0.020 % / 0.042 % at 10 /
    // 20 / 40 cells: within the bound on every grid but not falling at second order (the
    // samples away from the poles do converge: worst 1.2 % / 0.18 % / 0.08 % of the peak).
    // The fit is linear in the node potentials, so the fit of the solved potentials minus the
    // fit of the exact ones is the lattice's part of the error. At the pole it is -0.50 /
    // -0.074 / +0.030 / -0.029 % at 10 / 20 / 40 / 80 cells with the centre on a node row
    // (`CENTRE`), and -0.62 / -0.40 / -0.10 / -0.045 % with it 0.031 mm off: about first
    // order. The cause is the operator's symmetric boundary rows (see its opener), not the
    // axis: the planar cylinder's poles show the same kind of error (-0.016 / +0.011 /
    // -0.010 % at 20 / 40 / 60 cells), smaller beside its larger fit error. Rows weighed as
    // Shortley and Weller weigh them, solved by defect correction around the symmetric
    // operator, bring the lattice's part at the pole, centre 0.031 mm off, to -0.35 / -0.15 /
    // -0.043 / -0.011 % (order 1.9-2.0 from 20 cells), whatever the centre's place. With the
    // centre half a cell off its row, the peak reads 0.11 % low at 40 cells and 0.19 % at 20
    // (`off_row.rs`, which checks that the estimates cover it); this placement does not show
    // that. Second order in r-z mode is shown on the concentric spheres, whose field
    // is the same all round (`axisymmetric::sphere_surface_field_is_second_order_at_the_surface`).
    for (k, (f, s)) in fields.iter().zip(&sigmas).enumerate() {
        assert!(
            *f < 1e-3 && *s < 1e-3,
            "grid {k}: field {f:e}, surface charge {s:e}"
        );
    }
}

#[test]
fn dielectric_cylinder_in_a_uniform_field_peak_outside_and_hot_spots_never_low_beyond_estimate() {
    // A dielectric cylinder (eps) in a uniform field E: inside, the uniform field
    // 2 E / (eps + 1); outside, at r = a, E_r = 2 eps E cos(theta) / (eps + 1) and
    // E_theta = -2 E sin(theta) / (eps + 1) (the planar counterpart of the dielectric sphere,
    // J. D. Jackson, Classical Electrodynamics, 3rd ed., 1999, sec. 4.4, solved with the
    // r^(+-1) cos(theta) terms of sec. 2.11 and the interface conditions of sec. 4.3: normal D
    // and tangential E continuous; common practice).
    let eps = 4.0;
    let k = (eps - 1.0) / (eps + 1.0);
    let e = planar_local_field(k);
    let inside = 2.0 * e / (eps + 1.0);
    let outside = |c: f64| {
        let s2 = 1.0 - c * c;
        2.0 * e / (eps + 1.0) * (eps * eps * c * c + s2).sqrt()
    };
    let peak_out = outside(1.0);
    let with_estimate = fieldgrid_tests::params(Default::default()).with_error_estimate(true);
    let mut errs = [Vec::new(), Vec::new()];
    for n in [10.0, 20.0, 40.0] {
        let s = fieldgrid_solver::study::run(&design(&dielectric_cylinder(n, eps)), &with_estimate)
            .expect("study runs");
        assert!(s.solve.converged);
        // Side 0: inside the rod (material 1), side 1: outside (material 0).
        let (mut worst, mut low) = ([0.0f64; 2], [0.0f64; 2]);
        let mut top = 0.0f64;
        for p in s
            .surface
            .iter()
            .filter(|p| p.kind == SurfaceKind::Interface)
        {
            let m = p.magnitude();
            assert!(m.is_finite(), "no field at ({:e}, {:e})", p.x, p.y);
            let (side, want, scale) = if p.material == 1 {
                (0, inside, inside)
            } else {
                (1, outside(cos_theta(CENTRE, p.x, p.y)), peak_out)
            };
            if side == 1 {
                top = top.max(m);
            }
            worst[side] = worst[side].max((m - want).abs() / scale);
            low[side] = low[side].max((want - m) / scale);
        }
        let top_err = rel_err(top, peak_out);
        eprintln!(
            "dielectric cylinder, {n} cells across a: inside worst {:.3e} (lowest {:.3e}), \
             outside worst {:.3e} of the peak (lowest {:.3e}), outside peak {top_err:.3e}",
            worst[0], low[0], worst[1], low[1]
        );
        // The hot spots on the surface never read low by more than their own estimate.
        let mut seen = 0;
        for h in &s.hotspots {
            let c = cos_theta(CENTRE, h.x, h.y);
            let r = (h.x - CENTRE[0] * 1e-3).hypot(h.y - CENTRE[1] * 1e-3);
            if (r - A * 1e-3).abs() > 1e-6 {
                continue;
            }
            seen += 1;
            let want = if h.material == "rod" {
                inside
            } else {
                outside(c)
            };
            let est = h.error_estimate.expect("an estimate");
            eprintln!(
                "  hot spot in {}: error {:.3e}, estimate {:.3e} (relative)",
                h.material,
                (h.magnitude - want) / want,
                est / want
            );
            assert!(
                h.magnitude + est >= want,
                "{}: {} + {est} < {want}",
                h.material,
                h.magnitude
            );
            // Within 3x of the error. Measured, estimate over error at 10 / 20 / 40 cells:
            // outside (the poles) 1.40 / 1.23 / 1.12, inside 1.34 / 2.60 / 1.91. The inside's
            // hot spot is the largest reading of a uniform field, so its error is mostly the
            // surface fit's (`INTERFACE_FIT_BIAS`, bounded relative to the interface's peak
            // field, eps times the inside's). At 10 cells the coarse lattice has five cells
            // across the radius, below the ten from which the interface fit's bias is bounded
            // (`INTERFACE_FIT_RESOLVED_CELLS`): its inside samples near the hot spot read -0.5
            // to +8.3 % off the exact field (the fine one +0.67 %), and the plain two-grid
            // difference said 2.79 % (4.2 times the error); the estimate there is the coarse
            // lattices' difference read through the coarse fit on both potentials (the fit's
            // bias cancels) plus the fine fit's bias bound. With that bound relative to the
            // inside's own field instead of the interface's peak, the inside's estimate was
            // 0.45 times its error at 10 cells.
            let ratio = est / (h.magnitude - want).abs();
            assert!(
                (1.0 / 3.0..=3.0).contains(&ratio),
                "{} at {n} cells: estimate {est:e} over error {ratio:.2}",
                h.material
            );
        }
        assert!(seen > 0, "no hot spot on the surface: {:?}", s.hotspots);
        // Both sides all round within 0.5 % at 20 cells (of the inside field inside, of the
        // outside peak outside), and the peak outside (at the poles, where the field is normal
        // to the surface), second order. Measured with the immersed elements in the cut cells
        // (`operator/interface.rs`): inside 0.67 / 0.11 / 0.041 % at 10 / 20 / 40 cells
        // across a (order 2.0), outside 0.18 / 0.067 / 0.047 % (order 0.9: the worst outside
        // sample moves round the surface between the grids), outside peak 0.19 / 0.058 /
        // 0.016 % (order 1.8). With the five-point operator's
        // edge permittivities alone, where the field runs along the surface (theta near 90
        // degrees) both sides read 5.6 / 5.1 / 4.3 % high and samples inside up to 0.5 / 2.1 /
        // 3.2 % low, not converging: the node potentials beside an oblique interface were
        // first order, their error varying on the scale of a cell.
        if n == 20.0 {
            assert!(top_err < 5e-3, "outside peak {top_err:e}");
            assert!(worst[0] < 5e-3, "inside worst {:e}", worst[0]);
            assert!(worst[1] < 5e-3, "outside worst {:e} of the peak", worst[1]);
        }
        errs[0].push(worst[0]);
        errs[1].push(top_err);
    }
    let (inner, order) = (observed(&errs[0]), observed(&errs[1]));
    eprintln!("dielectric cylinder: observed order {inner:.2} inside, {order:.2} outside peak");
    assert!(inner >= 1.8, "inside order {inner:.2} from {:?}", errs[0]);
    assert!(
        order >= 1.8,
        "outside peak order {order:.2} from {:?}",
        errs[1]
    );
}

/// The surface evaluation alone: the lattice of the dielectric cylinder (permittivity `eps`,
/// `n` cells across its radius) carrying the exact potential at every free node (Jackson
/// 1999, sec. 4.4 with sec. 2.11, as below: inside E (1 - K) y, outside E y (1 - K a^2 / r^2),
/// y from the centre along the field, K = (eps - 1) / (eps + 1), in the local field E of the
/// plates and their images), read by the fit on each side of the interface. Returns the
/// worst error inside and outside, relative to the inside field.
fn exact_interface_fit_errors(n: f64, eps: f64) -> [f64; 2] {
    let k = (eps - 1.0) / (eps + 1.0);
    let e = planar_local_field(k);
    let inside = 2.0 * e / (eps + 1.0);
    let (a, c) = (A * 1e-3, [CENTRE[0] * 1e-3, CENTRE[1] * 1e-3]);
    let d = design(&dielectric_cylinder(n, eps));
    let s = solve(&d);
    let g = &s.grid;
    let mut exact = s.potential.clone();
    for j in 1..g.ny - 1 {
        for i in 0..g.nx {
            let (x, y) = (g.x(i) - c[0], g.y(j) - c[1]);
            let r2 = x * x + y * y;
            exact[g.idx(i, j)] = if r2 <= a * a {
                e * (1.0 - k) * y
            } else {
                e * y * (1.0 - k * a * a / r2)
            };
        }
    }
    let field = fieldgrid_solver::post::FieldEval::new(&s.operator, &s.raster, &exact, &[]);
    let samples = fieldgrid_solver::surface::sample(&field, &d, &Default::default());
    let mut worst = [0.0f64; 2];
    for p in samples.iter().filter(|p| p.kind == SurfaceKind::Interface) {
        let (x, y) = (p.x - c[0], p.y - c[1]);
        let r = x.hypot(y);
        // Tangential E continuous (inside's sin), normal D continuous.
        let (st, ct) = (x / r, y / r);
        let want = if p.material == 1 {
            inside
        } else {
            inside * (st * st + eps * eps * ct * ct).sqrt()
        };
        let side = usize::from(p.material != 1);
        worst[side] = worst[side].max((p.magnitude() - want).abs() / inside);
    }
    worst
}

#[test]
fn dielectric_cylinder_interface_fit_of_the_exact_potential_is_third_order() {
    // The fit on each side of the interface gives the field of the closed form on both sides,
    // all round: what the solved potentials must approach for the interface field to
    // converge.
    let mut errs = Vec::new();
    for n in [10.0, 20.0, 40.0] {
        let worst = exact_interface_fit_errors(n, 4.0);
        eprintln!(
            "dielectric cylinder, exact potential, {n} cells across a: worst inside {:.3e}, \
             outside {:.3e} of the inside field",
            worst[0], worst[1]
        );
        if n == 20.0 {
            assert!(worst[0] < 5e-3 && worst[1] < 5e-3, "{worst:?}");
        }
        errs.push(worst[0].max(worst[1]));
    }
    // Measured: 0.48 / 0.065 / 0.008 % at 10 / 20 / 40 cells, order 2.9 (with quadratics
    // on each side: 3.3 / 0.97 / 0.27 %, order 1.8, over the bound at 20 cells).
    let order = observed(&errs);
    assert!(order >= 2.5, "order {order:.2} from {errs:?}");
}

#[test]
fn interface_fit_error_is_within_the_interface_fit_bias() {
    // The bias the hot spots' estimates add for the interface fit,
    // `INTERFACE_FIT_BIAS c (h kappa)^3` of the value (c the permittivity ratio), bounds the
    // fit's error on the exact potential (Jackson 1999, as above) relative to the interface's
    // peak field (eps times the inside field, outside at the poles), for ratios 2, 4 and 10
    // from 10 cells across the radius. Measured: the worst error is 0.35-0.62, 1.1-1.4 and
    // 2.3-2.6 (h kappa)^3 of the peak for c = 2, 4 and 10, against the bound's 1, 2 and 5;
    // at 7 cells, 2.5 for c = 4 (not yet in the fit's asymptotic range).
    use fieldgrid_solver::surface_results::INTERFACE_FIT_BIAS;
    for eps in [2.0, 4.0, 10.0] {
        for n in [10.0, 20.0, 40.0] {
            let worst = exact_interface_fit_errors(n, eps);
            let of_peak = worst[0].max(worst[1]) / eps;
            let bound = INTERFACE_FIT_BIAS * eps / (n * n * n);
            eprintln!(
                "eps {eps}, {n} cells: worst {:.2} (h kappa)^3 of the peak, bound {:.2}",
                of_peak * n * n * n,
                bound * n * n * n
            );
            assert!(
                of_peak <= bound,
                "eps {eps}, {n} cells: {of_peak:e} > {bound:e}"
            );
        }
    }
}

#[test]
fn surface_charge_error_estimates_follow_the_true_error() {
    // The cylinder of the first test (Jackson 1999, sec. 2.11): sigma = 2 eps0 E cos(theta).
    let peak = 2.0 * EPS0 * planar_local_field(1.0);
    let with_estimate = fieldgrid_tests::params(Default::default()).with_error_estimate(true);
    for n in [10.0, 20.0] {
        let s = fieldgrid_solver::study::run(&design(&conducting_cylinder(n)), &with_estimate)
            .expect("study runs");
        let (mut e2, mut est2, mut count, mut covered) = (0.0, 0.0, 0usize, 0usize);
        let mut top = (0.0f64, 0.0, 0.0);
        for p in &s.surface_charge {
            let want = peak * cos_theta(CENTRE, p.x, p.y);
            let err = (p.density.abs() - want.abs()).abs();
            let est = p.error_estimate.expect("an estimate");
            e2 += err * err;
            est2 += est * est;
            count += 1;
            covered += usize::from(est >= err);
            if p.density.abs() > top.0 {
                top = (p.density.abs(), err, est);
            }
        }
        let (rms, rms_est) = ((e2 / count as f64).sqrt(), (est2 / count as f64).sqrt());
        eprintln!(
            "cylinder, {n} cells: surface charge rms error {:.3e}, rms estimate {:.3e} of the peak \
             (ratio {:.2}); {covered} of {count} samples covered; at the peak error {:.3e}, estimate {:.3e}",
            rms / peak,
            rms_est / peak,
            rms_est / rms,
            top.1 / peak,
            top.2 / peak
        );
        // Measured: rms ratio 0.82 / 1.65 at 10 / 20 cells; at the peak 1.41 / 1.60 times
        // the error (each sample's estimate the larger of its two-grid difference and the
        // fit's bias bound; with the two added, 1.00 / 2.39 and 1.5 / 3.0). Single samples
        // carry the fit's irregular error, which no two-grid difference follows (at 10 cells
        // 68 of 128 samples are covered, at 20 cells 236 of 252).
        assert!(
            (1.0 / 3.0..=3.0).contains(&(rms_est / rms)),
            "{n} cells: rms estimate {rms_est:e}, rms error {rms:e}"
        );
        assert!(top.2 >= top.1, "{n} cells: at the peak {top:?}");
    }
}

/// A plate at 1 V from y = 0 to `top` mm between grounded sides 1 mm apart, coated with a
/// 10 um layer of permittivity 4, on a 0.1 mm `lattice`.
fn coated_plate(top: f64, lattice: &str) -> String {
    format!(
        r#"
unit = "mm"
{grid}
lattice = "{lattice}"
[sides]
left = "symmetry"
right = "symmetry"
bottom = "ground"
top = "ground"
[[dielectric]]
name = "coat"
permittivity = 4.0
rect = {{ x = [0.0, 2.0], y = [{top}, {}] }}
[[conductor]]
name = "plate"
potential = 1.0
rect = {{ x = [0.0, 2.0], y = [0.0, {top}] }}
"#,
        top + 0.01,
        grid = fieldgrid_tests::designs::grid_table([0.0, 2.0], [0.0, 1.0], 0.1)
    )
}

#[test]
fn a_coating_a_tenth_of_a_cell_thick_is_carried_by_the_edge_permittivities() {
    // A 10 um coating at a 0.1 mm cell: the flux crosses it, and the harmonic mean of the
    // permittivities along each cut edge is the series capacitor of its pieces, so the
    // capacitance per length is exactly eps0 w / ((g - t) + t / eps) (series capacitors,
    // Griffiths 2017, sec. 4.4; common practice) and the field in the air gap is
    // V / ((g - t) + t / eps), whatever the layer's place in its cell, on a uniform or a
    // graded lattice. (The flux along such a layer is another matter: see the dielectric
    // cylinder above, where the cells an oblique interface crosses need immersed elements.)
    let (w, t, eps) = (2e-3, 1e-5, 4.0);
    for (top, lattice) in [(0.2013, "uniform"), (0.25, "uniform"), (0.2013, "graded")] {
        let s = solve(&design(&coated_plate(top, lattice)));
        let g = 1e-3 - top * 1e-3;
        let series = (g - t) + t / eps;
        let want = EPS0 * w / series;
        let c = s.capacitance.matrix[0][0];
        let peak = s.peak_field.as_ref().unwrap();
        eprintln!(
            "coating on a plate at {top} mm, {lattice}: capacitance error {:.1e}, peak field \
             error {:.1e} in {}",
            rel_err(c, want),
            rel_err(peak.magnitude, 1.0 / series),
            peak.material
        );
        assert!(rel_err(c, want) < 1e-9, "{lattice}: {c:e} vs {want:e}");
        assert!(rel_err(peak.magnitude, 1.0 / series) < 1e-3, "{peak:?}");
        assert_eq!(peak.material, "background");
    }
}

#[test]
fn a_straight_oblique_interface_carries_its_piecewise_linear_potential_exactly() {
    // A slab of permittivity 4 below a straight oblique edge: the potential linear on each
    // side, continuous, with tangential E and normal D continuous across the edge, solves
    // the interface problem (Jackson 1999, sec. 4.3; common practice). The immersed linear
    // elements of the cut cells hold such a potential on every triangle, and their
    // consistency terms vanish for it, so the operator's rows there reproduce it to rounding
    // (Lin, Lin and Zhang 2015, the consistency of the partially penalised form; from
    // memory); the five-point edge permittivities alone do not.
    let text = r#"
unit = "mm"
[grid]
x = [0.0, 10.0]
y = [0.0, 10.0]
cell = 0.5
lattice = "uniform"
[sides]
left = "ground"
right = "ground"
bottom = "ground"
top = 1.0
[[dielectric]]
name = "slab"
permittivity = 4.0
polygon = [[0.0, 0.0], [10.0, 0.0], [10.0, 3.1], [0.0, 7.3]]
"#;
    let s = solve(&design(text));
    let (g, st) = (&s.grid, &s.operator.stencil);
    // Along the edge t, across it n pointing into the slab.
    let (x0, y0) = (10e-3, 3.1e-3);
    let (dx, dy): (f64, f64) = (-10e-3, 4.2e-3);
    let l = dx.hypot(dy);
    let t = [dx / l, dy / l];
    let n = [-t[1], t[0]];
    let u = |x: f64, y: f64| {
        let (s, tt) = (
            n[0] * (x - x0) + n[1] * (y - y0),
            t[0] * (x - x0) + t[1] * (y - y0),
        );
        0.7 * tt + if s > 0.0 { -s / 4.0 } else { -s }
    };
    let exact: Vec<f64> = (0..g.len())
        .map(|p| u(g.x(p % g.nx), g.y(p / g.nx)))
        .collect();
    let mut full = vec![0.0; g.len()];
    st.apply(&exact, &mut full);
    let mut five = st.clone();
    five.cross.clear();
    let mut alone = vec![0.0; g.len()];
    five.apply(&exact, &mut alone);
    let rows: std::collections::BTreeSet<u32> = st.cross.iter().map(|e| e.0).collect();
    let (mut worst, mut worst_five, mut count) = (0.0f64, 0.0f64, 0);
    for &p in &rows {
        let p = p as usize;
        let (i, j) = (p % g.nx, p / g.nx);
        // Away from the domain's sides, where the edge meets them.
        if i < 3 || j < 3 || i + 3 >= g.nx || j + 3 >= g.ny {
            continue;
        }
        count += 1;
        worst = worst.max(full[p].abs());
        worst_five = worst_five.max(alone[p].abs());
    }
    // Rows are fluxes per unit eps0 of a potential of order 1 V: 1e-3 V is a typical row.
    eprintln!(
        "oblique edge: {count} rows, residual {worst:.1e} V, five-point alone {worst_five:.1e} V"
    );
    assert!(count > 20, "{count} rows");
    assert!(worst < 1e-12, "residual {worst:e}");
    assert!(worst_five > 1e-4, "five-point residual {worst_five:e}");
}

#[test]
fn conductors_in_a_uniform_field_peak_and_surface_charge_estimates_follow_the_error() {
    // The conducting cylinder (peak 2 E, Jackson 1999, sec. 2.11) and sphere (peak 3 E,
    // Jackson 1999, sec. 2.5), as in the tests above: the reported peak field's estimate and
    // the peak surface charge's against their errors. Measured, estimate over error at 10 /
    // 20 / 40 cells (peak field; peak surface charge):
    // - cylinder: 1.53 / 1.58 / 1.68; 1.54 / 1.83 / 1.86 (at 40 cells the cut rows' offset
    //   bound, 0.015 h / a, `row_offset_bound`; without it 0.68 and 0.75). Both read high on
    //   every grid (the planar surface fit reads high on a convex surface, `FIT_BIAS`). The
    //   estimate is the largest of the two-grid difference, the cut rows' offset bound and the
    //   fit's bias bound, min(0.5 (h / a)^2, 7 (h /
    //   a)^3) (`conductor_fit_bias`): both lattices carry the bias at their own h, so the
    //   difference already holds it. Added to it, as before, the peak surface charge's
    //   estimate at 20 cells was 3.40 times its error (difference 1.8x, bias 1.6x).
    // - sphere: 35 / 17 / 3.2; 36 / 19 / 3.2 (the peak 56 at 10 cells before the coarse
    //   fit's bias was taken out of the difference where the coarse lattice is below the
    //   fit's resolution, `FIT_RESOLVED_CELLS`). The error at the pole does not converge
    //   (-0.036 / +0.020 / +0.042 %; see the sphere's test above); next to the axis the
    //   estimate holds the cut rows' offset bound, 0.05 h / a (`row_offset_bound`), which a
    //   centre off its row needs (`off_row.rs`: the pole reads up to 0.19 % low at 20 cells
    //   and 0.11 % at 40). Without it 56 / 6.3 / 0.44 and 36 / 19 / 0.46. No two-grid
    //   estimate follows an error that does not converge, and safety off the rows comes
    //   first: these stay outside 3x, and only the safe side is asserted.
    let with_estimate = fieldgrid_tests::params(Default::default()).with_error_estimate(true);
    // (name, design at n cells across the radius, exact peak field)
    type Case = (&'static str, fn(f64) -> String, f64);
    let cases: [Case; 2] = [
        (
            "cylinder",
            conducting_cylinder,
            2.0 * planar_local_field(1.0),
        ),
        (
            "sphere",
            conducting_sphere,
            3.0 * axisymmetric_local_field(),
        ),
    ];
    for (what, case, peak) in cases {
        for n in [10.0, 20.0, 40.0] {
            let s = fieldgrid_solver::study::run(&design(&case(n)), &with_estimate)
                .expect("study runs");
            let p = s.peak_field.as_ref().unwrap();
            let (err, est) = (p.magnitude - peak, p.error_estimate.unwrap());
            let top = s
                .surface_charge
                .iter()
                .max_by(|a, b| a.density.abs().total_cmp(&b.density.abs()))
                .unwrap();
            let sigma = EPS0 * peak;
            let (serr, sest) = (top.density.abs() - sigma, top.error_estimate.unwrap());
            eprintln!(
                "{what}, {n} cells: peak error {:.3e}, estimate {:.3e} (ratio {:.2}); peak \
                 surface charge error {:.3e}, estimate {:.3e} (ratio {:.2})",
                err / peak,
                est / peak,
                est / err.abs(),
                serr / sigma,
                sest / sigma,
                sest / serr.abs()
            );
            // Never low by more than the estimate, never below a third of the error.
            assert!(err + est >= 0.0, "{what}, {n} cells: {err:e} + {est:e}");
            assert!(serr + sest >= 0.0, "{what}, {n} cells: {serr:e} + {sest:e}");
            assert!(
                est >= err.abs() / 3.0 && sest >= serr.abs() / 3.0,
                "{what}, {n} cells: {est:e} for {err:e}, {sest:e} for {serr:e}"
            );
            // Within 3x where the error converges.
            if what == "cylinder" {
                assert!(
                    est <= 3.0 * err.abs() && sest <= 3.0 * serr.abs(),
                    "{what}, {n} cells: {est:e} for {err:e}, {sest:e} for {serr:e}"
                );
            }
        }
    }
}
