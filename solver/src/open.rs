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
use crate::links::{Dir, Link, SideId};

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
        c.shapes().flat_map(shape_corners).for_each(&mut grow);
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
        // The spacing normal to the side at its boundary cell.
        let h = match s {
            SideId::Left => grid.dx(0),
            SideId::Right => grid.dx(nx - 2),
            SideId::Bottom => grid.dy(0),
            SideId::Top => grid.dy(ny - 2),
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
            SideId::Left => (centre[0] - grid.x0(), centre[1], [grid.y0(), y1], false),
            SideId::Right => (x1 - centre[0], centre[1], [grid.y0(), y1], false),
            SideId::Bottom => (centre[1] - grid.y0(), centre[0], [grid.x0(), x1], true),
            SideId::Top => (y1 - centre[1], centre[0], [grid.x0(), x1], true),
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
        for (k, w) in nodes.windows(2).enumerate() {
            let (p, q) = (w[0], w[1]);
            if !(unknown[p] && unknown[q]) {
                continue;
            }
            let h = if line.along_x { grid.dx(k) } else { grid.dy(k) };
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
mod tests;
