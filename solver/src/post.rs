//! Post-processing of a solved potential: field, forces, probes, surface charge, and the hot-spot
//! records the surface search fills in.
//!
//! The field at a free node is the second-order difference of the potential along each axis,
//! using the cut-cell distance to a conductor surface where a link crosses one (so the field
//! next to a curved electrode is not spoiled by the staircase). Forces come from the Maxwell
//! stress tensor integrated over a closed lattice contour one layer of nodes outside each
//! conductor (`post/force_path.rs`).
//!
//! Invariants: field values exist only at unknown nodes (NaN elsewhere); everything is SI.

use crate::design::{Design, Point, Probe, Shape};
use crate::operator::{Dir, Operator};
use crate::raster::Raster;

mod force_path;
pub use force_path::{force, force_on_path, PathForce, RESOLVED_FORCE_SHARE};

/// A local maximum of the field magnitude.
#[derive(Clone, Debug, PartialEq)]
pub struct Hotspot {
    /// |E|, V/m.
    pub magnitude: f64,
    /// Position, m.
    pub x: f64,
    /// Position, m.
    pub y: f64,
    /// Material name ("background" or a dielectric's name).
    pub material: String,
    /// Breakdown strength of that material, V/m, when known.
    pub strength: Option<f64>,
    /// strength / magnitude, when the strength is known.
    pub margin: Option<f64>,
    /// True when the maximum sits at a sharp corner or edge: its value grows as the grid is
    /// refined.
    pub singular: bool,
    /// Estimated discretisation error of `magnitude`, V/m, when an error estimate was made.
    pub error_estimate: Option<f64>,
    /// True on a rounded surface whose radius spans too few cells for the field to be
    /// resolved: the value reads low, and the error estimate widens to cover it.
    pub under_resolved: bool,
}

/// Hot-spot search settings.
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct HotspotParams {
    /// At most this many hot spots are reported.
    pub count: usize,
    /// Two maxima closer than this many cells are one hot spot.
    pub separation_cells: f64,
    /// A maximum within this many cells of a sharp corner is flagged singular.
    pub corner_cells: f64,
    /// A maximum is a hot spot only when its relative persistence ([`crate::peaks`]) reaches
    /// this: the field must fall by this share of its value on every path to a higher
    /// maximum. Ripples of the sampled field along a smooth surface stay below it.
    pub persistence: f64,
}

impl Default for HotspotParams {
    fn default() -> Self {
        HotspotParams {
            count: 10,
            separation_cells: 6.0,
            corner_cells: 2.5,
            persistence: 0.05,
        }
    }
}

/// A probe's reading.
#[derive(Clone, Debug, PartialEq)]
pub struct ProbeResult {
    /// Name.
    pub name: String,
    /// Position, m.
    pub x: f64,
    /// Position, m.
    pub y: f64,
    /// Potential, V.
    pub potential: f64,
    /// Field (Ex, Ey), V/m; NaN where undefined (inside a conductor).
    pub field: [f64; 2],
}

/// A surface-charge sample at a point of a conductor's outline.
#[derive(Clone, Debug, PartialEq)]
pub struct SurfacePoint {
    /// Conductor index.
    pub conductor: usize,
    /// Position on the surface, m.
    pub x: f64,
    /// Position on the surface, m.
    pub y: f64,
    /// Surface charge density, C/m^2.
    pub density: f64,
    /// Field magnitude at the surface, V/m.
    pub field: f64,
    /// Surface the sample stands for: planar m^2 per metre of depth, axisymmetric m^2.
    pub area: f64,
    /// The curve of surface samples the point belongs to ([`crate::surface::SurfaceSample`]).
    pub curve: usize,
    /// Position along that curve, m.
    pub arc: f64,
    /// Estimated discretisation error of `density`, C/m^2, when an error estimate was made.
    pub error_estimate: Option<f64>,
}

/// Field evaluation on a solved operator.
pub struct FieldEval<'a> {
    /// The operator.
    pub op: &'a Operator,
    /// The raster.
    pub raster: &'a Raster,
    /// Node potentials, fixed nodes holding their values.
    pub phi: &'a [f64],
    /// Potential of every target (conductors, then sides), V.
    pub values: Vec<f64>,
    /// The offset `phi` and `values` are relative to, V (zero unless set by
    /// [`FieldEval::with_reference`]): added to the potentials probes read.
    reference: f64,
    /// |E| at every node, computed once on first use.
    magnitude: std::sync::OnceLock<Vec<f64>>,
    /// The derivative's weights of the lattice's interior columns and rows.
    weights: Weights,
}

/// The weights of the three-point derivative ([`derivative`]) at every interior column and
/// row of a lattice: a node off the lattice's sides with no link takes its field from them,
/// the bits of [`FieldEval::at_with`] without its divisions.
struct Weights {
    /// Column i's at `x[i - 1]`, 0 < i < nx - 1.
    x: Vec<[f64; 3]>,
    /// Row j's at `y[j - 1]`, 0 < j < ny - 1.
    y: Vec<[f64; 3]>,
}

impl Weights {
    fn of(g: &crate::grid::Grid) -> Weights {
        Weights {
            x: (1..g.nx.saturating_sub(1))
                .map(|i| weights(g.dx(i - 1), g.dx(i)))
                .collect(),
            y: (1..g.ny.saturating_sub(1))
                .map(|j| weights(g.dy(j - 1), g.dy(j)))
                .collect(),
        }
    }
}

impl<'a> FieldEval<'a> {
    /// Wraps a solved potential.
    /// `conductor_potentials` are the conductors' potentials at the operating point.
    pub fn new(
        op: &'a Operator,
        raster: &'a Raster,
        phi: &'a [f64],
        conductor_potentials: &[f64],
    ) -> Self {
        FieldEval {
            op,
            raster,
            phi,
            values: op.target_values(conductor_potentials, true),
            reference: 0.0,
            magnitude: std::sync::OnceLock::new(),
            weights: Weights::of(&op.grid),
        }
    }

    /// The same evaluation of potentials given relative to `reference` (V), which probes
    /// add back to what they read.
    pub fn with_reference(mut self, reference: f64) -> Self {
        self.reference = reference;
        self
    }

    /// Potential of target t at the operating point.
    fn target_value(&self, t: u32) -> f64 {
        self.values[t as usize]
    }

    /// Electric field (Ex, Ey) at node p, V/m; NaN at fixed nodes.
    pub fn at(&self, p: usize) -> [f64; 2] {
        if !self.op.stencil.unknown[p] {
            return [f64::NAN; 2];
        }
        self.at_with(p, self.op.links_of(p))
    }

    /// [`FieldEval::at`] at an unknown node p = i + j nx that has no link.
    pub(crate) fn at_free(&self, p: usize, i: usize, j: usize) -> [f64; 2] {
        let nx = self.op.grid.nx;
        match (
            self.weights.x.get(i.wrapping_sub(1)),
            self.weights.y.get(j.wrapping_sub(1)),
        ) {
            (Some(&[a, b, c]), Some(&[d, e, f])) => {
                let phi = self.phi;
                [
                    -(a * phi[p - 1] + b * phi[p] + c * phi[p + 1]),
                    -(d * phi[p - nx] + e * phi[p] + f * phi[p + nx]),
                ]
            }
            _ => self.at_with(p, &[]),
        }
    }

    /// [`FieldEval::at`] at an unknown node p whose links are `links`.
    pub(crate) fn at_with(&self, p: usize, links: &[crate::operator::Link]) -> [f64; 2] {
        let g = &self.op.grid;
        let (i, j) = (p % g.nx, p / g.nx);
        let find = |d: Dir| links.iter().find(|l| l.dir == d);
        let phi = self.phi;
        // (distance, value) of the neighbour in a direction, or None beyond a no-flux side.
        let side = |d: Dir, q: Option<usize>| -> Option<(f64, f64)> {
            let h = d.step(g, i, j);
            if let Some(l) = find(d) {
                return Some((l.theta * h, self.target_value(l.target)));
            }
            q.map(|q| (h, phi[q]))
        };
        let e = phi[p];
        let ex = {
            let w = side(Dir::West, (i > 0).then(|| p - 1));
            let east = side(Dir::East, (i + 1 < g.nx).then(|| p + 1));
            -derivative(w, e, east)
        };
        let ey = {
            let south = side(Dir::South, (j > 0).then(|| p - g.nx));
            let north = side(Dir::North, (j + 1 < g.ny).then(|| p + g.nx));
            -derivative(south, e, north)
        };
        [ex, ey]
    }

    /// |E| at node p, NaN at fixed nodes.
    pub fn magnitude(&self, p: usize) -> f64 {
        let [x, y] = self.at(p);
        x.hypot(y)
    }

    /// |E| at every node (NaN at fixed nodes), V/m, computed once: row by row in parallel,
    /// each row walking the links in node order instead of searching them per node. Every
    /// value equals [`FieldEval::magnitude`] bit for bit.
    pub fn magnitudes(&self) -> &[f64] {
        self.magnitude.get_or_init(|| {
            let g = &self.op.grid;
            let links = &self.op.links;
            let unknown = &self.op.stencil.unknown;
            let mut out = vec![f64::NAN; g.len()];
            crate::parallel::for_each_row(&mut out, g.nx, |j, row| {
                let first = j * g.nx;
                let mut k = links.partition_point(|l| (l.node as usize) < first);
                for (i, m) in row.iter_mut().enumerate() {
                    let p = first + i;
                    let lo = k;
                    while k < links.len() && links[k].node as usize == p {
                        k += 1;
                    }
                    if unknown[p] {
                        let [x, y] = if lo == k {
                            self.at_free(p, i, j)
                        } else {
                            self.at_with(p, &links[lo..k])
                        };
                        *m = x.hypot(y);
                    }
                }
            });
            out
        })
    }

    /// The magnitudes of [`FieldEval::magnitudes`], kept after the evaluation is dropped.
    pub fn into_magnitudes(mut self) -> Vec<f64> {
        self.magnitudes();
        self.magnitude.take().expect("computed above")
    }
}

/// The weights of f(-a), f(0) and f(+b) in [`derivative`] with both sides present.
fn weights(a: f64, b: f64) -> [f64; 3] {
    [-b / (a * (a + b)), (b - a) / (a * b), a / (b * (a + b))]
}

/// Second-order derivative at 0 from values at -a (f_m), 0 (f0) and +b (f_p); one-sided
/// (first order) when a side is missing, zero when both are (a no-flux boundary).
fn derivative(minus: Option<(f64, f64)>, f0: f64, plus: Option<(f64, f64)>) -> f64 {
    match (minus, plus) {
        (Some((a, fm)), Some((b, fp))) => {
            let [wm, w0, wp] = weights(a, b);
            wm * fm + w0 * f0 + wp * fp
        }
        // At a symmetry side or the axis the normal field vanishes.
        (None, Some(_)) | (Some(_), None) | (None, None) => 0.0,
    }
}

/// Sharp corners of the conductors, where the field is singular: unfilleted rectangle
/// corners, the convex vertices of unfilleted polygon outlines (and the reflex vertices of
/// their holes, which are convex as seen from the conductor), polyline ends and polyline kinks.
/// Straight-through vertices and re-entrant corners (where the field tends to zero) are not,
/// nor is a corner of one piece of a conductor that another piece of it covers or meets: there
/// the union's metal spans at least a half-plane around the point, so the field does not grow,
/// nor a vertex on a mirror plane or the axis that the unfolded part does not have as a corner
/// (a stem cut square by the plane).
pub fn sharp_corners(design: &Design) -> Vec<Point> {
    let d = &design.domain;
    // Points this close around a corner tell whether another piece meets it.
    let reach = 1e-9 * (d.x[1] - d.x[0]).max(d.y[1] - d.y[0]);
    let mut out = Vec::new();
    for c in &design.conductors {
        let pieces: Vec<crate::geometry::Outline> = if c.joined.is_empty() {
            Vec::new()
        } else {
            c.shapes()
                .map(|s| crate::geometry::outline(s).expect("a validated design"))
                .collect()
        };
        for (p, shape) in c.shapes().enumerate() {
            let first = out.len();
            piece_corners(shape, &mut out);
            let kept: Vec<Point> = out[first..]
                .iter()
                .copied()
                .filter(|q| !crate::geometry::unfolds_flat(design, shape, *q))
                .collect();
            out.truncate(first);
            out.extend(kept);
            if pieces.is_empty() {
                continue;
            }
            let met = |q: &Point| {
                let around = (0..8).map(|k| {
                    let a = k as f64 * std::f64::consts::FRAC_PI_4;
                    [q[0] + reach * a.cos(), q[1] + reach * a.sin()]
                });
                pieces.iter().enumerate().any(|(o, piece)| {
                    o != p
                        && std::iter::once(*q)
                            .chain(around.clone())
                            .any(|t| piece.contains(t))
                })
            };
            let kept: Vec<Point> = out[first..].iter().copied().filter(|q| !met(q)).collect();
            out.truncate(first);
            out.extend(kept);
        }
    }
    out
}

/// The sharp corners of one shape (see [`sharp_corners`]).
fn piece_corners(shape: &Shape, out: &mut Vec<Point>) {
    match shape {
        Shape::Rect { x, y, round } if *round == 0.0 => {
            out.extend([[x[0], y[0]], [x[1], y[0]], [x[1], y[1]], [x[0], y[1]]]);
        }
        Shape::Polygon {
            outer,
            holes,
            round,
            corners,
        } if *round == 0.0 || corners.is_some() => {
            let sharp =
                crate::geometry::unrounded_vertices(outer, holes, *round, corners.as_deref());
            let mut all = convex_vertices(outer, true);
            holes
                .iter()
                .for_each(|h| all.extend(convex_vertices(h, false)));
            out.extend(all.into_iter().filter(|p| sharp.contains(p)));
        }
        Shape::Polyline(pts) => {
            let n = pts.len();
            for (k, p) in pts.iter().enumerate() {
                if k == 0 || k + 1 == n || turn(pts[k - 1], *p, pts[k + 1]) != 0.0 {
                    out.push(*p);
                }
            }
        }
        _ => {}
    }
}

/// Cross product of the edges into and out of `b`, zero when they are collinear to rounding.
fn turn(a: Point, b: Point, c: Point) -> f64 {
    let (u, v) = ([b[0] - a[0], b[1] - a[1]], [c[0] - b[0], c[1] - b[1]]);
    let cross = u[0] * v[1] - u[1] * v[0];
    if cross.abs() <= 1e-12 * u[0].hypot(u[1]) * v[0].hypot(v[1]) {
        0.0
    } else {
        cross
    }
}

/// Vertices of a closed ring that are convex as seen from the conductor: the material lies
/// inside the ring (`solid_inside`, an outer boundary) or outside it (a hole).
fn convex_vertices(ring: &[Point], solid_inside: bool) -> Vec<Point> {
    let n = ring.len();
    let area2: f64 = (0..n)
        .map(|k| {
            let (a, b) = (ring[k], ring[(k + 1) % n]);
            a[0] * b[1] - b[0] * a[1]
        })
        .sum();
    let orient = if solid_inside { area2 } else { -area2 };
    (0..n)
        .filter(|&k| turn(ring[(k + n - 1) % n], ring[k], ring[(k + 1) % n]) * orient > 0.0)
        .map(|k| ring[k])
        .collect()
}

/// Reading of a probe: bilinear interpolation of the potential and of the node fields.
pub fn probe(field: &FieldEval, probe: &Probe) -> ProbeResult {
    let g = &field.op.grid;
    let (i, tx) = g.locate_x(probe.at[0]);
    let (j, ty) = g.locate_y(probe.at[1]);
    let corners = [
        (i, j, (1.0 - tx) * (1.0 - ty)),
        (i + 1, j, tx * (1.0 - ty)),
        (i, j + 1, (1.0 - tx) * ty),
        (i + 1, j + 1, tx * ty),
    ];
    let mut v = 0.0;
    let (mut ex, mut ey, mut wsum) = (0.0, 0.0, 0.0);
    for (ci, cj, w) in corners {
        let p = g.idx(ci, cj);
        v += w * field.phi[p];
        let e = field.at(p);
        if e[0].is_finite() && w > 0.0 {
            ex += w * e[0];
            ey += w * e[1];
            wsum += w;
        }
    }
    let fieldv = if wsum > 0.0 {
        [ex / wsum, ey / wsum]
    } else {
        [f64::NAN; 2]
    };
    ProbeResult {
        name: probe.name.clone(),
        x: probe.at[0],
        y: probe.at[1],
        potential: if field.reference == 0.0 {
            v
        } else {
            v + field.reference
        },
        field: fieldv,
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::design::{Conductor, Drive};

    fn with(shape: Shape) -> Design {
        Design {
            conductors: vec![Conductor {
                name: "c".into(),
                drive: Drive::Fixed(1.0),
                joined: Vec::new(),
                shape,
            }],
            ..Design::default()
        }
    }

    #[test]
    fn sharp_corners_skip_reentrant_and_straight_vertices() {
        // An L with a collinear extra vertex on its bottom edge, written clockwise.
        let l = vec![
            [0.0, 0.0],
            [0.0, 2.0],
            [1.0, 2.0],
            [1.0, 1.0],
            [2.0, 1.0],
            [2.0, 0.0],
            [1.0, 0.0],
        ];
        let got = sharp_corners(&with(Shape::Polygon {
            outer: l,
            holes: vec![],
            round: 0.0,
            corners: None,
        }));
        let want = vec![[0.0, 0.0], [0.0, 2.0], [1.0, 2.0], [2.0, 1.0], [2.0, 0.0]];
        assert_eq!(got, want);
    }

    #[test]
    fn sharp_corners_of_a_square_hole_are_none() {
        // Inside a square hole the corners are re-entrant for the conductor around it.
        let outer = vec![[0.0, 0.0], [4.0, 0.0], [4.0, 4.0], [0.0, 4.0]];
        let hole = vec![[1.0, 1.0], [3.0, 1.0], [3.0, 3.0], [1.0, 3.0]];
        let got = sharp_corners(&with(Shape::Polygon {
            outer: outer.clone(),
            holes: vec![hole],
            round: 0.0,
            corners: None,
        }));
        assert_eq!(got, outer);
    }

    #[test]
    fn sharp_corners_of_polylines_are_ends_and_kinks() {
        let got = sharp_corners(&with(Shape::Polyline(vec![
            [0.0, 0.0],
            [1.0, 0.0],
            [2.0, 0.0],
            [2.0, 1.0],
        ])));
        assert_eq!(got, vec![[0.0, 0.0], [2.0, 0.0], [2.0, 1.0]]);
    }

    #[test]
    fn all_node_magnitudes_equal_the_node_evaluation_for_any_thread_count() {
        // A disc beside a rectangle over a dielectric layer: links in every direction, cut
        // cells, a material interface and grounded sides.
        let mut d = with(Shape::Circle {
            center: [0.37, 0.52],
            radius: 0.11,
        });
        d.conductors.push(Conductor {
            name: "r".into(),
            drive: Drive::Fixed(-0.5),
            joined: Vec::new(),
            shape: Shape::Rect {
                x: [0.6, 0.83],
                y: [0.41, 0.47],
                round: 0.0,
            },
        });
        d.dielectrics.push(crate::design::Dielectric {
            name: "layer".into(),
            permittivity: 3.3,
            strength: None,
            shape: Shape::Rect {
                x: [0.0, 1.0],
                y: [0.0, 0.3],
                round: 0.0,
            },
        });
        d.domain.cell = 1.0 / 97.0;
        let params = crate::study::StudyParams {
            error_estimate: false,
            ..Default::default()
        };
        let sol = crate::study::run(&d, &params).expect("study runs");
        let field = sol.field();
        let run = |threads: usize| {
            let pool = rayon::ThreadPoolBuilder::new()
                .num_threads(threads)
                .build()
                .unwrap();
            pool.install(|| sol.field().into_magnitudes())
        };
        let (one, three) = (run(1), run(3));
        assert!(!sol.operator.links.is_empty());
        for p in 0..sol.grid.len() {
            let want = field.magnitude(p);
            assert_eq!(one[p].to_bits(), want.to_bits(), "node {p}");
            assert_eq!(three[p].to_bits(), want.to_bits(), "node {p}");
        }
        assert!(one.iter().filter(|m| m.is_finite()).count() > sol.grid.len() / 2);
    }

    #[test]
    fn filleted_shapes_have_no_sharp_corners() {
        let tri = vec![[0.0, 0.0], [1.0, 0.0], [0.5, 2.0]];
        let got = sharp_corners(&with(Shape::Polygon {
            outer: tri,
            holes: vec![],
            round: 0.1,
            corners: None,
        }));
        assert!(got.is_empty());
    }
}
