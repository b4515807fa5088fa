//! Field lines over a map: they leave the positive conductor, end on the negative one and
//! cross the equipotentials.

use super::*;

/// Two-wire line: +1 and -1 V discs of radius a at +-d, potential
/// ln(r2/r1) / (2 ln(d/a + sqrt(d^2/a^2 - 1))) for the equivalent line charges at +-b with
/// b = sqrt(d^2 - a^2) (method of images for two cylinders, common practice).
fn two_wire(g: &Grid, d: f64, a: f64) -> Vec<f64> {
    let b = (d * d - a * a).sqrt();
    let scale = 1.0 / (d / a + (d * d / (a * a) - 1.0).sqrt()).ln();
    (0..g.len())
        .map(|k| {
            let (x, y) = (g.x(k % g.nx), g.y(k / g.nx));
            if (x - d).hypot(y) < a || (x + d).hypot(y) < a {
                return f64::NAN;
            }
            let r1 = (x - b).hypot(y);
            let r2 = (x + b).hypot(y);
            scale * (r2 / r1).ln()
        })
        .collect()
}

#[test]
fn field_lines_leave_the_positive_wire_and_cross_equipotentials() {
    let g = Grid::regular([-8.0 * MM, -5.0 * MM], [0.05 * MM, 0.05 * MM], [321, 201]);
    let (d, a) = (3.0 * MM, 1.0 * MM);
    let v = two_wire(&g, d, a);
    let tol = Outline::picture_tolerance([g.x0(), g.x1()], [g.y0(), g.y1()]);
    let wires = [
        Outline::from_shape(
            "plus",
            &fieldgrid_solver::design::Shape::Circle {
                center: [d, 0.0],
                radius: a,
            },
            tol,
        ),
        Outline::from_shape(
            "minus",
            &fieldgrid_solver::design::Shape::Circle {
                center: [-d, 0.0],
                radius: a,
            },
            tol,
        ),
    ];
    let inp = MapInput {
        title: "two-wire line",
        quantity: "potential",
        unit: "V",
        length_unit: LengthUnit {
            label: "mm",
            metres: MM,
        },
        conductors: &wires,
        field_lines: Some(FieldLines {
            potential: &v,
            count: 24,
            permittivity: None,
        }),
        ..MapInput::new(&g, &v)
    };
    let (img, plot) = draw_map(&inp, &RenderOptions::default());
    keep("two-wire", &img);
    // The same picture without lines differs only outside the conductors.
    let bare = render_map(
        &MapInput {
            field_lines: None,
            ..inp
        },
        &RenderOptions::default(),
    );
    let mut changed = 0;
    for (x, y, p) in img.enumerate_pixels() {
        if p != bare.get_pixel(x, y) {
            changed += 1;
            assert!(
                plot.local(x as usize, y as usize).is_some(),
                "line ink outside the plot"
            );
        }
    }
    assert!(changed > 2000, "lines drawn: {changed} pixels");
    // Lines start on the positive wire: the seeds lie on its side of the picture's middle,
    // just outside radius a.
    let samples = sample::resample(&g, &v, plot.xr, plot.yr, plot.w, plot.h);
    let filled = sample::Samples {
        w: samples.w,
        h: samples.h,
        v: contour::fill_missing(&samples).unwrap(),
    };
    let k = [
        plot.w as f64 / (plot.xr[1] - plot.xr[0]),
        plot.h as f64 / (plot.yr[1] - plot.yr[0]),
    ];
    let pot = fieldlines::Potential::new(&filled, k);
    let local = |q: Point| {
        let p = plot.px(q);
        [p[0] - plot.x0 as f64, p[1] - plot.y0 as f64]
    };
    let ring: Vec<P> = wires[0].rings[0].iter().map(|&q| local(q)).collect();
    let ring2: Vec<P> = wires[1].rings[0].iter().map(|&q| local(q)).collect();
    let centre = local([d, 0.0]);
    let centre2 = local([-d, 0.0]);
    let r_px = a * k[0];
    let inside = |p: P| {
        let disc =
            |x: usize, y: usize, c: P| (x as f64 + 0.5 - c[0]).hypot(y as f64 + 0.5 - c[1]) < r_px;
        fieldlines::stencil_blocked(plot.w, plot.h, p, |x, y| {
            samples.at(x, y).is_nan() || disc(x, y, centre) || disc(x, y, centre2)
        })
    };
    let seeds = fieldlines::seeds(&pot, &[ring, ring2], &[], 24, 2.5, &inside);
    assert_eq!(seeds.len(), 24);
    for s in &seeds {
        assert_eq!(s.sign, 1.0);
        let r = (s.at[0] - centre[0]).hypot(s.at[1] - centre[1]);
        assert!(
            (r - r_px - 2.5).abs() < 1.0,
            "seed at {r} px from the + centre"
        );
        // Potential falls along every line (E points downhill).
        let line = fieldlines::trace(&pot, *s, &inside);
        let phi = |p: P| {
            let (x, y) = (plot.xr[0] + p[0] / k[0], plot.yr[1] - p[1] / k[1]);
            let b = (d * d - a * a).sqrt();
            ((x + b).hypot(y) / (x - b).hypot(y)).ln()
        };
        for w in line.points.windows(2) {
            assert!(
                phi(w[1]) <= phi(w[0]) + 1e-9,
                "potential rose along a line at {:?}",
                w[1]
            );
        }
    }
}

#[test]
fn field_lines_start_at_the_conductor_on_a_graded_lattice() {
    // A wire of radius 0.5 mm at (10, 5) mm over a grounded plane, on a lattice graded from
    // 0.05 mm cells round the wire to 2 mm cells at the sides. The lines start at the wire's
    // surface, not a large cell's width away from it.
    let mut xs: Vec<f64> = (0..=4).map(|k| 2.0 * MM * f64::from(k)).collect();
    xs.extend((1..80).map(|k| 8.0 * MM + 0.05 * MM * f64::from(k)));
    xs.extend((0..=4).map(|k| 12.0 * MM + 2.0 * MM * f64::from(k)));
    let mut ys: Vec<f64> = vec![0.0, 2.0 * MM];
    ys.extend(
        (0..=120)
            .map(|k| 2.0 * MM + 0.05 * MM * f64::from(k))
            .skip(1),
    );
    ys.extend([10.0 * MM]);
    let g = Grid::from_lines(xs, ys).expect("lattice");
    let (c, a) = ([10.0 * MM, 5.0 * MM], 0.5 * MM);
    // Potential of a line charge over ground (method of images, common practice), held at
    // its surface value inside the wire.
    let whole: Vec<f64> = (0..g.len())
        .map(|k| {
            let (x, y) = (g.x(k % g.nx), g.y(k / g.nx));
            let r = (x - c[0]).hypot(y - c[1]).max(a);
            ((x - c[0]).hypot(y + c[1]) / r).ln()
        })
        .collect();
    let shown: Vec<f64> = (0..g.len())
        .map(|k| {
            let (x, y) = (g.x(k % g.nx), g.y(k / g.nx));
            if (x - c[0]).hypot(y - c[1]) <= a {
                f64::NAN
            } else {
                whole[k]
            }
        })
        .collect();
    let tol = Outline::picture_tolerance([g.x0(), g.x1()], [g.y0(), g.y1()]);
    let wire = [Outline::from_shape(
        "",
        &fieldgrid_solver::design::Shape::Circle {
            center: c,
            radius: a,
        },
        tol,
    )];
    let inp = MapInput {
        conductors: &wire,
        contours: ContourStyle::None,
        field_lines: Some(FieldLines {
            potential: &whole,
            count: 16,
            permittivity: None,
        }),
        ..MapInput::new(&g, &shown)
    };
    let (img, plot) = draw_map(&inp, &RenderOptions::default());
    keep("graded-wire-lines", &img);
    let bare = render_map(
        &MapInput {
            field_lines: None,
            ..inp
        },
        &RenderOptions::default(),
    );
    let centre = plot.px(c);
    let r_px = a * plot.w as f64 / (plot.xr[1] - plot.xr[0]);
    let near = img
        .enumerate_pixels()
        .filter(|(x, y, p)| {
            let r = (f64::from(*x) + 0.5 - centre[0]).hypot(f64::from(*y) + 0.5 - centre[1]);
            r > r_px + 2.0 && r < r_px + 7.0 && *p != bare.get_pixel(*x, *y)
        })
        .count();
    assert!(near > 16, "line ink next to the wire: {near} pixels");
}

#[test]
fn arrowheads_on_crowded_field_lines_keep_apart() {
    // Twenty parallel lines 8 px apart (the field under a trace in a laminate): arrowheads all
    // at their middles would stand side by side and read as a zigzag band.
    let mut taken: Vec<P> = Vec::new();
    for k in 0..20 {
        let x = 100.0 + 8.0 * f64::from(k);
        let line: Vec<P> = (0..=100).map(|s| [x, f64::from(s) * 1.5]).collect();
        if let Some(s) = super::super::lines::arrow_place(&line, &taken) {
            taken.push([x, s]);
        }
    }
    assert!(taken.len() >= 4, "{taken:?}");
    for (i, p) in taken.iter().enumerate() {
        for q in &taken[i + 1..] {
            let d = (p[0] - q[0]).hypot(p[1] - q[1]);
            assert!(d >= 30.0, "arrowheads {d} px apart: {p:?} {q:?}");
        }
    }
}
