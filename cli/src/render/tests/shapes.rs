//! Shapes on pictures: the preview's materials and legend, outlines drawn where the design
//! puts them, clipping at the plot's edge, and frames that tell where things are.

use super::*;

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
    let grid = Grid::regular([0.0, 0.0], [0.1 * MM, 0.1 * MM], [101, 101]);
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
    let (img, plot) = draw_map(
        &inp,
        &RenderOptions {
            width: 800,
            ..RenderOptions::default()
        },
    );
    keep("ring", &img);
    // Filled between the radii, open in the middle, ink on both circles.
    assert_eq!(px(&img, plot.px([5.0 * MM, 7.5 * MM])), NO_VALUE);
    assert_ne!(px(&img, plot.px([6.0 * MM, 5.2 * MM])), NO_VALUE);
    assert!(dark(px(&img, plot.px([8.0 * MM, 5.0 * MM]))));
    assert!(dark(px(&img, plot.px([3.0 * MM, 5.0 * MM]))));
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
    let grid = Grid::regular([0.0, 0.0], [0.1 * MM, 0.1 * MM], [101, 101]);
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
fn preview_draws_the_node_lines_when_asked() {
    // Columns at 2, 5 and 6 mm, rows at 1 and 8 mm inside a 10 mm square.
    let xs = [0.0, 2.0 * MM, 5.0 * MM, 6.0 * MM, 10.0 * MM];
    let ys = [0.0, 1.0 * MM, 8.0 * MM, 10.0 * MM];
    let bare = PreviewInput::new([0.0, 10.0 * MM], [0.0, 10.0 * MM]);
    let lined = PreviewInput {
        grid_lines: Some([&xs, &ys]),
        ..bare
    };
    let (plain, plot) = draw_preview(&bare, &RenderOptions::default());
    let (img, _) = draw_preview(&lined, &RenderOptions::default());
    keep("preview-grid-lines", &img);
    let bg = px(&plain, plot.px([3.5 * MM, 4.5 * MM]));
    let darker = |c: image::Rgb<u8>| {
        c.0.iter().map(|&v| v as u32).sum::<u32>() + 60
            < bg.0.iter().map(|&v| v as u32).sum::<u32>()
    };
    for p in [[2.0, 4.5], [5.0, 3.0], [6.0, 7.0], [3.5, 1.0], [7.5, 8.0]] {
        let c = px(&img, plot.px([p[0] * MM, p[1] * MM]));
        assert!(darker(c), "no line at {p:?} mm: {c:?} on {bg:?}");
    }
    for p in [[3.5, 4.5], [5.5, 5.0], [8.0, 3.0]] {
        assert_eq!(px(&img, plot.px([p[0] * MM, p[1] * MM])), bg, "at {p:?} mm");
    }
}
