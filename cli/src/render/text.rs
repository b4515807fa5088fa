//! Text on pictures: an embedded subset of DejaVu Sans (see `cli/assets/README.md` for its
//! licence and how the subset was made), rasterised with `ab_glyph`.
//!
//! Invariants: positions are in image pixels, y down; glyph coverage is blended over what is
//! already there, clipped to the image; a character the font lacks is drawn as the font's
//! missing-glyph box, never skipped silently. Output depends only on the arguments.

use std::sync::OnceLock;

use ab_glyph::{point, Font, FontRef, PxScale, ScaleFont};
use image::{Rgb, RgbImage};

use super::canvas::blend;

static REGULAR: &[u8] = include_bytes!("../../assets/DejaVuSans-subset.ttf");
static BOLD: &[u8] = include_bytes!("../../assets/DejaVuSans-Bold-subset.ttf");

/// Regular or bold face.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub enum Weight {
    /// DejaVu Sans.
    Regular,
    /// DejaVu Sans Bold.
    Bold,
}

/// Size, face and colour of a piece of text.
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct Style {
    /// Em height, px.
    pub px: f32,
    /// Face.
    pub weight: Weight,
    /// Ink.
    pub color: Rgb<u8>,
}

impl Style {
    /// Regular text of size `px` in `color`.
    pub fn new(px: f32, color: Rgb<u8>) -> Style {
        Style {
            px,
            weight: Weight::Regular,
            color,
        }
    }

    /// The same style in bold.
    pub fn bold(self) -> Style {
        Style {
            weight: Weight::Bold,
            ..self
        }
    }
}

/// Horizontal anchor of a text box.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub enum HAlign {
    /// x is the left edge.
    Left,
    /// x is the centre.
    Center,
    /// x is the right edge.
    Right,
}

/// Vertical anchor of a text box (the box spans ascent to descent of the face).
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub enum VAlign {
    /// y is the top of the box.
    Top,
    /// y is the middle of the box.
    Middle,
    /// y is the baseline.
    Baseline,
    /// y is the bottom of the box.
    Bottom,
}

fn font(w: Weight) -> &'static FontRef<'static> {
    static R: OnceLock<FontRef<'static>> = OnceLock::new();
    static B: OnceLock<FontRef<'static>> = OnceLock::new();
    let (cell, bytes) = match w {
        Weight::Regular => (&R, REGULAR),
        Weight::Bold => (&B, BOLD),
    };
    cell.get_or_init(|| FontRef::try_from_slice(bytes).expect("embedded font parses"))
}

/// Extent of a line of text.
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct Metrics {
    /// Advance width, px.
    pub width: f32,
    /// Height above the baseline, px.
    pub ascent: f32,
    /// Depth below the baseline, px (positive).
    pub descent: f32,
}

impl Metrics {
    /// Ascent plus descent.
    pub fn height(&self) -> f32 {
        self.ascent + self.descent
    }
}

/// Measures one line of text.
pub fn measure(s: &str, st: Style) -> Metrics {
    let f = font(st.weight).as_scaled(PxScale::from(st.px));
    let width = s.chars().map(|c| f.h_advance(f.glyph_id(c))).sum();
    Metrics {
        width,
        ascent: f.ascent(),
        descent: -f.descent(),
    }
}

/// The box `[x0, y0, x1, y1]` that [`draw`] would fill for these anchors.
pub fn bounds(s: &str, st: Style, x: f32, y: f32, h: HAlign, v: VAlign) -> [f32; 4] {
    let m = measure(s, st);
    let x0 = match h {
        HAlign::Left => x,
        HAlign::Center => x - m.width / 2.0,
        HAlign::Right => x - m.width,
    };
    let top = match v {
        VAlign::Top => y,
        VAlign::Middle => y - m.height() / 2.0,
        VAlign::Baseline => y - m.ascent,
        VAlign::Bottom => y - m.height(),
    };
    [x0, top, x0 + m.width, top + m.height()]
}

/// Visits the coverage of every glyph of `s` laid out from (`x`, baseline `y`).
fn rasterise(s: &str, st: Style, x: f32, y: f32, mut put: impl FnMut(i64, i64, f32)) {
    let fr = font(st.weight);
    let f = fr.as_scaled(PxScale::from(st.px));
    let mut pen = x;
    for c in s.chars() {
        let id = f.glyph_id(c);
        let g = id.with_scale_and_position(st.px, point(pen, y));
        pen += f.h_advance(id);
        if let Some(o) = fr.outline_glyph(g) {
            let b = o.px_bounds();
            let (bx, by) = (b.min.x as i64, b.min.y as i64);
            o.draw(|gx, gy, cov| put(bx + gx as i64, by + gy as i64, cov));
        }
    }
}

/// Draws one line of text anchored at (`x`, `y`); returns the box it occupies.
pub fn draw(
    img: &mut RgbImage,
    s: &str,
    st: Style,
    x: f32,
    y: f32,
    h: HAlign,
    v: VAlign,
) -> [f32; 4] {
    let bx = bounds(s, st, x, y, h, v);
    let m = measure(s, st);
    // Whole-pixel origin keeps stems crisp and the output independent of sub-pixel noise.
    let ox = bx[0].round();
    let base = (bx[1] + m.ascent).round();
    rasterise(s, st, ox, base, |px, py, cov| {
        blend(img, px, py, st.color, cov.min(1.0))
    });
    bx
}

/// Draws one line of text turned a quarter turn anticlockwise (reading upwards), centred on
/// (`cx`, `cy`); returns the box it occupies.
pub fn draw_vertical(img: &mut RgbImage, s: &str, st: Style, cx: f32, cy: f32) -> [f32; 4] {
    let m = measure(s, st);
    let (w, h) = (m.width, m.height());
    // Lay out horizontally with the box's top-left at the origin, then rotate:
    // (u, v) -> (x, y) = (left + v, bottom - u).
    let left = (cx - h / 2.0).round() as i64;
    let bottom = (cy + w / 2.0).round() as i64;
    rasterise(s, st, 0.0, m.ascent.round(), |u, v, cov| {
        blend(img, left + v, bottom - u, st.color, cov.min(1.0));
    });
    [cx - h / 2.0, cy - w / 2.0, cx + h / 2.0, cy + w / 2.0]
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn embedded_faces_have_the_glyphs_labels_use() {
        for w in [Weight::Regular, Weight::Bold] {
            let f = font(w);
            for c in "0123456789.,−+-×()/=µεΩ²³ abcxyzABCXYZ_≤≥…".chars() {
                assert_ne!(f.glyph_id(c).0, 0, "{c:?} missing from {w:?}");
            }
        }
    }

    #[test]
    fn text_is_drawn_inside_its_box() {
        let mut img = RgbImage::from_pixel(200, 60, Rgb([255, 255, 255]));
        let st = Style::new(16.0, Rgb([0, 0, 0]));
        let b = draw(
            &mut img,
            "12.5 kV/m",
            st,
            100.0,
            30.0,
            HAlign::Center,
            VAlign::Middle,
        );
        let mut ink = 0;
        for (x, y, p) in img.enumerate_pixels() {
            if p[0] < 250 {
                ink += 1;
                let (x, y) = (x as f32 + 0.5, y as f32 + 0.5);
                assert!(x > b[0] - 2.0 && x < b[2] + 2.0 && y > b[1] - 2.0 && y < b[3] + 2.0);
            }
        }
        assert!(ink > 50, "text left ink");
        assert!(b[2] - b[0] > 50.0 && b[2] - b[0] < 100.0, "{b:?}");
    }

    #[test]
    fn vertical_text_is_taller_than_wide() {
        let mut img = RgbImage::from_pixel(60, 200, Rgb([255, 255, 255]));
        let st = Style::new(14.0, Rgb([0, 0, 0]));
        draw_vertical(&mut img, "potential (V)", st, 30.0, 100.0);
        let (mut x0, mut x1, mut y0, mut y1) = (u32::MAX, 0, u32::MAX, 0);
        for (x, y, p) in img.enumerate_pixels() {
            if p[0] < 128 {
                (x0, x1, y0, y1) = (x0.min(x), x1.max(x), y0.min(y), y1.max(y));
            }
        }
        assert!(y1 - y0 > 3 * (x1 - x0), "{x0}..{x1} x {y0}..{y1}");
    }
}
