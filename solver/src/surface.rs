//! Surfaces of a solved design sampled along their exact outlines: conductor surfaces, fixed
//! sides and dielectric interfaces, with the field at each sample from
//! [`crate::surface_field`].
//!
//! Samples lie at the midpoints of stretches of each outline piece about half the local cell
//! long (equal stretches on a uniform grid), so their number grows with the cells a piece
//! crosses; each stands for the length of its stretch. Only the parts of an outline inside the
//! domain count (in axisymmetric mode those at r >= 0). A conductor's outline is sampled where
//! free space lies in front of it (not where it touches another conductor, a side or another
//! piece of itself; where two pieces' outlines run together only the first is sampled); a
//! dielectric outline where the materials on its two sides differ (not where a later
//! dielectric or a conductor covers it). An interface gives two samples at each point, one per
//! side, each with its material and the field in it; a conductor or a fixed side gives one,
//! and a zero-thickness conductor (a polyline) one on each of its two faces.
//!
//! Invariants: samples are ordered by curve, then by position along it, so that maxima along
//! a curve can be read off neighbours; `curve` numbers one side of one loop of one outline
//! (or one side of the domain); every field is SI.

use crate::design::{Charge, Design, Mode, Point, Shape};
use crate::geometry::{outline, Outline, Piece};
use crate::grid::Grid;
use crate::operator::{Operator, SideId};
use crate::post::FieldEval;
use crate::surface_field::{self, Across, Anchor, FitParams, Frame, Lattice, SurfaceField};

mod near;
pub use near::near_readings;

/// What a surface sample lies on.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub enum SurfaceKind {
    /// The surface of conductor k.
    Conductor(usize),
    /// A fixed-potential side of the domain.
    Side(SideId),
    /// A dielectric interface, seen from one side.
    Interface,
}

/// One sample of a surface.
#[derive(Clone, Debug, PartialEq)]
pub struct SurfaceSample {
    /// Position on the surface, m.
    pub x: f64,
    /// Position on the surface, m.
    pub y: f64,
    /// Unit normal into the material whose field this is.
    pub normal: Point,
    /// What the sample lies on.
    pub kind: SurfaceKind,
    /// Curve number: samples of one curve are consecutive and ordered along it.
    pub curve: usize,
    /// Position along the curve, m.
    pub arc: f64,
    /// The curve is a closed loop sampled all the way round: its last sample neighbours its
    /// first. False for the sides of the domain and for loops of which a part was left out
    /// (outside the domain, covered, or with the same material on both sides).
    pub whole_loop: bool,
    /// Length of surface the sample stands for, m.
    pub length: f64,
    /// Material on the sample's side (index as in [`Raster::material`]).
    pub material: u16,
    /// Field in that material at the surface, V/m; NaN where the fit is not determined.
    pub field: [f64; 2],
    /// Curvature of the surface, 1/m: positive where it bulges into the sample's material
    /// (a convex electrode), negative where it curves away from it.
    pub curvature: f64,
}

impl SurfaceSample {
    /// |E|, V/m.
    pub fn magnitude(&self) -> f64 {
        self.field[0].hypot(self.field[1])
    }

    /// Normal component of the field (along [`SurfaceSample::normal`]), V/m.
    pub fn normal_field(&self) -> f64 {
        self.field[0] * self.normal[0] + self.field[1] * self.normal[1]
    }
}

/// Sampling settings.
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct SurfaceParams {
    /// Samples per cell along a curve (about).
    pub per_cell: f64,
    /// The fit.
    pub fit: FitParams,
}

impl Default for SurfaceParams {
    fn default() -> Self {
        SurfaceParams {
            per_cell: 2.0,
            fit: FitParams::default(),
        }
    }
}

/// The material at a point: `None` inside a conductor (or outside the domain).
struct Materials<'a> {
    design: &'a Design,
    /// Per conductor, the outlines of its pieces.
    conductors: Vec<Vec<Outline>>,
    dielectrics: Vec<Outline>,
    charges: Vec<(Outline, f64)>,
}

impl<'a> Materials<'a> {
    fn new(design: &'a Design) -> Self {
        let out = |s: &Shape| outline(s).expect("a validated design has valid shapes");
        Materials {
            design,
            conductors: design
                .conductors
                .iter()
                .map(|c| c.shapes().map(out).collect())
                .collect(),
            dielectrics: design.dielectrics.iter().map(|d| out(&d.shape)).collect(),
            charges: design
                .charges
                .iter()
                .filter_map(|c| match c {
                    Charge::Region { density, shape, .. } => Some((out(shape), *density)),
                    Charge::Concentrated { .. } => None,
                })
                .collect(),
        }
    }

    fn inside_domain(&self, p: Point) -> bool {
        let d = &self.design.domain;
        let lo = if self.design.mode == Mode::Axisymmetric {
            0.0
        } else {
            d.x[0]
        };
        p[0] >= lo.max(d.x[0]) && p[0] <= d.x[1] && p[1] >= d.y[0] && p[1] <= d.y[1]
    }

    fn material(&self, p: Point) -> Option<u16> {
        if !self.inside_domain(p) || self.conductors.iter().flatten().any(|o| o.contains(p)) {
            return None;
        }
        let m = self.dielectrics.iter().rposition(|o| o.contains(p));
        Some(m.map_or(0, |m| m as u16 + 1))
    }

    fn rho(&self, p: Point) -> f64 {
        self.charges
            .iter()
            .filter(|(o, _)| o.contains(p))
            .map(|(_, d)| d)
            .sum()
    }

    fn eps(&self, m: u16) -> f64 {
        crate::material::of(self.design, m).permittivity
    }
}

/// A point of a piece at parameter u in [0, 1], its unit tangent and its curvature (positive
/// when the piece turns left, i.e. towards the filled side).
fn on_piece(piece: &Piece, u: f64) -> (Point, Point, f64) {
    match *piece {
        Piece::Line { a, b } => {
            let d = [b[0] - a[0], b[1] - a[1]];
            let l = d[0].hypot(d[1]);
            (
                [a[0] + u * d[0], a[1] + u * d[1]],
                [d[0] / l, d[1] / l],
                0.0,
            )
        }
        Piece::Arc {
            a,
            center,
            radius,
            ccw,
            ..
        } => {
            let sweep = piece.sweep();
            let a0 = (a[1] - center[1]).atan2(a[0] - center[0]);
            let s = if ccw { 1.0 } else { -1.0 };
            let ang = a0 + s * u * sweep;
            let (sn, cs) = ang.sin_cos();
            (
                [center[0] + radius * cs, center[1] + radius * sn],
                [-s * sn, s * cs],
                s / radius,
            )
        }
    }
}

/// The stretches a piece is sampled in: (parameter of the midpoint, arc length to the
/// midpoint, stretch length), in order along the piece; the stretches tile the piece.
///
/// On a uniform grid the piece is cut into equal stretches no longer than the spacing over
/// `per_cell`. On a graded grid each stretch is at most the spacing where it lies (the
/// smaller of the spacings at its two ends) over `per_cell`, so that the number of stretches
/// grows with the cells the piece crosses, not with its length over the finest cell.
fn stretches(piece: &Piece, g: &Grid, per_cell: f64) -> Vec<(f64, f64, f64)> {
    let len = piece.length();
    if g.is_uniform() {
        let h = (0..=16)
            .map(|k| g.spacing_at(on_piece(piece, k as f64 / 16.0).0))
            .fold(f64::INFINITY, f64::min);
        let m = (len / (h / per_cell)).ceil().max(1.0) as usize;
        return (0..m)
            .map(|s| {
                let u = (s as f64 + 0.5) / m as f64;
                (u, (s as f64 + 0.5) * len / m as f64, len / m as f64)
            })
            .collect();
    }
    let step_at = |t: f64| g.spacing_at(on_piece(piece, (t / len).min(1.0)).0) / per_cell;
    let mut out = Vec::new();
    let mut t = 0.0;
    while t < len {
        // The step is the spacing at the start, shrunk while its far end lies in a finer
        // cell (a graded grid changes spacing by a bounded ratio per cell).
        let mut h = step_at(t);
        for _ in 0..64 {
            let far = step_at((t + h).min(len));
            if far >= h {
                break;
            }
            h = far;
        }
        let half = 0.5 * (len - t);
        let end = if t + h >= len * (1.0 - 1e-12) {
            len
        } else if half < h && step_at(t + half) >= half {
            // No sliver at the end: the rest in two halves, each shorter than a step.
            t + half
        } else {
            t + h
        };
        let mid = 0.5 * (t + end);
        out.push((mid / len, mid, end - t));
        t = end;
    }
    if out.is_empty() {
        out.push((0.5, 0.5 * len, len));
    }
    out
}

/// Samples every surface of a solved design and evaluates the field at each.
pub fn sample(field: &FieldEval, design: &Design, params: &SurfaceParams) -> Vec<SurfaceSample> {
    sample_where(field, design, params, None)
}

/// Samples every surface of a solved design as [`sample`] does, evaluating the field at every
/// conductor sample but at the samples of sides and interfaces only where a reading within
/// the given distance of one of `points` (m, m) can come from them (see [`near_readings`]);
/// the others keep a NaN field. For the coarse study of an error estimate, whose side and
/// interface readings serve only the estimates of the hot spots.
pub fn sample_near(
    field: &FieldEval,
    design: &Design,
    params: &SurfaceParams,
    points: &[(Point, f64)],
) -> Vec<SurfaceSample> {
    sample_where(field, design, params, Some(points))
}

fn sample_where(
    field: &FieldEval,
    design: &Design,
    params: &SurfaceParams,
    near: Option<&[(Point, f64)]>,
) -> Vec<SurfaceSample> {
    let op = field.op;
    let g = &op.grid;
    // Probes step off the surface by a thousandth of the local spacing.
    let stretches = |piece: &Piece| stretches(piece, g, params.per_cell);
    let mats = Materials::new(design);
    let lat = Lattice {
        grid: g,
        mode: design.mode,
        phi: field.phi,
        conductor: &field.raster.conductor,
        material: &field.raster.material,
    };
    let mut out = Vec::new();
    let mut fits = Vec::new();
    let mut curve = 0;
    // Conductors: the outward normal is the right of the direction of travel. A zero-thickness
    // conductor (an open path) has two faces, each sampled as a curve of its own: the right of
    // the direction of travel, then the left.
    // A conductor drawn in pieces is sampled where free space lies in front of a piece (so not
    // where one piece touches or enters another); a stretch where two pieces' outlines run
    // together on the same side is sampled on the first of them only.
    for (k, (q, o)) in mats
        .conductors
        .iter()
        .enumerate()
        .flat_map(|(k, pieces)| pieces.iter().enumerate().map(move |p| (k, p)))
    {
        let earlier = &mats.conductors[k][..q];
        let v = field.values[k];
        let faces: &[f64] = if o.open { &[1.0, -1.0] } else { &[1.0] };
        for &face in faces {
            for lp in &o.loops {
                let mut arc = 0.0;
                let (first, mut whole) = (out.len(), !o.open);
                for piece in lp {
                    let len = piece.length();
                    for (u, mid, step) in stretches(piece) {
                        let (p, t, kappa) = on_piece(piece, u);
                        let normal = [face * t[1], -face * t[0]];
                        let probe = 1e-3 * g.spacing_at(p);
                        let front = [p[0] + probe * normal[0], p[1] + probe * normal[1]];
                        let here = arc + mid;
                        if !mats.inside_domain(p) {
                            whole = false;
                            continue;
                        }
                        let Some(mat) = mats.material(front) else {
                            whole = false;
                            continue;
                        };
                        let back = [p[0] - probe * normal[0], p[1] - probe * normal[1]];
                        if earlier.iter().any(|e| e.contains(back)) {
                            whole = false;
                            continue;
                        }
                        let across = Across::Conductor {
                            potential: v,
                            material: mat,
                            eps: mats.eps(mat),
                            rho: mats.rho(front),
                            // Only a fit that uses the cut points pays for finding them.
                            surface_points: if params.fit.anchor == Anchor::Free {
                                Vec::new()
                            } else {
                                cut_points(op, k, p, params.fit.radius_cells * g.spacing_at(p))
                            },
                        };
                        let frame = Frame {
                            at: p,
                            normal,
                            curvature: face * kappa,
                        };
                        fits.push(Fit::Conductor(out.len(), frame, across));
                        out.push(SurfaceSample {
                            x: p[0],
                            y: p[1],
                            normal,
                            kind: SurfaceKind::Conductor(k),
                            curve,
                            arc: here,
                            whole_loop: false,
                            length: step,
                            material: mat,
                            field: [f64::NAN; 2],
                            curvature: face * kappa,
                        });
                    }
                    arc += len;
                }
                out[first..].iter_mut().for_each(|s| s.whole_loop = whole);
                curve += 1;
            }
        }
    }
    // Fixed sides, the normal pointing into the domain.
    let sides = [
        (
            SideId::Left,
            design.sides.left,
            [g.x0(), g.y0()],
            [g.x0(), g.y1()],
            [1.0, 0.0],
        ),
        (
            SideId::Right,
            design.sides.right,
            [g.x1(), g.y0()],
            [g.x1(), g.y1()],
            [-1.0, 0.0],
        ),
        (
            SideId::Bottom,
            design.sides.bottom,
            [g.x0(), g.y0()],
            [g.x1(), g.y0()],
            [0.0, 1.0],
        ),
        (
            SideId::Top,
            design.sides.top,
            [g.x0(), g.y1()],
            [g.x1(), g.y1()],
            [0.0, -1.0],
        ),
    ];
    for (sid, side, a, b, normal) in sides {
        if side.potential().is_none() {
            continue;
        }
        let v = field.values[op.side_target(sid) as usize];
        let piece = Piece::Line { a, b };
        for (u, mid, step) in stretches(&piece) {
            let (p, _, _) = on_piece(&piece, u);
            let probe = 1e-3 * g.spacing_at(p);
            let front = [p[0] + probe * normal[0], p[1] + probe * normal[1]];
            let Some(mat) = mats.material(front) else {
                continue;
            };
            let across = Across::Conductor {
                potential: v,
                material: mat,
                eps: mats.eps(mat),
                rho: mats.rho(front),
                surface_points: Vec::new(),
            };
            let frame = Frame {
                at: p,
                normal,
                curvature: 0.0,
            };
            fits.push(Fit::Conductor(out.len(), frame, across));
            out.push(SurfaceSample {
                x: p[0],
                y: p[1],
                normal,
                kind: SurfaceKind::Side(sid),
                curve,
                arc: mid,
                whole_loop: false,
                length: step,
                material: mat,
                field: [f64::NAN; 2],
                curvature: 0.0,
            });
        }
        curve += 1;
    }
    // Dielectric interfaces: side 1 behind the outward normal (inside the shape).
    for o in &mats.dielectrics {
        for lp in &o.loops {
            let mut arc = 0.0;
            let mut two: [Vec<SurfaceSample>; 2] = [Vec::new(), Vec::new()];
            let mut pending = Vec::new();
            let mut whole = true;
            for piece in lp {
                let len = piece.length();
                for (u, mid, step) in stretches(piece) {
                    let (p, t, kappa) = on_piece(piece, u);
                    let normal = [t[1], -t[0]];
                    let here = arc + mid;
                    if !mats.inside_domain(p) {
                        whole = false;
                        continue;
                    }
                    let probe = 1e-3 * g.spacing_at(p);
                    let back = [p[0] - probe * normal[0], p[1] - probe * normal[1]];
                    let front = [p[0] + probe * normal[0], p[1] + probe * normal[1]];
                    let (Some(m1), Some(m2)) = (mats.material(back), mats.material(front)) else {
                        whole = false;
                        continue;
                    };
                    if m1 == m2 {
                        whole = false;
                        continue;
                    }
                    let across = Across::Interface {
                        material: [m1, m2],
                        eps: [mats.eps(m1), mats.eps(m2)],
                        rho: [mats.rho(back), mats.rho(front)],
                    };
                    let frame = Frame {
                        at: p,
                        normal,
                        curvature: kappa,
                    };
                    pending.push((two[0].len(), frame, across));
                    // Side 1 sees the surface bulge away (a convex shape's inside).
                    for (side, (mat, nrm, k)) in
                        [(m1, [-normal[0], -normal[1]], -kappa), (m2, normal, kappa)]
                            .into_iter()
                            .enumerate()
                    {
                        two[side].push(SurfaceSample {
                            x: p[0],
                            y: p[1],
                            normal: nrm,
                            kind: SurfaceKind::Interface,
                            curve: curve + side,
                            arc: here,
                            whole_loop: false,
                            length: step,
                            material: mat,
                            field: [f64::NAN; 2],
                            curvature: k,
                        });
                    }
                }
                arc += len;
            }
            let [mut a, mut b] = two;
            a.iter_mut()
                .chain(b.iter_mut())
                .for_each(|s| s.whole_loop = whole);
            let (first, second) = (out.len(), out.len() + a.len());
            fits.extend(
                pending.into_iter().map(|(j, frame, across)| {
                    Fit::Interface([first + j, second + j], frame, across)
                }),
            );
            out.extend(a);
            out.extend(b);
            curve += 2;
        }
    }
    let wanted = near.map(|points| near_readings(&out, points));
    let skip = |fit: &Fit| {
        wanted.as_ref().is_some_and(|w| match *fit {
            Fit::Conductor(i, ..) => !w[i] && !matches!(out[i].kind, SurfaceKind::Conductor(_)),
            Fit::Interface([i, j], ..) => !w[i] && !w[j],
        })
    };
    // The fits, each from its own sample's neighbourhood, in parallel.
    let fields = crate::parallel::map(&fits, |fit| match fit {
        _ if skip(fit) => [[f64::NAN; 2]; 2],
        Fit::Conductor(_, frame, across) => {
            let e = surface_field::conductor_field(&lat, frame, across, &params.fit);
            [e.unwrap_or([f64::NAN; 2]), [f64::NAN; 2]]
        }
        Fit::Interface(_, frame, across) => {
            match surface_field::field_at(&lat, frame, across, &params.fit) {
                Some(SurfaceField::Interface(e1, e2)) => [e1, e2],
                _ => [[f64::NAN; 2]; 2],
            }
        }
    });
    for (fit, e) in fits.iter().zip(fields) {
        match fit {
            Fit::Conductor(i, ..) => out[*i].field = e[0],
            Fit::Interface([i, j], ..) => {
                out[*i].field = e[0];
                out[*j].field = e[1];
            }
        }
    }
    out
}

/// A fit still to be made: the sample(s) it gives the field of, where, and what lies across.
enum Fit {
    /// The sample at this index, on a conductor or a fixed side.
    Conductor(usize, Frame, Across),
    /// The samples at these indices: the two sides of an interface.
    Interface([usize; 2], Frame, Across),
}

/// The samples that are not on a zero-thickness conductor. The field maxima are read from
/// these: at a polyline the largest field sits at its ends, where the lattice reads the
/// singular edge higher than a fit to the faces (which serve the surface charge).
pub fn without_thin_conductors(samples: &[SurfaceSample], design: &Design) -> Vec<SurfaceSample> {
    let d = &design.domain;
    let near = 1e-9 * (d.x[1] - d.x[0]).max(d.y[1] - d.y[0]);
    samples
        .iter()
        .filter(|s| match s.kind {
            SurfaceKind::Conductor(k) => {
                let c = &design.conductors[k];
                match (&c.shape, c.joined.is_empty()) {
                    (Shape::Polyline(_), true) => false,
                    (_, true) => true,
                    // Pieces: a sample on a polyline piece is on a thin face.
                    _ => !c.shapes().any(|sh| match sh {
                        Shape::Polyline(pts) => pts
                            .windows(2)
                            .any(|w| distance_to_segment([s.x, s.y], w[0], w[1]) <= near),
                        _ => false,
                    }),
                }
            }
            _ => true,
        })
        .cloned()
        .collect()
}

/// Distance from `p` to the segment `a`-`b`, m.
fn distance_to_segment(p: Point, a: Point, b: Point) -> f64 {
    let (u, w) = ([b[0] - a[0], b[1] - a[1]], [p[0] - a[0], p[1] - a[1]]);
    let len2 = u[0] * u[0] + u[1] * u[1];
    let t = if len2 > 0.0 {
        ((w[0] * u[0] + w[1] * u[1]) / len2).clamp(0.0, 1.0)
    } else {
        0.0
    };
    (w[0] - t * u[0]).hypot(w[1] - t * u[1])
}

/// Where the operator's links to conductor k cut its surface within `reach` of `at`, m.
fn cut_points(op: &Operator, k: usize, at: Point, reach: f64) -> Vec<Point> {
    let g = &op.grid;
    let mut out = Vec::new();
    let r = reach + g.spacing_at(at);
    let cols = g.columns_covering(at[0] - r, at[0] + r);
    for j in g.rows_covering(at[1] - r, at[1] + r) {
        for i in cols.clone() {
            for l in op.links_of(g.idx(i, j)) {
                if l.target as usize != k {
                    continue;
                }
                let (u, h) = (l.dir.unit(), l.dir.step(g, i, j));
                let q = [g.x(i) + u[0] * l.theta * h, g.y(j) + u[1] * l.theta * h];
                if (q[0] - at[0]).hypot(q[1] - at[1]) <= reach {
                    out.push(q);
                }
            }
        }
    }
    out
}

#[cfg(test)]
mod tests;
