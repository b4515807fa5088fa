//! The pictures a reviewer reads, probed at known places: the margin map, the zoom window,
//! probes and floating conductors drawn and named, and both revisions' outlines in
//! `field_change.png`.

use std::path::PathBuf;

use fieldgrid_cli::render::{colormap, map_frame, Frame, LengthUnit, RenderOptions};
use fieldgrid_solver::grid::Grid;
use fieldgrid_tests::cli::{expect, read_json, run, s, scratch, write};
use image::{Rgb, RgbImage};

/// A 20 x 10 mm box in air of strength 3 MV/m: a 1 kV rod, a floating foil, a probe.
const ROD: &str = r#"
unit = "mm"
[grid]
x = [0.0, 20.0]
y = [0.0, 10.0]
cell = 0.05
[background]
strength = 3.0e6
[[conductor]]
name = "rod"
potential = 1000.0
rect = { x = [3.0, 5.0], y = [4.0, 6.0] }
[[conductor]]
name = "foil"
floating = true
rect = { x = [9.0, 11.0], y = [2.0, 8.0] }
[[probe]]
name = "p"
at = [15.0, 5.0]
"#;

const MM: f64 = 1e-3;
const SCRATCH: &str = "fieldgrid-pictures-review";

fn load(path: PathBuf) -> RgbImage {
    image::open(&path)
        .unwrap_or_else(|e| panic!("{}: {e}", path.display()))
        .to_rgb8()
}

fn at(img: &RgbImage, f: &Frame, p: [f64; 2]) -> Rgb<u8> {
    let q = f.pixel(p);
    *img.get_pixel(q[0] as u32, q[1] as u32)
}

fn offset(img: &RgbImage, f: &Frame, p: [f64; 2], d: [f64; 2]) -> Rgb<u8> {
    let q = f.pixel(p);
    *img.get_pixel((q[0] + d[0]) as u32, (q[1] + d[1]) as u32)
}

fn dark(c: Rgb<u8>) -> bool {
    c.0.iter().all(|&v| v < 80)
}

fn lightness(c: Rgb<u8>) -> f64 {
    colormap::lab_of(c).l
}

fn frame(zoom: Option<[f64; 4]>) -> Frame {
    let grid = Grid::fit([0.0, 20.0 * MM], [0.0, 10.0 * MM], 0.05 * MM).unwrap();
    map_frame(
        &grid,
        LengthUnit {
            label: "mm",
            metres: MM,
        },
        &RenderOptions {
            zoom,
            ..RenderOptions::default()
        },
    )
}

fn solve(name: &str, text: &str, extra: &[&str]) -> PathBuf {
    let dir = scratch(SCRATCH, name);
    let design = write(&dir, "design.toml", text);
    let out = dir.join("out");
    let mut args = vec!["solve", &design, "--out", s(&out), "--quiet"];
    args.extend(extra);
    expect(run(&args), 0);
    out
}

/// Share of the pixels along the segment a..b (m) that are dark.
fn dark_share(img: &RgbImage, f: &Frame, a: [f64; 2], b: [f64; 2]) -> f64 {
    share(img, f, a, b, dark)
}

/// Share of the pixels along the segment a..b (m) that `is` picks.
fn share(img: &RgbImage, f: &Frame, a: [f64; 2], b: [f64; 2], is: fn(Rgb<u8>) -> bool) -> f64 {
    let (p, q) = (f.pixel(a), f.pixel(b));
    let n = (q[0] - p[0]).hypot(q[1] - p[1]).ceil() as usize;
    let hits = (0..n)
        .filter(|&k| {
            let t = (k as f64 + 0.5) / n as f64;
            let x = p[0] + t * (q[0] - p[0]);
            let y = p[1] + t * (q[1] - p[1]);
            is(*img.get_pixel(x as u32, y as u32))
        })
        .count();
    hits as f64 / n as f64
}

#[test]
fn margin_map_runs_dark_to_the_danger_end_and_rings_the_worst_margin() {
    let out = solve("margin", ROD, &[]);
    let img = load(out.join("margin.png"));
    let f = frame(None);
    assert_eq!([img.width(), img.height()], f.size);
    // The bar's low end (bottom) is the lowest margin, the darkest colour of the map.
    let [bx, by, bw, bh] = f.side;
    let seq = colormap::sequential();
    assert_eq!(*img.get_pixel(bx + bw / 2, by + bh - 1), seq.rgb[0]);
    // Next to the rod the margin is low (dark), far from it high (light).
    let near = at(&img, &f, [5.4 * MM, 5.0 * MM]);
    let far = at(&img, &f, [18.0 * MM, 5.0 * MM]);
    assert!(
        lightness(near) + 0.2 < lightness(far),
        "{near:?} vs {far:?}"
    );
    // Conductors have no margin: grey.
    assert_eq!(at(&img, &f, [4.0 * MM, 4.3 * MM]), colormap::NO_VALUE);
    // The worst-margin point is ringed: ink 12 px and 8 px from it, paper between.
    let w = &read_json(&out.join("summary.json"))["worst_margin"];
    let p = [w["x"].as_f64().unwrap(), w["y"].as_f64().unwrap()];
    let rings: Vec<bool> = [-12.0, -8.0]
        .iter()
        .map(|&d| {
            [[d, 0.0], [0.0, d], [-d, 0.0], [0.0, -d]]
                .iter()
                .any(|&o| dark(offset(&img, &f, p, o)))
        })
        .collect();
    assert_eq!(rings, [true, true], "rings round {p:?}");
    // No strength, no margin map.
    let plain = solve("no-strength", &ROD.replace("strength = 3.0e6", ""), &[]);
    assert!(!plain.join("margin.png").exists());
    assert!(plain.join("field.png").exists());
}

#[test]
fn zoom_window_draws_only_the_window_with_axes_in_design_units() {
    let out = solve("zoom", ROD, &["--zoom", "2,6,3,7"]);
    let f = frame(Some([2.0, 6.0, 3.0, 7.0]));
    assert_eq!(f.x, [2.0 * MM, 6.0 * MM]);
    assert_eq!(f.y, [3.0 * MM, 7.0 * MM]);
    assert!(!f.distorted);
    assert_eq!(f.plot[2], f.plot[3], "a square window, a square plot");
    for name in ["potential.png", "field.png", "margin.png"] {
        let img = load(out.join(name));
        assert_eq!([img.width(), img.height()], f.size, "{name}");
        // The rod (3..5 x 4..6 mm) fills the middle half of the plot.
        assert!(
            dark(at(&img, &f, [3.0 * MM, 4.5 * MM])),
            "{name}: left edge"
        );
        assert!(
            dark(at(&img, &f, [5.0 * MM, 4.5 * MM])),
            "{name}: right edge"
        );
        assert_eq!(
            at(&img, &f, [3.3 * MM, 4.3 * MM]),
            colormap::NO_VALUE,
            "{name}: inside"
        );
        assert_ne!(
            at(&img, &f, [2.3 * MM, 6.7 * MM]),
            colormap::NO_VALUE,
            "{name}: outside"
        );
    }
    // A window beyond the domain is cut to it.
    let cut = frame(Some([-5.0, 6.0, 3.0, 7.0]));
    assert_eq!(cut.x, [0.0, 6.0 * MM]);
    // An empty or malformed window is refused as bad input.
    let dir = scratch(SCRATCH, "zoom-refused");
    let design = write(&dir, "design.toml", ROD);
    let out = dir.join("out");
    for bad in ["6,2,3,7", "2,6,3", "2,6,a,7"] {
        expect(
            run(&["solve", &design, "--out", s(&out), "--quiet", "--zoom", bad]),
            2,
        );
    }
}

#[test]
fn the_design_files_zoom_window_draws_as_the_option_does_and_the_option_overrides_it() {
    let keyed = format!("{ROD}[pictures]\nzoom = [2, 6, 3, 7]\n");
    let from_key = solve("zoom-key", &keyed, &[]);
    let from_option = solve("zoom-option", ROD, &["--zoom", "2,6,3,7"]);
    let overridden = solve("zoom-override", &keyed, &["--zoom", "0,20,0,10"]);
    let whole = solve("zoom-none", ROD, &[]);
    for name in ["potential.png", "field.png", "margin.png"] {
        let key = load(from_key.join(name));
        assert!(
            key == load(from_option.join(name)),
            "{name}: key and option differ"
        );
        assert!(
            load(overridden.join(name)) == load(whole.join(name)),
            "{name}: not overridden"
        );
        assert!(
            key != load(whole.join(name)),
            "{name}: the key drew the whole domain"
        );
    }
}

#[test]
fn probes_are_marked_and_floating_conductors_dashed() {
    let out = solve("probes", ROD, &[]);
    let f = frame(None);
    for name in ["potential.png", "field.png", "margin.png"] {
        let img = load(out.join(name));
        // The probe's diamond: a paper centre in an ink band.
        let p = [15.0 * MM, 5.0 * MM];
        assert_eq!(
            offset(&img, &f, p, [0.0, 0.0]),
            Rgb([255, 255, 255]),
            "{name}"
        );
        assert!(dark(offset(&img, &f, p, [-4.5, 0.0])), "{name}");
        assert!(dark(offset(&img, &f, p, [0.0, 4.5])), "{name}");
        // The foil's outline is dashed, the rod's solid.
        let foil = dark_share(&img, &f, [9.0 * MM, 2.5 * MM], [9.0 * MM, 7.5 * MM]);
        assert!((0.3..0.9).contains(&foil), "{name}: foil edge {foil}");
        // (Clear of the rings marking the hot spots at the rod's corners.)
        let rod = dark_share(&img, &f, [3.0 * MM, 4.5 * MM], [3.0 * MM, 5.5 * MM]);
        assert!(rod > 0.97, "{name}: rod edge {rod}");
    }
    // The preview marks the probe the same way.
    let dir = scratch(SCRATCH, "preview");
    let design = write(&dir, "design.toml", ROD);
    let pre = dir.join("out");
    expect(run(&["check", &design, "--out", s(&pre)]), 0);
    let img = load(pre.join("preview.png"));
    // The same legend as the command's (background, conductor), so the same frame.
    let one = [fieldgrid_cli::render::Outline::default()];
    let fp = fieldgrid_cli::render::preview_frame(
        &fieldgrid_cli::render::PreviewInput {
            length_unit: LengthUnit {
                label: "mm",
                metres: MM,
            },
            conductors: &one,
            ..fieldgrid_cli::render::PreviewInput::new([0.0, 20.0 * MM], [0.0, 10.0 * MM])
        },
        &RenderOptions::default(),
    );
    let p = [15.0 * MM, 5.0 * MM];
    assert!(dark(offset(&img, &fp, p, [-4.5, 0.0])), "preview probe");
}

#[test]
fn check_preview_draws_the_whole_domain_and_outlines_the_designs_zoom_window() {
    let dir = scratch(SCRATCH, "preview-window");
    let design = write(
        &dir,
        "design.toml",
        &format!("{ROD}[pictures]\nzoom = [2, 6, 3, 7]\n"),
    );
    let (whole, zoomed) = (dir.join("whole"), dir.join("zoomed"));
    expect(run(&["check", &design, "--out", s(&whole), "--quiet"]), 0);
    let zoom = ["--zoom", "2,6,3,7"];
    expect(
        run(&[
            "check",
            &design,
            "--out",
            s(&zoomed),
            "--quiet",
            zoom[0],
            zoom[1],
        ]),
        0,
    );
    // The command's legend (background, conductor), so the command's frame.
    let one = [fieldgrid_cli::render::Outline::default()];
    let frame_of = |zoom: Option<[f64; 4]>| {
        fieldgrid_cli::render::preview_frame(
            &fieldgrid_cli::render::PreviewInput {
                length_unit: LengthUnit {
                    label: "mm",
                    metres: MM,
                },
                conductors: &one,
                ..fieldgrid_cli::render::PreviewInput::new([0.0, 20.0 * MM], [0.0, 10.0 * MM])
            },
            &RenderOptions {
                zoom,
                ..RenderOptions::default()
            },
        )
    };
    let window_ink = |c: Rgb<u8>| c == fieldgrid_cli::render::WINDOW_INK;
    let img = load(whole.join("preview.png"));
    let f = frame_of(None);
    assert_eq!(
        [img.width(), img.height()],
        f.size,
        "the whole domain's frame"
    );
    // The probe at 15 mm, outside the window, is drawn: the whole domain is.
    assert!(dark(offset(&img, &f, [15.0 * MM, 5.0 * MM], [-4.5, 0.0])));
    // The window's sides are dashed in the window's ink, clear of the rod at x 3..5, y 4..6.
    for (a, b) in [
        ([2.2, 3.0], [5.8, 3.0]),
        ([6.0, 3.2], [6.0, 6.8]),
        ([2.0, 3.2], [2.0, 3.8]),
    ] {
        let on = share(&img, &f, a.map(|v| v * MM), b.map(|v| v * MM), window_ink);
        assert!((0.3..0.9).contains(&on), "window side {a:?}..{b:?}: {on}");
    }
    // Asked for explicitly, the preview draws the window alone, with no outline in it.
    let img = load(zoomed.join("preview.png"));
    let f = frame_of(Some([2.0, 6.0, 3.0, 7.0]));
    assert_eq!([img.width(), img.height()], f.size, "the window's frame");
    assert!(!img.pixels().any(|&c| window_ink(c)));
}

#[test]
fn field_change_outlines_a_conductor_base_has_and_new_lacks() {
    let dir = scratch(SCRATCH, "compare");
    let tab = "[[conductor]]\nname = \"tab\"\npotential = 0.0\nrect = { x = [14.0, 17.0], y = [2.0, 4.0] }\n";
    // On a uniform lattice by name, so both sides share one grid whether the tab is there
    // or not (graded, the tab's edges add node lines to BASE only).
    let base = write(
        &dir,
        "a.toml",
        &fieldgrid_tests::uniform(&format!("{ROD}{tab}")),
    );
    let new = write(&dir, "b.toml", &fieldgrid_tests::uniform(ROD));
    let out = dir.join("out");
    // Exit 1: the tab's charge and the couplings changed.
    expect(
        run(&["compare", &base, &new, "--out", s(&out), "--quiet"]),
        1,
    );
    let img = load(out.join("field_change.png"));
    let f = frame(None);
    // The tab's outline (BASE only) is dotted: some of its edge is ink, not all.
    for (a, b) in [
        ([14.0, 2.2], [14.0, 3.8]),
        ([17.0, 2.2], [17.0, 3.8]),
        ([14.2, 4.0], [16.8, 4.0]),
    ] {
        let edge = dark_share(&img, &f, a.map(|v| v * MM), b.map(|v| v * MM));
        assert!(
            (0.3..0.9).contains(&edge),
            "tab's edge {a:?}..{b:?}: {edge}"
        );
    }
    // Inside, BASE had no field: no value, not a colour of the map.
    assert_eq!(at(&img, &f, [16.5 * MM, 2.4 * MM]), colormap::NO_VALUE);
    // NEW's rod is outlined solid.
    let rod = dark_share(&img, &f, [3.0 * MM, 4.2 * MM], [3.0 * MM, 5.8 * MM]);
    assert!(rod > 0.97, "rod edge {rod}");
}

#[test]
fn field_and_margin_maps_paint_the_grounded_sides_with_their_field() {
    // The nodes of a grounded side carry no field of their own; the maps give them their
    // inner neighbour's, so no grey band (the conductors' colour) runs along the sides.
    let out = solve("sides", ROD, &[]);
    let f = frame(None);
    let [x, y, w, h] = f.plot;
    for name in ["field.png", "margin.png"] {
        let img = load(out.join(name));
        for (px, py) in [
            (x + w / 3, y),
            (x + w / 3, y + h - 1),
            (x, y + h / 3),
            (x + w - 1, y + h / 3),
        ] {
            assert_ne!(
                *img.get_pixel(px, py),
                colormap::NO_VALUE,
                "{name}: ({px}, {py})"
            );
        }
    }
}

#[test]
fn contour_labels_keep_clear_of_a_conductors_outline() {
    // A 1 V rod of radius 1 mm in a grounded box: the equipotentials crowd round it. Within
    // 6 px of its outline the potential is above 0.9 V (the light end of the map, where a
    // label's light box is lighter in every channel than any map colour); no label box may
    // reach there, away from the hot spots' rings and numbers.
    let design = r#"
unit = "mm"
[grid]
lattice = "uniform"
x = [0.0, 20.0]
y = [0.0, 10.0]
cell = 0.05
[[conductor]]
name = "rod"
potential = 1.0
circle = { center = [6.0, 5.0], radius = 1.0 }
"#;
    let out = solve("contour-labels", design, &[]);
    let img = load(out.join("potential.png"));
    let f = frame(None);
    let centre = f.pixel([6.0 * MM, 5.0 * MM]);
    let radius = f.pixel([7.0 * MM, 5.0 * MM])[0] - centre[0];
    let spots: Vec<[f64; 2]> = std::fs::read_to_string(out.join("hotspots.csv"))
        .expect("hotspots.csv")
        .lines()
        .skip(1)
        .take(5)
        .map(|l| {
            let v: Vec<f64> = l
                .split(',')
                .skip(1)
                .take(2)
                .map(|c| c.parse().unwrap())
                .collect();
            f.pixel([v[0], v[1]])
        })
        .collect();
    let mut probed = 0;
    for step in 0..720 {
        let a = f64::from(step) * std::f64::consts::TAU / 720.0;
        for d in [2.0, 3.0, 4.0, 5.0, 6.0] {
            let p = [
                centre[0] + (radius + d) * a.cos(),
                centre[1] - (radius + d) * a.sin(),
            ];
            if spots
                .iter()
                .any(|s| (s[0] - p[0]).hypot(s[1] - p[1]) < 40.0)
            {
                continue;
            }
            probed += 1;
            let c = img.get_pixel(p[0] as u32, p[1] as u32);
            assert!(
                c.0.iter().any(|&v| v < 228),
                "a label's box at {p:?}, {d} px off the rod: {c:?}"
            );
        }
    }
    assert!(probed > 1000, "{probed} places probed");
}
