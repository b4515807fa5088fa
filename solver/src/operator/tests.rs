//! The operator on graded (non-uniform) lattices: symmetry and signs of the couplings, exact
//! capacitances of fields the finite volumes reproduce exactly, and second-order convergence
//! where they do not.

use super::*;
use crate::design::{Background, Conductor, Dielectric, Domain, Drive, Shape, Sides};
use crate::raster::rasterize;
use crate::solvers::{self, Method, Params};
use std::f64::consts::PI;

/// A small seeded generator (xorshift64*), uniform in [0, 1).
struct Rng(u64);

impl Rng {
    fn next(&mut self) -> f64 {
        self.0 ^= self.0 >> 12;
        self.0 ^= self.0 << 25;
        self.0 ^= self.0 >> 27;
        (self.0.wrapping_mul(0x2545_f491_4f6c_dd1d) >> 11) as f64 / (1u64 << 53) as f64
    }
}

/// `cells` cells over [a, b] with random widths (ratios up to 5 between neighbours).
fn random_lines(rng: &mut Rng, a: f64, b: f64, cells: usize) -> Vec<f64> {
    let w: Vec<f64> = (0..cells).map(|_| 0.25 + rng.next()).collect();
    let total: f64 = w.iter().sum();
    let mut at = vec![a];
    let mut x = a;
    for wk in &w[..cells - 1] {
        x += (b - a) * wk / total;
        at.push(x);
    }
    at.push(b);
    at
}

/// Random lines over [a, b] holding every coordinate of `keep` (sorted, inside (a, b)): each
/// stretch between two of them cut into `cells` random cells.
fn lines_through(rng: &mut Rng, a: f64, b: f64, keep: &[f64], cells: usize) -> Vec<f64> {
    let mut stops = vec![a];
    stops.extend_from_slice(keep);
    stops.push(b);
    let mut at = vec![a];
    for w in stops.windows(2) {
        at.extend_from_slice(&random_lines(rng, w[0], w[1], cells)[1..]);
    }
    at
}

fn conductor(name: &str, v: f64, shape: Shape) -> Conductor {
    Conductor {
        name: name.into(),
        drive: Drive::Fixed(v),
        joined: Vec::new(),
        shape,
    }
}

fn dielectric(eps: f64, shape: Shape) -> Dielectric {
    Dielectric {
        name: format!("eps{eps}"),
        permittivity: eps,
        strength: None,
        shape,
    }
}

fn rect(x: [f64; 2], y: [f64; 2]) -> Shape {
    Shape::Rect { x, y, round: 0.0 }
}

/// Charges of every target (C/m or C) with the conductors at their fixed potentials.
fn charges(design: &Design, grid: &Grid) -> Vec<f64> {
    crate::design::validate(design).expect("a valid design");
    let raster = rasterize(design, grid);
    let op = assemble(design, &raster).expect("definite");
    let v: Vec<f64> = design
        .conductors
        .iter()
        .map(|c| match c.drive {
            Drive::Fixed(v) => v,
            Drive::Floating => unreachable!(),
        })
        .collect();
    let values = op.target_values(&v, true);
    let b = op.rhs(&values, false);
    let mut phi = vec![0.0; grid.len()];
    let params = Params {
        tol: 1e-13,
        ..Params::default()
    };
    solvers::solve(Method::Cg, &op.stencil, &b, &mut phi, &params).expect("converges");
    op.reactions(&phi, &values, false)
}

/// Plates 1 V (top) and 0 V (bottom) spanning x in [0, w], their facing surfaces at y = 0
/// and y = d, mirror sides left and right.
fn plates(w: f64, d: f64) -> Design {
    Design {
        domain: Domain {
            x: [0.0, w],
            y: [-0.1 * d, 1.1 * d],
            cell: 0.1 * d,
        },
        sides: Sides {
            left: Side::Symmetry,
            right: Side::Symmetry,
            ..Sides::default()
        },
        background: Background {
            permittivity: 2.0,
            strength: None,
        },
        conductors: vec![
            conductor("low", 0.0, rect([0.0, w], [-0.1 * d, 0.0])),
            conductor("high", 1.0, rect([0.0, w], [d, 1.1 * d])),
        ],
        ..Design::default()
    }
}

#[test]
fn graded_operator_is_symmetric_with_non_negative_couplings() {
    let mut rng = Rng(0x9e37_79b9_7f4a_7c15);
    for mode in [Mode::Planar, Mode::Axisymmetric] {
        let mut d = Design {
            mode,
            domain: Domain {
                x: [0.0, 1.0],
                y: [-1.0, 1.0],
                cell: 0.1,
            },
            conductors: vec![
                conductor(
                    "disc",
                    1.0,
                    Shape::Circle {
                        center: [0.2, 0.1],
                        radius: 0.23,
                    },
                ),
                conductor("bar", -1.0, rect([0.55, 0.8], [-0.52, -0.4])),
            ],
            dielectrics: vec![dielectric(4.0, rect([0.0, 1.0], [-1.0, -0.3]))],
            ..Design::default()
        };
        if mode == Mode::Axisymmetric {
            d.sides.left = Side::Axis;
            d.conductors[0].shape = Shape::Circle {
                center: [0.0, 0.1],
                radius: 0.23,
            };
        }
        let grid = Grid::from_lines(
            random_lines(&mut rng, 0.0, 1.0, 37),
            lines_through(&mut rng, -1.0, 1.0, &[-0.3], 27),
        )
        .unwrap();
        let raster = rasterize(&d, &grid);
        let op = assemble(&d, &raster).unwrap();
        let s = &op.stencil;
        assert!(op.links.iter().all(|l| l.weight > 0.0));
        let mut couplings = vec![0.0; grid.len()];
        for p in 0..grid.len() {
            assert!(s.east[p] >= 0.0 && s.north[p] >= 0.0, "node {p}");
            for (q, w) in [(p + 1, s.east[p]), (p + grid.nx, s.north[p])] {
                if w != 0.0 {
                    couplings[p] += w;
                    couplings[q] += w;
                }
            }
        }
        for l in &op.links {
            couplings[l.node as usize] += l.weight;
        }
        // Each end of a free-free edge adds to its own diagonal what the coupling holds: the
        // row sums vanish (no source, no sink but the links).
        for p in (0..grid.len()).filter(|&p| s.unknown[p]) {
            let rel = (s.diag[p] - couplings[p]).abs() / s.diag[p];
            assert!(
                rel < 1e-12,
                "{mode:?} node {p}: diag {} sum {}",
                s.diag[p],
                couplings[p]
            );
        }
    }
}

#[test]
fn uncut_graded_edges_take_the_finite_volume_weights() {
    let mut rng = Rng(7);
    let d = Design {
        dielectrics: vec![dielectric(3.0, rect([0.0, 1.0], [0.0, 0.5]))],
        ..Design::default()
    };
    let grid = Grid::from_lines(
        random_lines(&mut rng, 0.0, 1.0, 23),
        lines_through(&mut rng, 0.0, 1.0, &[0.5], 9),
    )
    .unwrap();
    let jm = grid.ys().iter().position(|&y| y == 0.5).unwrap();
    let op = assemble(&d, &rasterize(&d, &grid)).unwrap();
    for j in 1..grid.ny - 1 {
        for i in 1..grid.nx - 2 {
            // Along the interface row each half of the face has its own permittivity.
            let (below, above) = (0.5 * grid.dy(j - 1), 0.5 * grid.dy(j));
            let face = match j.cmp(&jm) {
                std::cmp::Ordering::Less => 3.0 * (below + above),
                std::cmp::Ordering::Equal => 3.0 * below + above,
                std::cmp::Ordering::Greater => below + above,
            };
            let want = face / grid.dx(i);
            let got = op.stencil.east[grid.idx(i, j)];
            assert!(
                (got - want).abs() <= 1e-13 * want,
                "({i}, {j}): {got} vs {want}"
            );
        }
    }
}

#[test]
fn parallel_plates_on_graded_lines_give_the_closed_form_to_round_off() {
    // Plane capacitor per unit depth C = eps0 eps w / d, series layers 1/C = sum d_k /
    // (eps0 eps_k w), side-by-side fillings C = eps0 sum eps_k w_k / d (common practice).
    let (w, d) = (3.0e-3, 1.0e-3);
    let mut rng = Rng(42);
    let c_of = |design: &Design, grid: &Grid| -charges(design, grid)[0];
    let rel = |a: f64, b: f64| (a - b).abs() / b;

    let empty = plates(w, d);
    let xs = random_lines(&mut rng, 0.0, w, 17);
    let ys = lines_through(&mut rng, -0.1 * d, 1.1 * d, &[0.0, d], 7);
    let grid = Grid::from_lines(xs.clone(), ys).unwrap();
    let want = EPS0 * 2.0 * w / d;
    let got = c_of(&empty, &grid);
    assert!(rel(got, want) < 1e-10, "empty: {got:e} vs {want:e}");

    // Two layers, the interface on a row: eps 5 below y = 0.3 d, the background above.
    let mut stack = plates(w, d);
    stack
        .dielectrics
        .push(dielectric(5.0, rect([0.0, w], [0.0, 0.3 * d])));
    let ys = lines_through(&mut rng, -0.1 * d, 1.1 * d, &[0.0, 0.3 * d, d], 6);
    let grid = Grid::from_lines(xs.clone(), ys.clone()).unwrap();
    let want = EPS0 * w / (0.3 * d / 5.0 + 0.7 * d / 2.0);
    let got = c_of(&stack, &grid);
    assert!(rel(got, want) < 1e-10, "stack: {got:e} vs {want:e}");

    // Side by side, the interface on a column between cells of different widths: eps 5 for
    // x < 1.1 mm, the background beyond.
    let mut side = plates(w, d);
    side.dielectrics
        .push(dielectric(5.0, rect([0.0, 1.1e-3], [0.0, d])));
    let xs = lines_through(&mut rng, 0.0, w, &[1.1e-3], 9);
    let k = xs.iter().position(|&x| x == 1.1e-3).unwrap();
    assert!((xs[k] - xs[k - 1] - (xs[k + 1] - xs[k])).abs() > 1e-6);
    let grid = Grid::from_lines(xs, ys).unwrap();
    let want = EPS0 * (5.0 * 1.1e-3 + 2.0 * (w - 1.1e-3)) / d;
    let got = c_of(&side, &grid);
    assert!(rel(got, want) < 1e-10, "side by side: {got:e} vs {want:e}");
}

#[test]
fn graded_nodes_on_a_conductor_edge_are_conductor_nodes() {
    let mut rng = Rng(3);
    let d = plates(3.0, 1.0);
    let grid = Grid::from_lines(
        random_lines(&mut rng, 0.0, 3.0, 11),
        lines_through(&mut rng, -0.1, 1.1, &[0.0, 1.0], 5),
    )
    .unwrap();
    let raster = rasterize(&d, &grid);
    let row = |y: f64| grid.ys().iter().position(|&c| c == y).unwrap();
    for i in 0..grid.nx {
        assert_eq!(raster.conductor[grid.idx(i, row(0.0))], 0);
        assert_eq!(raster.conductor[grid.idx(i, row(1.0))], 1);
        assert_eq!(raster.conductor[grid.idx(i, row(0.0) + 1)], NO_CONDUCTOR);
    }
}

/// Lines over [a, b] mapped smoothly from `cells` equal steps of s in [-1, 1] by
/// `s + amplitude (sin(pi s + phase) + sin(phase))`, which keeps the ends and is monotone
/// for amplitudes below 1/pi.
fn stretched(a: f64, b: f64, cells: usize, amplitude: f64, phase: f64) -> Vec<f64> {
    let f = |s: f64| s + amplitude * ((PI * s + phase).sin() + phase.sin());
    let (m, r) = (0.5 * (a + b), 0.5 * (b - a));
    (0..=cells)
        .map(|k| match k {
            0 => a,
            k if k == cells => b,
            k => m + r * f(-1.0 + 2.0 * k as f64 / cells as f64),
        })
        .collect()
}

/// Checks errors of a refinement by 2 per level against second order: each within 1.25
/// times the h^2 line through the coarsest. (The cut fractions change from level to level, so
/// successive ratios scatter about 4; a first-order error would leave the line at once.)
fn assert_second_order(what: &str, errors: &[f64]) {
    eprintln!("{what}: relative errors {errors:?}");
    for (k, e) in errors.iter().enumerate() {
        let line = errors[0] / 4f64.powi(k as i32);
        assert!(
            *e <= 1.25 * line,
            "{what}: level {k} error {e:e}, h^2 line {line:e}"
        );
    }
}

#[test]
fn coaxial_line_on_a_stretched_grid_converges_at_second_order() {
    // Coaxial line per unit length C = 2 pi eps0 eps / ln(b/a) (D. M. Pozar, Microwave
    // Engineering, 4th ed., 2012, sec. 2.2).
    let (a, b) = (1.0e-3, 2.5e-3);
    let design = Design {
        domain: Domain {
            x: [-2.8e-3, 2.8e-3],
            y: [-2.8e-3, 2.8e-3],
            cell: 0.1e-3,
        },
        conductors: vec![
            conductor(
                "inner",
                1.0,
                Shape::Circle {
                    center: [0.0, 0.0],
                    radius: a,
                },
            ),
            conductor(
                "outer",
                0.0,
                Shape::Ring {
                    center: [0.0, 0.0],
                    inner: b,
                    outer: 2.8e-3,
                },
            ),
        ],
        ..Design::default()
    };
    let want = 2.0 * PI * EPS0 / (b / a).ln();
    let errors: Vec<f64> = [28, 56, 112]
        .iter()
        .map(|&n| {
            let grid = Grid::from_lines(
                stretched(-2.8e-3, 2.8e-3, n, 0.12, 0.4),
                stretched(-2.8e-3, 2.8e-3, n, 0.09, 1.1),
            )
            .unwrap();
            assert!(grid.max_cell() > 1.4 * grid.min_cell());
            (charges(&design, &grid)[0] - want).abs() / want
        })
        .collect();
    assert_second_order("coax on a stretched grid", &errors);
    assert!(errors[2] < 3e-4, "{errors:?}");
}

#[test]
fn concentric_spheres_on_a_stretched_grid_converge_at_second_order() {
    // Spherical capacitor C = 4 pi eps0 a b / (b - a) (D. J. Griffiths, Introduction to
    // Electrodynamics, 4th ed., 2017, sec. 2.5.4).
    let (a, b) = (1.0e-3, 2.0e-3);
    let design = Design {
        mode: Mode::Axisymmetric,
        domain: Domain {
            x: [0.0, 3.0e-3],
            y: [-3.0e-3, 3.0e-3],
            cell: 0.1e-3,
        },
        sides: Sides {
            left: Side::Axis,
            ..Sides::default()
        },
        conductors: vec![
            conductor(
                "inner",
                1.0,
                Shape::Circle {
                    center: [0.0, 0.0],
                    radius: a,
                },
            ),
            conductor(
                "shell",
                0.0,
                Shape::Ring {
                    center: [0.0, 0.0],
                    inner: b,
                    outer: 3.0e-3,
                },
            ),
        ],
        ..Design::default()
    };
    let want = 4.0 * PI * EPS0 * a * b / (b - a);
    let errors: Vec<f64> = [15, 30, 60, 120]
        .iter()
        .map(|&n| {
            let grid = Grid::from_lines(
                stretched(0.0, 3.0e-3, n, 0.1, 0.7),
                stretched(-3.0e-3, 3.0e-3, 2 * n, 0.1, 0.2),
            )
            .unwrap();
            assert!(grid.max_cell() > 1.4 * grid.min_cell());
            (charges(&design, &grid)[0] - want).abs() / want
        })
        .collect();
    assert_second_order("spheres on a stretched grid", &errors);
    assert!(errors[3] < 3e-5, "{errors:?}");
}

#[test]
fn assembly_by_rows_is_bit_identical_for_any_thread_count() {
    // Two conductors within a cell of each other (a direct coupling between them), one
    // within a cell of the grounded bottom (couplings from the side's nodes), a dielectric
    // across the lattice and an open top (far-field links): every kind of coupling, on a
    // graded lattice.
    let mut rng = Rng(0x51_7cc1_b727_220a);
    let d = Design {
        domain: Domain {
            x: [0.0, 1.0],
            y: [0.0, 1.0],
            cell: 0.05,
        },
        sides: Sides {
            top: Side::Open,
            left: Side::Symmetry,
            ..Sides::default()
        },
        conductors: vec![
            conductor("a", 1.0, rect([0.2, 0.4], [0.3, 0.5])),
            conductor("b", -1.0, rect([0.41, 0.6], [0.3, 0.5])),
            conductor(
                "c",
                0.5,
                Shape::Circle {
                    center: [0.75, 0.21],
                    radius: 0.2,
                },
            ),
        ],
        dielectrics: vec![dielectric(3.0, rect([0.0, 1.0], [0.0, 0.37]))],
        ..Design::default()
    };
    let grid = Grid::from_lines(
        random_lines(&mut rng, 0.0, 1.0, 61),
        random_lines(&mut rng, 0.0, 1.0, 53),
    )
    .unwrap();
    let raster = rasterize(&d, &grid);
    let run = |threads: usize| {
        rayon::ThreadPoolBuilder::new()
            .num_threads(threads)
            .build()
            .unwrap()
            .install(|| assemble(&d, &raster).unwrap())
    };
    let one = run(1);
    assert!(one.direct.len() >= 2, "{:?}", one.direct);
    assert!(one
        .links
        .iter()
        .any(|l| l.target == one.side_target(SideId::Top)));
    // Debug prints every f64 so that it reads back to the same bits.
    let text = format!("{one:?}");
    for threads in [2, 3, 5] {
        assert_eq!(format!("{:?}", run(threads)), text, "{threads} threads");
    }
}

/// A seeded design in the unit square: three conductors (disc, rectangle or triangle, one in
/// each third of the width, so they never overlap), a dielectric layer and an oblique
/// dielectric triangle, sides drawn from every kind.
fn random_design(seed: u64, mode: Mode) -> Design {
    let mut u = crate::seeded::uniform(seed);
    let mut shape = |x0: f64| {
        let (cx, cy, r) = (x0 + 0.1 + 0.08 * u(), 0.2 + 0.6 * u(), 0.03 + 0.06 * u());
        match (3.0 * u()) as usize {
            0 => Shape::Circle {
                center: [cx, cy],
                radius: r,
            },
            1 => rect([cx - r, cx + r], [cy - 0.5 * r, cy + r]),
            _ => Shape::Polygon {
                outer: vec![[cx - r, cy - r], [cx + r, cy - 0.3 * r], [cx, cy + r]],
                holes: Vec::new(),
                round: 0.0,
                corners: None,
            },
        }
    };
    let conductors = vec![
        conductor("a", 1.0, shape(0.0)),
        conductor("b", -0.5, shape(1.0 / 3.0)),
        conductor("c", 0.0, shape(2.0 / 3.0)),
    ];
    let kinds = [Side::Ground, Side::Symmetry, Side::Open, Side::Fixed(0.25)];
    let mut side = || kinds[(4.0 * u()) as usize];
    let sides = Sides {
        left: match mode {
            Mode::Axisymmetric => Side::Axis,
            Mode::Planar => side(),
        },
        right: side(),
        bottom: Side::Ground,
        top: side(),
    };
    let layer = 0.1 + 0.3 * u();
    Design {
        mode,
        sides,
        conductors,
        dielectrics: vec![
            dielectric(2.0 + 8.0 * u(), rect([0.0, 1.0], [0.0, layer])),
            dielectric(
                1.5 + 3.0 * u(),
                Shape::Polygon {
                    outer: vec![[0.02, 0.5], [0.98, 0.3 + 0.4 * u()], [0.5, 0.97]],
                    holes: Vec::new(),
                    round: 0.0,
                    corners: None,
                },
            ),
        ],
        ..Design::default()
    }
}

#[test]
fn interior_nodes_weighed_directly_give_the_operator_of_every_edge_end() {
    let mut rng = Rng(0x2c1b_3c6d_5a4f_0e13);
    for seed in 0..12u64 {
        let mode = [Mode::Planar, Mode::Axisymmetric][seed as usize % 2];
        let d = random_design(seed, mode);
        crate::design::validate(&d).expect("a valid design");
        let grid = match seed % 3 {
            0 => {
                let lines = |n: usize| (0..=n).map(|k| k as f64 / n as f64).collect();
                Grid::from_lines(lines(97), lines(83))
            }
            _ => Grid::from_lines(
                random_lines(&mut rng, 0.0, 1.0, 89),
                random_lines(&mut rng, 0.0, 1.0, 71),
            ),
        }
        .unwrap();
        let raster = rasterize(&d, &grid);
        let whole = assemble_by(&d, &raster, rows::Interior::Whole).unwrap();
        let by_ends = assemble_by(&d, &raster, rows::Interior::ByEnds).unwrap();
        // Debug prints every f64 so that it reads back to the same bits.
        assert_eq!(
            format!("{whole:?}"),
            format!("{by_ends:?}"),
            "seed {seed} {mode:?}"
        );
        assert!(
            whole.links.len() > 50
                && whole.stencil.cross.is_empty() == (mode == Mode::Axisymmetric)
        );
    }
}
