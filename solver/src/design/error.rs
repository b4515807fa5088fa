//! Design-rule errors as typed data: which item and key of the design broke which rule, with
//! the numbers, names and indices the rule is about.
//!
//! A [`DesignError`] names the [`Item`] and the key at fault, so a reader can point at the span
//! it came from, and carries a [`Fault`]; a shape's own faults are a [`ShapeFault`] (also the
//! error of [`crate::geometry::outline`], inside a [`ShapeError`]). Each fault has a short,
//! stable [`code`](Fault::code) (lower case words joined by `-`) that scripts and tests match;
//! codes are never renamed or reused, a new rule gets a new variant and a new code.
//!
//! Invariants: the library builds no sentences here; `Display` is a plain rendering of the data
//! (code, item, key, fields) for logs, and the command-line reader writes what users read, in
//! the design file's unit. Lengths are metres. Indices are 0-based and count in the user's
//! order: vertex k of a polygon counts through the outer boundary and then each hole (as
//! `round_corners` does), edge k runs from vertex k to vertex k + 1 of its loop, hole h is the
//! h-th entry of `holes`, whatever orientation the outline is drawn in.

use std::fmt;

/// Which item of a design an error is about, so a reader can point at its span.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
#[non_exhaustive]
pub enum Item {
    /// The design as a whole (top-level keys such as `mode`).
    Top,
    /// The `[grid]` table.
    Grid,
    /// The `[sides]` table.
    Sides,
    /// The `[background]` table.
    Background,
    /// Conductor i (0-based, in the order of `Design::conductors`); its first piece.
    Conductor(usize),
    /// Piece p >= 1 of conductor i (`joined[p - 1]`).
    ConductorPiece(usize, usize),
    /// `[[dielectric]]` number i.
    Dielectric(usize),
    /// `[[charge]]` number i.
    Charge(usize),
    /// `[[probe]]` number i.
    Probe(usize),
}

/// A design that breaks a rule of the contract: where, and which rule with its data.
#[derive(Clone, Debug, PartialEq, thiserror::Error)]
#[error("{} at {item:?} `{key}`: {fault:?}", fault.code())]
#[non_exhaustive]
pub struct DesignError {
    /// The offending item.
    pub item: Item,
    /// The offending key within the item (for example `"polygon"`, `"permittivity"`).
    pub key: &'static str,
    /// The rule broken, with its data.
    pub fault: Fault,
}

impl DesignError {
    /// A new error about `key` of `item`.
    pub fn new(item: Item, key: &'static str, fault: Fault) -> Self {
        DesignError { item, key, fault }
    }

    /// The stable code of the rule broken (see [`Fault::code`]).
    pub fn code(&self) -> &'static str {
        self.fault.code()
    }
}

/// How two conductors meet.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
#[non_exhaustive]
pub enum Meeting {
    /// Their outlines touch or cross.
    Touch,
    /// One lies inside the other (or inside its material, not in a hole).
    Inside,
}

/// A rule of the design broken, with what it is about. Which quantity a generic fault
/// (`NotPositive`, `NotFinite`) concerns is the error's key.
#[derive(Clone, Debug, PartialEq)]
#[non_exhaustive]
pub enum Fault {
    /// The domain's extent along the key's axis is not finite with x0 < x1.
    DomainExtent {
        /// The extent given, m.
        range: [f64; 2],
    },
    /// The domain's extent along the key's axis lies outside the range the arithmetic holds.
    DomainScale {
        /// The extent given, m.
        range: [f64; 2],
        /// Smallest width accepted, m.
        min: f64,
        /// Largest coordinate accepted, m.
        max: f64,
    },
    /// An axisymmetric domain's x (the radius) does not start at 0.
    AxisNotAtZero {
        /// Where it starts, m.
        x0: f64,
    },
    /// The cell size is not a positive number.
    CellNotPositive {
        /// The cell size given, m.
        cell: f64,
    },
    /// `depth` is given for an axisymmetric design.
    DepthAxisymmetric,
    /// A quantity that must be a positive number is not (depth, m; strength, V/m;
    /// permittivity, relative).
    NotPositive {
        /// The value given.
        value: f64,
    },
    /// A quantity that must be finite is not (a potential, a density, an amount).
    NotFinite {
        /// The value given.
        value: f64,
    },
    /// A side other than an axisymmetric design's left is marked as the axis.
    AxisOffLeft,
    /// An axisymmetric design's left side is given a condition: it is the axis.
    LeftIsAxis,
    /// A relative permittivity outside the accepted range.
    PermittivityRange {
        /// The value given.
        value: f64,
        /// Smallest accepted (vacuum's).
        min: f64,
        /// Largest accepted.
        max: f64,
    },
    /// Two conductors have one name (a reader joins the tables of one name into one
    /// conductor's pieces; a design built in code may repeat a name).
    DuplicateConductor {
        /// The name.
        name: String,
    },
    /// A piece of a conductor touches or overlaps, or lies inside, an earlier conductor.
    ConductorsMeet {
        /// The conductor of the offending piece.
        conductor: String,
        /// The earlier conductor it meets.
        other: String,
        /// How they meet.
        how: Meeting,
    },
    /// A dielectric or a charge region drawn as a polyline, which has no area.
    PolylineArea,
    /// The shape breaks a shape rule.
    Shape(ShapeFault),
    /// The shape or point does not lie inside the domain.
    Outside(OutsideDomain),
    /// A concentrated charge of an axisymmetric design off the axis.
    PointChargeOffAxis {
        /// Its x (radius), m.
        x: f64,
    },
}

impl Fault {
    /// The stable code of this rule; a shape fault keeps the shape fault's code.
    pub fn code(&self) -> &'static str {
        match self {
            Fault::DomainExtent { .. } => "domain-extent",
            Fault::DomainScale { .. } => "domain-scale",
            Fault::AxisNotAtZero { .. } => "axis-not-at-zero",
            Fault::CellNotPositive { .. } => "cell-not-positive",
            Fault::DepthAxisymmetric => "depth-axisymmetric",
            Fault::NotPositive { .. } => "not-positive",
            Fault::NotFinite { .. } => "not-finite",
            Fault::AxisOffLeft => "axis-off-left",
            Fault::LeftIsAxis => "left-is-axis",
            Fault::PermittivityRange { .. } => "permittivity-range",
            Fault::DuplicateConductor { .. } => "duplicate-conductor",
            Fault::ConductorsMeet { .. } => "conductors-meet",
            Fault::PolylineArea => "polyline-area",
            Fault::Shape(s) => s.code(),
            Fault::Outside(_) => "outside-domain",
            Fault::PointChargeOffAxis { .. } => "point-charge-off-axis",
        }
    }
}

/// A vertex loop of a shape.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
#[non_exhaustive]
pub enum Boundary {
    /// A polygon's outer boundary, or a rectangle's four corners (from its lower left,
    /// counter-clockwise: edge 0 is the bottom side).
    Outer,
    /// Hole h (0-based) of a polygon.
    Hole(usize),
    /// A polyline's points.
    Polyline,
}

/// An edge of a shape: edge `index` runs from vertex `index` to the next of its loop.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub struct Edge {
    /// Its loop.
    pub boundary: Boundary,
    /// Its index in the loop, 0-based.
    pub index: usize,
}

/// A rule on one shape broken, with what it is about.
#[derive(Clone, Debug, PartialEq)]
#[non_exhaustive]
pub enum ShapeFault {
    /// A number of the shape is not finite.
    NotFinite,
    /// A rectangle without x0 < x1 and y0 < y1.
    EmptyRect {
        /// Its x extent, m.
        x: [f64; 2],
        /// Its y extent, m.
        y: [f64; 2],
    },
    /// A negative fillet radius.
    NegativeRound {
        /// The radius, m.
        round: f64,
    },
    /// A circle whose radius is not positive.
    RadiusNotPositive {
        /// The radius, m.
        radius: f64,
    },
    /// A ring whose inner radius is negative.
    RingInnerNegative {
        /// The inner radius, m.
        inner: f64,
    },
    /// A ring whose inner radius is not smaller than its outer.
    RingInnerNotSmaller {
        /// The inner radius, m.
        inner: f64,
        /// The outer radius, m.
        outer: f64,
    },
    /// `round_corners` names a vertex the polygon does not have.
    NoSuchVertex {
        /// The index named.
        vertex: usize,
        /// Vertices of the polygon, holes included.
        vertices: usize,
    },
    /// A loop or polyline with too few vertices (or distinct vertices).
    TooFewVertices {
        /// The loop.
        boundary: Boundary,
        /// How many it has.
        count: usize,
        /// How many it needs.
        needed: usize,
        /// True when repeated vertices were not counted.
        distinct: bool,
    },
    /// An edge (a polyline's segment) of zero length: a vertex repeated.
    ZeroEdge(Edge),
    /// A loop of no area: its vertices lie on one line.
    NoArea {
        /// The loop.
        boundary: Boundary,
    },
    /// Two edges of a polygon cross or touch (`first` before `second` in vertex order).
    EdgesMeet {
        /// The earlier edge.
        first: Edge,
        /// The later edge.
        second: Edge,
    },
    /// A hole not inside the polygon's outer boundary.
    HoleOutside {
        /// The hole, 0-based.
        hole: usize,
    },
    /// A hole inside another hole.
    HoleInHole {
        /// The hole, 0-based.
        hole: usize,
        /// The hole around it, 0-based.
        other: usize,
    },
    /// The rounded outline crosses or touches itself.
    RoundedOutlineMeets {
        /// The fillet radius, m.
        round: f64,
    },
    /// The outline folds straight back on itself at a vertex to be rounded.
    FoldsBack {
        /// The loop.
        boundary: Boundary,
        /// The vertex, 0-based in its loop.
        vertex: usize,
    },
    /// The fillets at both ends of an edge need more than its length.
    RoundTooLarge {
        /// The fillet radius, m.
        round: f64,
        /// The edge.
        edge: Edge,
        /// Its length, m.
        length: f64,
        /// What the fillets at its ends take of it, m.
        needed: f64,
    },
}

impl ShapeFault {
    /// The stable code of this shape rule.
    pub fn code(&self) -> &'static str {
        match self {
            ShapeFault::NotFinite => "shape-not-finite",
            ShapeFault::EmptyRect { .. } => "empty-rect",
            ShapeFault::NegativeRound { .. } => "negative-round",
            ShapeFault::RadiusNotPositive { .. } => "radius-not-positive",
            ShapeFault::RingInnerNegative { .. } => "ring-inner-negative",
            ShapeFault::RingInnerNotSmaller { .. } => "ring-inner-not-smaller",
            ShapeFault::NoSuchVertex { .. } => "no-such-vertex",
            ShapeFault::TooFewVertices { .. } => "too-few-vertices",
            ShapeFault::ZeroEdge(_) => "zero-edge",
            ShapeFault::NoArea { .. } => "no-area",
            ShapeFault::EdgesMeet { .. } => "edges-meet",
            ShapeFault::HoleOutside { .. } => "hole-outside",
            ShapeFault::HoleInHole { .. } => "hole-in-hole",
            ShapeFault::RoundedOutlineMeets { .. } => "rounded-outline-meets",
            ShapeFault::FoldsBack { .. } => "folds-back",
            ShapeFault::RoundTooLarge { .. } => "round-too-large",
        }
    }
}

/// A shape that cannot be turned into an outline (for example a fillet radius too large for
/// an edge).
#[derive(Clone, Debug, PartialEq)]
#[non_exhaustive]
pub struct ShapeError {
    /// The shape key at fault: `"rect"`, `"circle"`, `"ring"`, `"polygon"`, `"holes"`,
    /// `"round"` or `"polyline"`.
    pub key: &'static str,
    /// The rule broken.
    pub fault: ShapeFault,
}

impl ShapeError {
    pub(crate) fn new(key: &'static str, fault: ShapeFault) -> Self {
        ShapeError { key, fault }
    }
}

impl fmt::Display for ShapeError {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        write!(
            f,
            "{} at `{}`: {:?}",
            self.fault.code(),
            self.key,
            self.fault
        )
    }
}

impl std::error::Error for ShapeError {}

/// A shape or point that does not lie inside the domain.
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct OutsideDomain {
    /// The shape's extent, m: [[x0, x1], [y0, y1]].
    pub shape: [[f64; 2]; 2],
    /// The domain's extent, m: [[x0, x1], [y0, y1]].
    pub domain: [[f64; 2]; 2],
    /// Axisymmetric mode: only the part at r >= 0 counts.
    pub axisymmetric: bool,
}

impl OutsideDomain {
    /// True when the offending shape is a single point (a probe or a concentrated charge).
    pub fn is_point(&self) -> bool {
        self.shape[0][0] == self.shape[0][1] && self.shape[1][0] == self.shape[1][1]
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn display_renders_the_code_and_the_data() {
        let e = DesignError::new(
            Item::Conductor(2),
            "round",
            Fault::Shape(ShapeFault::NegativeRound { round: -0.5 }),
        );
        assert_eq!(e.code(), "negative-round");
        assert_eq!(
            e.to_string(),
            "negative-round at Conductor(2) `round`: Shape(NegativeRound { round: -0.5 })"
        );
    }
}
