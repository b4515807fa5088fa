//! Tests of the far-field condition: the Robin weights against closed forms, assembled into
//! operators and solved, for planar and axisymmetric designs.

use super::*;
use crate::design::{Conductor, Domain, Drive, Sides};
use crate::operator::{self, Operator};
use crate::raster::{Axis, CutEdge, HalfLink, Raster, NO_CONDUCTOR};
use crate::solvers::{self, Method, Params};
use crate::EPS0;

/// A minimal exact rasteriser for designs made of circular conductors in one material,
/// independent of the production rasteriser: node classification and, for every edge a
/// circle crosses, the exact crossing fractions.
fn rasterize_circles(design: &Design, grid: &Grid) -> Raster {
    let circles: Vec<(Point, f64)> = design
        .conductors
        .iter()
        .map(|c| match c.shape {
            Shape::Circle { center, radius } => (center, radius),
            _ => panic!("circles only"),
        })
        .collect();
    let inside = |p: Point| {
        circles
            .iter()
            .position(|(c, r)| (p[0] - c[0]).hypot(p[1] - c[1]) < *r)
            .map_or(NO_CONDUCTOR, |k| k as u16)
    };
    let n = grid.len();
    let mut conductor = vec![NO_CONDUCTOR; n];
    for j in 0..grid.ny {
        for i in 0..grid.nx {
            conductor[grid.idx(i, j)] = inside([grid.x(i), grid.y(j)]);
        }
    }
    // Crossings of segment a->b with every circle: (t, circle).
    let crossings = |a: Point, b: Point| {
        let mut out: Vec<(f64, u16)> = Vec::new();
        for (k, (c, r)) in circles.iter().enumerate() {
            let d = [b[0] - a[0], b[1] - a[1]];
            let f = [a[0] - c[0], a[1] - c[1]];
            let qa = d[0] * d[0] + d[1] * d[1];
            let qb = 2.0 * (f[0] * d[0] + f[1] * d[1]);
            let qc = f[0] * f[0] + f[1] * f[1] - r * r;
            let disc = qb * qb - 4.0 * qa * qc;
            if disc > 0.0 {
                for t in [
                    (-qb - disc.sqrt()) / (2.0 * qa),
                    (-qb + disc.sqrt()) / (2.0 * qa),
                ] {
                    if (0.0..=1.0).contains(&t) {
                        out.push((t, k as u16));
                    }
                }
            }
        }
        out.sort_by(|x, y| x.0.total_cmp(&y.0));
        out
    };
    let mut cut_edges = Vec::new();
    for j in 0..grid.ny {
        for i in 0..grid.nx {
            for axis in [Axis::X, Axis::Y] {
                let (bi, bj) = match axis {
                    Axis::X if i + 1 < grid.nx => (i + 1, j),
                    Axis::Y if j + 1 < grid.ny => (i, j + 1),
                    _ => continue,
                };
                let (a, b) = (grid.idx(i, j), grid.idx(bi, bj));
                let (ca, cb) = (conductor[a], conductor[b]);
                let xs = crossings([grid.x(i), grid.y(j)], [grid.x(bi), grid.y(bj)]);
                if (ca == cb && (ca != NO_CONDUCTOR || xs.is_empty())) || xs.is_empty() {
                    continue;
                }
                let half = |t: f64, k: u16| HalfLink {
                    theta: t.max(1e-12),
                    eps: 1.0,
                    ends_on: Some(k),
                };
                let from_a = (ca == NO_CONDUCTOR).then(|| half(xs[0].0, xs[0].1));
                let last = xs[xs.len() - 1];
                let from_b = (cb == NO_CONDUCTOR).then(|| half(1.0 - last.0, last.1));
                cut_edges.push(CutEdge {
                    node: a as u32,
                    axis,
                    from_a,
                    from_b,
                    direct: None,
                    interface: None,
                });
            }
        }
    }
    Raster {
        grid: grid.clone(),
        conductor,
        material: vec![0; n],
        cut_edges,
        node_charge: Vec::new(),
    }
}

/// Solves with every conductor at the given potential; returns the operator and the
/// reactions (charges) of every target.
fn solve(design: &Design, potentials: &[f64]) -> (Operator, Vec<f64>) {
    let d = &design.domain;
    let grid = Grid::fit(d.x, d.y, d.cell).unwrap();
    let raster = rasterize_circles(design, &grid);
    let op = operator::assemble(design, &raster).unwrap();
    let values = op.target_values(potentials, true);
    let b = op.rhs(&values, false);
    let mut x = vec![0.0; grid.len()];
    let params = Params {
        tol: 1e-11,
        ..Params::default()
    };
    solvers::solve(Method::Cg, &op.stencil, &b, &mut x, &params).unwrap();
    let q = op.reactions(&x, &values, false);
    (op, q)
}

/// A wire of radius a at height h over a grounded bottom side, other sides open, the box
/// reaching `reach * h` beyond the wire.
fn wire_over_ground(a: f64, h: f64, reach: f64, cell: f64) -> Design {
    let half = reach * h;
    Design {
        domain: Domain {
            x: [-half, half],
            y: [0.0, h + half],
            cell,
        },
        sides: Sides {
            left: Side::Open,
            right: Side::Open,
            bottom: Side::Ground,
            top: Side::Open,
        },
        conductors: vec![Conductor {
            name: "wire".into(),
            drive: Drive::Fixed(1.0),
            joined: Vec::new(),
            shape: Shape::Circle {
                center: [0.0, h],
                radius: a,
            },
        }],
        ..Design::default()
    }
}

#[test]
fn open_sides_keep_the_operator_symmetric_and_gauss_law_over_the_box() {
    let d = wire_over_ground(0.1, 0.3, 2.0, 0.02);
    let (op, q) = solve(&d, &[1.0]);
    let (a, _) = op.stencil.to_csr();
    let at = a.transpose_view().to_csr();
    for (v, (r, c)) in a.iter() {
        assert_eq!(at.get(r, c).copied(), Some(*v));
    }
    // Charges of the wire, the grounded side and the charge beyond the open sides
    // balance (Gauss's law for the box).
    let total: f64 = q.iter().sum();
    assert!(
        total.abs() < 1e-8 * q[0].abs(),
        "net {total:e} of {:e}",
        q[0]
    );
    let beyond: f64 = [SideId::Left, SideId::Right, SideId::Top]
        .iter()
        .map(|&s| q[op.side_target(s) as usize])
        .sum();
    // The image solution's plane charge density -q d / (pi (x^2 + d^2)), d^2 = h^2 - a^2
    // (method of images, Ramo, Whinnery & Van Duzer 1994; from memory): the part beyond
    // |x| = L leaves through the open sides, a fraction 1 - (2/pi) atan(L/d).
    let (a, h, l): (f64, f64, f64) = (0.1, 0.3, 0.6);
    let d = (h * h - a * a).sqrt();
    let want = -q[0] * (1.0 - 2.0 / std::f64::consts::PI * (l / d).atan());
    assert!(
        (beyond / want - 1.0).abs() < 0.03,
        "beyond {beyond:e}, image {want:e}"
    );
}

#[test]
fn wire_over_ground_with_open_sides_matches_the_image_solution() {
    // Wire of radius a at height h over a conducting plane, by images:
    // C' = 2 pi eps0 / acosh(h / a) (S. Ramo, J. R. Whinnery, T. Van Duzer, Fields and
    // Waves in Communication Electronics, 3rd ed., 1994, table of common transmission
    // lines; from memory).
    let (a, h): (f64, f64) = (0.1, 0.3);
    let want = 2.0 * std::f64::consts::PI * EPS0 / (h / a).acosh();
    let near = solve(&wire_over_ground(a, h, 2.0, 0.01), &[1.0]).1[0];
    let far = solve(&wire_over_ground(a, h, 4.0, 0.01), &[1.0]).1[0];
    let err = (near / want - 1.0).abs();
    let moved = (far / near - 1.0).abs();
    assert!(err < 5e-3, "C' = {near:e}, want {want:e}: error {err:e}");
    assert!(
        moved < 2e-3,
        "moving the open sides out 2x changed C' by {moved:e}"
    );
}

/// A sphere of radius `a` centred on the axis of an axisymmetric box reaching `reach`
/// from the axis and from z = 0, its right, bottom and top sides open.
fn sphere_in_open_box(a: f64, reach: f64, cell: f64) -> Design {
    Design {
        mode: Mode::Axisymmetric,
        domain: Domain {
            x: [0.0, reach],
            y: [-reach, reach],
            cell,
        },
        sides: Sides {
            left: Side::Axis,
            right: Side::Open,
            bottom: Side::Open,
            top: Side::Open,
        },
        conductors: vec![Conductor {
            name: "ball".into(),
            drive: Drive::Fixed(1.0),
            joined: Vec::new(),
            shape: Shape::Circle {
                center: [0.0, 0.0],
                radius: a,
            },
        }],
        ..Design::default()
    }
}

#[test]
fn axisymmetric_open_faces_are_surfaces_of_revolution_with_the_monopole_coefficient() {
    let reach = 0.4;
    let d = sphere_in_open_box(0.1, reach, 0.01);
    let (op, _) = solve(&d, &[1.0]);
    let g = op.grid;
    let model = far_field(&d);
    assert_eq!(model.centre, [0.0, 0.0]);
    // Per link: weight = eps * area * kappa and theta = 1 / (kappa h).
    let mut area = [0.0; 4];
    for l in op
        .links
        .iter()
        .filter(|l| l.target as usize >= op.n_conductors)
    {
        let side = SideId::ALL[l.target as usize - op.n_conductors];
        let h = if matches!(side, SideId::Left | SideId::Right) {
            g.dx(0)
        } else {
            g.dy(0)
        };
        let p = l.node as usize;
        let at = [g.x(p % g.nx), g.y(p / g.nx)];
        // Monopole Q / (4 pi eps0 rho): d phi/dn = -(rho_hat . n) phi / rho.
        let n = outward(side).unit();
        let want = (at[0] * n[0] + at[1] * n[1]) / (at[0] * at[0] + at[1] * at[1]);
        let kappa = 1.0 / (l.theta * h);
        assert!(
            (kappa - want).abs() < 1e-9 * want,
            "{side:?} at {at:?}: {kappa} vs {want}"
        );
        area[side as usize] += l.weight / (l.eps * kappa);
    }
    let pi = std::f64::consts::PI;
    // The axis takes no condition; the open sides are the cylinder's mantle and its ends.
    assert_eq!(area[SideId::Left as usize], 0.0);
    let mantle = 2.0 * pi * reach * 2.0 * reach;
    let end = pi * reach * reach;
    assert!((area[SideId::Right as usize] / mantle - 1.0).abs() < 1e-12);
    assert!((area[SideId::Bottom as usize] / end - 1.0).abs() < 1e-12);
    assert!((area[SideId::Top as usize] / end - 1.0).abs() < 1e-12);
}

#[test]
fn sphere_in_an_open_box_has_the_capacitance_of_an_isolated_sphere() {
    // Isolated sphere C = 4 pi eps0 a (D. J. Griffiths, Introduction to Electrodynamics,
    // 4th ed., 2017, sec. 2.5.4 with the outer radius taken to infinity; from memory):
    // the monopole condition is exact for its field, so the box size barely matters.
    let a = 0.1;
    let want = 4.0 * std::f64::consts::PI * EPS0 * a;
    let near = solve(&sphere_in_open_box(a, 0.3, 0.01), &[1.0]).1[0];
    let far = solve(&sphere_in_open_box(a, 0.6, 0.01), &[1.0]).1[0];
    let err = (near / want - 1.0).abs();
    assert!(err < 1e-3, "C = {near:e}, want {want:e}: error {err:e}");
    assert!(
        (far / near - 1.0).abs() < 1e-4,
        "near {near:e}, far {far:e}"
    );
}

fn wire_design(sides: Sides) -> Design {
    Design {
        domain: Domain {
            x: [-1.0, 1.0],
            y: [0.0, 1.5],
            cell: 0.1,
        },
        sides,
        conductors: vec![Conductor {
            name: "w".into(),
            drive: Drive::Fixed(1.0),
            joined: Vec::new(),
            shape: Shape::Circle {
                center: [0.2, 0.5],
                radius: 0.1,
            },
        }],
        ..Design::default()
    }
}

#[test]
fn centre_moves_onto_a_grounded_side_facing_an_open_one() {
    let sides = Sides {
        left: Side::Open,
        right: Side::Open,
        bottom: Side::Ground,
        top: Side::Open,
    };
    assert_eq!(centre(&wire_design(sides)), [0.2, 0.0]);
    let sides = Sides {
        left: Side::Symmetry,
        right: Side::Open,
        bottom: Side::Open,
        top: Side::Open,
    };
    assert_eq!(centre(&wire_design(sides)), [-1.0, 0.5]);
    let all_open = Sides {
        left: Side::Open,
        right: Side::Open,
        bottom: Side::Open,
        top: Side::Open,
    };
    assert_eq!(centre(&wire_design(all_open)), [0.2, 0.5]);
}

#[test]
fn coefficient_is_exact_for_the_model_fields() {
    // phi = 1/|r| (radial), y/|r|^2 (2-D dipole), xy/|r|^4 (2-D quadrupole) and
    // z/|r|^3 (3-D dipole): kappa = -(d phi/dn) / phi, checked by central differences.
    let c = [0.3, -0.2];
    let models = [
        ([false, false], 1.0),
        ([false, true], 2.0),
        ([true, true], 4.0),
        ([false, true], 3.0),
    ];
    for (odd, m) in models {
        let f = FarField {
            centre: c,
            odd,
            m,
            any_direction: false,
        };
        let phi = |p: Point| {
            let r = [p[0] - c[0], p[1] - c[1]];
            let mut v = (r[0] * r[0] + r[1] * r[1]).powf(-0.5 * m);
            for a in 0..2 {
                if odd[a] {
                    v *= r[a];
                }
            }
            v
        };
        for (at, n) in [
            ([2.0, 1.1], [1.0, 0.0]),
            ([0.9, 2.5], [0.0, 1.0]),
            ([3.0, 0.4], [0.0, 1.0]),
        ] {
            let d = 1e-6;
            let dn = (phi([at[0] + d * n[0], at[1] + d * n[1]])
                - phi([at[0] - d * n[0], at[1] - d * n[1]]))
                / (2.0 * d);
            let want = -dn / phi(at);
            let got = f.coefficient(at, n);
            if want > 0.0 {
                assert!(
                    (got - want).abs() < 1e-7 * want,
                    "{odd:?} {m}: {got} vs {want}"
                );
            } else {
                assert_eq!(got, 0.0);
            }
        }
    }
    let radial = FarField {
        centre: c,
        odd: [false; 2],
        m: 1.0,
        any_direction: false,
    };
    assert_eq!(radial.coefficient([2.0, 1.1], [-1.0, 0.0]), 0.0);
    assert_eq!(radial.coefficient(c, [1.0, 0.0]), 0.0);
}

#[test]
fn any_direction_condition_is_exact_for_dipoles_of_every_direction() {
    // d(phi)/dn + kappa phi - d/dt(beta d(phi)/dt) = 0 on the right side of a box for
    // phi = x/r^2 and y/r^2 about the centre, checked by central differences.
    let grid = Grid::fit([-1.0, 3.0], [-2.0, 1.5], 0.5).unwrap();
    let c = [0.2, -0.1];
    let line = SideLine::new(&grid, c, SideId::Right);
    let x = grid.x1();
    for phi in [
        Box::new(move |p: Point| (p[0] - c[0]) / ((p[0] - c[0]).powi(2) + (p[1] - c[1]).powi(2)))
            as Box<dyn Fn(Point) -> f64>,
        Box::new(move |p: Point| (p[1] - c[1]) / ((p[0] - c[0]).powi(2) + (p[1] - c[1]).powi(2))),
    ] {
        for y in [-1.7, -0.4, 0.3, 1.2] {
            let d = 1e-4;
            let dn = (phi([x + d, y]) - phi([x - d, y])) / (2.0 * d);
            let flux = |y: f64| {
                let t = line.tangent([x, y]);
                line.beta(t) * (phi([x, y + d]) - phi([x, y - d])) / (2.0 * d)
            };
            let dt = (flux(y + d) - flux(y - d)) / (2.0 * d);
            let k = line.kappa(line.tangent([x, y]));
            let residual = dn + k * phi([x, y]) - dt;
            assert!(
                residual.abs() < 1e-5 * dn.abs().max(1e-3),
                "y {y}: {residual:e} vs {dn:e}"
            );
        }
    }
    // beta vanishes at the side's farther corner and is positive inside.
    assert!(line.beta(line.tangent([x, grid.y0()])).abs() < 1e-12);
    assert!(line.beta(line.tangent([x, 0.0])) > 0.0);
}
