//! Open sides: the far-field (asymptotic) boundary condition that lets the field continue
//! into unbounded space beyond a side of the box.
//!
//! Condition: on an open side the potential is taken to fall off like the leading far-field
//! term of a charge-neutral system seen from a centre `c`, a function homogeneous of degree
//! -1 in `r = x - c` (the 2-D dipole `p.r/|r|^2`; in axisymmetric mode the 3-D monopole
//! `Q/|r|`). Such a function satisfies `r.grad(phi) = -phi`; keeping only the normal part of
//! the gradient gives the first-order asymptotic (Robin) condition of Bayliss and Turkel
//! type (A. Bayliss, E. Turkel, Comm. Pure Appl. Math. 33 (1980) 707-725):
//!
//! `d(phi)/dn + kappa * phi = 0`, with `kappa = (r.n) / |r|^2` (1/m, n the outward normal).
//!
//! Discretisation: the flux leaving a boundary node's control volume through its face on the
//! side is `eps0 * eps * area * kappa * phi`, the flux into a grounded surface at distance
//! `1/kappa` beyond the node. So each face becomes an ordinary [`Link`] to the side's target
//! at 0 V with weight `eps * area * kappa` and `theta = 1 / (kappa * h)`: the term lands on
//! the diagonal only, the right-hand side gets nothing, the operator stays symmetric and
//! definite, reactions stay charges (the open side's "charge" is the charge at infinity
//! beyond it, minus the flux that leaves through it) and Gauss's law over the box keeps
//! holding. The same links make a region touching an open side anchored.
//!
//! Which far field: the lowest harmonic the mirror sides allow (see [`far_field`]); where a
//! planar design is open on all four sides the dipole's direction is not known, and each side
//! instead takes a condition with a tangential term, `d(phi)/dn + kappa phi -
//! d/dt(beta d(phi)/dt) = 0`, exact for 2-D dipoles of every direction (see
//! [`tangential_couplings`]); its tangential term is a symmetric coupling between neighbouring
//! boundary nodes, so the operator stays symmetric and definite there too.
//!
//! The centre: the middle of the bounding box of the conductors and charges. Along an axis
//! with one open side and a mirror opposite (ground, fixed, symmetry or the axis), the centre
//! moves onto the mirror: the images there (odd in a grounded plane, even in a symmetry
//! plane) centre the far field on it. In axisymmetric mode the centre is on the axis.
//!
//! Invariants: `kappa >= 0` (faces with `r.n <= 0` get no term); the area is supplied by
//! the caller, so planar per-unit-depth lengths and axisymmetric surfaces of revolution use
//! the same code; a face term is a [`Link`] whose target is the side's target.

use crate::design::{Charge, Design, Mode, Point, Shape, Side};
use crate::grid::Grid;
use crate::operator::{Dir, Link, SideId};

/// The outward normal of a side and the direction a face link points in.
pub fn outward(side: SideId) -> Dir {
    match side {
        SideId::Left => Dir::West,
        SideId::Right => Dir::East,
        SideId::Bottom => Dir::South,
        SideId::Top => Dir::North,
    }
}

/// The far-field model the open sides assume: `phi = prod_{a in odd} r_a / |r|^m` about a
/// centre, with `m = 2 * |odd|` in a plane (1 for the radial model) and `m = 3` for the
/// axial dipole of a body of revolution (1 for its monopole).
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct FarField {
    /// Centre of the expansion, m.
    pub centre: Point,
    /// Coordinates the field is odd in (x, y): odd images in a grounded side.
    pub odd: [bool; 2],
    /// Decay exponent of |r| in the model's denominator.
    pub m: f64,
    /// Planar design open on all four sides: the far field is a dipole of unknown direction,
    /// and each side takes the condition with a tangential term that is exact for every
    /// direction (see [`tangential_couplings`]) instead of the radial model.
    pub any_direction: bool,
}

/// How a pair of opposite sides constrains the far field along their axis.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
enum Parity {
    /// No mirror facing an open side.
    Free,
    /// A grounded (fixed) side faces an open one: odd images.
    Odd,
    /// A symmetry side (or the axis) faces an open one: even images.
    Even,
}

fn parity(low: Side, high: Side) -> Parity {
    let mirror = |s: Side| match s {
        Side::Open => None,
        Side::Symmetry | Side::Axis => Some(Parity::Even),
        Side::Ground | Side::Fixed(_) => Some(Parity::Odd),
    };
    match (low, high) {
        (Side::Open, s) | (s, Side::Open) => mirror(s).unwrap_or(Parity::Free),
        _ => Parity::Free,
    }
}

/// The far-field model of a design (see the module notes for the rules).
///
/// Planar: the lowest harmonic of a charge-neutral system that the mirrors allow. A grounded
/// side facing an open one makes the field odd across it (a dipole normal to it, or the
/// quadrupole `xy/r^4` when both axes have one); a symmetry side facing an open one makes
/// the dipole parallel to it; with no such constraint the radial model `1/|r|` is used.
/// Axisymmetric: the monopole `1/|r|`, or the axial dipole `z/|r|^3` over a grounded side.
pub fn far_field(design: &Design) -> FarField {
    let s = &design.sides;
    let px = parity(s.left, s.right);
    let py = parity(s.bottom, s.top);
    let centre = centre(design);
    let (odd, m) = if design.mode == Mode::Axisymmetric {
        if py == Parity::Odd {
            ([false, true], 3.0)
        } else {
            ([false, false], 1.0)
        }
    } else {
        match (px, py) {
            (Parity::Odd, Parity::Odd) => ([true, true], 4.0),
            (Parity::Odd, _) | (Parity::Free, Parity::Even) => ([true, false], 2.0),
            (_, Parity::Odd) | (Parity::Even, Parity::Free) => ([false, true], 2.0),
            _ => ([false, false], 1.0),
        }
    };
    let all_open = [s.left, s.right, s.bottom, s.top]
        .iter()
        .all(|&side| side == Side::Open);
    FarField {
        centre,
        odd,
        m,
        any_direction: design.mode == Mode::Planar && all_open,
    }
}

/// The far-field centre of a design, m: the middle of the bounding box of the conductors and
/// charges (the box centre without any), moved onto a mirror side that faces an open side,
/// and onto the axis in axisymmetric mode.
pub fn centre(design: &Design) -> Point {
    let d = &design.domain;
    let mut lo = [f64::INFINITY; 2];
    let mut hi = [f64::NEG_INFINITY; 2];
    let mut grow = |p: Point| {
        for a in 0..2 {
            lo[a] = lo[a].min(p[a]);
            hi[a] = hi[a].max(p[a]);
        }
    };
    for c in &design.conductors {
        shape_corners(&c.shape).into_iter().for_each(&mut grow);
    }
    for q in &design.charges {
        match q {
            Charge::Region { shape, .. } => shape_corners(shape).into_iter().for_each(&mut grow),
            Charge::Concentrated { at, .. } => grow(*at),
        }
    }
    let extent = [d.x, d.y];
    let mut c = [0.0; 2];
    for a in 0..2 {
        c[a] = if lo[a] <= hi[a] {
            0.5 * (lo[a] + hi[a])
        } else {
            0.5 * (extent[a][0] + extent[a][1])
        };
        c[a] = c[a].clamp(extent[a][0], extent[a][1]);
    }
    let s = &design.sides;
    let open = |side: Side| side == Side::Open;
    for (a, (low, high)) in [(s.left, s.right), (s.bottom, s.top)]
        .into_iter()
        .enumerate()
    {
        if open(high) && !open(low) {
            c[a] = extent[a][0];
        } else if open(low) && !open(high) {
            c[a] = extent[a][1];
        }
    }
    if design.mode == Mode::Axisymmetric {
        c[0] = 0.0;
    }
    c
}

/// Corners of a shape's bounding box.
fn shape_corners(shape: &Shape) -> Vec<Point> {
    match shape {
        Shape::Rect { x, y, .. } => vec![[x[0], y[0]], [x[1], y[1]]],
        Shape::Circle { center, radius } => vec![
            [center[0] - radius, center[1] - radius],
            [center[0] + radius, center[1] + radius],
        ],
        Shape::Ring { center, outer, .. } => vec![
            [center[0] - outer, center[1] - outer],
            [center[0] + outer, center[1] + outer],
        ],
        Shape::Polygon { outer, .. } => outer.clone(),
        Shape::Polyline(pts) => pts.clone(),
    }
}

impl FarField {
    /// The Robin coefficient `kappa = -(d phi/dn) / phi` of the model at `at` on a side with
    /// outward unit normal `normal`, 1/m: `m (r.n)/|r|^2 - sum_{a odd} n_a / r_a`. Clamped
    /// at zero (a no-flux face) where the model's flux would enter the box or `phi` vanishes.
    pub fn coefficient(&self, at: Point, normal: [f64; 2]) -> f64 {
        let r = [at[0] - self.centre[0], at[1] - self.centre[1]];
        let rn = r[0] * normal[0] + r[1] * normal[1];
        let r2 = r[0] * r[0] + r[1] * r[1];
        if r2 == 0.0 {
            return 0.0;
        }
        let mut k = self.m * rn / r2;
        for a in 0..2 {
            if self.odd[a] && normal[a] != 0.0 {
                if r[a] == 0.0 {
                    return 0.0;
                }
                k -= normal[a] / r[a];
            }
        }
        k.max(0.0)
    }
}

/// The far-field links of every unknown node on an open side, sorted by node.
///
/// `sides` in [`SideId::ALL`] order; `target(s)` is the side's target index; `eps(p)` the
/// relative permittivity at node p; `area(s, i, j)` the area of node (i, j)'s control-volume
/// face on side s (planar: its length, m; axisymmetric: its surface of revolution, m^2), so
/// the link weight is in the operator's units (planar dimensionless, axisymmetric m).
pub fn links(
    grid: &Grid,
    sides: &[Side; 4],
    model: &FarField,
    unknown: &[bool],
    target: impl Fn(SideId) -> u32,
    eps: impl Fn(usize) -> f64,
    area: impl Fn(SideId, usize, usize) -> f64,
) -> Vec<Link> {
    let (nx, ny) = (grid.nx, grid.ny);
    let mut out = Vec::new();
    let mut face = |s: SideId, i: usize, j: usize| {
        let p = grid.idx(i, j);
        if sides[s as usize] != Side::Open || !unknown[p] {
            return;
        }
        let dir = outward(s);
        let at = [grid.x(i), grid.y(j)];
        let kappa = if model.any_direction {
            let side = SideLine::new(grid, model.centre, s);
            side.kappa(side.tangent(at))
        } else {
            model.coefficient(at, dir.unit())
        };
        if kappa <= 0.0 {
            return;
        }
        let h = match s {
            SideId::Left | SideId::Right => grid.hx,
            SideId::Bottom | SideId::Top => grid.hy,
        };
        let e = eps(p);
        out.push(Link {
            node: p as u32,
            target: target(s),
            weight: e * area(s, i, j) * kappa,
            dir,
            theta: 1.0 / (kappa * h),
            eps: e,
        });
    };
    for j in 0..ny {
        for i in 0..nx {
            if j == 0 {
                face(SideId::Bottom, i, j);
            }
            if j + 1 == ny {
                face(SideId::Top, i, j);
            }
            if i == 0 {
                face(SideId::Left, i, j);
            }
            if i + 1 == nx {
                face(SideId::Right, i, j);
            }
        }
    }
    out
}

/// One straight open side seen from the far-field centre, for the condition exact for
/// 2-D dipoles of every direction:
///
/// `d(phi)/dn + kappa phi - d/dt (beta d(phi)/dt) = 0`,
/// `beta = r^2 (1 - 2 c r^2) / (2 d)`, `kappa = 2 c r^2 / d`,
///
/// with `d` the distance from the centre to the side's line, `t` the coordinate along it
/// (0 at the foot of the perpendicular), `r^2 = d^2 + t^2`. Both `x/r^2` and `y/r^2` satisfy
/// it for any constant `c` (direct substitution); `c = 1 / (2 r_max^2)`, with `r_max` the
/// distance to the side's farther corner, keeps `beta >= 0` on the side and makes it vanish
/// at that corner, and `kappa > 0` anchors the potential. The conservative form of the
/// tangential term makes it a symmetric, non-negative coupling between neighbouring
/// boundary nodes.
struct SideLine {
    /// Distance from the centre to the side's line, m.
    d: f64,
    /// The centre's coordinate along the side, m.
    t0: f64,
    /// Along x (bottom, top) rather than y.
    along_x: bool,
    /// `2 c = 1 / r_max^2`, 1/m^2.
    two_c: f64,
}

impl SideLine {
    fn new(grid: &Grid, centre: Point, s: SideId) -> SideLine {
        let (x1, y1) = (grid.x1(), grid.y1());
        let (d, t0, ends, along_x) = match s {
            SideId::Left => (centre[0] - grid.x0, centre[1], [grid.y0, y1], false),
            SideId::Right => (x1 - centre[0], centre[1], [grid.y0, y1], false),
            SideId::Bottom => (centre[1] - grid.y0, centre[0], [grid.x0, x1], true),
            SideId::Top => (y1 - centre[1], centre[0], [grid.x0, x1], true),
        };
        let d = d.abs();
        let far = (ends[0] - t0).abs().max((ends[1] - t0).abs());
        SideLine {
            d,
            t0,
            along_x,
            two_c: 1.0 / (d * d + far * far),
        }
    }

    /// Coordinate along the side of a point on it, relative to the centre's foot, m.
    fn tangent(&self, at: Point) -> f64 {
        (if self.along_x { at[0] } else { at[1] }) - self.t0
    }

    fn r2(&self, t: f64) -> f64 {
        self.d * self.d + t * t
    }

    fn kappa(&self, t: f64) -> f64 {
        if self.d > 0.0 {
            self.two_c * self.r2(t) / self.d
        } else {
            0.0
        }
    }

    fn beta(&self, t: f64) -> f64 {
        if self.d > 0.0 {
            let r2 = self.r2(t);
            (r2 * (1.0 - self.two_c * r2) / (2.0 * self.d)).max(0.0)
        } else {
            0.0
        }
    }
}

/// The tangential couplings of the any-direction far-field condition (planar designs open on
/// every side): `(p, q, weight)` for neighbouring unknown nodes p < q on an open side, with
/// weight `eps * beta(t_mid) / h_t` (dimensionless, like the operator's planar weights), where
/// `eps(p, q)` is the relative permittivity between the two nodes. Empty for other models.
pub fn tangential_couplings(
    grid: &Grid,
    model: &FarField,
    unknown: &[bool],
    eps: impl Fn(usize, usize) -> f64,
) -> Vec<(usize, usize, f64)> {
    let mut out = Vec::new();
    if !model.any_direction {
        return out;
    }
    let (nx, ny) = (grid.nx, grid.ny);
    for s in SideId::ALL {
        let line = SideLine::new(grid, model.centre, s);
        let nodes: Vec<usize> = match s {
            SideId::Left => (0..ny).map(|j| grid.idx(0, j)).collect(),
            SideId::Right => (0..ny).map(|j| grid.idx(nx - 1, j)).collect(),
            SideId::Bottom => (0..nx).map(|i| grid.idx(i, 0)).collect(),
            SideId::Top => (0..nx).map(|i| grid.idx(i, ny - 1)).collect(),
        };
        let h = if line.along_x { grid.hx } else { grid.hy };
        for w in nodes.windows(2) {
            let (p, q) = (w[0], w[1]);
            if !(unknown[p] && unknown[q]) {
                continue;
            }
            let at = |n: usize| [grid.x(n % nx), grid.y(n / nx)];
            let t = 0.5 * (line.tangent(at(p)) + line.tangent(at(q)));
            let weight = eps(p, q) * line.beta(t) / h;
            if weight > 0.0 {
                out.push((p, q, weight));
            }
        }
    }
    out
}

#[cfg(test)]
mod tests {
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
                    });
                }
            }
        }
        Raster {
            grid: *grid,
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
                g.hx
            } else {
                g.hy
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
            Box::new(move |p: Point| {
                (p[0] - c[0]) / ((p[0] - c[0]).powi(2) + (p[1] - c[1]).powi(2))
            }) as Box<dyn Fn(Point) -> f64>,
            Box::new(move |p: Point| {
                (p[1] - c[1]) / ((p[0] - c[0]).powi(2) + (p[1] - c[1]).powi(2))
            }),
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
        assert!(line.beta(line.tangent([x, grid.y0])).abs() < 1e-12);
        assert!(line.beta(line.tangent([x, 0.0])) > 0.0);
    }
}
