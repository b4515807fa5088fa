//! Graded grid lines that follow a design: node lines on the geometry, small cells at its
//! singular points, smooth growth up to the coarsest spacing.
//!
//! Along each axis the lines are built from a target size `h(t)`, the smallest of the
//! coarsest spacing and of one cone per feature, `size + ln(growth) * distance`:
//! - every axis-parallel straight edge of every conductor, dielectric and charge region, the
//!   domain sides, every sharp corner of a conductor and both ends of every thin (polyline)
//!   conductor give a node line (the geometry is held exactly; no cut cell on those edges);
//! - between two neighbouring node lines the size is at most their distance over
//!   `min_cells` (every thin layer gets that many cells across);
//! - every sharp corner of a conductor gets the size `corner_fraction` times its local
//!   feature size (the distance to the nearest other node line, either axis), every point
//!   where a conductor's outline meets a dielectric's (a corner on an interface included)
//!   `junction_fraction` times it, every end or kink of a polyline `thin_end_fraction`
//!   times it (each point is graded as one kind: an end on an interface as an end, a corner
//!   on one as a junction); within its local feature size the cone also falls to zero at
//!   the point as `distance^(1 - mu)` (radical grading, `mu` = `corner_grading`,
//!   `junction_grading` or `thin_end_grading`);
//! - every circular arc (fillets, circles, rings) gets at most `radius / cells_per_radius`
//!   over its extent.
//!
//! Between two node lines the nodes are placed at equal steps of `∫ dt / h`, the count
//! rounded up, so no cell is larger than the target there; a translated design gets its
//! lines translated (to rounding: a count within rounding of a whole number is that number).
//! Each axis keeps within a budget: at most `line_budget` base cells per cell of
//! a uniform lattice of the coarsest spacing; a design whose features ask for more (many
//! singular points, fillets and thin gaps closer together than the cones need to grow to the
//! coarsest spacing, where the count no longer falls with a larger `cell`) has the cones of
//! that axis grow faster, by the first of a ladder of steeper growths that fits. [`refined`] splits every such
//! step into `2^k` equal steps of the same integral: the graded family. Every other line of
//! a member is the member below, so the coarser lattices of an error estimate hold every
//! node line; away from singular points a member is the one below bisected, and next to a
//! singular point its cells fall as `2^(-k / mu)`. That is the grading a singularity
//! `r^lambda` asks for when `mu < lambda` (Babuska, Kellogg and Pitkaranta, Numer. Math. 33,
//! 1979; Apel, Sandig and Whiteman, Math. Methods Appl. Sci. 19, 1996: graded meshes with
//! `h(r) ~ h r^(1 - mu)` restore the energy-norm error O(h), so a capacitance, an energy,
//! converges as h^2; exponents from memory): lambda = 2/3 at a right-angled conductor corner
//! in one medium and 1/2 at the edge of a thin plate (on an interface too), lower at
//! sharper corners. Where a right-angled corner sits on a flat interface, lambda lies
//! between 1/2 and 1 with the permittivities (two dielectric wedges, by separation of
//! variables: 0.56 for copper on FR-4 with air beside it). The defaults are `mu` = 2/3 at
//! corners in one medium (`corner_grading`: the right-angled corner's own exponent, the
//! limit of the condition rather than inside it), 0.4 at thin ends (`thin_end_grading`,
//! inside the thin plate's 1/2) and 1/4 at junctions (`junction_grading`, well inside the
//! interface corner's 0.56), with a size there of half the local feature size
//! (`junction_fraction`) and a floor of 1e-3 of it (`junction_floor`), as measured below.
//!
//! Measured on the sensor pad (every copper corner is a junction: FR-4 or the overlay on one
//! side, air on the other), members 1 to 3 solved to 1e-11 against the finite-element
//! values; `junction_grading` / `junction_fraction` / `junction_floor`: the least-squares
//! slope of the worst entry's error against the node count, the nodes for a worst error of
//! 1e-3 (log-log between members), multigrid-CG iterations of the design's own lattice
//! (member 2) at the default 1e-8 and of member 3:
//! - 2/3, 1/16, 0 (the corners' own, the default before): -0.992, 190 000 nodes, 6 and 9
//!   iterations;
//! - 0.55, 1/16, 0: -0.999, 193 000, 8 and 17; 1/2: -1.000 (-0.9999), 204 000, 13, 24;
//!   0.45: -1.001, 209 000, 18, 31; 1/3: -1.001, 261 000, 31, 48; 1/4: -1.001, 340 000, 38, 57;
//! - 1/2, 1/2, 1e-4: -0.978, 101 000, 6, 9; 1/2, 1/4, 1e-4: -0.997, 121 000, 6, 11;
//!   0.4, 1/2, 1e-4: -0.999, 102 000, 6, 13; 0.4, 1/2, 1e-3: -0.996, 100 000, 6, 7;
//!   0.35, 1/2, 1e-3: -0.9985, 107 000, 6, 14; 0.3, 1/2, 1e-3: -0.9996, 111 000, 8, 15;
//! - 1/4, 1/2, 1e-3 (default): -1.0003, 119 000, 11, 20; 1/4, 1/2, 1e-4: -1.0014, 123 000,
//!   19, 34.
//!
//! (Iterations before the line relaxation's lumped weights and coarse sweeps; with them the
//! default's members 1-3 take 4+4+4, 4+4+4 and 4+4+5 (a solve per conductor, 1e-8), as the
//! former default's did: the `stretched` bench, `--case sensor-pad`.)
//!
//! A larger size at the junctions saves nodes (0.53 to 0.65 times the former default's for
//! the same worst error), and an exponent below the singularity's 0.56 gives the full rate
//! only with a steep fall (1/4), which cost multigrid-CG iterations before the line
//! relaxation's coarse sweeps and no longer does. On the sensor pad the default reaches a
//! worst error of 5.2e-4 at 226 941 nodes (0.51 CPU s, whole process, one thread) where the
//! former one took 387 045 (0.75 s, same run), and `--accuracy 1e-3` costs 0.57 against
//! 0.62 CPU s (1.02 to 1.04 times the finite-element script's against 1.12 to 1.16).
//! The force estimate of a conductor on an interface reads how much the cells beside its
//! junctions shrink between the two lattices (2^(1 / mu) while the grading falls radically
//! there, 2 once the cells are inside the floor, where they are bisected) rather than
//! assuming the former: the demo MEMS drive's estimate is 1.9 times its distance to the limit
//! extrapolated from members 3 and 4 (tests/reference/forces.rs). `junction_floor` (a distance over the local feature size below which the
//! size stops falling) keeps the smallest cells well above the rounding of the
//! coordinates: with 1/4 and no floor, the sensor pad's member 3 has cells of 1.2e-10 m
//! (1/16) and, with 1/2, the solves of a randomly drawn axisymmetric scene stagnate at a
//! relative residual of 5e-9; with a floor of 1e-5, a design in mil and in mm differ by
//! 8.7e-9 in a capacitance (the fine solve started from the coarse one stops at 1e-8 on
//! iterates that the lattices' rounding moves: 1.6e-10 at a tolerance of 1e-10, 7.6e-13 at
//! 1e-12, 2.5e-13 without the warm start, so the solver's and not the lattice's) and a
//! radial line of the scene moves by 1.03e-12 of the domain under an axial shift (the local
//! feature size reads the rounded axial distances); with 1e-4 or 1e-3 both agree within
//! their tests' bounds. Since the radical zone holds a bounded number of cells of the
//! unrefined lines, the number of lines per axis doubles per member, and the nodes grow
//! four times.
//!
//! Invariants of [`refined`] (and [`lines`], its member 0): each list is strictly
//! increasing, starts and ends on the domain sides and holds every node line above; no cell
//! exceeds the coarsest spacing over `2^k` (to 1e-11); on an axis within its budget, outside
//! the radical zones the ratio of neighbouring cells is at most
//! `growth * (min_cells + 1) / min_cells` (the growth of the target size times the rounding
//! of a cell count up), and the cells next to a graded point are at most `growth` times its
//! target size (an axis over it: the same with its steeper growth). Pure functions of the
//! design, lengths in metres.

use crate::design::{Design, Point};
use crate::geometry::{outline, sharp_corners, BBox, Outline, Piece};
use crate::grid::{Grid, GridError};

/// How finely to grade. Start from `Params::default()`.
#[derive(Clone, Copy, Debug, PartialEq)]
#[non_exhaustive]
pub struct Params {
    /// Largest ratio of the target sizes of neighbouring cells, > 1.
    pub growth: f64,
    /// Target size at a singular point over its local feature size, in (0, 1].
    pub corner_fraction: f64,
    /// The same at the ends and kinks of a thin (polyline) conductor, whose field is the
    /// most singular (as the inverse square root of the distance), in (0, 1].
    pub thin_end_fraction: f64,
    /// Radical grading exponent `mu` at sharp corners, in (0, 1]: within the local feature
    /// size of the corner the target size falls as `distance^(1 - mu)` to zero, so that the
    /// cells next to the corner shrink as the refinement's cell to the power `1 / mu`
    /// (1: no radical part).
    pub corner_grading: f64,
    /// The same at the ends and kinks of thin conductors.
    pub thin_end_grading: f64,
    /// Target size at a point where a conductor's outline meets a dielectric's (a corner
    /// on an interface included) over its local feature size, in (0, 1].
    pub junction_fraction: f64,
    /// Radical grading exponent `mu` at those points, in (0, 1].
    pub junction_grading: f64,
    /// Distance from a junction, over its local feature size, below which its target size
    /// stops falling, in [0, 1): bounds the smallest cell next to it (0: only the
    /// domain-wide floor of 1e-8 of the domain's extent).
    pub junction_floor: f64,
    /// Fewest cells between two neighbouring node lines, >= 1.
    pub min_cells: usize,
    /// Fewest cells per radius along a circular arc, >= 1.
    pub cells_per_radius: usize,
    /// Most cells along an axis of the base lines ([`lines`]) per cell of a uniform lattice
    /// of the coarsest spacing there, > 0: beyond it the cones grow faster (a steeper
    /// `growth`), so a design with many features close together stays within a size its
    /// `cell` sets.
    pub line_budget: f64,
    /// Cells per unit of `∫ dt / h` between two node lines before the split, > 0: 1 gives
    /// the design's own family; above 1 every member is finer by about this factor along
    /// both axes (the accuracy loop's steps smaller than a bisection).
    pub density: f64,
}

impl Default for Params {
    fn default() -> Self {
        Params {
            growth: 1.2,
            corner_fraction: 1.0 / 16.0,
            thin_end_fraction: 1.0 / 128.0,
            corner_grading: 2.0 / 3.0,
            thin_end_grading: 0.4,
            junction_fraction: 0.5,
            junction_grading: 0.25,
            junction_floor: 1e-3,
            min_cells: 4,
            cells_per_radius: 8,
            line_budget: 32.0,
            density: 1.0,
        }
    }
}

impl Params {
    /// These settings with the target size at singular points `fraction` of the local
    /// feature size.
    pub fn with_corner_fraction(mut self, fraction: f64) -> Self {
        self.corner_fraction = fraction;
        self
    }

    /// These settings with the target size at the ends of thin conductors `fraction` of
    /// the local feature size.
    pub fn with_thin_end_fraction(mut self, fraction: f64) -> Self {
        self.thin_end_fraction = fraction;
        self
    }

    /// Largest ratio of neighbouring cells that [`lines`] can produce with these settings on
    /// an axis within its budget.
    pub fn max_ratio(&self) -> f64 {
        self.growth * (self.min_cells as f64 + 1.0) / self.min_cells as f64
    }
}

/// The node lines of a graded grid, m.
#[derive(Clone, Debug, PartialEq)]
pub struct Lines {
    /// x of every node column, strictly increasing, from the domain's x0 to x1.
    pub x: Vec<f64>,
    /// y of every node row, strictly increasing.
    pub y: Vec<f64>,
}

/// Bisections from the base grid to the lattice a study solves on: the error estimate's
/// coarser lattices (every other line, twice) are then the base bisected once and the base.
pub const BISECTIONS: usize = 2;

/// The lattice of a graded study of `design`: the base grid of [`lines`] with cells up to
/// `2^BISECTIONS` times the domain's `cell`, bisected [`BISECTIONS`] times, so that its
/// largest cell is about `cell` and every coarser lattice of the error estimate holds every
/// geometry line.
pub fn grid(design: &Design, params: &Params) -> Result<Grid, GridError> {
    let scale = (1usize << BISECTIONS) as f64;
    let l = refined(design, scale * design.domain.cell, params, BISECTIONS)?;
    Grid::from_lines(l.x, l.y)
}

/// True when every outline of the design (conductors, dielectrics, charge regions) is made
/// of axis-parallel straight pieces only: a graded lattice then holds every edge on a node
/// line, at every level of its family of bisections.
pub fn is_rectilinear(design: &Design) -> bool {
    let shapes = design
        .conductors
        .iter()
        .flat_map(|c| c.shapes())
        .chain(interface_shapes(design));
    shapes.into_iter().all(|s| {
        outline(s).is_ok_and(|o| {
            o.pieces().all(|p| match *p {
                Piece::Line { a, b } => a[0] == b[0] || a[1] == b[1],
                Piece::Arc { .. } => false,
            })
        })
    })
}

/// The points where an outline of conductor `k` meets a dielectric's or a charge region's, as
/// [`lines`] grades them: the junctions a force path round the conductor passes.
pub fn junctions_of(design: &Design, k: usize) -> Vec<Point> {
    let Some(c) = design.conductors.get(k) else {
        return Vec::new();
    };
    let conductors: Vec<Outline> = c.shapes().filter_map(|s| outline(s).ok()).collect();
    let dielectrics: Vec<Outline> = interface_shapes(design)
        .filter_map(|s| outline(s).ok())
        .collect();
    junctions(&conductors, &dielectrics)
}

/// The shapes whose outlines are material interfaces: every dielectric's and every charge
/// region's, in the design's order.
fn interface_shapes(design: &Design) -> impl Iterator<Item = &crate::design::Shape> {
    design
        .dielectrics
        .iter()
        .map(|e| &e.shape)
        .chain(design.charges.iter().filter_map(|c| match c {
            crate::design::Charge::Region { shape, .. } => Some(shape),
            _ => None,
        }))
}

/// Most cells along one axis.
const MAX_CELLS: f64 = 1.0e8;

/// Node lines closer than this fraction of the domain's extent are one line.
const MERGE: f64 = 1.0e-9;

/// A cone of the target size along one axis: `size` on `[lo, hi]`, growing with distance;
/// at a singular point, within `reach` of it, also no larger than the cone's size at
/// `reach` times `(distance / reach)^power` (radical grading, vanishing at the point).
#[derive(Clone, Copy, Debug, PartialEq)]
struct Feature {
    lo: f64,
    hi: f64,
    size: f64,
    radical: Option<Radical>,
}

/// The radical part of a singular point's cone.
#[derive(Clone, Copy, Debug, PartialEq)]
struct Radical {
    reach: f64,
    power: f64,
    /// Distances below this count as this (the size stays positive on the point itself).
    floor: f64,
}

/// The kinds of singular point, each graded with its own size and exponent.
#[derive(Clone, Copy, Debug, PartialEq)]
enum Kind {
    /// A sharp corner of a conductor in one medium.
    Corner,
    /// An end or kink of a thin (polyline) conductor.
    ThinEnd,
    /// A point where a conductor's outline meets a dielectric's.
    Junction,
}

impl Kind {
    /// The target size over the local feature size, and the radical grading exponent.
    fn grade(self, p: &Params) -> (f64, f64) {
        match self {
            Kind::Corner => (p.corner_fraction, p.corner_grading),
            Kind::ThinEnd => (p.thin_end_fraction, p.thin_end_grading),
            Kind::Junction => (p.junction_fraction, p.junction_grading),
        }
    }
}

/// What the geometry asks of one axis: node lines and features.
#[derive(Default)]
struct Axis {
    lines: Vec<f64>,
    features: Vec<Feature>,
}

/// The graded node lines of `design` with no cell larger than `coarsest` (m).
pub fn lines(design: &Design, coarsest: f64, params: &Params) -> Result<Lines, GridError> {
    refined(design, coarsest, params, 0)
}

/// The lines of [`lines`] refined `bisections` times along the grading's own map: every cell
/// of [`lines`] split into `2^bisections` at equal steps of `∫ dt / h`. Every other line of
/// one refinement is the one below (to rounding), so each holds every node line; away from
/// singular points this is bisection, and next to one the cells shrink as the radical
/// grading asks (as `2^(-bisections / mu)`), without new lines across the rest of the grid.
pub fn refined(
    design: &Design,
    coarsest: f64,
    params: &Params,
    bisections: usize,
) -> Result<Lines, GridError> {
    if !(coarsest.is_finite() && coarsest > 0.0) {
        return Err(GridError::Cell(coarsest));
    }
    let d = &design.domain;
    let (lx, ly) = (d.x[1] - d.x[0], d.y[1] - d.y[0]);
    if !(lx.is_finite() && lx > 0.0 && ly.is_finite() && ly > 0.0) {
        return Err(GridError::Domain);
    }
    let (cx, cy) = ((lx / coarsest).ceil(), (ly / coarsest).ceil());
    if cx > MAX_CELLS || cy > MAX_CELLS {
        return Err(GridError::TooManyCells { x: cx, y: cy });
    }
    assert!(
        params.growth > 1.0
            && params.corner_fraction > 0.0
            && params.corner_fraction <= 1.0
            && params.thin_end_fraction > 0.0
            && params.thin_end_fraction <= 1.0
            && params.corner_grading > 0.0
            && params.corner_grading <= 1.0
            && params.thin_end_grading > 0.0
            && params.thin_end_grading <= 1.0
            && params.junction_fraction > 0.0
            && params.junction_fraction <= 1.0
            && params.junction_grading > 0.0
            && params.junction_grading <= 1.0
            && params.junction_floor >= 0.0
            && params.junction_floor < 1.0
            && params.min_cells >= 1
            && params.cells_per_radius >= 1
            && params.line_budget > 0.0
            && params.density.is_finite()
            && params.density > 0.0,
        "grading parameters out of range: {params:?}"
    );
    let (mut ax, mut ay) = (Axis::default(), Axis::default());
    ax.lines.extend(d.x);
    ay.lines.extend(d.y);
    let mut points = Vec::new();
    let mut conductors = Vec::new();
    let mut dielectrics = Vec::new();
    let shapes = design
        .conductors
        .iter()
        .flat_map(|c| c.shapes().map(|s| (s, true)))
        .chain(interface_shapes(design).map(|s| (s, false)));
    for (shape, conductor) in shapes {
        let Ok(o) = outline(shape) else { continue };
        edges(&o, params, &mut ax, &mut ay);
        if conductor {
            let corners = sharp_corners(shape);
            for p in &corners {
                ax.lines.push(p[0]);
                ay.lines.push(p[1]);
            }
            let kind = if o.open { Kind::ThinEnd } else { Kind::Corner };
            points.extend(corners.into_iter().map(|p| (p, kind)));
            conductors.push(o);
        } else {
            dielectrics.push(o);
        }
    }
    // Each point is graded as one kind: a thin conductor's end on an interface as a thin
    // end (its exponent is 1/2 whatever the permittivities), a corner on one as a junction.
    let tol = MERGE * lx.max(ly);
    let same = |p: &Point, q: &Point| (p[0] - q[0]).abs() <= tol && (p[1] - q[1]).abs() <= tol;
    let meets = junctions(&conductors, &dielectrics);
    points.retain(|(p, kind)| *kind == Kind::ThinEnd || !meets.iter().any(|q| same(p, q)));
    let thin: Vec<Point> = points
        .iter()
        .filter(|(_, kind)| *kind == Kind::ThinEnd)
        .map(|(p, _)| *p)
        .collect();
    points.extend(
        meets
            .into_iter()
            .filter(|q| !thin.iter().any(|p| same(p, q)))
            .map(|q| (q, Kind::Junction)),
    );
    let (x, y) = (d.x, d.y);
    ax.lines = merged(ax.lines, x, MERGE * lx);
    ay.lines = merged(ay.lines, y, MERGE * ly);
    let floor = MERGE * lx.max(ly) * 10.0;
    for (p, kind) in points {
        let (fraction, mu) = kind.grade(params);
        if !(p[0] >= x[0] && p[0] <= x[1] && p[1] >= y[0] && p[1] <= y[1]) {
            continue;
        }
        let lfs = nearest_other(&ax.lines, p[0]).min(nearest_other(&ay.lines, p[1]));
        let size = (fraction * lfs).max(floor);
        let own = if kind == Kind::Junction {
            params.junction_floor * lfs
        } else {
            0.0
        };
        let radical = (mu < 1.0).then_some(Radical {
            reach: lfs,
            power: 1.0 - mu,
            floor: floor.max(own),
        });
        for (axis, at) in [(&mut ax, p[0]), (&mut ay, p[1])] {
            // A point graded twice keeps the smaller size.
            axis.features.push(Feature {
                lo: at,
                hi: at,
                size,
                radical,
            });
        }
    }
    let split = 1usize << bisections;
    // The budget counts the lines of the base (member 0), so every member of a family takes
    // the same slope and the members nest.
    let budget = |len: f64| params.line_budget * (len / coarsest).ceil().max(1.0);
    let sx = slope_within(&ax, coarsest, params, budget(lx));
    let sy = slope_within(&ay, coarsest, params, budget(ly));
    Ok(Lines {
        x: graded_axis(&ax, coarsest, params, sx, split),
        y: graded_axis(&ay, coarsest, params, sy, split),
    })
}

/// Node lines on the axis-parallel straight edges of an outline (and a polyline's ends), and
/// the size limit of its arcs.
fn edges(o: &Outline, params: &Params, ax: &mut Axis, ay: &mut Axis) {
    for p in o.pieces() {
        match *p {
            Piece::Line { a, b } => {
                if a[0] == b[0] {
                    ax.lines.push(a[0]);
                }
                if a[1] == b[1] {
                    ay.lines.push(a[1]);
                }
            }
            Piece::Arc { radius, .. } => {
                let size = radius / params.cells_per_radius as f64;
                let [x0, x1] = p.x_range();
                let [y0, y1] = p.y_range();
                ax.features.push(Feature {
                    lo: x0,
                    hi: x1,
                    size,
                    radical: None,
                });
                ay.features.push(Feature {
                    lo: y0,
                    hi: y1,
                    size,
                    radical: None,
                });
            }
        }
    }
    if o.open {
        for l in &o.loops {
            for q in [l.first().map(Piece::start), l.last().map(Piece::end)]
                .into_iter()
                .flatten()
            {
                ax.lines.push(q[0]);
                ay.lines.push(q[1]);
            }
        }
    }
}

/// Points where a conductor's outline meets a dielectric's (ends of shared stretches
/// included): the field is singular there.
fn junctions(conductors: &[Outline], dielectrics: &[Outline]) -> Vec<Point> {
    let mut out = Vec::new();
    for c in conductors {
        let cb = c.bbox();
        for e in dielectrics {
            if !cb.meets(&e.bbox(), 0.0) {
                continue;
            }
            let span = extent(cb.union(e.bbox()));
            let tol = 1e-12 * span;
            for p in c.pieces() {
                let pb = p.bbox();
                for q in e.pieces() {
                    if pb.meets(&q.bbox(), tol) {
                        out.extend(crate::geometry::meet(p, q, tol));
                    }
                }
            }
        }
    }
    out
}

fn extent(b: BBox) -> f64 {
    (b.max[0] - b.min[0]).max(b.max[1] - b.min[1])
}

/// The lines inside `[a[0], a[1]]`, sorted, lines closer than `tol` merged (the domain
/// sides kept exactly).
fn merged(mut lines: Vec<f64>, a: [f64; 2], tol: f64) -> Vec<f64> {
    lines.retain(|t| t.is_finite() && *t > a[0] + tol && *t < a[1] - tol);
    lines.sort_by(f64::total_cmp);
    let mut out = vec![a[0]];
    for t in lines {
        if t - out[out.len() - 1] > tol {
            out.push(t);
        }
    }
    out.push(a[1]);
    out
}

/// Distance from `t` to the nearest line of the sorted `lines` other than `t` itself.
fn nearest_other(lines: &[f64], t: f64) -> f64 {
    let k = lines.partition_point(|&l| l < t);
    let below = lines[..k].last().map_or(f64::INFINITY, |l| t - l);
    let above = lines[k..]
        .iter()
        .find(|&&l| l > t)
        .map_or(f64::INFINITY, |l| l - t);
    below.min(above)
}

/// The target size at `a + u`: the smallest cone, capped at `coarsest`. Distances are taken
/// from `a`, so a point on `a` (or `b`) is exactly `u` (or `b - a - u`) away however large
/// the coordinates: next to a graded point the size is a steep power of that distance.
fn target(a: f64, u: f64, features: &[Feature], slope: f64, coarsest: f64) -> f64 {
    features.iter().fold(coarsest, |h, f| {
        let dist = ((f.lo - a) - u).max(u - (f.hi - a)).max(0.0);
        h.min(f.at(dist, slope))
    })
}

impl Feature {
    /// The cone's size at `dist` from the feature.
    fn at(&self, dist: f64, slope: f64) -> f64 {
        let size = self.size + slope * dist;
        match self.radical {
            Some(r) if dist < r.reach => {
                let at_reach = self.size + slope * r.reach;
                size.min(at_reach * (dist.max(r.floor) / r.reach).powf(r.power))
            }
            _ => size,
        }
    }
}

/// Counts of `∫ dt / h` this close (relative) above a whole number are that number: the
/// integral of a translated axis differs from the original's by rounding only,
/// and must not round up to one cell more.
const WHOLE: f64 = 1.0e-11;

/// Cells for the integral `s` of `1 / h` over one stretch between node lines: `s` rounded
/// up, at least 1.
fn count(s: f64) -> f64 {
    (s * (1.0 - WHOLE)).ceil().max(1.0)
}

/// The slope of the cones (the log of their growth per unit length over size) that keeps the
/// axis within `budget` cells: the grading's own when it does, else the first of a ladder
/// of steeper slopes (each `2^(1/4)` times the one before, up to 16 times) that does, or
/// the steepest.
fn slope_within(axis: &Axis, coarsest: f64, params: &Params, budget: f64) -> f64 {
    let base = params.growth.ln();
    let mut table = Vec::new();
    let mut slope = base;
    // Every stretch takes at least `min_cells` whatever the slope: past the budget already,
    // the ladder would end on its steepest step.
    let fewest = (axis.lines.len() - 1) as f64 * params.min_cells as f64;
    let first = if fewest > budget { STEEPER } else { 0 };
    for step in first..=STEEPER {
        slope = base * (step as f64 / 4.0).exp2();
        let cells: f64 = stretches(axis, coarsest, params, slope)
            .map(|(a, b, near)| count(integral(a, b, &near, slope, coarsest, &mut table)))
            .sum();
        if cells <= budget {
            break;
        }
    }
    slope
}

/// Steps of the ladder of [`slope_within`] above the grading's own slope.
const STEEPER: usize = 16;

/// Each stretch between neighbouring node lines, with the cones that can reach below the
/// cap inside it (the features of the axis and the `min_cells` limit of every stretch).
fn stretches<'a>(
    axis: &'a Axis,
    coarsest: f64,
    params: &Params,
    slope: f64,
) -> impl Iterator<Item = (f64, f64, Vec<Feature>)> + 'a {
    let min_cells = params.min_cells as f64;
    let gaps = axis.lines.windows(2).map(move |w| Feature {
        lo: w[0],
        hi: w[1],
        size: (w[1] - w[0]) / min_cells,
        radical: None,
    });
    let features: Vec<Feature> = axis.features.iter().copied().chain(gaps).collect();
    axis.lines.windows(2).map(move |w| {
        let (a, b) = (w[0], w[1]);
        let near = features
            .iter()
            .filter(|f| {
                let dist = (f.lo - b).max(a - f.hi).max(0.0);
                f.at(dist, slope) < coarsest
            })
            .copied()
            .collect();
        (a, b, near)
    })
}

/// `s(t) = ∫_a^t dt / h` over `[a, b]` into `table` as `(t - a, s)` pairs, returning
/// `s(b)`: the trapezoid rule on steps of h/16 from `a`, so the piecewise-linear map has
/// slope dt/ds the harmonic mean of two target sizes, never above either. The steps add up
/// from the stretch start, not in absolute coordinates, so that the many small steps next to
/// a graded point do not gather the rounding of a large coordinate (a translated design
/// gets its lines translated).
fn integral(
    a: f64,
    b: f64,
    near: &[Feature],
    slope: f64,
    coarsest: f64,
    table: &mut Vec<(f64, f64)>,
) -> f64 {
    table.clear();
    let len = b - a;
    let (mut u, mut s) = (0.0, 0.0);
    let mut h = target(a, 0.0, near, slope, coarsest);
    table.push((u, s));
    while u < len {
        let u1 = (u + h / 16.0).min(len);
        let h1 = target(a, u1, near, slope, coarsest);
        s += 0.5 * (u1 - u) * (1.0 / h + 1.0 / h1);
        (u, h) = (u1, h1);
        table.push((u, s));
    }
    s
}

/// The nodes of one axis: its node lines, and between each neighbouring pair nodes at
/// equal steps of `∫ dt / h` (the number of cells rounded up, times `split`).
fn graded_axis(axis: &Axis, coarsest: f64, params: &Params, slope: f64, split: usize) -> Vec<f64> {
    let mut out = vec![axis.lines[0]];
    let mut table: Vec<(f64, f64)> = Vec::new();
    for (a, b, near) in stretches(axis, coarsest, params, slope) {
        let s = integral(a, b, &near, slope, coarsest, &mut table);
        let n = count(s * params.density) * split as f64;
        let mut k = 0;
        for i in 1..n as usize {
            let si = s * i as f64 / n;
            while table[k + 1].1 < si {
                k += 1;
            }
            let ((u0, s0), (u1, s1)) = (table[k], table[k + 1]);
            let ti = a + (u0 + (u1 - u0) * (si - s0) / (s1 - s0));
            if ti > out[out.len() - 1] && ti < b {
                out.push(ti);
            }
        }
        out.push(b);
    }
    out
}

#[cfg(test)]
mod tests;
