//! Pixel-probe tests of the pictures. Set FIELDGRID_PICTURE_DIR to a directory to also keep
//! the pictures as PNG files for a look.

use super::*;
use colormap::{diverging, sequential, LEN};

const MM: f64 = 1e-3;

fn keep(name: &str, img: &RgbImage) {
    if let Some(dir) = std::env::var_os("FIELDGRID_PICTURE_DIR") {
        let path = std::path::Path::new(&dir).join(format!("{name}.png"));
        img.save(&path).expect("picture saved");
    }
}

/// Potential of a line charge above a grounded plane y = 0, in volts per lambda/(2 pi eps0):
/// ln(r_image / r), the method of images (common practice). The core r < 0.2 mm is capped.
fn line_charge(g: &Grid, at: Point) -> Vec<f64> {
    (0..g.len())
        .map(|k| {
            let (x, y) = (g.x(k % g.nx), g.y(k / g.nx));
            let r = (x - at[0]).hypot(y - at[1]).max(0.2 * MM);
            let ri = (x - at[0]).hypot(y + at[1]);
            (ri / r).ln()
        })
        .collect()
}

struct Scene {
    grid: Grid,
    values: Vec<f64>,
    conductors: Vec<Outline>,
    dielectrics: Vec<Outline>,
    markers: Vec<Marker>,
}

/// A 20 x 10 mm domain, a line charge at (6, 5) mm, a conductor 12..16 x 3..7 mm without
/// values inside, a dielectric slab below y = 2 mm and a hot spot near the charge.
fn scene() -> Scene {
    let grid = Grid {
        nx: 401,
        ny: 201,
        x0: 0.0,
        y0: 0.0,
        hx: 0.05 * MM,
        hy: 0.05 * MM,
    };
    let mut values = line_charge(&grid, [6.0 * MM, 5.0 * MM]);
    for j in 0..grid.ny {
        for i in 0..grid.nx {
            let (x, y) = (grid.x(i), grid.y(j));
            if (12.0 * MM..=16.0 * MM).contains(&x) && (3.0 * MM..=7.0 * MM).contains(&y) {
                values[grid.idx(i, j)] = f64::NAN;
            }
        }
    }
    let rect =
        |x: [f64; 2], y: [f64; 2]| vec![[x[0], y[0]], [x[1], y[0]], [x[1], y[1]], [x[0], y[1]]];
    Scene {
        grid,
        values,
        conductors: vec![Outline::polygon(
            "shield",
            rect([12.0 * MM, 16.0 * MM], [3.0 * MM, 7.0 * MM]),
        )],
        dielectrics: vec![Outline::polygon(
            "substrate",
            rect([0.0, 20.0 * MM], [0.0, 2.0 * MM]),
        )],
        markers: vec![Marker {
            at: [6.5 * MM, 5.5 * MM],
            number: 1,
        }],
    }
}

fn input(s: &Scene) -> MapInput<'_> {
    MapInput {
        title: "potential, line charge over ground",
        quantity: "potential",
        unit: "V",
        length_unit: LengthUnit {
            label: "mm",
            metres: MM,
        },
        conductors: &s.conductors,
        dielectrics: &s.dielectrics,
        markers: &s.markers,
        ..MapInput::new(&s.grid, &s.values)
    }
}

fn px(img: &RgbImage, p: P) -> Rgb<u8> {
    *img.get_pixel(p[0].floor() as u32, p[1].floor() as u32)
}

fn dark(c: Rgb<u8>) -> bool {
    c.0.iter().all(|&v| v < 70)
}

fn neutral(c: Rgb<u8>) -> bool {
    let [r, g, b] = c.0.map(i32::from);
    (r - g).abs() <= 1 && (g - b).abs() <= 1 && (r - b).abs() <= 1
}

#[test]
fn map_has_its_size_colour_bar_outline_and_marker() {
    let s = scene();
    let (img, plot) = draw_map(&input(&s), &RenderOptions::default());
    keep("map", &img);
    assert_eq!(img.width(), 1200);
    assert_eq!(img.height() as usize, TOP + plot.h + BOTTOM);
    // A 2:1 domain stays 2:1 on the picture.
    assert!(!plot.distorted);
    assert!(
        (plot.w as f64 / plot.h as f64 - 2.0).abs() < 0.02,
        "{} x {}",
        plot.w,
        plot.h
    );

    // Colour bar: top row is the map's high end, bottom row its low end.
    let bx = plot.right() + BAR_W / 2 + BAR_GAP;
    let top = *img.get_pixel(bx as u32, plot.y0 as u32);
    let bottom = *img.get_pixel(bx as u32, (plot.bottom() - 1) as u32);
    assert_eq!(top, sequential().rgb[LEN - 1]);
    assert_eq!(bottom, sequential().rgb[0]);

    // Conductor: dark outline on its left edge, grey fill inside (away from its name).
    let edge = plot.px([12.0 * MM, 4.0 * MM]);
    assert!(dark(px(&img, edge)), "{:?}", px(&img, edge));
    assert_eq!(px(&img, plot.px([12.4 * MM, 3.4 * MM])), NO_VALUE);
    // Outside it: a colour of the map.
    let out = px(&img, plot.px([11.0 * MM, 8.5 * MM]));
    assert!(sequential().rgb.contains(&out) || !neutral(out), "{out:?}");

    // Hot spot: ink centre, white disc, ink ring.
    let m = plot.px([6.5 * MM, 5.5 * MM]);
    assert!(dark(px(&img, m)));
    assert_eq!(px(&img, [m[0] + 3.5, m[1]]), PAPER);
    assert!(dark(px(&img, [m[0] + 6.0, m[1]])));
}

#[test]
fn no_value_pixels_are_grey_never_a_map_colour() {
    let s = scene();
    for (with_outlines, name) in [(false, "nan-bare"), (true, "nan-outlined")] {
        let inp = MapInput {
            conductors: if with_outlines { &s.conductors } else { &[] },
            dielectrics: &[],
            markers: &[],
            ..input(&s)
        };
        let (img, plot) = draw_map(&inp, &RenderOptions::default());
        keep(name, &img);
        let samples = sample::resample(&s.grid, &s.values, plot.xr, plot.yr, plot.w, plot.h);
        let mut n = 0;
        for ly in 0..plot.h {
            for lx in 0..plot.w {
                if samples.at(lx, ly).is_nan() {
                    let c = *img.get_pixel(plot.x0 as u32 + lx as u32, plot.y0 as u32 + ly as u32);
                    if with_outlines {
                        // Fill, outline ink and name boxes are all neutral greys.
                        assert!(neutral(c), "({lx}, {ly}): {c:?}");
                    } else {
                        assert_eq!(c, NO_VALUE, "({lx}, {ly})");
                    }
                    n += 1;
                }
            }
        }
        assert!(n > 1000, "the conductor covers pixels");
    }
    // And every colour of the sequential map is visibly non-neutral, so the check above means
    // no map colour leaked into the conductor.
    assert!(sequential().rgb.iter().all(|&c| !neutral(c)));
}

#[test]
fn equipotentials_sit_at_round_values() {
    // v = x / 10 mm over 0..10 mm: the 0.1 V ... 0.9 V lines are the columns x = 1 ... 9 mm.
    let grid = Grid {
        nx: 101,
        ny: 51,
        x0: 0.0,
        y0: 0.0,
        hx: 0.1 * MM,
        hy: 0.1 * MM,
    };
    let v: Vec<f64> = (0..grid.len())
        .map(|k| grid.x(k % grid.nx) / (10.0 * MM))
        .collect();
    let inp = MapInput {
        unit: "V",
        quantity: "potential",
        length_unit: LengthUnit {
            label: "mm",
            metres: MM,
        },
        ..MapInput::new(&grid, &v)
    };
    let (img, plot) = draw_map(&inp, &RenderOptions::default());
    keep("ramp", &img);
    let cs = ColorScale::new(&inp);
    let samples = sample::resample(&grid, &v, plot.xr, plot.yr, plot.w, plot.h);
    let y = plot.y0 as f64 + 0.12 * plot.h as f64; // clear of the labels at mid-line
    for k in 1..10 {
        let x = plot.px([k as f64 * MM, 0.0])[0];
        let expect = cs.color(k as f64 / 10.0);
        let got = px(&img, [x, y]);
        assert_ne!(got, expect, "line {k} missing at x = {x}");
        // Half-way between two lines the map colour is untouched.
        let mid = plot.px([(k as f64 - 0.5) * MM, 0.0])[0];
        let (lx, ly) = (
            (mid.floor() as i64 - plot.x0) as usize,
            (y.floor() as i64 - plot.y0) as usize,
        );
        assert_eq!(
            px(&img, [mid, y]),
            cs.color(samples.at(lx, ly)),
            "stray ink near {k}"
        );
    }
    let levels = cs.levels(ContourStyle::Auto, "V");
    let labels: Vec<&str> = levels.iter().map(|l| l.1.as_str()).collect();
    assert_eq!(
        labels,
        ["0.1 V", "0.2 V", "0.3 V", "0.4 V", "0.5 V", "0.6 V", "0.7 V", "0.8 V", "0.9 V"]
    );
}

#[test]
fn extreme_aspect_ratios_and_tiny_grids_render() {
    let cases = [
        (
            "strip",
            Grid {
                nx: 1001,
                ny: 11,
                x0: 0.0,
                y0: 0.0,
                hx: 1e-4,
                hy: 1e-4,
            },
        ),
        (
            "column",
            Grid {
                nx: 11,
                ny: 1001,
                x0: 0.0,
                y0: 0.0,
                hx: 1e-4,
                hy: 1e-4,
            },
        ),
        (
            "tiny",
            Grid {
                nx: 3,
                ny: 3,
                x0: -1.0,
                y0: -1.0,
                hx: 1.0,
                hy: 1.0,
            },
        ),
    ];
    for (name, g) in cases {
        let mut v: Vec<f64> = (0..g.len())
            .map(|k| ((k % g.nx) + 2 * (k / g.nx)) as f64)
            .collect();
        v[g.len() / 2] = f64::NAN;
        let marker = [Marker {
            at: [g.x0, g.y0],
            number: 7,
        }];
        let inp = MapInput {
            unit: "V",
            quantity: "potential",
            markers: &marker,
            title: name,
            ..MapInput::new(&g, &v)
        };
        let (img, plot) = draw_map(&inp, &RenderOptions::default());
        keep(name, &img);
        let expect_w = if name == "column" { 480 } else { 1200 };
        assert_eq!(img.width(), expect_w);
        assert!(img.height() <= (TOP + 900 + BOTTOM) as u32);
        assert!(plot.w >= MIN_PLOT && plot.h >= MIN_PLOT);
        assert_eq!(plot.distorted, name != "tiny");
        assert!(plot.right() + BAR_GAP + BAR_W < expect_w as i64 && plot.x0 > 0);
    }
    // All values missing, and a constant field: still a picture.
    let g = Grid {
        nx: 3,
        ny: 3,
        x0: 0.0,
        y0: 0.0,
        hx: 1.0,
        hy: 1.0,
    };
    for v in [vec![f64::NAN; 9], vec![2.5; 9]] {
        let img = render_map(&MapInput::new(&g, &v), &RenderOptions { width: 400 });
        assert_eq!(img.width(), 400);
    }
}

#[test]
fn same_input_gives_the_same_bytes() {
    let s = scene();
    let a = render_map(&input(&s), &RenderOptions::default());
    let b = render_map(&input(&s), &RenderOptions::default());
    assert!(a.as_raw() == b.as_raw());
    let png = |img: &RgbImage| {
        let mut out = std::io::Cursor::new(Vec::new());
        img.write_to(&mut out, image::ImageFormat::Png)
            .expect("png");
        out.into_inner()
    };
    let (pa, pb) = (png(&a), png(&b));
    assert_eq!(pa, pb);
    let back = image::load_from_memory(&pa).expect("decodes").to_rgb8();
    assert!(back.as_raw() == a.as_raw());
}

#[test]
fn signed_values_use_the_diverging_map_centred_on_zero() {
    let grid = Grid {
        nx: 81,
        ny: 41,
        x0: 0.0,
        y0: 0.0,
        hx: 0.1 * MM,
        hy: 0.1 * MM,
    };
    // -2 V at the left, +1 V at the right: the bar runs -2..2 V, so 0 V sits at its middle.
    let v: Vec<f64> = (0..grid.len())
        .map(|k| -2.0 + 3.0 * (k % grid.nx) as f64 / 80.0)
        .collect();
    let inp = MapInput {
        unit: "V",
        quantity: "potential",
        contours: ContourStyle::None,
        ..MapInput::new(&grid, &v)
    };
    let (img, plot) = draw_map(&inp, &RenderOptions::default());
    keep("signed", &img);
    let cs = ColorScale::new(&inp);
    assert_eq!((cs.lo, cs.hi), (-2.0, 2.0));
    let zero = plot.px([8.0 * MM * 2.0 / 3.0, 2.0 * MM]);
    let c = colormap::lab_of(px(&img, zero));
    assert!(c.l > 0.95 && c.a.abs() < 0.02 && c.b.abs() < 0.02, "{c:?}");
    let bx = (plot.right() + BAR_GAP + BAR_W / 2) as u32;
    assert_eq!(*img.get_pixel(bx, plot.y0 as u32), diverging().rgb[LEN - 1]);
    // Round-off below zero in a one-signed field keeps the sequential map.
    let noisy: Vec<f64> = (0..grid.len())
        .map(|k| (k % grid.nx) as f64 / 80.0 - 1e-12)
        .collect();
    let cs = ColorScale::new(&MapInput {
        values: &noisy,
        ..inp
    });
    assert!(std::ptr::eq(cs.table, sequential()) && cs.lo < 0.0 && cs.lo > -1e-11);
}

#[test]
fn log_scale_labels_decades_with_prefixes() {
    // |E| falling as 1/r from a line: 1e6 V/m at 0.1 mm down to about 1e3 V/m.
    let grid = Grid {
        nx: 201,
        ny: 201,
        x0: -50.0 * MM,
        y0: -50.0 * MM,
        hx: 0.5 * MM,
        hy: 0.5 * MM,
    };
    let v: Vec<f64> = (0..grid.len())
        .map(|k| 100.0 / grid.x(k % grid.nx).hypot(grid.y(k / grid.nx)).max(0.1 * MM))
        .collect();
    let mk = [Marker {
        at: [0.0, 0.0],
        number: 1,
    }];
    let inp = MapInput {
        title: "field magnitude",
        quantity: "field",
        unit: "V/m",
        scale: Scale::Log,
        markers: &mk,
        length_unit: LengthUnit {
            label: "mm",
            metres: MM,
        },
        ..MapInput::new(&grid, &v)
    };
    let (img, plot) = draw_map(&inp, &RenderOptions::default());
    keep("log", &img);
    let cs = ColorScale::new(&inp);
    assert!(
        cs.log && (cs.hi - 1e6).abs() < 1.0 && cs.lo > 1e3 && cs.lo < 1.5e3,
        "{} {}",
        cs.lo,
        cs.hi
    );
    let labels: Vec<String> = cs.ticks(10).into_iter().map(|t| t.1).collect();
    assert_eq!(labels, ["10 k", "100 k", "1 M"]);
    assert_eq!(cs.unit("V/m"), "V/m");
    // The peak pixel carries the top colour (it is under the marker, so probe beside it).
    let near = plot.px([0.3 * MM, 9.0 * MM]);
    let c = px(&img, near);
    assert!(sequential().rgb.contains(&c) || !neutral(c));
}

#[test]
fn preview_paints_materials_by_permittivity_and_lists_them() {
    let rect =
        |x: [f64; 2], y: [f64; 2]| vec![[x[0], y[0]], [x[1], y[0]], [x[1], y[1]], [x[0], y[1]]];
    let mats = [Material {
        outline: Outline::polygon("substrate", rect([0.0, 30.0 * MM], [0.0, 1.6 * MM])),
        permittivity: 4.4,
    }];
    let conductors = [
        Outline::polygon("trace", rect([12.0 * MM, 15.0 * MM], [1.6 * MM, 1.7 * MM])),
        Outline::polyline("wire", vec![[2.0 * MM, 6.0 * MM], [8.0 * MM, 8.0 * MM]]),
    ];
    let probes = [Marker {
        at: [20.0 * MM, 5.0 * MM],
        number: 1,
    }];
    let inp = PreviewInput {
        title: "check: microstrip",
        length_unit: LengthUnit {
            label: "mm",
            metres: MM,
        },
        background_permittivity: 1.0,
        dielectrics: &mats,
        conductors: &conductors,
        markers: &probes,
        ..PreviewInput::new([0.0, 30.0 * MM], [0.0, 10.0 * MM])
    };
    let (img, plot) = draw_preview(&inp, &RenderOptions::default());
    keep("preview", &img);
    let air = sequential().at_or_fill(0.97);
    let fr4 = sequential().at_or_fill(0.37);
    assert_eq!(px(&img, plot.px([25.0 * MM, 0.8 * MM])), fr4);
    assert_eq!(px(&img, plot.px([25.0 * MM, 9.0 * MM])), air);
    // The thin conductor is an ink line.
    assert!(dark(px(&img, plot.px([5.0 * MM, 7.0 * MM]))));
    // Legend swatches: background, substrate, conductor.
    let sx = (plot.right() + 22 + 8) as u32;
    let sy = |k: i64| (plot.y0 + 2 + k * 20 + 7) as u32;
    assert_eq!(*img.get_pixel(sx, sy(0)), air);
    assert_eq!(*img.get_pixel(sx, sy(1)), fr4);
    assert_eq!(*img.get_pixel(sx, sy(2)), NO_VALUE);
}

#[test]
fn shapes_from_the_design_are_drawn_where_they_are() {
    use fieldgrid_solver::design::Shape;
    let grid = Grid {
        nx: 101,
        ny: 101,
        x0: 0.0,
        y0: 0.0,
        hx: 0.1 * MM,
        hy: 0.1 * MM,
    };
    let v = vec![0.0; grid.len()];
    let ring = Outline::from_shape(
        "ring",
        &Shape::Ring {
            center: [5.0 * MM, 5.0 * MM],
            inner: 2.0 * MM,
            outer: 3.0 * MM,
        },
        Outline::picture_tolerance([0.0, 10.0 * MM], [0.0, 10.0 * MM]),
    );
    let c = [ring];
    let inp = MapInput {
        conductors: &c,
        ..MapInput::new(&grid, &v)
    };
    let (img, plot) = draw_map(&inp, &RenderOptions { width: 800 });
    keep("ring", &img);
    // Filled between the radii, open in the middle, ink on both circles.
    assert_eq!(px(&img, plot.px([5.0 * MM, 7.5 * MM])), NO_VALUE);
    assert_ne!(px(&img, plot.px([6.0 * MM, 5.2 * MM])), NO_VALUE);
    assert!(dark(px(&img, plot.px([8.0 * MM, 5.0 * MM]))));
    assert!(dark(px(&img, plot.px([3.0 * MM, 5.0 * MM]))));
}

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
    let g = Grid {
        nx: 321,
        ny: 201,
        x0: -8.0 * MM,
        y0: -5.0 * MM,
        hx: 0.05 * MM,
        hy: 0.05 * MM,
    };
    let (d, a) = (3.0 * MM, 1.0 * MM);
    let v = two_wire(&g, d, a);
    let tol = Outline::picture_tolerance([g.x0, g.x1()], [g.y0, g.y1()]);
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
fn frames_tell_where_the_plot_bar_and_legend_are() {
    let s = scene();
    let unit = LengthUnit {
        label: "mm",
        metres: MM,
    };
    let opts = RenderOptions::default();
    let f = map_frame(&s.grid, unit, &opts);
    let (img, plot) = draw_map(&input(&s), &opts);
    assert_eq!(f.size, [img.width(), img.height()]);
    assert_eq!(
        f.plot,
        [plot.x0 as u32, plot.y0 as u32, plot.w as u32, plot.h as u32]
    );
    // The layout does not depend on the values: a field a million times larger, same frame.
    let big: Vec<f64> = s.values.iter().map(|v| v * 1e6 - 3e5).collect();
    let (_, plot2) = draw_map(
        &MapInput {
            values: &big,
            ..input(&s)
        },
        &opts,
    );
    assert_eq!(plot2.x0, plot.x0);
    // Probes through the frame: bar ends and a conductor's inside.
    let [bx, by, bw, bh] = f.side;
    assert_eq!(*img.get_pixel(bx + bw / 2, by), sequential().rgb[LEN - 1]);
    assert_eq!(
        *img.get_pixel(bx + bw / 2, by + bh - 1),
        sequential().rgb[0]
    );
    let q = f.pixel([12.4 * MM, 3.4 * MM]);
    assert_eq!(*img.get_pixel(q[0] as u32, q[1] as u32), NO_VALUE);

    let mats = [Material {
        outline: Outline::polygon("slab", vec![[0.0, 0.0], [1.0, 0.0], [1.0, 0.2], [0.0, 0.2]]),
        permittivity: 9.8,
    }];
    let inp = PreviewInput {
        dielectrics: &mats,
        ..PreviewInput::new([0.0, 1.0], [0.0, 1.0])
    };
    let pf = preview_frame(&inp, &opts);
    let img = render_preview(&inp, &opts);
    let [sx, sy, sw, sh] = pf.side;
    let bg = *img.get_pixel(sx + sw / 2, sy + sh / 2);
    let slab = *img.get_pixel(sx + sw / 2, sy + LEGEND_PITCH + sh / 2);
    let inside = pf.pixel([0.5, 0.1]);
    let outside = pf.pixel([0.5, 0.7]);
    assert_eq!(*img.get_pixel(inside[0] as u32, inside[1] as u32), slab);
    assert_eq!(*img.get_pixel(outside[0] as u32, outside[1] as u32), bg);
    assert_ne!(bg, slab);
}

#[test]
fn shapes_reaching_past_the_axis_are_clipped_to_the_plot() {
    use fieldgrid_solver::design::Shape;
    // Axisymmetric: a sphere centred on the axis is a circle crossing r = 0.
    let grid = Grid {
        nx: 101,
        ny: 101,
        x0: 0.0,
        y0: 0.0,
        hx: 0.1 * MM,
        hy: 0.1 * MM,
    };
    let v = vec![0.5; grid.len()];
    let tol = Outline::picture_tolerance([0.0, 10.0 * MM], [0.0, 10.0 * MM]);
    let sphere = [Outline::from_shape(
        "sphere",
        &Shape::Circle {
            center: [0.0, 5.0 * MM],
            radius: 3.0 * MM,
        },
        tol,
    )];
    let mats = [Material {
        outline: sphere[0].clone(),
        permittivity: 3.0,
    }];
    let inp = MapInput {
        conductors: &sphere,
        axis_names: ["r", "z"],
        ..MapInput::new(&grid, &v)
    };
    let (img, plot) = draw_map(&inp, &RenderOptions::default());
    let pre = PreviewInput {
        conductors: &sphere,
        dielectrics: &mats,
        ..PreviewInput::new([0.0, 10.0 * MM], [0.0, 10.0 * MM])
    };
    let (pimg, pplot) = draw_preview(&pre, &RenderOptions::default());
    keep("axis-sphere", &img);
    for (img, plot) in [(&img, &plot), (&pimg, &pplot)] {
        let y = plot.px([0.0, 5.0 * MM])[1] as u32;
        // Left of the plot's frame: paper, tick ink and label ink only, never the fill grey.
        for x in 0..(plot.x0 - 2) as u32 {
            assert_ne!(*img.get_pixel(x, y), NO_VALUE, "fill leaked to x = {x}");
        }
        assert_eq!(px(img, plot.px([0.3 * MM, 5.5 * MM])), NO_VALUE);
    }
}

#[test]
fn a_colour_range_narrower_than_the_values_caps_that_end_of_the_bar() {
    let s = scene();
    let bar_cap_pixel = |img: &RgbImage, plot: &Plot, above: bool| {
        let bx = (plot.right() + BAR_GAP + BAR_W / 2) as u32;
        let y = if above {
            plot.y0 - 4
        } else {
            plot.bottom() + 3
        };
        *img.get_pixel(bx, y as u32)
    };
    // The whole range: no caps.
    let (img, plot) = draw_map(&input(&s), &RenderOptions::default());
    assert_eq!(bar_cap_pixel(&img, &plot, true), PAPER);
    assert_eq!(bar_cap_pixel(&img, &plot, false), PAPER);
    // A range inside the values at both ends: both caps, in the end colours.
    let (lo, hi) = sample::finite_range(&s.values).unwrap();
    let mut narrow = input(&s);
    narrow.range = Some([lo + 0.25 * (hi - lo), hi - 0.25 * (hi - lo)]);
    let (img, plot) = draw_map(&narrow, &RenderOptions::default());
    assert_eq!(bar_cap_pixel(&img, &plot, true), sequential().rgb[LEN - 1]);
    assert_eq!(bar_cap_pixel(&img, &plot, false), sequential().rgb[0]);
}
