//! Field maps: size, colour bar, value-less pixels, contour levels, aspect ratios, colour
//! scales (diverging, logarithmic, saturated ends) and determinism.

use super::*;

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

    // Hot spot: an ink ring with the map's colour left in its centre.
    let m = plot.px([6.5 * MM, 5.5 * MM]);
    let centre = px(&img, m);
    assert!(!neutral(centre) && !dark(centre), "{centre:?}");
    assert!(dark(px(&img, [m[0] + 5.5, m[1]])));
}

#[test]
fn hot_spot_markers_leave_the_trace_they_sit_on_visible() {
    // Marks on a thin trace (an open conductor) and at its end: the trace stays ink through
    // and around every ring, and no number box covers it.
    let s = scene();
    let trace = Outline::polyline("", vec![[2.0 * MM, 8.0 * MM], [10.0 * MM, 8.0 * MM]]);
    let markers: Vec<Marker> = [3.0, 3.4, 6.0, 10.0]
        .iter()
        .zip(1..)
        .map(|(&x, number)| Marker {
            at: [x * MM, 8.0 * MM],
            number,
        })
        .collect();
    let conductors = [trace];
    let inp = MapInput {
        conductors: &conductors,
        markers: &markers,
        ..input(&s)
    };
    let (img, plot) = draw_map(&inp, &RenderOptions::default());
    keep("marks-on-a-trace", &img);
    let a = plot.px([2.0 * MM, 8.0 * MM]);
    let b = plot.px([10.0 * MM, 8.0 * MM]);
    for x in (a[0].ceil() as i64 + 1)..(b[0].floor() as i64 - 1) {
        let c = px(&img, [x as f64, a[1]]);
        assert!(dark(c), "trace at x = {x} px covered: {c:?}");
    }
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
                        // Inside the outline, fill, outline ink and name boxes are all neutral
                        // greys (the value-less band outside it takes the values beside it).
                        let p = [
                            plot.x0 as f64 + lx as f64 + 0.5,
                            plot.y0 as f64 + ly as f64 + 0.5,
                        ];
                        let (a, b) = (
                            plot.px([12.0 * MM, 7.0 * MM]),
                            plot.px([16.0 * MM, 3.0 * MM]),
                        );
                        if p[0] > a[0] + 1.0
                            && p[0] < b[0] - 1.0
                            && p[1] > a[1] + 1.0
                            && p[1] < b[1] - 1.0
                        {
                            assert!(neutral(c), "({lx}, {ly}): {c:?}");
                            n += 1;
                        }
                        continue;
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
fn a_conductors_grey_ends_at_its_outline_on_a_coarse_lattice() {
    // Cells of 1 mm; a conductor 4..8 x 2..6 mm whose faces lie on node lines, its nodes on
    // and inside the outline without values. A pixel 0.3 mm above its top face (within half a
    // cell, where the strict resampling has no value) shows the field, not a grey band.
    let grid = Grid::regular([0.0, 0.0], [1.0 * MM, 1.0 * MM], [21, 11]);
    let inside =
        |x: f64, y: f64| (4.0 * MM..=8.0 * MM).contains(&x) && (2.0 * MM..=6.0 * MM).contains(&y);
    let values: Vec<f64> = (0..grid.len())
        .map(|k| {
            let (x, y) = (grid.x(k % grid.nx), grid.y(k / grid.nx));
            if inside(x, y) {
                f64::NAN
            } else {
                (x + y) / MM
            }
        })
        .collect();
    let rect = vec![
        [4.0 * MM, 2.0 * MM],
        [8.0 * MM, 2.0 * MM],
        [8.0 * MM, 6.0 * MM],
        [4.0 * MM, 6.0 * MM],
    ];
    let conductors = [Outline::polygon("", rect)];
    let inp = MapInput {
        conductors: &conductors,
        contours: ContourStyle::None,
        ..MapInput::new(&grid, &values)
    };
    let (img, plot) = draw_map(&inp, &RenderOptions::default());
    keep("coarse-conductor", &img);
    let above = px(&img, plot.px([6.0 * MM, 6.3 * MM]));
    assert!(!neutral(above), "grey band above the face: {above:?}");
    let beside = px(&img, plot.px([8.3 * MM, 4.0 * MM]));
    assert!(!neutral(beside), "grey band beside the face: {beside:?}");
    assert_eq!(px(&img, plot.px([6.0 * MM, 5.0 * MM])), NO_VALUE);
}

#[test]
fn equipotentials_sit_at_round_values() {
    // v = x / 10 mm over 0..10 mm: the 0.1 V ... 0.9 V lines are the columns x = 1 ... 9 mm.
    let grid = Grid::regular([0.0, 0.0], [0.1 * MM, 0.1 * MM], [101, 51]);
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
        ("strip", Grid::regular([0.0, 0.0], [1e-4, 1e-4], [1001, 11])),
        (
            "column",
            Grid::regular([0.0, 0.0], [1e-4, 1e-4], [11, 1001]),
        ),
        ("tiny", Grid::regular([-1.0, -1.0], [1.0, 1.0], [3, 3])),
    ];
    for (name, g) in cases {
        let mut v: Vec<f64> = (0..g.len())
            .map(|k| ((k % g.nx) + 2 * (k / g.nx)) as f64)
            .collect();
        v[g.len() / 2] = f64::NAN;
        let marker = [Marker {
            at: [g.x0(), g.y0()],
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
    let g = Grid::regular([0.0, 0.0], [1.0, 1.0], [3, 3]);
    for v in [vec![f64::NAN; 9], vec![2.5; 9]] {
        let img = render_map(
            &MapInput::new(&g, &v),
            &RenderOptions {
                width: 400,
                ..RenderOptions::default()
            },
        );
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
    let grid = Grid::regular([0.0, 0.0], [0.1 * MM, 0.1 * MM], [81, 41]);
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
fn a_short_diverging_bar_keeps_ticks_either_side_of_zero() {
    // A pair driven at +-0.5 V whose nodes reach +-0.49 V: 500 mV steps leave only the 0.
    let grid = Grid::regular([0.0, 0.0], [0.1 * MM, 0.1 * MM], [81, 9]);
    let v: Vec<f64> = (0..grid.len())
        .map(|k| -0.49 + 0.98 * (k % grid.nx) as f64 / 80.0)
        .collect();
    let inp = MapInput {
        unit: "V",
        ..MapInput::new(&grid, &v)
    };
    let cs = ColorScale::new(&inp);
    let ticks = bar_ticks(&cs, 160);
    assert!(ticks.iter().any(|t| t.0 < 0.0), "{ticks:?}");
    assert!(ticks.iter().any(|t| t.0 > 0.0), "{ticks:?}");
}

#[test]
fn potentials_offset_from_zero_are_labelled_at_face_value() {
    // 1000.0 to 1000.9 V: labels "1000.4 V", not "1.0004 kV".
    let grid = Grid::regular([0.0, 0.0], [0.1 * MM, 0.1 * MM], [81, 41]);
    let v: Vec<f64> = (0..grid.len())
        .map(|k| 1000.0 + 0.9 * (k % grid.nx) as f64 / 80.0)
        .collect();
    let inp = MapInput {
        unit: "V",
        quantity: "potential",
        ..MapInput::new(&grid, &v)
    };
    let (img, _) = draw_map(&inp, &RenderOptions::default());
    keep("offset", &img);
    let cs = ColorScale::new(&inp);
    assert_eq!(cs.unit("V"), "V");
    let levels = cs.levels(ContourStyle::Auto, "V");
    assert!(levels.iter().any(|l| l.1 == "1000.4 V"), "{levels:?}");
    let ticks = bar_ticks(&cs, 400);
    assert!(ticks.iter().any(|t| t.1 == "1000.4"), "{ticks:?}");
    // A range from zero keeps its prefix.
    let kv: Vec<f64> = v.iter().map(|x| (x - 1000.0) * 1e4).collect();
    let cs = ColorScale::new(&MapInput { values: &kv, ..inp });
    assert_eq!(cs.unit("V"), "kV");
}

#[test]
fn log_scale_labels_decades_with_prefixes() {
    // |E| falling as 1/r from a line: 1e6 V/m at 0.1 mm down to about 1e3 V/m.
    let grid = Grid::regular([-50.0 * MM, -50.0 * MM], [0.5 * MM, 0.5 * MM], [201, 201]);
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

#[test]
fn graded_grid_maps_read_the_field_at_each_pixel() {
    // Cells from 0.05 mm to 4 mm: probes at known places show the colour of the value there
    // (the field x + y/2 interpolated from the lines), and a large cell shades smoothly.
    let xs: Vec<f64> = [0.0, 0.05, 0.1, 0.3, 1.0, 5.0, 9.0, 10.0]
        .iter()
        .map(|v| v * MM)
        .collect();
    let ys: Vec<f64> = [0.0, 0.2, 0.25, 2.0, 5.0].iter().map(|v| v * MM).collect();
    let grid = Grid::from_lines(xs, ys).unwrap();
    let f = |x: f64, y: f64| x + 0.5 * y;
    let v: Vec<f64> = (0..grid.len())
        .map(|k| f(grid.x(k % grid.nx), grid.y(k / grid.nx)))
        .collect();
    let inp = MapInput {
        unit: "V",
        quantity: "potential",
        ..MapInput::new(&grid, &v)
    };
    let cs = ColorScale::new(&inp);
    let (img, plot) = draw_map(&inp, &RenderOptions::default());
    keep("graded-map", &img);
    let colour_at = |p: Point| {
        let q = plot.px(p);
        let (lx, ly) = (q[0].floor() - plot.x0 as f64, q[1].floor() - plot.y0 as f64);
        let x = plot.xr[0] + (lx + 0.5) / plot.w as f64 * (plot.xr[1] - plot.xr[0]);
        let y = plot.yr[1] - (ly + 0.5) / plot.h as f64 * (plot.yr[1] - plot.yr[0]);
        (px(&img, q), cs.color(f(x, y)))
    };
    for p in [[0.07, 0.22], [0.6, 1.0], [3.3, 4.1], [7.7, 0.1], [9.5, 3.0]] {
        let (got, want) = colour_at([p[0] * MM, p[1] * MM]);
        assert_eq!(got, want, "at {p:?} mm");
    }
    // Across the 4 mm cell from x = 1 to 5 mm the colour changes many times.
    let mut seen: Vec<_> = (0..40)
        .map(|k| colour_at([(1.05 + 0.1 * k as f64) * MM, 3.5 * MM]).0)
        .collect();
    seen.dedup();
    assert!(seen.len() > 10, "{} colours", seen.len());
}
