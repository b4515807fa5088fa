//! The field at a point of a surface, evaluated at the surface point itself: a weighted
//! least-squares fit of the potential around the point, constrained by what is exact there.
//!
//! At a conductor surface (or a fixed side) the fit is a polynomial of degree 3 in local
//! coordinates (n along the normal into the free side, t along the tangent, in cells) whose
//! level at the point is free but which is constant along the curved surface to second order
//! (`a_t = 0`, `c_tt = kappa a_n / 2`) and at the cut points where the operator's links meet
//! the same surface, satisfies the field equation (`div eps grad phi = -rho`, with the `1/r`
//! term of the axisymmetric form) at collocation points, and matches the solved node
//! potentials of the free side within five cells (Gaussian weights) in the least-squares
//! sense. At a dielectric interface each side has its own cubic; they share the potential
//! and its tangential derivative at the point, their normal derivatives carry equal normal
//! flux (`eps_1 a_n1 = eps_2 a_n2`), and the potential and the normal flux stay continuous
//! along the curved interface to first order in t.
//!
//! Why a fit, and why a free level: the node potentials of the cut-cell scheme are second
//! order, but their error does not vanish smoothly at the surface; it varies with the cut
//! fractions in a layer one cell thick. A difference whose last leg is `theta h` long divides
//! that error by `theta h` (the field becomes first order and erratic), and so does a fit
//! pinned to the exact surface potential (measured: +0.18 % / +0.09 % at 20 / 40 cells across
//! a coax conductor, order 1). Left free, the level absorbs the layer and the fit follows the
//! smooth part of the error: +0.11 % / +0.024 %, order 2.2 (tests/reference_planar.rs).
//!
//! On a graded grid the fine lines running past a point in a coarse cell would put hundreds
//! of nodes in a fit's reach, most of them crowded near an edge: a fit takes, along each axis,
//! only the line nearest to each mark half a cell apart, and closer to the point one per
//! halving of the distance (every line of a uniform lattice whose cells are square). On the
//! sensor pad's graded lattice the fits had about 290 (conductors) and 540 (interfaces) rows
//! each and took 0.23 s of one thread; thinned, 0.10 s. Uniform reference cases keep their
//! nodes and results.
//!
//! Invariants: lengths in metres outside, in cells inside the fit (well-conditioned for any
//! unit; a cell is the larger side of the lattice cell holding the point, so on a graded grid
//! the fit's reach follows the local spacing); the field returned is SI (V/m); `None` when
//! too few free nodes lie near the point for the fit to be determined (a surface in a gap
//! narrower than the fit's reach).

use crate::design::{Mode, Point};
use crate::grid::Grid;
use crate::raster::NO_CONDUCTOR;
use crate::EPS0;

mod lsq;
use lsq::Lsq;
mod nodes;
use nodes::for_nodes_near;

/// Fit settings.
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct FitParams {
    /// Polynomial degree of the fit at conductor surfaces (2 or 3).
    pub degree: usize,
    /// Polynomial degree on each side of a dielectric interface (3: third order; 2: second).
    pub interface_degree: usize,
    /// Nodes within this many cells of the point take part.
    pub radius_cells: f64,
    /// Where node lines crowd closer than this many cells (the fine lines of a graded
    /// lattice running past a point in a coarse cell), only the line nearest to each mark
    /// this far apart takes part; lines at least this far apart all do. 0 takes every line.
    pub line_step_cells: f64,
    /// How the surface potential enters the fit.
    pub anchor: Anchor,
}

/// How a conductor's potential enters the fit.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub enum Anchor {
    /// The fit takes the surface potential at the point and at the cut points.
    Exact,
    /// The fit's level at the point is free; the cut points share it (an equipotential).
    Level,
    /// The fit's level is free and the cut points are not used.
    Free,
}

impl Default for FitParams {
    fn default() -> Self {
        FitParams {
            degree: 3,
            interface_degree: 3,
            radius_cells: 5.0,
            line_step_cells: 0.5,
            anchor: Anchor::Free,
        }
    }
}

/// A surface point with its local frame.
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct Frame {
    /// The point, m.
    pub at: Point,
    /// Unit normal, pointing into the free side (conductors) or from side 1 into side 2
    /// (interfaces).
    pub normal: Point,
    /// Curvature, 1/m: positive when the surface bends away from the normal (the free side of
    /// a convex conductor), so that the surface is `n = -kappa t^2 / 2` near the point.
    pub curvature: f64,
}

impl Frame {
    /// Unit tangent: the normal turned by +90 degrees.
    pub fn tangent(&self) -> Point {
        [-self.normal[1], self.normal[0]]
    }
}

/// The solved lattice as the fit reads it.
pub struct Lattice<'a> {
    /// The lattice.
    pub grid: &'a Grid,
    /// Planar or axisymmetric.
    pub mode: Mode,
    /// Potential at every node, V (fixed nodes hold their values).
    pub phi: &'a [f64],
    /// Conductor per node ([`NO_CONDUCTOR`] for free and side nodes).
    pub conductor: &'a [u16],
    /// Material per node.
    pub material: &'a [u16],
}

/// What the surface separates.
#[derive(Clone, Debug, PartialEq)]
pub enum Across {
    /// A conductor (or fixed side) at `potential` on the far side of the normal; the free
    /// side is `material` with relative permittivity `eps`.
    Conductor {
        /// Surface potential, V.
        potential: f64,
        /// Material index of the free side.
        material: u16,
        /// Relative permittivity of the free side.
        eps: f64,
        /// Free charge density at the surface on the free side, C/m^3.
        rho: f64,
        /// Points of the same surface (cut points of lattice edges), m.
        surface_points: Vec<Point>,
    },
    /// A dielectric interface: material 1 behind the normal, material 2 in front.
    Interface {
        /// Material indices (side 1, side 2).
        material: [u16; 2],
        /// Relative permittivities (side 1, side 2).
        eps: [f64; 2],
        /// Free charge densities (side 1, side 2), C/m^3.
        rho: [f64; 2],
    },
}

/// The field at a surface point: one vector on a conductor's free side, two at an interface
/// (side 1, side 2), V/m.
#[derive(Clone, Copy, Debug, PartialEq)]
pub enum SurfaceField {
    /// Field on the free side of a conductor.
    Conductor([f64; 2]),
    /// Field in material 1 and in material 2.
    Interface([f64; 2], [f64; 2]),
}

/// Monomials n^a t^b of degree 1..=d, in a fixed order.
fn monomials(d: usize) -> Vec<(i32, i32)> {
    let mut m = Vec::new();
    for deg in 1..=d as i32 {
        for a in (0..=deg).rev() {
            m.push((a, deg - a));
        }
    }
    m
}

/// x^k for k >= 0 (0 for k < 0), by the same products as `powi` (repeated squaring), so the
/// values do not depend on which of the two the compiler was given.
fn pw(x: f64, k: i32) -> f64 {
    match k {
        ..=-1 => 0.0,
        0 => 1.0,
        1 => x,
        2 => x * x,
        3 => x * (x * x),
        _ => x.powi(k),
    }
}

/// Value of n^a t^b at (n, t): the first entry of [`mono`].
fn mono_value(a: i32, b: i32, n: f64, t: f64) -> f64 {
    pw(n, a) * pw(t, b)
}

/// Value, first and second derivatives of n^a t^b at (n, t).
fn mono(a: i32, b: i32, n: f64, t: f64) -> [f64; 6] {
    let (af, bf) = (a as f64, b as f64);
    [
        pw(n, a) * pw(t, b),
        af * pw(n, a - 1) * pw(t, b),
        bf * pw(n, a) * pw(t, b - 1),
        af * (af - 1.0) * pw(n, a - 2) * pw(t, b),
        bf * (bf - 1.0) * pw(n, a) * pw(t, b - 2),
        af * bf * pw(n, a - 1) * pw(t, b - 1),
    ]
}

/// Weight of a data node at distance `d` cells: smooth, falling to a tenth at the reach.
fn data_weight(d: f64, reach: f64) -> f64 {
    (-2.3 * (d / reach).powi(2)).exp()
}

/// Weight of an exact condition relative to the node data.
const EXACT: f64 = 30.0;

/// Local coordinates (n, t) of a point, in cells.
fn local(f: &Frame, h: f64, p: Point) -> (f64, f64) {
    let d = [p[0] - f.at[0], p[1] - f.at[1]];
    let t = f.tangent();
    (
        (d[0] * f.normal[0] + d[1] * f.normal[1]) / h,
        (d[0] * t[0] + d[1] * t[1]) / h,
    )
}

/// Coefficients of the field operator `h^2 (phi_nn + phi_tt + [axi] phi_r / r)` applied to
/// each monomial at local point (n, t), and whether the point is usable (r > 0 or on the
/// axis, where `phi_r / r` becomes `phi_rr`).
fn field_operator(f: &Frame, h: f64, mode: Mode, ms: &[(i32, i32)], n: f64, t: f64) -> Vec<f64> {
    let tg = f.tangent();
    let r = f.at[0] + h * (n * f.normal[0] + t * tg[0]);
    ms.iter()
        .map(|&(a, b)| {
            let v = mono(a, b, n, t);
            let lap = v[3] + v[4];
            if mode == Mode::Axisymmetric {
                // e_r in local components: (N_r, T_r).
                let (nr, tr) = (f.normal[0], tg[0]);
                if r.abs() <= 1e-9 * h {
                    lap + v[3] * nr * nr + 2.0 * v[5] * nr * tr + v[4] * tr * tr
                } else {
                    lap + h * (v[1] * nr + v[2] * tr) / r
                }
            } else {
                lap
            }
        })
        .collect()
}

/// Collocation points of the field equation, local cells, for a fit of degree d on the side
/// `sign` of the surface (+1 the normal's side).
fn collocation(d: usize, sign: f64) -> Vec<(f64, f64)> {
    match d {
        0..=2 => vec![(0.0, 0.0)],
        _ => vec![(0.0, 0.0), (sign, 0.0), (0.0, 1.0), (0.0, -1.0)],
    }
}

/// The field at a conductor (or fixed-side) surface point. `None` when the fit is not
/// determined.
pub fn conductor_field(
    lat: &Lattice,
    frame: &Frame,
    across: &Across,
    params: &FitParams,
) -> Option<[f64; 2]> {
    let Across::Conductor {
        potential,
        material,
        eps,
        rho,
        surface_points,
    } = across
    else {
        return None;
    };
    let g = lat.grid;
    let h = g.spacing_at(frame.at);
    for d in (1..=params.degree).rev() {
        let mut ms = monomials(d);
        if params.anchor != Anchor::Exact {
            ms.push((0, 0));
        }
        let mut lsq = Lsq::new(ms.len());
        let reach = params.radius_cells;
        let mut data = 0;
        let step = params.line_step_cells * h;
        for_nodes_near(g, frame.at, reach * h, step, |p, x| {
            if lat.conductor[p] != NO_CONDUCTOR || lat.material[p] != *material {
                return;
            }
            let (n, t) = local(frame, h, x);
            // Nodes behind the surface belong to another part of the free space.
            if n < -0.5 * frame.curvature.max(0.0) * h * t * t - 0.05 {
                return;
            }
            let w = data_weight(n.hypot(t), reach);
            lsq.row(
                ms.iter().map(|&(a, b)| mono_value(a, b, n, t)),
                lat.phi[p] - potential,
                w,
            );
            data += 1;
        });
        if data < ms.len() {
            continue;
        }
        for q in surface_points
            .iter()
            .filter(|_| params.anchor != Anchor::Free)
        {
            let (n, t) = local(frame, h, *q);
            if n.hypot(t) <= reach {
                let row = ms
                    .iter()
                    .map(|&(a, b)| {
                        if (a, b) == (0, 0) {
                            0.0
                        } else {
                            mono_value(a, b, n, t)
                        }
                    })
                    .collect::<Vec<_>>();
                lsq.row(row, 0.0, EXACT * data_weight(n.hypot(t), reach));
            }
        }
        // Along the surface: a_t = 0 and c_tt = kappa a_n / 2 (cells).
        let kh = frame.curvature * h;
        lsq.row(ms.iter().map(|&m| f64::from(m == (0, 1))), 0.0, EXACT);
        if d >= 2 {
            lsq.row(
                ms.iter().map(|&m| {
                    if m == (0, 2) {
                        1.0
                    } else if m == (1, 0) {
                        -0.5 * kh
                    } else {
                        0.0
                    }
                }),
                0.0,
                EXACT,
            );
            let src = -rho * h * h / (EPS0 * eps);
            for (n, t) in collocation(d, 1.0) {
                lsq.row(field_operator(frame, h, lat.mode, &ms, n, t), src, EXACT);
            }
        }
        if let Some(u) = lsq.solve() {
            let tg = frame.tangent();
            let (an, at) = (u[0], u[1]);
            return Some([
                -(an * frame.normal[0] + at * tg[0]) / h,
                -(an * frame.normal[1] + at * tg[1]) / h,
            ]);
        }
    }
    None
}

/// The field on both sides of a dielectric interface point: (side 1, side 2), V/m.
pub fn interface_field(
    lat: &Lattice,
    frame: &Frame,
    across: &Across,
    params: &FitParams,
) -> Option<([f64; 2], [f64; 2])> {
    let Across::Interface { material, eps, rho } = across else {
        return None;
    };
    let g = lat.grid;
    let h = g.spacing_at(frame.at);
    let d = params.interface_degree.max(2);
    // Unknowns: phi_s, a_t, a_n1, then the monomials of degree >= 2 of side 1 and side 2.
    let high: Vec<(i32, i32)> = monomials(d)
        .into_iter()
        .filter(|m| m.0 + m.1 >= 2)
        .collect();
    let nh = high.len();
    let cols = 3 + 2 * nh;
    let ratio = eps[0] / eps[1];
    let value_row = |side: usize, n: f64, t: f64, row: &mut [f64]| {
        row[0] = 1.0;
        row[1] = t;
        row[2] = if side == 0 { n } else { ratio * n };
        for (k, &(a, b)) in high.iter().enumerate() {
            row[3 + side * nh + k] = mono_value(a, b, n, t);
        }
    };
    let mut lsq = Lsq::new(cols);
    let reach = params.radius_cells;
    let mut count = [0usize; 2];
    let step = params.line_step_cells * h;
    for_nodes_near(g, frame.at, reach * h, step, |p, x| {
        if lat.conductor[p] != NO_CONDUCTOR {
            return;
        }
        let (n, t) = local(frame, h, x);
        // Which side of the curved interface the node lies on.
        let side = usize::from(n + 0.5 * frame.curvature * h * t * t > 0.0);
        if lat.material[p] != material[side] {
            return;
        }
        let w = data_weight(n.hypot(t), reach);
        lsq.row_with(lat.phi[p], w, |row| value_row(side, n, t, row));
        count[side] += 1;
    });
    if count[0] < nh + 2 || count[1] < nh + 2 {
        return None;
    }
    let kh = frame.curvature * h;
    let idx =
        |side: usize, m: (i32, i32)| 3 + side * nh + high.iter().position(|&x| x == m).unwrap();
    // Potential continuous along the curve: c_tt1 - a_n1 kh/2 = c_tt2 - a_n2 kh/2.
    let mut row = vec![0.0; cols];
    row[idx(0, (0, 2))] = 1.0;
    row[idx(1, (0, 2))] = -1.0;
    row[2] = -0.5 * kh + 0.5 * kh * ratio;
    lsq.row(row, 0.0, EXACT);
    // Normal flux continuous along the curve: eps1 (c_nt1 + kh a_t) = eps2 (c_nt2 + kh a_t).
    let mut row = vec![0.0; cols];
    row[idx(0, (1, 1))] = eps[0];
    row[idx(1, (1, 1))] = -eps[1];
    row[1] = kh * (eps[0] - eps[1]);
    lsq.row(row, 0.0, EXACT / eps[0].max(eps[1]));
    for side in 0..2 {
        let src = -rho[side] * h * h / (EPS0 * eps[side]);
        let sign = if side == 0 { -1.0 } else { 1.0 };
        let mut ms = vec![(0, 1), (1, 0)];
        ms.extend(&high);
        for (n, t) in collocation(d, sign) {
            let op = field_operator(frame, h, lat.mode, &ms, n, t);
            let mut row = vec![0.0; cols];
            row[1] = op[0];
            row[2] = if side == 0 { op[1] } else { ratio * op[1] };
            for k in 0..nh {
                row[3 + side * nh + k] = op[2 + k];
            }
            lsq.row(row, src, EXACT);
        }
    }
    let u = lsq.solve()?;
    let tg = frame.tangent();
    let e = |an: f64| {
        [
            -(an * frame.normal[0] + u[1] * tg[0]) / h,
            -(an * frame.normal[1] + u[1] * tg[1]) / h,
        ]
    };
    Some((e(u[2]), e(ratio * u[2])))
}

/// The field at a surface point of either kind.
pub fn field_at(
    lat: &Lattice,
    frame: &Frame,
    across: &Across,
    params: &FitParams,
) -> Option<SurfaceField> {
    match across {
        Across::Conductor { .. } => {
            conductor_field(lat, frame, across, params).map(SurfaceField::Conductor)
        }
        Across::Interface { .. } => {
            interface_field(lat, frame, across, params).map(|(a, b)| SurfaceField::Interface(a, b))
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    /// A lattice of `n` x `n` nodes of spacing h around the origin carrying `f`.
    fn lattice(n: usize, h: f64, f: impl Fn(f64, f64) -> f64) -> (Grid, Vec<f64>) {
        let o = -0.5 * h * (n - 1) as f64;
        let g = Grid::regular([o, o], [h, h], [n, n]);
        let phi = (0..g.len()).map(|p| f(g.x(p % n), g.y(p / n))).collect();
        (g, phi)
    }

    #[test]
    fn conductor_fit_reproduces_a_harmonic_cubic_exactly() {
        // phi = 3 y + x y + (y^3 - 3 x^2 y) / 7 is harmonic and vanishes on y = 0: with the
        // surface there and its normal +y the fit returns E = -grad phi exactly.
        let conductor = vec![NO_CONDUCTOR; 21 * 21];
        let material = vec![0u16; 21 * 21];
        let f = |x: f64, y: f64| 3.0 * y + x * y + (y.powi(3) - 3.0 * x * x * y) / 7.0;
        let (g, phi) = lattice(21, 0.1, f);
        let lat = Lattice {
            grid: &g,
            mode: Mode::Planar,
            phi: &phi,
            conductor: &conductor,
            material: &material,
        };
        let across = Across::Conductor {
            potential: 0.0,
            material: 0,
            eps: 1.0,
            rho: 0.0,
            surface_points: vec![[0.1, 0.0], [-0.1, 0.0]],
        };
        let e = conductor_field(
            &lat,
            &Frame {
                at: [0.0, 0.0],
                normal: [0.0, 1.0],
                curvature: 0.0,
            },
            &across,
            &FitParams::default(),
        )
        .unwrap();
        assert!(
            (e[0] - 0.0).abs() < 1e-9 && (e[1] + 3.0).abs() < 1e-9,
            "{e:?}"
        );
        // Off the origin on the same surface: grad phi = (0, 3 + x - 3 x^2 / 7).
        let x = 0.137;
        let e = conductor_field(
            &lat,
            &Frame {
                at: [x, 0.0],
                normal: [0.0, 1.0],
                curvature: 0.0,
            },
            &across,
            &FitParams::default(),
        )
        .unwrap();
        let want = -(3.0 + x - 3.0 * x * x / 7.0);
        assert!(
            e[0].abs() < 1e-9 && (e[1] - want).abs() < 1e-9,
            "{e:?} want {want}"
        );
    }

    #[test]
    fn interface_fit_reproduces_a_refracted_linear_field() {
        // Interface y = 0.013, eps 4 below and 1 above: phi = E_t x + a y below and
        // E_t x + 4 a y (shifted to be continuous) above carries equal normal flux.
        let (yi, a, et) = (0.013, 0.5, -0.7);
        let f = move |x: f64, y: f64| {
            if y < yi {
                et * x + a * (y - yi)
            } else {
                et * x + 4.0 * a * (y - yi)
            }
        };
        let (g, phi) = lattice(21, 0.1, f);
        let conductor = vec![NO_CONDUCTOR; g.len()];
        let material: Vec<u16> = (0..g.len()).map(|p| u16::from(g.y(p / 21) > yi)).collect();
        let lat = Lattice {
            grid: &g,
            mode: Mode::Planar,
            phi: &phi,
            conductor: &conductor,
            material: &material,
        };
        let across = Across::Interface {
            material: [0, 1],
            eps: [4.0, 1.0],
            rho: [0.0, 0.0],
        };
        let frame = Frame {
            at: [0.05, yi],
            normal: [0.0, 1.0],
            curvature: 0.0,
        };
        let (e1, e2) = interface_field(&lat, &frame, &across, &FitParams::default()).unwrap();
        assert!(
            (e1[0] + et).abs() < 1e-9 && (e1[1] + a).abs() < 1e-9,
            "{e1:?}"
        );
        assert!(
            (e2[0] + et).abs() < 1e-9 && (e2[1] + 4.0 * a).abs() < 1e-9,
            "{e2:?}"
        );
    }

    #[test]
    fn a_point_without_free_nodes_has_no_field() {
        let (g, phi) = lattice(5, 0.1, |_, _| 0.0);
        let conductor = vec![0u16; g.len()];
        let material = vec![0u16; g.len()];
        let lat = Lattice {
            grid: &g,
            mode: Mode::Planar,
            phi: &phi,
            conductor: &conductor,
            material: &material,
        };
        let across = Across::Conductor {
            potential: 0.0,
            material: 0,
            eps: 1.0,
            rho: 0.0,
            surface_points: vec![],
        };
        let frame = Frame {
            at: [0.0, 0.0],
            normal: [0.0, 1.0],
            curvature: 0.0,
        };
        assert!(conductor_field(&lat, &frame, &across, &FitParams::default()).is_none());
    }
}
