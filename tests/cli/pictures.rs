//! The pictures as `fieldgrid solve` and `fieldgrid check` write them: decoded from the PNG
//! files and probed at places the renderer's frames name (plot, colour bar, legend).

use std::path::PathBuf;

use fieldgrid_cli::render::{
    colormap, map_frame, preview_frame, Frame, LengthUnit, Material, Outline, PreviewInput,
    RenderOptions, LEGEND_PITCH,
};
use fieldgrid_solver::grid::Grid;
use fieldgrid_tests::cli::{expect, run, s, scratch, write};
use image::{Rgb, RgbImage};

/// A 20 x 10 mm box, a 1 V pad in the middle, a slab of permittivity 4 along the bottom.
const PAD: &str = r#"
unit = "mm"
[grid]
x = [0.0, 20.0]
y = [0.0, 10.0]
cell = 0.05
[[conductor]]
name = "pad"
potential = 1.0
rect = { x = [8.0, 12.0], y = [4.0, 6.0] }
[[dielectric]]
name = "slab"
permittivity = 4.0
rect = { x = [0.0, 20.0], y = [0.0, 2.0] }
"#;

const MM: f64 = 1e-3;

/// The prefix of this file's scratch directories.
const SCRATCH: &str = "fieldgrid-pictures";

fn load(path: PathBuf) -> RgbImage {
    image::open(&path)
        .unwrap_or_else(|e| panic!("{}: {e}", path.display()))
        .to_rgb8()
}

fn at(img: &RgbImage, f: &Frame, p: [f64; 2]) -> Rgb<u8> {
    let q = f.pixel(p);
    *img.get_pixel(q[0] as u32, q[1] as u32)
}

fn dark(c: Rgb<u8>) -> bool {
    c.0.iter().all(|&v| v < 80)
}

fn neutral(c: Rgb<u8>) -> bool {
    let [r, g, b] = c.0.map(i32::from);
    (r - g).abs() <= 1 && (g - b).abs() <= 1
}

/// Size, colour-bar ends, the pad's outline and grey inside, and no map colour anywhere in it.
fn check_map(img: &RgbImage, f: &Frame) {
    assert_eq!([img.width(), img.height()], f.size);
    let [bx, by, bw, bh] = f.side;
    let seq = colormap::sequential();
    assert_eq!(
        *img.get_pixel(bx + bw / 2, by),
        seq.rgb[colormap::LEN - 1],
        "bar top"
    );
    assert_eq!(
        *img.get_pixel(bx + bw / 2, by + bh - 1),
        seq.rgb[0],
        "bar bottom"
    );
    assert!(dark(at(img, f, [8.0 * MM, 4.5 * MM])), "pad's left edge");
    assert!(dark(at(img, f, [10.0 * MM, 6.0 * MM])), "pad's top edge");
    // Clear of the hot-spot markers at the pad's corners and of its name in the middle.
    assert_eq!(
        at(img, f, [9.0 * MM, 4.6 * MM]),
        colormap::NO_VALUE,
        "pad's inside"
    );
    // Inside the pad (3 px clear of its outline) only neutral greys: fill, name box, ink.
    let (p0, p1) = (
        f.pixel([8.0 * MM, 6.0 * MM]),
        f.pixel([12.0 * MM, 4.0 * MM]),
    );
    for y in (p0[1] as u32 + 3)..(p1[1] as u32 - 3) {
        for x in (p0[0] as u32 + 3)..(p1[0] as u32 - 3) {
            assert!(
                neutral(*img.get_pixel(x, y)),
                "({x}, {y}) inside the pad: {:?}",
                img.get_pixel(x, y)
            );
        }
    }
    // Away from the pad the field is painted with the map (or line ink), never the fill grey.
    for k in 1..20 {
        let c = at(img, f, [k as f64 * MM, 8.7 * MM]);
        assert_ne!(c, colormap::NO_VALUE, "x = {k} mm");
    }
}

/// Where a map of the `PAD` design puts its plot and colour bar.
fn pad_frame() -> Frame {
    let grid = Grid::fit([0.0, 20.0 * MM], [0.0, 10.0 * MM], 0.05 * MM).unwrap();
    map_frame(
        &grid,
        LengthUnit {
            label: "mm",
            metres: MM,
        },
        &RenderOptions::default(),
    )
}

#[test]
fn solve_pictures_have_their_frame_bar_and_outlines() {
    let dir = scratch(SCRATCH, "solve");
    let design = write(&dir, "pad.toml", PAD);
    let out = dir.join("out");
    expect(run(&["solve", &design, "--out", s(&out), "--quiet"]), 0);
    let f = pad_frame();
    assert_eq!(f.size[0], 1200);
    assert!(
        (f64::from(f.plot[2]) / f64::from(f.plot[3]) - 2.0).abs() < 0.02,
        "2:1 domain, 2:1 plot"
    );
    for name in ["potential.png", "field.png"] {
        check_map(&load(out.join(name)), &f);
    }
}

#[test]
fn check_preview_paints_materials_as_its_legend_says() {
    let dir = scratch(SCRATCH, "check");
    let design = write(&dir, "pad.toml", PAD);
    let out = dir.join("out");
    expect(run(&["check", &design, "--out", s(&out)]), 0);
    let img = load(out.join("preview.png"));
    // The same legend as the command's: background, the slab, conductors.
    let slab = [
        [0.0, 0.0],
        [20.0 * MM, 0.0],
        [20.0 * MM, 2.0 * MM],
        [0.0, 2.0 * MM],
    ];
    let mats = [Material {
        outline: Outline::polygon("slab", slab.to_vec()),
        permittivity: 4.0,
    }];
    let pad = [Outline::polygon(
        "pad",
        vec![
            [8.0 * MM, 4.0 * MM],
            [12.0 * MM, 4.0 * MM],
            [12.0 * MM, 6.0 * MM],
            [8.0 * MM, 6.0 * MM],
        ],
    )];
    let inp = PreviewInput {
        length_unit: LengthUnit {
            label: "mm",
            metres: MM,
        },
        dielectrics: &mats,
        conductors: &pad,
        ..PreviewInput::new([0.0, 20.0 * MM], [0.0, 10.0 * MM])
    };
    let f = preview_frame(&inp, &RenderOptions::default());
    assert_eq!([img.width(), img.height()], f.size);
    let [sx, sy, sw, sh] = f.side;
    let swatch = |k: u32| *img.get_pixel(sx + sw / 2, sy + k * LEGEND_PITCH + sh / 2);
    assert_eq!(at(&img, &f, [15.0 * MM, 8.0 * MM]), swatch(0), "background");
    assert_eq!(at(&img, &f, [15.0 * MM, 1.0 * MM]), swatch(1), "slab");
    assert_eq!(at(&img, &f, [8.3 * MM, 4.3 * MM]), swatch(2), "conductor");
    assert_eq!(swatch(2), colormap::NO_VALUE);
    assert!(
        dark(at(&img, &f, [12.0 * MM, 5.0 * MM])),
        "pad's right edge"
    );
}

#[test]
fn compare_picture_has_its_frame_diverging_bar_outline_and_no_empty_pixel() {
    let dir = scratch(SCRATCH, "compare");
    let base = write(&dir, "a.toml", PAD);
    // The same pad at 1.5 V: the field grows everywhere outside it.
    let new = write(
        &dir,
        "b.toml",
        &PAD.replace("potential = 1.0", "potential = 1.5"),
    );
    let out = dir.join("out");
    expect(
        run(&["compare", &base, &new, "--out", s(&out), "--quiet"]),
        1,
    );
    let img = load(out.join("field_change.png"));
    let f = pad_frame();
    assert_eq!([img.width(), img.height()], f.size);
    let [bx, by, bw, bh] = f.side;
    let div = colormap::diverging();
    assert_eq!(*img.get_pixel(bx + bw / 2, by), div.rgb[colormap::LEN - 1]);
    assert_eq!(*img.get_pixel(bx + bw / 2, by + bh - 1), div.rgb[0]);
    assert!(dark(at(&img, &f, [8.0 * MM, 4.5 * MM])), "pad's left edge");
    assert_eq!(at(&img, &f, [9.0 * MM, 4.6 * MM]), colormap::NO_VALUE);
    // Outside the pad every probed pixel has a map colour: the change is defined there.
    for k in 1..20 {
        for y in [1.0, 3.0, 7.0, 8.7] {
            let c = at(&img, &f, [k as f64 * MM, y * MM]);
            assert_ne!(c, colormap::NO_VALUE, "({k}, {y}) mm");
        }
    }
}
