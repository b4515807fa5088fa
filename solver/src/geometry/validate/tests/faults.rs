//! The data each design-rule error carries: the fault's variant and code, with the names,
//! indices (in the user's vertex order) and numbers it is about.

use super::*;
use crate::design::{Boundary, Edge, Meeting, OutsideDomain, ShapeFault};

/// The fault of `d`'s first broken rule, checked to be about `key` of `item`.
#[track_caller]
fn fault(d: &Design, item: Item, key: &str) -> Fault {
    let e = validate_design(d).expect_err("a broken rule");
    assert_eq!((e.item, e.key), (item, key), "{e}");
    assert_eq!(e.code(), e.fault.code());
    e.fault
}

fn one_conductor(shape: Shape) -> Design {
    let mut d = base();
    d.conductors.push(cond("a", shape));
    d
}

#[test]
fn meeting_conductors_are_named_with_how_they_meet() {
    let mut d = base();
    d.conductors
        .push(cond("pour", rect([1.0, 5.0], [1.0, 4.0])));
    d.conductors.push(cond("via", rect([2.0, 3.0], [2.0, 3.0])));
    let f = fault(&d, Item::Conductor(1), "rect");
    assert_eq!(f.code(), "conductors-meet");
    assert_eq!(
        f,
        Fault::ConductorsMeet {
            conductor: "via".into(),
            other: "pour".into(),
            how: Meeting::Inside,
        }
    );
    d.conductors[1].shape = rect([4.0, 6.0], [2.0, 3.0]);
    assert!(matches!(
        fault(&d, Item::Conductor(1), "rect"),
        Fault::ConductorsMeet {
            how: Meeting::Touch,
            ..
        }
    ));
}

/// The edge a fillet of `round` does not fit, for the polygon through `v`.
#[track_caller]
fn unfit_edge(v: &[[f64; 2]], round: f64) -> (Edge, f64, f64) {
    let d = one_conductor(Shape::Polygon {
        outer: v.to_vec(),
        holes: vec![],
        round,
        corners: None,
    });
    match fault(&d, Item::Conductor(0), "round") {
        Fault::Shape(ShapeFault::RoundTooLarge {
            round: r,
            edge,
            length,
            needed,
        }) => {
            assert_eq!(r, round);
            (edge, length, needed)
        }
        f => panic!("not a fillet too large: {f:?}"),
    }
}

#[test]
fn a_fillet_too_large_names_the_edge_in_the_users_order() {
    // Drawn clockwise, so the outline is reversed inside. Only the top edge, 0.5 long from
    // (1, 4) to (1.5, 4), cannot hold its fillets at round 0.4 (0.4 at its right angle, 0.2
    // at its 53 degree turn); it is edge 0 as given (edge 3 of the reversed loop).
    let cw = [[1.0, 4.0], [1.5, 4.0], [3.0, 2.0], [3.0, 1.0], [1.0, 1.0]];
    let (edge, length, needed) = unfit_edge(&cw, 0.4);
    assert_eq!(
        edge,
        Edge {
            boundary: Boundary::Outer,
            index: 0
        }
    );
    assert_eq!(length, 0.5);
    assert!((needed - 0.6).abs() < 1e-12, "{needed}");
    // Listed counter-clockwise, the same edge runs from vertex 3 to vertex 4.
    let mut ccw = cw;
    ccw.reverse();
    assert_eq!(unfit_edge(&ccw, 0.4).0.index, 3);
}

#[test]
fn a_rectangles_fillet_names_its_side() {
    let d = one_conductor(Shape::Rect {
        x: [1.0, 2.0],
        y: [1.0, 3.0],
        round: 0.6,
    });
    // Edge 0 is the bottom side, 1 long; the sides are 2 long and hold 1.2.
    assert!(matches!(
        fault(&d, Item::Conductor(0), "round"),
        Fault::Shape(ShapeFault::RoundTooLarge {
            edge: Edge {
                boundary: Boundary::Outer,
                index: 0
            },
            ..
        })
    ));
}

#[test]
fn crossing_edges_and_holes_are_numbered_from_zero() {
    let outer = vec![[1.0, 1.0], [5.0, 1.0], [5.0, 4.0], [1.0, 4.0]];
    let with = |holes: Vec<Vec<[f64; 2]>>| {
        one_conductor(Shape::Polygon {
            outer: outer.clone(),
            holes,
            round: 0.0,
            corners: None,
        })
    };
    let f = fault(
        &with(vec![vec![[2.0, 2.0], [6.0, 2.0], [3.0, 3.0]]]),
        Item::Conductor(0),
        "holes",
    );
    assert_eq!(f.code(), "edges-meet");
    assert_eq!(
        f,
        Fault::Shape(ShapeFault::EdgesMeet {
            first: Edge {
                boundary: Boundary::Outer,
                index: 1
            },
            second: Edge {
                boundary: Boundary::Hole(0),
                index: 0
            },
        })
    );
    let h1 = vec![[2.0, 2.0], [3.0, 2.0], [3.0, 3.0], [2.0, 3.0]];
    let h2 = vec![[2.2, 2.2], [2.8, 2.2], [2.8, 2.8]];
    assert_eq!(
        fault(&with(vec![h1, h2]), Item::Conductor(0), "holes"),
        Fault::Shape(ShapeFault::HoleInHole { hole: 1, other: 0 })
    );
    assert_eq!(
        fault(
            &with(vec![vec![[2.0, 2.0], [3.0, 2.0], [3.0, 2.0], [2.0, 3.0]]]),
            Item::Conductor(0),
            "holes"
        ),
        Fault::Shape(ShapeFault::ZeroEdge(Edge {
            boundary: Boundary::Hole(0),
            index: 1
        }))
    );
}

#[test]
fn a_point_outside_the_domain_keeps_both_extents() {
    let mut d = base();
    d.charges.push(Charge::Concentrated {
        name: "q".into(),
        at: [11.0, 2.0],
        amount: 1e-12,
    });
    assert_eq!(
        fault(&d, Item::Charge(0), "at"),
        Fault::Outside(OutsideDomain {
            shape: [[11.0, 11.0], [2.0, 2.0]],
            domain: [[0.0, 10.0], [0.0, 5.0]],
            axisymmetric: false,
        })
    );
}

#[test]
fn numbers_out_of_range_are_carried() {
    let mut d = base();
    d.background.permittivity = 0.5;
    assert_eq!(
        fault(&d, Item::Background, "permittivity"),
        Fault::PermittivityRange {
            value: 0.5,
            min: MIN_PERMITTIVITY,
            max: MAX_PERMITTIVITY,
        }
    );
    let mut d = base();
    d.domain.cell = -0.1;
    assert_eq!(
        fault(&d, Item::Grid, "cell"),
        Fault::CellNotPositive { cell: -0.1 }
    );
    let mut d = base();
    d.conductors.push(cond("a", rect([1.0, 2.0], [1.0, 2.0])));
    d.conductors.push(cond("a", rect([3.0, 4.0], [1.0, 2.0])));
    assert_eq!(
        fault(&d, Item::Conductor(1), "name").code(),
        "duplicate-conductor"
    );
}
