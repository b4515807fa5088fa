//! Tests of the design rules: every rule refuses what it must and names the item and key,
//! and valid designs at the edges of the rules pass.

use super::*;
use crate::design::{Conductor, Dielectric, Domain, Probe, Sides};

fn base() -> Design {
    Design {
        domain: Domain {
            x: [0.0, 10.0],
            y: [0.0, 5.0],
            cell: 0.1,
        },
        ..Design::default()
    }
}

fn cond(name: &str, shape: Shape) -> Conductor {
    Conductor {
        name: name.into(),
        drive: Drive::Fixed(1.0),
        joined: Vec::new(),
        shape,
    }
}

fn rect(x: [f64; 2], y: [f64; 2]) -> Shape {
    Shape::Rect { x, y, round: 0.0 }
}

fn poly(v: &[[f64; 2]]) -> Shape {
    Shape::Polygon {
        outer: v.to_vec(),
        holes: vec![],
        round: 0.0,
        corners: None,
    }
}

#[track_caller]
fn fails(d: &Design, item: Item, key: &str) {
    match validate_design(d) {
        Err(e) => assert_eq!((e.item, e.key), (item, key), "{e}"),
        Ok(()) => panic!("expected an error on {item:?} {key}"),
    }
}

#[test]
fn a_sound_design_passes() {
    let mut d = base();
    d.conductors.push(cond("a", rect([1.0, 2.0], [1.0, 2.0])));
    d.conductors.push(cond(
        "b",
        Shape::Circle {
            center: [5.0, 2.5],
            radius: 1.0,
        },
    ));
    d.conductors.push(cond(
        "c",
        Shape::Polyline(vec![[7.0, 1.0], [9.0, 1.0], [9.0, 4.0]]),
    ));
    d.dielectrics.push(Dielectric {
        name: "s".into(),
        permittivity: 4.0,
        strength: None,
        shape: rect([0.0, 10.0], [0.0, 1.5]),
    });
    d.charges.push(Charge::Concentrated {
        name: "q".into(),
        at: [3.0, 3.0],
        amount: 1e-9,
    });
    d.probes.push(Probe {
        name: "p".into(),
        at: [10.0, 5.0],
    });
    validate_design(&d).unwrap();
}

#[test]
fn grid_rules() {
    let mut d = base();
    d.domain.cell = 0.0;
    fails(&d, Item::Grid, "cell");
    let mut d = base();
    d.domain.x = [1.0, 1.0];
    fails(&d, Item::Grid, "x");
    let mut d = base();
    d.domain.y = [0.0, f64::NAN];
    fails(&d, Item::Grid, "y");
    let mut d = base();
    d.mode = Mode::Axisymmetric;
    d.sides.left = Side::Axis;
    d.domain.x = [1.0, 3.0];
    fails(&d, Item::Grid, "x");
}

#[test]
fn top_side_and_background_rules() {
    let mut d = base();
    d.depth = Some(-1.0);
    fails(&d, Item::Top, "depth");
    let mut d = base();
    d.sides = Sides {
        top: Side::Fixed(f64::INFINITY),
        ..Sides::default()
    };
    fails(&d, Item::Sides, "top");
    let mut d = base();
    d.mode = Mode::Axisymmetric;
    fails(&d, Item::Sides, "left");
    let mut d = base();
    d.sides.right = Side::Axis;
    fails(&d, Item::Sides, "right");
    let mut d = base();
    d.background.permittivity = 0.0;
    fails(&d, Item::Background, "permittivity");
    let mut d = base();
    d.background.strength = Some(-3.0);
    fails(&d, Item::Background, "strength");
}

#[test]
fn conductor_number_rules() {
    let mut d = base();
    d.conductors.push(Conductor {
        name: "a".into(),
        drive: Drive::Fixed(f64::NAN),
        joined: Vec::new(),
        shape: rect([1.0, 2.0], [1.0, 2.0]),
    });
    fails(&d, Item::Conductor(0), "potential");
    let mut d = base();
    d.conductors.push(cond(
        "a",
        Shape::Circle {
            center: [f64::NAN, 1.0],
            radius: 1.0,
        },
    ));
    fails(&d, Item::Conductor(0), "circle");
    let mut d = base();
    d.conductors.push(cond(
        "a",
        Shape::Circle {
            center: [2.0, 2.0],
            radius: 0.0,
        },
    ));
    fails(&d, Item::Conductor(0), "circle");
}

#[test]
fn ring_rules() {
    let mut d = base();
    d.conductors.push(cond(
        "a",
        Shape::Ring {
            center: [2.0, 2.0],
            inner: 1.0,
            outer: 1.0,
        },
    ));
    fails(&d, Item::Conductor(0), "ring");
    let mut d = base();
    d.conductors.push(cond(
        "a",
        Shape::Ring {
            center: [2.0, 2.0],
            inner: -0.5,
            outer: 1.0,
        },
    ));
    fails(&d, Item::Conductor(0), "ring");
    let mut d = base();
    d.conductors.push(cond(
        "a",
        Shape::Ring {
            center: [2.0, 2.0],
            inner: 0.0,
            outer: 1.0,
        },
    ));
    validate_design(&d).unwrap();
}

#[test]
fn rect_and_round_rules() {
    let mut d = base();
    d.conductors.push(cond("a", rect([2.0, 1.0], [1.0, 2.0])));
    fails(&d, Item::Conductor(0), "rect");
    let mut d = base();
    d.conductors.push(cond(
        "a",
        Shape::Rect {
            x: [1.0, 2.0],
            y: [1.0, 3.0],
            round: 0.6,
        },
    ));
    fails(&d, Item::Conductor(0), "round");
    let mut d = base();
    d.conductors.push(cond(
        "a",
        Shape::Rect {
            x: [1.0, 2.0],
            y: [1.0, 3.0],
            round: -0.1,
        },
    ));
    fails(&d, Item::Conductor(0), "round");
    let mut d = base();
    d.conductors.push(cond(
        "a",
        Shape::Rect {
            x: [1.0, 2.0],
            y: [1.0, 3.0],
            round: 0.5,
        },
    ));
    validate_design(&d).unwrap();
}

#[test]
fn polygon_rules() {
    let mut d = base();
    d.conductors
        .push(cond("a", poly(&[[1.0, 1.0], [2.0, 1.0]])));
    fails(&d, Item::Conductor(0), "polygon");
    // A bow tie crosses itself.
    let mut d = base();
    d.conductors.push(cond(
        "a",
        poly(&[[1.0, 1.0], [2.0, 2.0], [2.0, 1.0], [1.0, 2.0]]),
    ));
    fails(&d, Item::Conductor(0), "polygon");
    // A vertex exactly on a non-adjacent edge touches it.
    let mut d = base();
    d.conductors.push(cond(
        "a",
        poly(&[[1.0, 1.0], [3.0, 1.0], [3.0, 3.0], [2.0, 1.0], [1.0, 3.0]]),
    ));
    fails(&d, Item::Conductor(0), "polygon");
    // A repeated vertex gives a zero-length edge.
    let mut d = base();
    d.conductors.push(cond(
        "a",
        poly(&[[1.0, 1.0], [2.0, 1.0], [2.0, 1.0], [1.0, 2.0]]),
    ));
    fails(&d, Item::Conductor(0), "polygon");
    // All vertices on a line.
    let mut d = base();
    d.conductors
        .push(cond("a", poly(&[[1.0, 1.0], [2.0, 1.0], [3.0, 1.0]])));
    fails(&d, Item::Conductor(0), "polygon");
    // A spike folding straight back.
    let mut d = base();
    d.conductors.push(cond(
        "a",
        poly(&[[1.0, 1.0], [3.0, 1.0], [2.0, 1.0], [2.0, 2.0]]),
    ));
    fails(&d, Item::Conductor(0), "polygon");
}

#[test]
fn hole_rules() {
    let outer = vec![[1.0, 1.0], [5.0, 1.0], [5.0, 4.0], [1.0, 4.0]];
    let hole = |v: &[[f64; 2]]| v.to_vec();
    let with = |holes: Vec<Vec<[f64; 2]>>| {
        let mut d = base();
        d.conductors.push(cond(
            "a",
            Shape::Polygon {
                outer: outer.clone(),
                holes,
                round: 0.0,
                corners: None,
            },
        ));
        d
    };
    validate_design(&with(vec![hole(&[[2.0, 2.0], [3.0, 2.0], [3.0, 3.0]])])).unwrap();
    // Hole crossing the outer boundary.
    fails(
        &with(vec![hole(&[[2.0, 2.0], [6.0, 2.0], [3.0, 3.0]])]),
        Item::Conductor(0),
        "holes",
    );
    // Hole outside.
    fails(
        &with(vec![hole(&[[6.0, 2.0], [7.0, 2.0], [7.0, 3.0]])]),
        Item::Conductor(0),
        "holes",
    );
    // Two holes crossing each other.
    let h1 = hole(&[[2.0, 2.0], [3.0, 2.0], [3.0, 3.0], [2.0, 3.0]]);
    let h2 = hole(&[[2.5, 2.5], [3.5, 2.5], [3.5, 3.5], [2.5, 3.5]]);
    fails(&with(vec![h1.clone(), h2]), Item::Conductor(0), "holes");
    // A hole inside another hole.
    let h3 = hole(&[[2.2, 2.2], [2.8, 2.2], [2.8, 2.8]]);
    fails(&with(vec![h1, h3]), Item::Conductor(0), "holes");
    // Too few vertices.
    fails(
        &with(vec![hole(&[[2.0, 2.0], [3.0, 2.0]])]),
        Item::Conductor(0),
        "holes",
    );
}

#[test]
fn round_too_large_for_a_notch() {
    // A notch 0.2 wide: its two concave fillets fit its bottom up to r = 0.1.
    let v = [
        [1.0, 1.0],
        [4.0, 1.0],
        [4.0, 4.0],
        [2.6, 4.0],
        [2.6, 2.0],
        [2.4, 2.0],
        [2.4, 4.0],
        [1.0, 4.0],
    ];
    let mut d = base();
    d.conductors.push(cond(
        "a",
        Shape::Polygon {
            outer: v.to_vec(),
            holes: vec![],
            round: 0.1,
            corners: None,
        },
    ));
    validate_design(&d).unwrap();
    let mut d = base();
    d.conductors.push(cond(
        "a",
        Shape::Polygon {
            outer: v.to_vec(),
            holes: vec![],
            round: 0.15,
            corners: None,
        },
    ));
    fails(&d, Item::Conductor(0), "round");
}

#[test]
fn polyline_rules() {
    let mut d = base();
    d.conductors
        .push(cond("a", Shape::Polyline(vec![[1.0, 1.0]])));
    fails(&d, Item::Conductor(0), "polyline");
    let mut d = base();
    d.conductors.push(cond(
        "a",
        Shape::Polyline(vec![[1.0, 1.0], [1.0, 1.0], [2.0, 1.0]]),
    ));
    fails(&d, Item::Conductor(0), "polyline");
    let mut d = base();
    d.dielectrics.push(Dielectric {
        name: "s".into(),
        permittivity: 2.0,
        strength: None,
        shape: Shape::Polyline(vec![[1.0, 1.0], [2.0, 1.0]]),
    });
    fails(&d, Item::Dielectric(0), "polyline");
    let mut d = base();
    d.charges.push(Charge::Region {
        name: "q".into(),
        density: 1.0,
        shape: Shape::Polyline(vec![[1.0, 1.0], [2.0, 1.0]]),
    });
    fails(&d, Item::Charge(0), "polyline");
}

#[test]
fn shapes_must_lie_inside_the_domain() {
    let mut d = base();
    d.conductors.push(cond("a", rect([9.0, 10.5], [1.0, 2.0])));
    fails(&d, Item::Conductor(0), "rect");
    // Touching a side is allowed, and so is rounding of 1e-10 relative.
    let mut d = base();
    d.conductors
        .push(cond("a", rect([9.0, 10.0 + 1e-10], [0.0, 2.0])));
    validate_design(&d).unwrap();
    let mut d = base();
    d.dielectrics.push(Dielectric {
        name: "s".into(),
        permittivity: 2.0,
        strength: None,
        shape: Shape::Circle {
            center: [1.0, 1.0],
            radius: 1.5,
        },
    });
    fails(&d, Item::Dielectric(0), "circle");
    let mut d = base();
    d.charges.push(Charge::Region {
        name: "q".into(),
        density: 1.0,
        shape: rect([-1.0, 1.0], [1.0, 2.0]),
    });
    fails(&d, Item::Charge(0), "rect");
}

#[test]
fn axisymmetric_shapes_may_cross_the_axis() {
    let mut d = base();
    d.mode = Mode::Axisymmetric;
    d.sides.left = Side::Axis;
    d.conductors.push(cond(
        "sphere",
        Shape::Circle {
            center: [0.0, 2.5],
            radius: 1.0,
        },
    ));
    d.conductors
        .push(cond("disc", rect([-1.0, 2.0], [4.0, 4.5])));
    validate_design(&d).unwrap();
    // Entirely on the negative side: outside.
    d.conductors
        .push(cond("ghost", rect([-2.0, -1.0], [0.5, 1.0])));
    fails(&d, Item::Conductor(2), "rect");
    // Still bounded on the right.
    let mut d2 = base();
    d2.mode = Mode::Axisymmetric;
    d2.sides.left = Side::Axis;
    d2.conductors
        .push(cond("a", rect([-1.0, 11.0], [1.0, 2.0])));
    fails(&d2, Item::Conductor(0), "rect");
}

#[test]
fn axisymmetric_point_charge_on_the_axis() {
    let mut d = base();
    d.mode = Mode::Axisymmetric;
    d.sides.left = Side::Axis;
    d.charges.push(Charge::Concentrated {
        name: "q".into(),
        at: [0.5, 2.0],
        amount: 1e-12,
    });
    fails(&d, Item::Charge(0), "at");
    d.charges[0] = Charge::Concentrated {
        name: "q".into(),
        at: [0.0, 2.0],
        amount: 1e-12,
    };
    validate_design(&d).unwrap();
    d.charges[0] = Charge::Concentrated {
        name: "q".into(),
        at: [0.0, 2.0],
        amount: f64::NAN,
    };
    fails(&d, Item::Charge(0), "amount");
}

#[test]
fn charge_probe_and_dielectric_numbers() {
    let mut d = base();
    d.charges.push(Charge::Concentrated {
        name: "q".into(),
        at: [11.0, 2.0],
        amount: 1e-12,
    });
    fails(&d, Item::Charge(0), "at");
    let mut d = base();
    d.charges.push(Charge::Region {
        name: "q".into(),
        density: f64::INFINITY,
        shape: rect([1.0, 2.0], [1.0, 2.0]),
    });
    fails(&d, Item::Charge(0), "density");
    let mut d = base();
    d.probes.push(Probe {
        name: "p".into(),
        at: [1.0, -1.0],
    });
    fails(&d, Item::Probe(0), "at");
    let mut d = base();
    d.dielectrics.push(Dielectric {
        name: "s".into(),
        permittivity: -2.0,
        strength: None,
        shape: rect([1.0, 2.0], [1.0, 2.0]),
    });
    fails(&d, Item::Dielectric(0), "permittivity");
    let mut d = base();
    d.dielectrics.push(Dielectric {
        name: "s".into(),
        permittivity: 2.0,
        strength: Some(0.0),
        shape: rect([1.0, 2.0], [1.0, 2.0]),
    });
    fails(&d, Item::Dielectric(0), "strength");
    // Dielectrics may overlap each other and conductors.
    let mut d = base();
    d.conductors.push(cond("a", rect([1.0, 2.0], [1.0, 2.0])));
    for _ in 0..2 {
        d.dielectrics.push(Dielectric {
            name: "s".into(),
            permittivity: 2.0,
            strength: None,
            shape: rect([0.5, 3.0], [0.5, 3.0]),
        });
    }
    validate_design(&d).unwrap();
}

#[test]
fn conductor_names_unique() {
    let mut d = base();
    d.conductors.push(cond("a", rect([1.0, 2.0], [1.0, 2.0])));
    d.conductors.push(cond("a", rect([3.0, 4.0], [1.0, 2.0])));
    fails(&d, Item::Conductor(1), "name");
}

#[test]
fn conductors_must_not_overlap() {
    let cases: Vec<(Shape, Shape)> = vec![
        // Crossing outlines.
        (rect([1.0, 3.0], [1.0, 3.0]), rect([2.0, 4.0], [2.0, 4.0])),
        // Touching along an edge.
        (rect([1.0, 2.0], [1.0, 2.0]), rect([2.0, 3.0], [1.0, 2.0])),
        // One inside the other.
        (
            rect([1.0, 5.0], [1.0, 4.0]),
            Shape::Circle {
                center: [3.0, 2.5],
                radius: 0.5,
            },
        ),
        (
            Shape::Circle {
                center: [3.0, 2.5],
                radius: 0.5,
            },
            rect([1.0, 5.0], [1.0, 4.0]),
        ),
        // A circle tangent to a rectangle.
        (
            rect([1.0, 2.0], [1.0, 2.0]),
            Shape::Circle {
                center: [3.0, 1.5],
                radius: 1.0,
            },
        ),
        // Two circles touching.
        (
            Shape::Circle {
                center: [2.0, 2.0],
                radius: 1.0,
            },
            Shape::Circle {
                center: [4.0, 2.0],
                radius: 1.0,
            },
        ),
        // A polyline crossing a rectangle, and one inside it.
        (
            rect([1.0, 2.0], [1.0, 2.0]),
            Shape::Polyline(vec![[0.5, 1.5], [3.0, 1.5]]),
        ),
        (
            rect([1.0, 2.0], [1.0, 2.0]),
            Shape::Polyline(vec![[1.2, 1.5], [1.8, 1.5]]),
        ),
        // Two polylines crossing.
        (
            Shape::Polyline(vec![[1.0, 1.0], [3.0, 3.0]]),
            Shape::Polyline(vec![[1.0, 3.0], [3.0, 1.0]]),
        ),
        // Inside a ring's material, and not in its hole: overlap.
        (
            Shape::Ring {
                center: [3.0, 2.5],
                inner: 1.0,
                outer: 2.0,
            },
            Shape::Circle {
                center: [3.0, 1.0],
                radius: 0.2,
            },
        ),
    ];
    for (a, b) in cases {
        let mut d = base();
        d.conductors.push(cond("a", a.clone()));
        d.conductors.push(cond("b", b.clone()));
        fails(&d, Item::Conductor(1), shape_key(&b));
    }
    // A conductor in a ring's hole is fine, and so are near neighbours.
    let mut d = base();
    d.conductors.push(cond(
        "ring",
        Shape::Ring {
            center: [3.0, 2.5],
            inner: 1.0,
            outer: 2.0,
        },
    ));
    d.conductors.push(cond(
        "core",
        Shape::Circle {
            center: [3.0, 2.5],
            radius: 0.5,
        },
    ));
    d.conductors
        .push(cond("next", rect([5.0 + 1e-6, 6.0], [1.0, 2.0])));
    validate_design(&d).unwrap();
}

#[test]
fn axisymmetric_overlap_only_counts_for_r_positive() {
    // Two rectangles that meet only at x < 0 do not overlap.
    let mut d = base();
    d.mode = Mode::Axisymmetric;
    d.sides.left = Side::Axis;
    // Their slanted edges cross at x = -0.8.
    d.conductors.push(cond(
        "a",
        poly(&[[-2.0, 1.0], [1.0, 1.0], [1.0, 1.5], [-2.0, 3.5]]),
    ));
    d.conductors.push(cond(
        "b",
        poly(&[[-2.0, 2.5], [1.0, 3.0], [1.0, 4.0], [-2.0, 4.0]]),
    ));
    validate_design(&d).unwrap();
    d.mode = Mode::Planar;
    d.sides.left = Side::Ground;
    d.domain.x = [-3.0, 10.0];
    fails(&d, Item::Conductor(1), "polygon");
}

mod faults;
