//! Surface fields, peaks and hot spots on graded (stretched) lattices against closed forms;
//! the coarse reading behind the surface-charge error estimate.

use super::{coarse_near, estimate_points};
use crate::design::{Conductor, Design, Domain, Drive, Mode, Shape, Side, Sides};
use crate::grid::Grid;
use crate::study::{self, Solution, StudyParams};
use crate::surface::SurfaceKind;
use std::f64::consts::PI;

/// Lines over [a, b] mapped smoothly from `cells` equal steps of s in [-1, 1] by
/// `s + amplitude (sin(pi s + phase) + sin(phase))` (monotone for amplitudes below 1/pi).
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

fn conductor(name: &str, v: f64, shape: Shape) -> Conductor {
    Conductor {
        name: name.into(),
        drive: Drive::Fixed(v),
        joined: Vec::new(),
        shape,
    }
}

/// The study of `design` on `grid`.
fn solve_on(design: &Design, grid: Grid) -> Solution {
    let params = StudyParams::default();
    let plan = study::plan(design, &params).unwrap().with_grid(grid);
    study::run_planned(design, &plan, &params).unwrap()
}

/// Largest relative deviation from `want` of the field of conductor 0's surface samples,
/// and of the reported peak field.
fn deviations(s: &Solution, want: f64) -> (f64, f64) {
    let worst = s
        .surface
        .iter()
        .filter(|p| p.kind == SurfaceKind::Conductor(0))
        .map(|p| (p.magnitude() - want).abs() / want)
        .fold(0.0, f64::max);
    let peak = s.peak_field.as_ref().expect("a peak").magnitude;
    (worst, (peak - want).abs() / want)
}

#[test]
fn coax_surface_field_and_peak_on_a_stretched_grid() {
    // Field at the inner conductor of a coaxial line, E(a) = V / (a ln(b/a)) (Gauss's law for
    // a line charge; D. J. Griffiths, Introduction to Electrodynamics, 4th ed., 2017,
    // sec. 2.2.3). Centre off the lines; cells from about 13 to 36 across the inner radius.
    let (a, b, c) = (1.0e-3, 2.5e-3, [0.0137e-3, -0.0291e-3]);
    let design = Design {
        domain: Domain {
            x: [-2.8e-3, 2.8e-3],
            y: [-2.8e-3, 2.8e-3],
            cell: 0.05e-3,
        },
        conductors: vec![
            conductor(
                "inner",
                1.0,
                Shape::Circle {
                    center: c,
                    radius: a,
                },
            ),
            conductor(
                "outer",
                0.0,
                Shape::Ring {
                    center: c,
                    inner: b,
                    outer: 2.75e-3,
                },
            ),
        ],
        ..Design::default()
    };
    let grid = Grid::from_lines(
        stretched(-2.8e-3, 2.8e-3, 112, 0.12, 0.4),
        stretched(-2.8e-3, 2.8e-3, 112, 0.09, 1.1),
    )
    .unwrap();
    assert!(grid.max_cell() > 2.0 * grid.min_cell());
    let s = solve_on(&design, grid);
    let want = 1.0 / (a * (b / a).ln());
    let (worst, peak) = deviations(&s, want);
    eprintln!("coax on a stretched grid: worst sample {worst:.3e}, peak {peak:.3e}");
    assert!(
        worst < 5e-3 && peak < 5e-3,
        "worst {worst:e}, peak {peak:e}"
    );
    let spot = s.peak_field.as_ref().unwrap();
    eprintln!(
        "coax: peak {:e} V/m, estimate {:?}",
        spot.magnitude, spot.error_estimate
    );
    // What a margin divides by is never below the true field.
    assert!(spot.magnitude + spot.error_estimate.unwrap() >= want);
    let r = (spot.x - c[0]).hypot(spot.y - c[1]);
    // On the surface (the peak is placed between samples, on their chord).
    assert!((r - a).abs() < 1e-6, "peak at r = {r:e}");
    assert!(!spot.singular && !spot.under_resolved);
}

#[test]
fn sphere_surface_field_and_peak_on_a_stretched_grid() {
    // Field at the inner sphere of a spherical capacitor, E(a) = V b / (a (b - a)) (Gauss's
    // law; D. J. Griffiths, Introduction to Electrodynamics, 4th ed., 2017, sec. 2.2.3;
    // common practice).
    let (a, b) = (1.0e-3, 2.0e-3);
    let design = Design {
        mode: Mode::Axisymmetric,
        domain: Domain {
            x: [0.0, 3.0e-3],
            y: [-3.0e-3, 3.0e-3],
            cell: 0.05e-3,
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
    let grid = Grid::from_lines(
        stretched(0.0, 3.0e-3, 60, 0.1, 0.7),
        stretched(-3.0e-3, 3.0e-3, 120, 0.1, 0.2),
    )
    .unwrap();
    assert!(grid.max_cell() > 1.5 * grid.min_cell());
    let s = solve_on(&design, grid);
    let want = b / (a * (b - a));
    let (worst, peak) = deviations(&s, want);
    eprintln!("spheres on a stretched grid: worst sample {worst:.3e}, peak {peak:.3e}");
    assert!(
        worst < 5e-3 && peak < 5e-3,
        "worst {worst:e}, peak {peak:e}"
    );
    let spot = s.peak_field.as_ref().unwrap();
    eprintln!(
        "spheres: peak {:e} V/m, estimate {:?}",
        spot.magnitude, spot.error_estimate
    );
    // What a margin divides by is never below the true field.
    assert!(spot.magnitude + spot.error_estimate.unwrap() >= want);
    let r = spot.x.hypot(spot.y);
    assert!((r - a).abs() < 1e-6, "peak at r = {r:e}");
}

/// The fit's model bias on convex surfaces, against exact data.
mod fit_bias {
    use super::super::*;
    use crate::design::Mode;
    use crate::grid::Grid;
    use crate::raster::NO_CONDUCTOR;
    use crate::surface_field::{conductor_field, Across, FitParams, Frame, Lattice};

    /// The fitted field magnitude at each point of `points` on the unit circle (the unit
    /// sphere on the axis in r-z), a grounded conductor inside it, the lattice carrying the
    /// exact potential `exact(x, y)` outside it and 0 within.
    fn unit_circle_fields(
        g: &Grid,
        mode: Mode,
        exact: impl Fn(f64, f64) -> f64,
        points: &[[f64; 2]],
    ) -> Vec<f64> {
        let nx = g.nx();
        let at = |p: usize| (g.x(p % nx), g.y(p / nx));
        let inside = |p: usize| at(p).0.hypot(at(p).1) <= 1.0;
        let phi: Vec<f64> = (0..g.len())
            .map(|p| {
                if inside(p) {
                    0.0
                } else {
                    exact(at(p).0, at(p).1)
                }
            })
            .collect();
        let conductor: Vec<u16> = (0..g.len())
            .map(|p| if inside(p) { 0 } else { NO_CONDUCTOR })
            .collect();
        let material = vec![0u16; g.len()];
        let lat = Lattice {
            grid: g,
            mode,
            phi: &phi,
            conductor: &conductor,
            material: &material,
        };
        let across = Across::Conductor {
            potential: 0.0,
            material: 0,
            eps: 1.0,
            rho: 0.0,
            surface_points: vec![],
        };
        points
            .iter()
            .map(|&at| {
                let frame = Frame {
                    at,
                    normal: at,
                    curvature: 1.0,
                };
                let e = conductor_field(&lat, &frame, &across, &FitParams::default()).unwrap();
                e[0].hypot(e[1])
            })
            .collect()
    }

    /// The relative error of the fitted field at twelve points of a circle of radius 1
    /// carrying `ln(rho)` outside (planar) or of a sphere on the axis carrying `1 - 1 / rho`
    /// (axisymmetric): field 1 at the surface, exact at every node; `cells` per radius, the
    /// centre `offset` cells off a node along y (and along x in the plane).
    fn circle_fit_errors(cells: f64, offset: f64, mode: Mode) -> Vec<f64> {
        let angles: Vec<f64> = (0..12).map(|k| 0.13 * k as f64 - 0.7).collect();
        fit_errors(cells, [offset, offset], mode, &angles)
    }

    /// As [`circle_fit_errors`] at the given polar angles (rad, from the x axis), the centre
    /// `offset` cells off a node along x (planar only) and y.
    fn fit_errors(cells: f64, offset: [f64; 2], mode: Mode, angles: &[f64]) -> Vec<f64> {
        let h = 1.0 / cells;
        let n = (2.0 * (1.0 + 8.0 * h) / h) as usize + 1;
        let o = -0.5 * h * (n - 1) as f64;
        let oy = o + offset[1] * h;
        let ox = if mode == Mode::Axisymmetric {
            0.0
        } else {
            o + offset[0] * h
        };
        let g = Grid::regular([ox, oy], [h, h], [n, n]);
        let exact = |x: f64, y: f64| match mode {
            Mode::Planar => x.hypot(y).ln(),
            Mode::Axisymmetric => 1.0 - 1.0 / x.hypot(y),
        };
        let points: Vec<[f64; 2]> = angles
            .iter()
            .map(|t| {
                let (s, c) = t.sin_cos();
                [c, s]
            })
            .collect();
        unit_circle_fields(&g, mode, exact, &points)
            .into_iter()
            .map(|e| e - 1.0)
            .collect()
    }

    #[test]
    fn fit_bias_bounds_the_fit_error_on_a_convex_surface() {
        // From 7 cells per radius up the fit reads off by less than FIT_BIAS (h kappa)^2, in
        // both modes; in the plane it reads high, by more than a third of the bound from 7 to
        // 14 cells (the bound is not idle there).
        for cells in [7.0, 10.0, 14.0, 20.0, 40.0] {
            let bound = FIT_BIAS / (cells * cells);
            for offset in [0.0, 0.25, 0.5] {
                for mode in [Mode::Planar, Mode::Axisymmetric] {
                    let errors = circle_fit_errors(cells, offset, mode);
                    let worst = errors.iter().fold(0.0f64, |w, e| w.max(e.abs()));
                    assert!(
                        worst <= bound,
                        "{mode:?}, {cells} cells: {worst:e} > {bound:e}"
                    );
                    if mode == Mode::Planar && cells <= 14.0 {
                        assert!(errors.iter().all(|e| *e > 0.0), "{cells}: {errors:?}");
                        assert!(
                            worst >= bound / 3.0,
                            "{cells} cells: {worst:e} << {bound:e}"
                        );
                    }
                }
            }
        }
    }
    #[test]
    fn conductor_fit_bias_bounds_the_fit_error_on_fine_grids() {
        // From 14 cells per radius up the fit's error is third order and below
        // FIT_BIAS_CUBIC (h kappa)^3, over 40 points from -86 to +86 degrees and centres 0 to
        // 0.9 cells off a node; in the plane the worst reaches more than three quarters of it
        // (the constant is not idle). Below 14 cells the second-order bound is the smaller
        // one and `fit_bias_bounds_the_fit_error_on_a_convex_surface` covers it.
        let angles: Vec<f64> = (0..40).map(|k| -1.5 + 3.0 * k as f64 / 39.0).collect();
        for cells in [14.0, 20.0, 40.0, 80.0] {
            let bound = conductor_fit_bias(1.0 / cells);
            assert!(bound < FIT_BIAS / (cells * cells) * 1.0001);
            for mode in [Mode::Planar, Mode::Axisymmetric] {
                let mut worst = 0.0f64;
                for k in 0..10 {
                    let offset = 0.1 * k as f64;
                    let errors = fit_errors(cells, [1.37 * offset, offset], mode, &angles);
                    worst = errors.iter().fold(worst, |w, e| w.max(e.abs()));
                }
                assert!(
                    worst <= bound,
                    "{mode:?}, {cells} cells: {worst:e} > {bound:e}"
                );
                if mode == Mode::Planar && cells >= 20.0 {
                    assert!(
                        worst >= 0.75 * bound,
                        "{cells} cells: {worst:e} << {bound:e}"
                    );
                }
            }
        }
    }

    /// The worst relative error, over centres 0 to 0.9 cells off a node along the axis, of the
    /// fitted field at each polar angle `from_pole` (degrees) of a grounded sphere of radius 1
    /// on the axis carrying the exact potential `-z (1 - 1 / R^3)` of a conducting sphere in
    /// a unit uniform field (J. D. Jackson, Classical Electrodynamics, 3rd ed., 1999,
    /// sec. 2.5, eq. 2.14; from memory): surface field `3 cos(theta)`, relative to its peak 3.
    fn sphere_in_a_uniform_field_fit_errors(cells: f64, from_pole: &[f64]) -> Vec<f64> {
        let h = 1.0 / cells;
        let n = (2.0 * (1.0 + 8.0 * h) / h) as usize + 1;
        let nx = n / 2 + 1;
        let mut worst = vec![0.0f64; from_pole.len()];
        for k in 0..10 {
            let oy = -0.5 * h * (n - 1) as f64 + 0.1 * k as f64 * h;
            let g = Grid::regular([0.0, oy], [h, h], [nx, n]);
            let exact = |x: f64, y: f64| -y * (1.0 - x.hypot(y).powi(-3));
            // The point (r, z) = (sin, cos) of each angle from the pole.
            let points: Vec<[f64; 2]> = from_pole
                .iter()
                .map(|deg| {
                    let (r, z) = deg.to_radians().sin_cos();
                    [r, z]
                })
                .collect();
            let fields = unit_circle_fields(&g, Mode::Axisymmetric, exact, &points);
            for ((w, e), p) in worst.iter_mut().zip(fields).zip(&points) {
                let err = (e - 3.0 * p[1]) / 3.0;
                *w = w.max(err.abs());
            }
        }
        worst
    }

    #[test]
    fn conductor_fit_bias_bounds_the_fit_error_on_a_sphere_in_a_uniform_field_off_the_axis() {
        // A surface field varying along the surface about the axis: from 15 degrees off the
        // pole, from 7 cells per radius up, the fit stays within its bias. Measured, worst
        // over 15 to 70 degrees in units of the bias: 0.86 / 0.89 / 0.85 / 0.78 / 0.993 /
        // 0.997 at 7 / 10 / 14 / 20 / 28 / 40 cells. Nearer the axis it does not: at the pole
        // it reads 4.0 to 5.2 times the bias high from 10 to 40 cells, and 1 to 4 degrees off
        // it up to 3 times (the cubic's model does not hold about the axis there; not
        // asserted here).
        let angles = [15.0, 25.0, 45.0, 70.0];
        for cells in [7.0, 10.0, 14.0, 20.0, 28.0, 40.0] {
            let bound = conductor_fit_bias(1.0 / cells);
            let worst = sphere_in_a_uniform_field_fit_errors(cells, &angles);
            for (deg, w) in angles.iter().zip(&worst) {
                assert!(
                    *w <= bound,
                    "{cells} cells, {deg} degrees: {w:e} > {bound:e}"
                );
            }
        }
    }
}

#[test]
fn dielectric_corners_count_as_singular_only_with_interface_samples_within_their_own_stretches() {
    use crate::design::Dielectric;
    use crate::surface::SurfaceSample;
    // A dielectric square; interface samples of graded lengths: a fine one half its length
    // from corner (0, 0), a fine one 0.3 from corner (1, 1) (not next to it) and a coarse one
    // far from both.
    let design = Design {
        dielectrics: vec![Dielectric {
            name: "block".into(),
            permittivity: 4.0,
            strength: None,
            shape: Shape::Rect {
                x: [0.0, 1.0],
                y: [0.0, 1.0],
                round: 0.0,
            },
        }],
        ..Design::default()
    };
    let sample = |x: f64, y: f64, length: f64| SurfaceSample {
        x,
        y,
        normal: [0.0, 1.0],
        kind: SurfaceKind::Interface,
        curve: 0,
        arc: x,
        whole_loop: false,
        length,
        material: 1,
        field: [0.0, 0.0],
        curvature: 0.0,
    };
    let samples = [
        sample(0.005, 0.0, 0.01),
        sample(0.7, 1.0, 0.01),
        sample(0.5, 0.0, 0.5),
    ];
    let found = super::singular_points(&design, &samples);
    assert!(found.contains(&[0.0, 0.0]), "{found:?}");
    assert!(!found.contains(&[1.0, 1.0]), "{found:?}");
}

#[test]
fn a_layers_corner_on_a_mirror_plane_is_not_singular() {
    use crate::design::{Dielectric, Side};
    use crate::surface::SurfaceSample;
    // A layer y 0..0.6 across the domain x 0..2, its top face sampled at the left side: on a
    // mirror plane that corner is the middle of the unfolded layer's face; on a grounded
    // wall it stays a corner of the layer.
    let with_left = |left: Side| {
        let mut d = Design {
            dielectrics: vec![Dielectric {
                name: "laminate".into(),
                permittivity: 3.5,
                strength: None,
                shape: Shape::Rect {
                    x: [0.0, 2.0],
                    y: [0.0, 0.6],
                    round: 0.0,
                },
            }],
            ..Design::default()
        };
        d.domain.x = [0.0, 2.0];
        d.domain.y = [0.0, 2.0];
        d.sides.left = left;
        d
    };
    let samples = [SurfaceSample {
        x: 0.005,
        y: 0.6,
        normal: [0.0, 1.0],
        kind: SurfaceKind::Interface,
        curve: 0,
        arc: 0.005,
        whole_loop: false,
        length: 0.01,
        material: 1,
        field: [0.0, 0.0],
        curvature: 0.0,
    }];
    let mirrored = super::singular_points(&with_left(Side::Symmetry), &samples);
    assert!(!mirrored.contains(&[0.0, 0.6]), "{mirrored:?}");
    let walled = super::singular_points(&with_left(Side::Ground), &samples);
    assert!(walled.contains(&[0.0, 0.6]), "{walled:?}");
}

#[test]
fn coarse_value_is_the_parabola_through_the_nearest_samples_and_wraps_on_a_loop() {
    // A quadratic in the arc is reproduced exactly between and beyond the samples.
    let f = |a: f64| 1.0 + 2.0 * a - 0.5 * a * a;
    let pts: Vec<(f64, f64)> = (0..8)
        .map(|k| (0.5 + k as f64, f(0.5 + k as f64)))
        .collect();
    for arc in [0.2, 3.3, 7.9] {
        let (d, v) = coarse_near(&pts, None, arc).unwrap();
        assert!((v - f(arc)).abs() < 1e-12, "{arc}: {v} vs {}", f(arc));
        assert!(d <= 0.5 + 1e-12);
    }
    // On a loop of length 8 the samples at arcs 7.5 and 6.5 neighbour those at 0.5 and 1.5:
    // a value periodic in the arc (here a parabola symmetric about the seam) is read across it.
    let g = |a: f64| {
        let u = if a > 4.0 { a - 8.0 } else { a };
        u * u
    };
    let pts: Vec<(f64, f64)> = (0..8)
        .map(|k| (0.5 + k as f64, g(0.5 + k as f64)))
        .collect();
    let (d, v) = coarse_near(&pts, Some(8.0), 0.1).unwrap();
    assert!(
        (v - 0.01).abs() < 1e-12 && (d - 0.4).abs() < 1e-12,
        "{v} {d}"
    );
    assert_eq!(coarse_near(&[], None, 1.0), None);
}

#[test]
fn coarse_side_and_interface_fits_only_near_the_points_give_the_estimates_every_fit_gives() {
    use crate::design::{Background, Dielectric};
    use crate::surface::{near_readings, sample, sample_near, SurfaceParams};
    // A strip over a dielectric disc (a whole loop) and a layer (a cut interface), between a
    // grounded side and a fixed one, on a stretched lattice: the solved field stands in for a
    // coarse study's.
    let design = Design {
        domain: Domain {
            x: [0.0, 10e-3],
            y: [0.0, 6e-3],
            cell: 0.25e-3,
        },
        sides: Sides {
            left: Side::Symmetry,
            right: Side::Symmetry,
            bottom: Side::Ground,
            top: Side::Fixed(0.3),
        },
        background: Background {
            permittivity: 1.0,
            strength: Some(3e6),
        },
        conductors: vec![conductor(
            "strip",
            1.0,
            Shape::Rect {
                x: [3.1e-3, 6.2e-3],
                y: [2.05e-3, 2.4e-3],
                round: 0.0,
            },
        )],
        dielectrics: vec![
            Dielectric {
                name: "layer".into(),
                permittivity: 4.0,
                strength: Some(2e7),
                shape: Shape::Rect {
                    x: [0.0, 10e-3],
                    y: [0.0, 2.05e-3],
                    round: 0.0,
                },
            },
            Dielectric {
                name: "disc".into(),
                permittivity: 2.5,
                strength: Some(1e7),
                shape: Shape::Circle {
                    center: [7.3e-3, 3.9e-3],
                    radius: 0.9e-3,
                },
            },
        ],
        ..Design::default()
    };
    let grid = Grid::from_lines(
        stretched(0.0, 10e-3, 60, 0.1, 0.3),
        stretched(0.0, 6e-3, 40, 0.08, 0.9),
    )
    .unwrap();
    let s = solve_on(&design, grid);
    let field = s.field();
    let params = SurfaceParams::default();
    let all = sample(&field, &design, &params);
    // The study's hot spots and, for reach, points on every fifth side or interface sample.
    let mut spots = s.hotspots.clone();
    for p in all
        .iter()
        .filter(|p| p.kind != SurfaceKind::Conductor(0))
        .step_by(5)
    {
        let mut h = spots[0].clone();
        (h.x, h.y, h.magnitude) = (p.x, p.y, p.magnitude().max(1.0));
        h.material = crate::material::of(&design, p.material).name.to_string();
        spots.push(h);
    }
    for points in [1, 4, spots.len()] {
        let (peak, spots) = (s.peak_field.clone(), &spots[..points]);
        let near = estimate_points(&peak, spots, &s.grid);
        let some = sample_near(&field, &design, &params, &near);
        // The same samples; conductor fields all evaluated, the others only near the points.
        assert_eq!(some.len(), all.len());
        let wanted = near_readings(&all, &near);
        let mut left_out = 0;
        for (k, (a, b)) in all.iter().zip(&some).enumerate() {
            let same = a.field[0].to_bits() == b.field[0].to_bits()
                && a.field[1].to_bits() == b.field[1].to_bits();
            if matches!(a.kind, SurfaceKind::Conductor(_)) || wanted[k] {
                assert!(same, "sample {k} {:?}", a.kind);
            } else {
                left_out += usize::from(b.field[0].is_nan());
            }
        }
        if points < spots.len() {
            assert!(left_out > all.len() / 4, "{left_out} of {}", all.len());
        }
        let estimate = |samples: &[crate::surface::SurfaceSample]| {
            let (mut p, mut h) = (peak.clone(), spots.to_vec());
            let model = crate::study::ErrorModel {
                coarse: Vec::new(),
                coarse_charges: Vec::new(),
                ratio: 2.0,
                order: 2.0,
                observed_order: None,
                coarser: None,
                graded_family: false,
            };
            super::estimate_errors(&mut p, &mut h, &design, &field, samples, &|| None, &model);
            p.iter()
                .chain(&h)
                .map(|h| h.error_estimate.map(f64::to_bits))
                .collect::<Vec<_>>()
        };
        let want = estimate(&all);
        assert!(want.iter().filter(|e| e.is_some()).count() >= points);
        assert_eq!(estimate(&some), want, "{points} points");
    }
}

/// Samples along a straight open curve at arcs 0.5, 1.5, ..., each one long, with `fields`
/// normal to it (NaN where the fit is not determined).
fn straight_run(fields: &[f64]) -> Vec<crate::surface::SurfaceSample> {
    fields
        .iter()
        .enumerate()
        .map(|(k, &f)| crate::surface::SurfaceSample {
            x: 0.5 + k as f64,
            y: 0.0,
            normal: [0.0, 1.0],
            kind: SurfaceKind::Conductor(0),
            curve: 0,
            arc: 0.5 + k as f64,
            whole_loop: false,
            length: 1.0,
            material: 0,
            field: [0.0, f],
            curvature: 0.0,
        })
        .collect()
}

#[test]
fn a_sample_without_a_fit_makes_no_maximum_beside_it() {
    // A face whose field falls along it, with one sample's fit not determined: the only
    // maximum is the face's first sample. Read as zero, the missing sample made its right
    // neighbour (7) a maximum raised by the parabola through that zero to 7 + 0.125 * 7.
    let maxima = super::curve_maxima(&straight_run(&[10.0, 9.0, 8.0, f64::NAN, 7.0, 6.0, 5.0]));
    assert_eq!(maxima.len(), 1, "{maxima:?}");
    assert_eq!((maxima[0].at, maxima[0].magnitude), ([0.5, 0.0], 10.0));
    // A peak beside the missing sample is still found, refined with its finite neighbours.
    let maxima = super::curve_maxima(&straight_run(&[1.0, 2.0, 3.0, f64::NAN, 4.0, 3.0, 1.0]));
    let top = maxima
        .iter()
        .max_by(|a, b| a.magnitude.total_cmp(&b.magnitude))
        .unwrap();
    assert_eq!(top.at[1], 0.0);
    assert!((4.0..4.2).contains(&top.magnitude), "{maxima:?}");
    assert!(maxima.iter().all(|m| m.magnitude >= 3.9), "{maxima:?}");
}
