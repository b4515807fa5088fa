//! The sentences for the library's design-rule errors: a [`DesignError`] (item, key, fault
//! with its data) becomes what the user reads, lengths restated in the design file's unit.
//!
//! Invariants: every fault the library can report has a sentence here (the match is
//! exhaustive over the variants known, with a plain rendering for any added later); edge and
//! hole numbers are 1-based as a reader counts them, vertex indices of `round_corners`
//! 0-based as that key takes them; potentials, permittivities, strengths, densities and
//! amounts are SI as the file writes them.

use fieldgrid_solver::design::{
    Boundary, Charge, Design, DesignError, Edge, Fault, Item, Meeting, OutsideDomain, Shape,
    ShapeFault,
};

use super::unit::LengthUnit;
use super::values::show;

/// Lengths of one file: metres to its unit, as the user writes them.
struct Lengths(LengthUnit);

impl Lengths {
    /// `v` metres in the file's unit with twelve significant digits (0.012 / 0.001 reads 12,
    /// not 12.000000000000002), without the unit's name.
    fn bare(&self, v: f64) -> String {
        let r: f64 = format!("{:.11e}", v / self.0.scale()).parse().unwrap_or(v);
        format!("{r}")
    }

    /// `v` metres in the file's unit, with its name.
    fn show(&self, v: f64) -> String {
        format!("{} {}", self.bare(v), self.0.name())
    }
}

/// The sentence for `e`, about `design` (whose shapes tell a rectangle's sides from a
/// polygon's edges), lengths in `unit`.
pub(super) fn describe(e: &DesignError, design: &Design, unit: LengthUnit) -> String {
    let l = Lengths(unit);
    match &e.fault {
        Fault::DomainExtent { .. } => {
            let k = e.key;
            format!("the domain needs {k} = [{k}0, {k}1] with finite {k}0 < {k}1")
        }
        // In metres: the limits are the arithmetic's, not the design's.
        Fault::DomainScale { range, min, max } => format!(
            "the domain spans [{:e}, {:e}] m: fieldgrid computes with domains between {min:e} m \
             and {max:e} m",
            range[0], range[1]
        ),
        Fault::AxisNotAtZero { x0 } => format!(
            "in axisymmetric mode x is the radius and must start at 0, not {}",
            l.show(*x0)
        ),
        Fault::CellNotPositive { cell } => {
            format!(
                "the cell size must be a positive number, got {}",
                l.show(*cell)
            )
        }
        Fault::DepthAxisymmetric => "depth applies to planar designs only".into(),
        Fault::NotPositive { value } => match e.key {
            "depth" => format!("depth must be a positive number, got {}", l.show(*value)),
            "strength" => format!(
                "the strength must be a positive number (V/m), got {}",
                show(*value)
            ),
            "permittivity" => format!(
                "the relative permittivity must be a positive number, got {}",
                show(*value)
            ),
            key => format!("`{key}` must be a positive number, got {}", show(*value)),
        },
        Fault::NotFinite { value } => {
            let what = match (e.item, e.key) {
                (Item::Sides, _) | (_, "potential") => "the potential",
                (_, "density") => "the density",
                (_, "amount") => "the amount",
                _ => "the value",
            };
            format!("{what} must be a finite number, got {value}")
        }
        Fault::AxisOffLeft => "only the left side of an axisymmetric design is the axis".into(),
        Fault::LeftIsAxis => {
            "in axisymmetric mode the left side is the axis and takes no condition".into()
        }
        Fault::PermittivityRange { value, min, max } => format!(
            "the relative permittivity must lie between {min} (vacuum; no material's static \
             permittivity is smaller) and {max:e}, got {}",
            show(*value)
        ),
        Fault::DuplicateConductor { name } => format!("a conductor named `{name}` already exists"),
        Fault::ConductorsMeet {
            conductor,
            other,
            how,
        } => {
            let how = match how {
                Meeting::Touch => "touches or overlaps",
                Meeting::Inside => "lies inside or around",
                _ => "meets",
            };
            format!(
                "conductor `{conductor}` {how} conductor `{other}`: two conductors must not \
                 touch or overlap; if they are one piece of metal (a pour and its via fence, \
                 say), give both the same `name` and potential so they form one conductor, and \
                 if they are separate, leave a gap between them"
            )
        }
        Fault::PolylineArea => "a polyline has no area: only conductors may be polylines".into(),
        Fault::Shape(f) => shape_fault(f, shape_of(design, e.item), &l),
        Fault::Outside(o) => outside_domain(o, &l),
        Fault::PointChargeOffAxis { x } => format!(
            "in axisymmetric mode a concentrated charge is a point charge and must lie on the \
             axis (x = 0), not at x = {}",
            l.show(*x)
        ),
        _ => format!("the design breaks the rule `{}`: {e}", e.code()),
    }
}

/// The shape of `item`, if it has one.
fn shape_of(design: &Design, item: Item) -> Option<&Shape> {
    match item {
        Item::Conductor(i) => design.conductors.get(i).map(|c| &c.shape),
        Item::ConductorPiece(i, p) => design.conductors.get(i)?.joined.get(p.checked_sub(1)?),
        Item::Dielectric(i) => design.dielectrics.get(i).map(|d| &d.shape),
        Item::Charge(i) => match design.charges.get(i)? {
            Charge::Region { shape, .. } => Some(shape),
            _ => None,
        },
        _ => None,
    }
}

/// A vertex loop as the user reads it.
fn boundary(b: Boundary) -> String {
    match b {
        Boundary::Hole(h) => format!("hole {}", h + 1),
        Boundary::Polyline => "the polyline".into(),
        _ => "the polygon".into(),
    }
}

/// An edge as the user reads it: a rectangle's sides by name, else numbered from 1.
fn edge(e: Edge, shape: Option<&Shape>) -> String {
    if let (Some(Shape::Rect { .. }), Boundary::Outer) = (shape, e.boundary) {
        let side = ["bottom", "right", "top", "left"].get(e.index).copied();
        return format!("the rectangle's {} side", side.unwrap_or("?"));
    }
    match e.boundary {
        Boundary::Polyline => format!("segment {} of the polyline", e.index + 1),
        b => format!("edge {} of {}", e.index + 1, boundary(b)),
    }
}

/// The sentence for a rule broken by one shape.
fn shape_fault(f: &ShapeFault, shape: Option<&Shape>, l: &Lengths) -> String {
    match f {
        ShapeFault::NotFinite => "every number of the shape must be finite".into(),
        ShapeFault::EmptyRect { .. } => {
            "a rectangle needs x = [x0, x1] with x0 < x1 and y = [y0, y1] with y0 < y1".into()
        }
        ShapeFault::NegativeRound { round } => {
            format!("round must not be negative, got {}", l.show(*round))
        }
        ShapeFault::RadiusNotPositive { radius } => {
            format!("the radius must be positive, got {}", l.show(*radius))
        }
        ShapeFault::RingInnerNegative { inner } => {
            format!("inner must not be negative, got {}", l.show(*inner))
        }
        ShapeFault::RingInnerNotSmaller { inner, outer } => format!(
            "inner ({}) must be smaller than outer ({})",
            l.show(*inner),
            l.show(*outer)
        ),
        ShapeFault::NoSuchVertex { vertex, vertices } => format!(
            "vertex {vertex} does not exist: the polygon has {vertices} vertices, numbered from \
             0 (the outer boundary's, then each hole's)"
        ),
        ShapeFault::TooFewVertices {
            boundary: b,
            count,
            needed,
            distinct,
        } => {
            let distinct = if *distinct { "distinct " } else { "" };
            let (whose, points) = match b {
                Boundary::Polyline => ("a polyline".to_string(), "points"),
                Boundary::Hole(_) => (boundary(*b), "vertices"),
                _ => ("a polygon".to_string(), "vertices"),
            };
            format!("{whose} needs at least {needed} {distinct}{points}, got {count}")
        }
        ShapeFault::ZeroEdge(e) => {
            let repeated = match e.boundary {
                Boundary::Polyline => "point",
                _ => "vertex",
            };
            format!("{} has zero length (repeated {repeated})", edge(*e, shape))
        }
        ShapeFault::NoArea { boundary: b } => {
            format!(
                "{} has no area (its vertices lie on one line)",
                boundary(*b)
            )
        }
        ShapeFault::EdgesMeet { first, second } => format!(
            "{} crosses or touches {}",
            edge(*first, shape),
            edge(*second, shape)
        ),
        ShapeFault::HoleOutside { hole } => {
            format!("hole {} is not inside the polygon", hole + 1)
        }
        ShapeFault::HoleInHole { hole, other } => {
            format!("hole {} lies inside hole {}", hole + 1, other + 1)
        }
        ShapeFault::RoundedOutlineMeets { round } => format!(
            "with round = {} the rounded outline crosses or touches itself",
            l.show(*round)
        ),
        ShapeFault::FoldsBack {
            boundary: b,
            vertex,
        } => format!(
            "{} folds straight back on itself at its vertex {}, which cannot be rounded",
            boundary(*b),
            vertex + 1
        ),
        ShapeFault::RoundTooLarge {
            round,
            edge: e,
            length,
            needed,
        } => format!(
            "round = {} is too large for {}, {} long: the fillets at its two ends need {}",
            l.show(*round),
            edge(*e, shape),
            l.show(*length),
            l.show(*needed)
        ),
        _ => format!("the shape breaks the rule `{}`: {f:?}", f.code()),
    }
}

/// The sentence for a shape or point outside the domain.
fn outside_domain(o: &OutsideDomain, l: &Lengths) -> String {
    let unit = l.0.name();
    let [[sx0, sx1], [sy0, sy1]] = o.shape.map(|r| r.map(|v| l.bare(v)));
    let [[dx0, dx1], [dy0, dy1]] = o.domain.map(|r| r.map(|v| l.bare(v)));
    let what = if o.axisymmetric {
        "the domain (only r >= 0 counts; r is x)"
    } else {
        "the domain"
    };
    let place = if o.is_point() {
        format!("the point ({sx0} {unit}, {sy0} {unit})")
    } else {
        format!("the shape ({sx0}..{sx1} {unit} by {sy0}..{sy1} {unit})")
    };
    format!("{place} does not lie inside {what} ({dx0}..{dx1} {unit} by {dy0}..{dy1} {unit})")
}
