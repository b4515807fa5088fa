//! Verification by manufactured solutions (P. J. Roache, Verification and Validation in
//! Computational Science and Engineering, Hermosa, 1998, ch. 3; K. Salari and P. Knupp, Code
//! Verification by the Method of Manufactured Solutions, Sandia report SAND2000-1444, 2000).
//!
//! A smooth potential is chosen that vanishes on a curved conductor (a circle in the plane, a
//! sphere on the axis in axisymmetric mode) held at 0 V and on the grounded box. Its charge
//! density follows analytically from Poisson's equation, `rho = -eps0 eps_r lap(phi)`, and is
//! injected into the operator's right-hand side at library level (`rho * control volume /
//! eps0` at every unknown node, the convention of `Operator::source`). The computed potential
//! and field are compared with the exact ones on a sequence of lattices, and the observed order
//! of accuracy is the least-squares slope of log(error) against log(h).
//!
//! The cut-cell treatment of the curved surface is a symmetric, finite-volume form of the
//! Shortley-Weller stencil: its local truncation error is first order in the cells cut by the
//! surface, and the global error is still second order because those cells form a layer one
//! cell thick (F. Gibou, R. Fedkiw, L.-T. Cheng, M. Kang, A second-order-accurate symmetric
//! discretization of the Poisson equation on irregular domains, J. Comput. Phys. 176 (2002)
//! 205-227; cited from memory).
//!
//! What the tests assert, and what they show (`-- --nocapture` prints the tables):
//! - the potential converges at second order in the max norm over the nodes whose surface
//!   distance the operator takes as it is, and over the nodes a fixed distance away;
//! - the field converges at second order a fixed distance away, and at first order at the
//!   surface (a difference over a cut stretch of theta * h divides the potential's error by
//!   theta * h);
//! - a node closer to the surface than `raster::SNAP * h` joins the conductor, so the surface
//!   its neighbours see is moved by up to that much (a surface the operator clamps to
//!   `operator::THETA_MIN * h` likewise): their potential error is bounded by
//!   `SNAP * h * max|E|` on top of the scheme's error (asserted), a first-order term that
//!   dominates the max norm over every node on fine lattices (planar, 256 cells across:
//!   order 1.78 over every node against 1.94 without those few nodes).

use fieldgrid_solver::design::{
    Background, Conductor, Design, Domain, Drive, Mode, Shape, Side, Sides,
};
use fieldgrid_solver::grid::Grid;
use fieldgrid_solver::operator;
use fieldgrid_solver::post::FieldEval;
use fieldgrid_solver::raster::{self, NO_CONDUCTOR};
use fieldgrid_solver::solvers::{self, Method, Params};
use std::f64::consts::PI;

/// Background relative permittivity of both problems (any constant works; not 1, so that
/// a lost factor would show).
const EPS_R: f64 = 2.5;

/// A manufactured problem: the design, the exact potential, its gradient and its
/// Laplacian (planar: d2/dx2 + d2/dy2; axisymmetric: d2/dr2 + (1/r) d/dr + d2/dz2).
struct Problem {
    design: Design,
    phi: fn(f64, f64) -> f64,
    grad: fn(f64, f64) -> [f64; 2],
    lap: fn(f64, f64) -> f64,
    /// Signed distance from the conductor's surface, negative inside.
    level: fn(f64, f64) -> f64,
}

/// Nodes at least this far from the conductor's surface (a fixed region as h shrinks) make
/// the "away from the surface" field norm.
const AWAY: f64 = 0.1;

// Planar: box [-1, 1]^2, conductor circle of radius A about C, all at 0 V.
// phi = s * g, s = |x - C|^2 - A^2, g = cos(k x) cos(k y) exp(B x), k = pi / 2.
const A: f64 = 0.37;
const C: [f64; 2] = [0.13, -0.07];
const K: f64 = PI / 2.0;
const B: f64 = 0.5;

fn planar_parts(x: f64, y: f64) -> (f64, [f64; 2], f64, f64, [f64; 2], f64) {
    let (dx, dy) = (x - C[0], y - C[1]);
    let s = dx * dx + dy * dy - A * A;
    let ds = [2.0 * dx, 2.0 * dy];
    let (cx, sx, cy, sy, e) = (
        (K * x).cos(),
        (K * x).sin(),
        (K * y).cos(),
        (K * y).sin(),
        (B * x).exp(),
    );
    let g = cx * cy * e;
    let gx = (-K * sx + B * cx) * cy * e;
    let gy = -K * cx * sy * e;
    let gxx = ((B * B - K * K) * cx - 2.0 * B * K * sx) * cy * e;
    let gyy = -K * K * g;
    (s, ds, 4.0, g, [gx, gy], gxx + gyy)
}

fn planar_phi(x: f64, y: f64) -> f64 {
    let (s, _, _, g, _, _) = planar_parts(x, y);
    s * g
}

fn planar_grad(x: f64, y: f64) -> [f64; 2] {
    let (s, ds, _, g, dg, _) = planar_parts(x, y);
    [ds[0] * g + s * dg[0], ds[1] * g + s * dg[1]]
}

fn planar_lap(x: f64, y: f64) -> f64 {
    let (s, ds, ls, g, dg, lg) = planar_parts(x, y);
    ls * g + 2.0 * (ds[0] * dg[0] + ds[1] * dg[1]) + s * lg
}

// Axisymmetric: r in [0, 1], z in [0, 2], a sphere of radius RA centred on the axis at ZC.
// phi = s * g, s = r^2 + (z - ZC)^2 - RA^2, g = (1 - r^2) sin(KZ z), KZ = pi / 2.
const RA: f64 = 0.4;
const ZC: f64 = 0.9;
const KZ: f64 = PI / 2.0;

fn axi_parts(r: f64, z: f64) -> (f64, [f64; 2], f64, f64, [f64; 2], f64) {
    let dz = z - ZC;
    let s = r * r + dz * dz - RA * RA;
    let ds = [2.0 * r, 2.0 * dz];
    // s_rr + s_r / r + s_zz = 2 + 2 + 2.
    let ls = 6.0;
    let (sz, cz) = ((KZ * z).sin(), (KZ * z).cos());
    let g = (1.0 - r * r) * sz;
    let dg = [-2.0 * r * sz, (1.0 - r * r) * KZ * cz];
    // g_rr + g_r / r = -2 sz - 2 sz; g_zz = -KZ^2 g.
    let lg = -4.0 * sz - KZ * KZ * g;
    (s, ds, ls, g, dg, lg)
}

fn axi_phi(r: f64, z: f64) -> f64 {
    let (s, _, _, g, _, _) = axi_parts(r, z);
    s * g
}

fn axi_grad(r: f64, z: f64) -> [f64; 2] {
    let (s, ds, _, g, dg, _) = axi_parts(r, z);
    [ds[0] * g + s * dg[0], ds[1] * g + s * dg[1]]
}

fn axi_lap(r: f64, z: f64) -> f64 {
    let (s, ds, ls, g, dg, lg) = axi_parts(r, z);
    ls * g + 2.0 * (ds[0] * dg[0] + ds[1] * dg[1]) + s * lg
}

fn planar_problem(n: usize) -> Problem {
    Problem {
        design: Design {
            mode: Mode::Planar,
            domain: Domain {
                x: [-1.0, 1.0],
                y: [-1.0, 1.0],
                cell: 2.0 / n as f64,
            },
            background: Background {
                permittivity: EPS_R,
                strength: None,
            },
            conductors: vec![Conductor {
                name: "circle".into(),
                drive: Drive::Fixed(0.0),
                joined: Vec::new(),
                shape: Shape::Circle {
                    center: C,
                    radius: A,
                },
            }],
            ..Design::default()
        },
        phi: planar_phi,
        grad: planar_grad,
        lap: planar_lap,
        level: |x, y| (x - C[0]).hypot(y - C[1]) - A,
    }
}

fn axi_problem(n: usize) -> Problem {
    Problem {
        design: Design {
            mode: Mode::Axisymmetric,
            domain: Domain {
                x: [0.0, 1.0],
                y: [0.0, 2.0],
                cell: 1.0 / n as f64,
            },
            sides: Sides {
                left: Side::Axis,
                ..Sides::default()
            },
            background: Background {
                permittivity: EPS_R,
                strength: None,
            },
            conductors: vec![Conductor {
                name: "sphere".into(),
                drive: Drive::Fixed(0.0),
                joined: Vec::new(),
                shape: Shape::Circle {
                    center: [0.0, ZC],
                    radius: RA,
                },
            }],
            ..Design::default()
        },
        phi: axi_phi,
        grad: axi_grad,
        lap: axi_lap,
        level: |r, z| r.hypot(z - ZC) - RA,
    }
}

/// Errors of one lattice (max norms unless said otherwise), and the scales they are shown
/// relative to. "Clamped" nodes see a moved surface: they sit next to a node snapped onto the
/// conductor (`raster::SNAP`) or face a surface clamped to `operator::THETA_MIN * h`; "away"
/// nodes lie at least [`AWAY`] from the surface.
#[derive(Default)]
struct Errors {
    h: f64,
    phi: f64,
    phi_unclamped: f64,
    phi_away: f64,
    field: f64,
    field_unclamped: f64,
    field_away: f64,
    field_rms: f64,
    clamped: usize,
    phi_scale: f64,
    field_scale: f64,
}

/// Control volume of node (i, j): the box of half-cells around it, clipped to the domain;
/// a ring in axisymmetric mode (m^2 per unit depth planar, m^3 axisymmetric).
fn control_volume(g: &Grid, mode: Mode, i: usize, j: usize) -> f64 {
    let x = g.x(i);
    let lo = if i == 0 { x } else { x - 0.5 * g.dx(0) };
    let hi = if i + 1 == g.nx { x } else { x + 0.5 * g.dx(0) };
    let ly = g.dy(0) * if j == 0 || j + 1 == g.ny { 0.5 } else { 1.0 };
    match mode {
        Mode::Planar => (hi - lo) * ly,
        Mode::Axisymmetric => PI * (hi * hi - lo * lo) * ly,
    }
}

fn errors(p: &Problem) -> Errors {
    let d = &p.design;
    fieldgrid_solver::design::validate(d).expect("valid design");
    let g = Grid::fit(d.domain.x, d.domain.y, d.domain.cell).unwrap();
    let ras = raster::rasterize(d, &g);
    let op = operator::assemble(d, &ras).expect("operator");
    // Every target is at 0 V, so the right-hand side is the manufactured charge alone:
    // rho * V / eps0 = -eps_r * lap(phi) * V.
    let values = op.target_values(&[0.0], true);
    let mut b = op.rhs(&values, false);
    for j in 0..g.ny {
        for i in 0..g.nx {
            let q = g.idx(i, j);
            if op.stencil.unknown[q] {
                b[q] += -EPS_R * (p.lap)(g.x(i), g.y(j)) * control_volume(&g, d.mode, i, j);
            }
        }
    }
    let mut x = vec![0.0; g.len()];
    let params = Params::default().with_tol(1e-13);
    let info = solvers::solve(Method::Multigrid, &op.stencil, &b, &mut x, &params)
        .unwrap_or_else(|e| panic!("solve: {e}"));
    assert!(info.converged());
    let field = FieldEval::new(&op, &ras, &x, &[0.0]);
    let (mut sum2, mut count) = (0.0, 0usize);
    let mut e = Errors {
        h: g.dx(0),
        ..Errors::default()
    };
    for j in 0..g.ny {
        for i in 0..g.nx {
            let q = g.idx(i, j);
            let (xx, yy) = (g.x(i), g.y(j));
            let exact = (p.phi)(xx, yy);
            let grad = (p.grad)(xx, yy);
            e.phi_scale = e.phi_scale.max(exact.abs());
            e.field_scale = e.field_scale.max(grad[0].hypot(grad[1]));
            if !op.stencil.unknown[q] {
                continue;
            }
            let ep = (x[q] - exact).abs();
            let f = field.at(q);
            let ef = (f[0] + grad[0]).hypot(f[1] + grad[1]);
            // Next to a node the raster snapped onto the conductor (a conductor node outside
            // the exact shape), or facing a surface the operator clamped: the surface this
            // node sees is moved.
            let snapped = |k: usize| {
                ras.conductor[k] != NO_CONDUCTOR && (p.level)(g.x(k % g.nx), g.y(k / g.nx)) > 0.0
            };
            let clamped = [q.wrapping_sub(1), q + 1, q.wrapping_sub(g.nx), q + g.nx]
                .iter()
                .any(|&k| k < g.len() && snapped(k))
                || op.links_of(q).iter().any(|l| {
                    (l.target as usize) < op.n_conductors && l.theta <= operator::THETA_MIN
                });
            e.clamped += usize::from(clamped);
            e.phi = e.phi.max(ep);
            e.field = e.field.max(ef);
            if !clamped {
                e.phi_unclamped = e.phi_unclamped.max(ep);
                e.field_unclamped = e.field_unclamped.max(ef);
            }
            if (p.level)(xx, yy).abs() >= AWAY {
                e.phi_away = e.phi_away.max(ep);
                e.field_away = e.field_away.max(ef);
            }
            sum2 += ef * ef;
            count += 1;
        }
    }
    e.field_rms = (sum2 / count as f64).sqrt();
    e
}

/// Least-squares slope of log(err) against log(h).
fn order(hs: &[f64], errs: &[f64]) -> f64 {
    let n = hs.len() as f64;
    let (lx, ly): (Vec<f64>, Vec<f64>) = hs.iter().zip(errs).map(|(h, e)| (h.ln(), e.ln())).unzip();
    let mx = lx.iter().sum::<f64>() / n;
    let my = ly.iter().sum::<f64>() / n;
    let sxy: f64 = lx.iter().zip(&ly).map(|(x, y)| (x - mx) * (y - my)).sum();
    let sxx: f64 = lx.iter().map(|x| (x - mx) * (x - mx)).sum();
    sxy / sxx
}

/// Observed orders of one refinement study.
#[derive(Debug)]
struct Orders {
    phi: f64,
    phi_unclamped: f64,
    phi_away: f64,
    field: f64,
    field_unclamped: f64,
    field_away: f64,
}

/// Runs the refinement study and returns the observed orders, printing the table
/// (`cargo test --test reference manufactured -- --nocapture` shows it).
fn study(name: &str, make: fn(usize) -> Problem, ns: &[usize]) -> (Orders, Vec<Errors>) {
    let es: Vec<Errors> = ns.iter().map(|&n| errors(&make(n))).collect();
    println!("{name}: errors relative to max|phi| and max|E|");
    println!(
        "  h        | phi: all    unclamped  away      | E: all      unclamped  away       rms       | clamped nodes"
    );
    for e in &es {
        let (p, f) = (e.phi_scale, e.field_scale);
        println!(
            "  {:.6} | {:.3e}  {:.3e}  {:.3e} | {:.3e}  {:.3e}  {:.3e}  {:.3e} | {}",
            e.h,
            e.phi / p,
            e.phi_unclamped / p,
            e.phi_away / p,
            e.field / f,
            e.field_unclamped / f,
            e.field_away / f,
            e.field_rms / f,
            e.clamped
        );
    }
    let hs: Vec<f64> = es.iter().map(|e| e.h).collect();
    let fit = |f: fn(&Errors) -> f64| order(&hs, &es.iter().map(f).collect::<Vec<_>>());
    let o = Orders {
        phi: fit(|e| e.phi),
        phi_unclamped: fit(|e| e.phi_unclamped),
        phi_away: fit(|e| e.phi_away),
        field: fit(|e| e.field),
        field_unclamped: fit(|e| e.field_unclamped),
        field_away: fit(|e| e.field_away),
    };
    println!("  observed orders: {o:?}");
    (o, es)
}

fn check((o, es): (Orders, Vec<Errors>)) {
    // Second order for the potential wherever the surface is where the geometry puts it,
    // and for the field at a fixed distance from the surface.
    assert!(
        (1.8..=2.3).contains(&o.phi_unclamped),
        "potential order {o:?}"
    );
    assert!((1.8..=2.3).contains(&o.phi_away), "potential order {o:?}");
    assert!(
        (1.8..=2.3).contains(&o.field_away),
        "field order away from the surface {o:?}"
    );
    // At the surface the field is first order (differences over cut stretches).
    assert!(o.field_unclamped >= 0.8, "field order at the surface {o:?}");
    // Snapping (clamping) moves the surface by at most SNAP * h (THETA_MIN * h), so the
    // potential next to it is off by at most that times the largest field, on top of the
    // scheme's own error. That term is first order: on finer lattices it dominates the max
    // norm over every node.
    let moved = raster::SNAP.max(operator::THETA_MIN);
    for e in &es {
        let bound = e.phi_unclamped + moved * e.h * e.field_scale;
        assert!(
            e.phi <= bound,
            "h {}: clamped-node error {:e} above {bound:e}",
            e.h,
            e.phi
        );
    }
    println!(
        "  (orders over every node, clamped ones included: potential {:.2}, field {:.2})",
        o.phi, o.field
    );
}

#[test]
fn manufactured_planar_potential_and_field_converge_at_second_order() {
    check(study(
        "planar, circle conductor",
        planar_problem,
        &[32, 64, 128, 256],
    ));
}

#[test]
fn manufactured_axisymmetric_potential_and_field_converge_at_second_order() {
    check(study(
        "axisymmetric, sphere on the axis",
        axi_problem,
        &[16, 32, 64, 128],
    ));
}

#[test]
fn manufactured_solution_checks_its_own_derivatives() {
    // The analytic gradient and Laplacian against central differences of phi (step 1e-4,
    // truncation about 1e-8 relative): guards the manufactured formulas themselves.
    let h = 1e-4;
    for &(x, y) in &[(0.3, 0.4), (-0.7, 0.2), (0.9, -0.85)] {
        let f = planar_phi;
        let gx = (f(x + h, y) - f(x - h, y)) / (2.0 * h);
        let gy = (f(x, y + h) - f(x, y - h)) / (2.0 * h);
        let lap = (f(x + h, y) + f(x - h, y) + f(x, y + h) + f(x, y - h) - 4.0 * f(x, y)) / (h * h);
        let g = planar_grad(x, y);
        assert!(
            (gx - g[0]).abs() < 1e-6 && (gy - g[1]).abs() < 1e-6,
            "{gx} {gy} {g:?}"
        );
        assert!(
            (lap - planar_lap(x, y)).abs() < 1e-4,
            "{lap} {}",
            planar_lap(x, y)
        );
    }
    for &(r, z) in &[(0.3, 0.4), (0.7, 1.6), (0.05, 0.2)] {
        let f = axi_phi;
        let gr = (f(r + h, z) - f(r - h, z)) / (2.0 * h);
        let gz = (f(r, z + h) - f(r, z - h)) / (2.0 * h);
        let frr = (f(r + h, z) - 2.0 * f(r, z) + f(r - h, z)) / (h * h);
        let fzz = (f(r, z + h) - 2.0 * f(r, z) + f(r, z - h)) / (h * h);
        let g = axi_grad(r, z);
        assert!((gr - g[0]).abs() < 1e-6 && (gz - g[1]).abs() < 1e-6);
        assert!((frr + gr / r + fzz - axi_lap(r, z)).abs() < 1e-4);
    }
    // The exact potentials vanish on the conductor and on the grounded sides.
    for t in 0..16 {
        let a = t as f64 / 16.0 * 2.0 * PI;
        assert!(planar_phi(C[0] + A * a.cos(), C[1] + A * a.sin()).abs() < 1e-14);
        assert!(axi_phi(RA * a.cos().abs(), ZC + RA * a.sin()).abs() < 1e-14);
        let s = -1.0 + t as f64 / 8.0;
        assert!(planar_phi(1.0, s).abs() < 1e-14 && planar_phi(s, -1.0).abs() < 1e-14);
        assert!(axi_phi(1.0, 2.0 * s.abs()).abs() < 1e-14 && axi_phi(s.abs(), 0.0).abs() < 1e-14);
    }
}
