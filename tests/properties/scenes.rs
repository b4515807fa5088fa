//! The random designs the properties draw: shapes of five kinds from uniform fractions,
//! placed in the four quadrants of the domain so that conductors never overlap, with a
//! dielectric, a charge region and random sides.

use fieldgrid_solver::design::{
    Background, Charge, Conductor, Design, Dielectric, Domain, Drive, Lattice, Mode, Point, Shape,
    Side, Sides,
};
use proptest::prelude::*;
use proptest::strategy::ValueTree;

use crate::runner;

/// Uniform fractions that shapes and values are drawn from.
pub(crate) type Fractions = [f64; 16];

pub(crate) fn fractions() -> impl Strategy<Value = Fractions> {
    prop::array::uniform16(0.0f64..1.0)
}

/// A convex polygon: `n` points on an ellipse at sorted random angles.
pub(crate) fn convex(c: Point, r: [f64; 2], n: usize, f: &[f64]) -> Vec<Point> {
    let mut a: Vec<f64> = (0..n)
        .map(|k| (k as f64 + 0.15 + 0.7 * f[k % f.len()]) / n as f64 * std::f64::consts::TAU)
        .collect();
    a.sort_by(f64::total_cmp);
    a.iter()
        .map(|t| [c[0] + r[0] * t.cos(), c[1] + r[1] * t.sin()])
        .collect()
}

/// A star-shaped (generally non-convex) polygon.
pub(crate) fn star(c: Point, r: f64, n: usize, f: &[f64]) -> Vec<Point> {
    (0..n)
        .map(|k| {
            let t = (k as f64 + 0.2 + 0.6 * f[k % f.len()]) / n as f64 * std::f64::consts::TAU;
            let rr = r * (0.55 + 0.45 * f[(k + 7) % f.len()]);
            [c[0] + rr * t.cos(), c[1] + rr * t.sin()]
        })
        .collect()
}

/// A shape of kind `kind % 5` inside the box `[x0, x1] x [y0, y1]`.
pub(crate) fn shape_in(kind: usize, f: &Fractions, b: [f64; 4]) -> Shape {
    let [x0, x1, y0, y1] = b;
    let (w, h) = (x1 - x0, y1 - y0);
    let c = [x0 + w * (0.4 + 0.2 * f[0]), y0 + h * (0.4 + 0.2 * f[1])];
    let (rx, ry) = (w * (0.18 + 0.2 * f[2]), h * (0.18 + 0.2 * f[3]));
    match kind % 5 {
        0 => Shape::Rect {
            x: [c[0] - rx, c[0] + rx],
            y: [c[1] - ry, c[1] + ry],
            round: if f[4] < 0.5 {
                0.0
            } else {
                0.4 * rx.min(ry) * f[5]
            },
        },
        1 => Shape::Circle {
            center: c,
            radius: rx.min(ry),
        },
        2 => Shape::Ring {
            center: c,
            inner: rx.min(ry) * (0.35 + 0.25 * f[6]),
            outer: rx.min(ry),
        },
        3 => Shape::Polygon {
            outer: convex(c, [rx, ry], 3 + (f[7] * 5.0) as usize, &f[8..]),
            holes: Vec::new(),
            round: 0.0,
            corners: None,
        },
        _ => Shape::Polyline(vec![
            [c[0] - rx, c[1] - ry * f[9]],
            [c[0] + rx * (f[10] - 0.5), c[1] + ry],
            [c[0] + rx, c[1] - ry * f[11]],
        ]),
    }
}

pub(crate) fn side_of(k: usize, v: f64) -> Side {
    match k % 4 {
        0 => Side::Ground,
        1 => Side::Symmetry,
        2 => Side::Open,
        _ => Side::Fixed(v),
    }
}

/// A random planar or axisymmetric design: up to four conductors in the four quadrants of
/// the domain (so they never overlap), a dielectric, a charge region, random sides.
#[derive(Clone, Debug)]
pub(crate) struct Scene {
    kinds: [usize; 4],
    shapes: [Fractions; 4],
    values: Fractions,
    conductors: usize,
    floating: bool,
}

pub(crate) fn scene(min: usize, max: usize) -> impl Strategy<Value = Scene> {
    (
        prop::array::uniform4(0usize..5),
        prop::array::uniform4(fractions()),
        fractions(),
        min..=max,
        prop::bool::weighted(0.25),
    )
        .prop_map(|(kinds, shapes, values, conductors, floating)| Scene {
            kinds,
            shapes,
            values,
            conductors,
            floating,
        })
}

pub(crate) const LX: f64 = 1.0;
pub(crate) const LY: f64 = 0.75;
pub(crate) const CELL: f64 = LX / 32.0;

impl Scene {
    /// The design on the graded lattice, its cell eight times [`CELL`] (the base lines'
    /// coarsest spacing spans the domain): the grading's budget then holds each axis near
    /// 32 base cells, about 130 x 130 nodes a case (at [`CELL`] the feature cones, not the
    /// cell, set the count, several hundred lines per axis).
    pub(crate) fn graded(&self, mode: Mode) -> Design {
        let mut d = self.design(mode);
        d.lattice = Lattice::Graded;
        d.domain.cell = 8.0 * CELL;
        d
    }

    pub(crate) fn design(&self, mode: Mode) -> Design {
        let v = &self.values;
        let (x0, y0) = (0.0, 0.0);
        let boxes = [
            [0.1, 0.5, 0.05, 0.37],
            [0.5, 0.95, 0.05, 0.37],
            [0.1, 0.5, 0.38, 0.7],
            [0.5, 0.95, 0.38, 0.7],
        ];
        let conductors = (0..self.conductors)
            .map(|k| Conductor {
                name: format!("c{k}"),
                drive: if self.floating && k == self.conductors - 1 && k > 0 {
                    Drive::Floating
                } else {
                    Drive::Fixed(10.0 * v[k] - 5.0)
                },
                shape: shape_in(self.kinds[k], &self.shapes[k], boxes[k]),
                joined: Vec::new(),
            })
            .collect();
        let dx = [0.3 * v[4], 0.3 * v[4] + 0.2 + 0.5 * v[5]];
        let dielectrics = vec![Dielectric {
            name: "d".into(),
            permittivity: 1.0 + 9.0 * v[6],
            strength: None,
            shape: Shape::Rect {
                x: dx,
                y: [0.02 + 0.2 * v[7], 0.3 + 0.4 * v[8]],
                round: 0.0,
            },
        }];
        let charges = vec![Charge::Region {
            name: "q".into(),
            density: (v[9] - 0.5) * 1e-9,
            shape: Shape::Circle {
                center: [0.3 + 0.4 * v[10], 0.72],
                radius: 0.02,
            },
        }];
        let sv = 4.0 * v[11] - 2.0;
        let pick = |i: usize| side_of((v[12 + i] * 4.0) as usize, sv + i as f64);
        let sides = match mode {
            Mode::Planar => Sides {
                left: pick(0),
                right: pick(1),
                bottom: pick(2),
                top: pick(3),
            },
            Mode::Axisymmetric => Sides {
                left: Side::Axis,
                right: pick(1),
                bottom: pick(2),
                top: pick(3),
            },
        };
        Design {
            mode,
            depth: None,
            domain: Domain {
                x: [x0, x0 + LX],
                y: [y0, y0 + LY],
                cell: CELL,
            },
            // Uniform by name: these checks are of the lattice of equal cells (the graded
            // one's, on a coarser cell, are [`Scene::graded`]).
            lattice: Lattice::Uniform,
            sides,
            background: Background::default(),
            conductors,
            dielectrics,
            charges,
            probes: Vec::new(),
        }
    }
}

#[test]
fn scene_generator_draws_valid_designs() {
    // The generator itself: every drawn scene passes validation in both modes.
    let mut r = runner(1, 9);
    for _ in 0..200 {
        let sc = scene(1, 4).new_tree(&mut r).unwrap().current();
        for mode in [Mode::Planar, Mode::Axisymmetric] {
            let d = sc.design(mode);
            assert!(
                fieldgrid_solver::design::validate(&d).is_ok(),
                "{sc:?}: {:?}",
                fieldgrid_solver::design::validate(&d)
            );
        }
    }
}
