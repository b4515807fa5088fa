//! What is drawn over the colours besides lines: conductors (filled, outlined), dashed
//! dielectric outlines, names on light boxes, numbered marks, and the placement of labels so
//! that they avoid one another.
//!
//! Invariants: a name is placed inside the plot and clear of every box already taken, or not
//! at all; a mark's number always gets a place; marks are reserved before names and names
//! before contour labels, so later labels give way; ink over colours takes the contrasting
//! tone.

use image::{Rgb, RgbImage};

use super::canvas::{fill_rect, rect_outline, Layer, P};
use super::colormap;
use super::layout::Plot;
use super::text::{self, HAlign, Style, VAlign};
use super::{Marker, Outline, INK, PAPER};

/// Boxes already taken by labels and marks, so later labels avoid them.
#[derive(Default)]
pub(super) struct Taken(pub(super) Vec<[f32; 4]>);

impl Taken {
    pub(super) fn free(&self, b: [f32; 4]) -> bool {
        self.0
            .iter()
            .all(|o| b[2] < o[0] || b[0] > o[2] || b[3] < o[1] || b[1] > o[3])
    }
}

/// Text on a light box: returns the box.
pub(super) fn boxed_label(img: &mut RgbImage, s: &str, st: Style, b: [f32; 4], bg_alpha: f32) {
    fill_rect(
        img,
        b[0].round() as i64,
        b[1].round() as i64,
        b[2].round() as i64,
        b[3].round() as i64,
        PAPER,
        bg_alpha,
    );
    let cx = (b[0] + b[2]) / 2.0;
    let cy = (b[1] + b[3]) / 2.0;
    text::draw(img, s, st, cx, cy, HAlign::Center, VAlign::Middle);
}

/// A label box of `s` centred on (cx, cy) with padding.
pub(super) fn label_box(s: &str, st: Style, cx: f32, cy: f32, pad: f32) -> [f32; 4] {
    let m = text::measure(s, st);
    let (w, h) = (m.width + 2.0 * pad, m.height() + pad);
    [cx - w / 2.0, cy - h / 2.0, cx + w / 2.0, cy + h / 2.0]
}

/// Places a name for an outline with pixel bounds `pb`: centred inside if it fits, otherwise
/// just outside (above, below, right, left), inside the plot and clear of taken boxes.
pub(super) fn place_name(
    s: &str,
    st: Style,
    pb: [f64; 4],
    plot: &Plot,
    taken: &Taken,
    inside_first: bool,
) -> Option<[f32; 4]> {
    let m = text::measure(s, st);
    let (bw, bh) = (m.width + 8.0, m.height() + 3.0);
    let pb = pb.map(|v| v as f32);
    let (cx, cy) = ((pb[0] + pb[2]) / 2.0, (pb[1] + pb[3]) / 2.0);
    let mut cands = Vec::new();
    let fits = pb[2] - pb[0] >= bw + 4.0 && pb[3] - pb[1] >= bh + 4.0;
    if fits && inside_first {
        cands.push((pb[0] + 3.0 + bw / 2.0, pb[1] + 3.0 + bh / 2.0));
    }
    if fits {
        cands.push((cx, cy));
    }
    cands.push((cx, pb[1] - 3.0 - bh / 2.0));
    cands.push((cx, pb[3] + 3.0 + bh / 2.0));
    cands.push((pb[2] + 4.0 + bw / 2.0, cy));
    cands.push((pb[0] - 4.0 - bw / 2.0, cy));
    for (x, y) in cands {
        let b = [x - bw / 2.0, y - bh / 2.0, x + bw / 2.0, y + bh / 2.0];
        if plot.holds(b) && taken.free(b) {
            return Some(b);
        }
    }
    None
}

pub(super) fn pixel_bounds(o: &Outline, plot: &Plot) -> Option<[f64; 4]> {
    let b = o.bounds()?;
    let p = plot.px([b[0], b[3]]);
    let q = plot.px([b[2], b[1]]);
    Some([p[0], p[1], q[0], q[1]])
}

/// Black ink on light colours, white on dark ones.
pub(super) fn contrast_ink(under: Rgb<u8>) -> Rgb<u8> {
    let l = colormap::lab_of(under).l;
    if l > 0.6 {
        Rgb([0, 0, 0])
    } else {
        Rgb([255, 255, 255])
    }
}

pub(super) fn draw_markers(img: &mut RgbImage, plot: &Plot, markers: &[Marker], taken: &mut Taken) {
    let (w, h) = img.dimensions();
    let mut ring = Layer::new(w, h);
    let mut inner = Layer::new(w, h);
    let mut dot = Layer::new(w, h);
    let mut labels = Vec::new();
    let st = Style::new(12.0, INK).bold();
    for mk in markers {
        let p = plot.px(mk.at);
        let xs = plot.x0 as f64 - 0.5..=plot.right() as f64 + 0.5;
        let ys = plot.y0 as f64 - 0.5..=plot.bottom() as f64 + 0.5;
        if !(xs.contains(&p[0]) && ys.contains(&p[1])) {
            continue;
        }
        ring.disc(p, 7.0);
        inner.disc(p, 5.0);
        dot.disc(p, 1.3);
        let s = mk.number.to_string();
        let m = text::measure(&s, st);
        let (bw, bh) = (m.width + 6.0, m.height() + 2.0);
        let (px, py) = (p[0] as f32, p[1] as f32);
        let mut chosen = None;
        for (dx, dy) in [(1.0, -1.0), (1.0, 1.0), (-1.0, -1.0), (-1.0, 1.0)] {
            let cx = px + dx * (8.5 + bw / 2.0);
            let cy = py + dy * (4.0 + bh / 2.0);
            let b = [cx - bw / 2.0, cy - bh / 2.0, cx + bw / 2.0, cy + bh / 2.0];
            if plot.holds(b) && taken.free(b) {
                chosen = Some(b);
                break;
            }
        }
        let b = chosen.unwrap_or_else(|| {
            let cx = (px + 7.0 + bw / 2.0).min(plot.right() as f32 - bw / 2.0 - 1.0);
            let cy = (py - 5.0 - bh / 2.0).max(plot.y0 as f32 + bh / 2.0 + 1.0);
            [cx - bw / 2.0, cy - bh / 2.0, cx + bw / 2.0, cy + bh / 2.0]
        });
        taken.0.push(b);
        labels.push((s, b));
    }
    ring.composite(img, INK, 1.0, |_, _| false);
    inner.composite(img, PAPER, 1.0, |_, _| false);
    dot.composite(img, INK, 1.0, |_, _| false);
    for (s, b) in labels {
        boxed_label(img, &s, st, b, 0.9);
        rect_outline(
            img,
            b[0].round() as i64,
            b[1].round() as i64,
            b[2].round() as i64,
            b[3].round() as i64,
            INK,
        );
    }
}

/// Coverage layers of the conductors: filled area, ring outlines, thin (open) conductors.
pub(super) struct ConductorLayers {
    pub(super) fill: Layer,
    pub(super) edge: Layer,
    pub(super) thin: Layer,
}

pub(super) fn conductor_layers(
    img: &RgbImage,
    plot: &Plot,
    conductors: &[Outline],
) -> ConductorLayers {
    let (w, h) = img.dimensions();
    let mut l = ConductorLayers {
        fill: Layer::new(w, h),
        edge: Layer::new(w, h),
        thin: Layer::new(w, h),
    };
    for c in conductors {
        let rings: Vec<Vec<P>> = c
            .rings
            .iter()
            .map(|r| r.iter().map(|&p| plot.px(p)).collect())
            .collect();
        l.fill.fill(&rings);
        for r in &rings {
            l.edge.polyline(r, 1.6, true);
        }
        for line in &c.lines {
            let pts: Vec<P> = line.iter().map(|&p| plot.px(p)).collect();
            l.thin.polyline(&pts, 3.0, false);
        }
    }
    l
}

/// A name to write on a light box.
pub(super) struct Name {
    pub(super) text: String,
    pub(super) style: Style,
    pub(super) at: [f32; 4],
    pub(super) bg_alpha: f32,
}

pub(super) fn draw_names(img: &mut RgbImage, names: &[Name]) {
    for n in names {
        boxed_label(img, &n.text, n.style, n.at, n.bg_alpha);
    }
}

/// Places the names of conductors (bold, centred or beside) and dielectrics (inside their
/// top-left corner or beside), reserving their boxes.
pub(super) fn place_names(
    plot: &Plot,
    conductors: &[Outline],
    dielectrics: &[Outline],
    taken: &mut Taken,
) -> Vec<Name> {
    let mut out = Vec::new();
    let groups = [
        (conductors, Style::new(13.0, INK).bold(), false, 0.85),
        (dielectrics, Style::new(12.0, Rgb([50, 50, 50])), true, 0.7),
    ];
    for (items, style, inside_first, bg_alpha) in groups {
        for o in items {
            if o.name.is_empty() {
                continue;
            }
            let Some(pb) = pixel_bounds(o, plot) else {
                continue;
            };
            // Only the part on the plot counts (a sphere centred on the axis is half shown).
            let (l, t) = (plot.x0 as f64, plot.y0 as f64);
            let (r, b) = (plot.right() as f64, plot.bottom() as f64);
            let pb = [pb[0].max(l), pb[1].max(t), pb[2].min(r), pb[3].min(b)];
            if pb[0] > pb[2] || pb[1] > pb[3] {
                continue;
            }
            // A thin conductor has no inside: its name goes beside it.
            let pb = if o.rings.is_empty() {
                [pb[0], pb[1], pb[2], pb[1]]
            } else {
                pb
            };
            if let Some(b) = place_name(&o.name, style, pb, plot, taken, inside_first) {
                taken.0.push(b);
                out.push(Name {
                    text: o.name.clone(),
                    style,
                    at: b,
                    bg_alpha,
                });
            }
        }
    }
    out
}

pub(super) fn mark_boxes(plot: &Plot, markers: &[Marker]) -> Taken {
    Taken(
        markers
            .iter()
            .map(|mk| {
                let p = plot.px(mk.at);
                [
                    p[0] as f32 - 7.5,
                    p[1] as f32 - 7.5,
                    p[0] as f32 + 7.5,
                    p[1] as f32 + 7.5,
                ]
            })
            .collect(),
    )
}

pub(super) fn outline_dielectrics(
    img: &mut RgbImage,
    plot: &Plot,
    dielectrics: &[Outline],
    skip: &dyn Fn(usize, usize) -> bool,
) {
    let (w, h) = img.dimensions();
    let mut layer = Layer::new(w, h);
    for d in dielectrics {
        for r in &d.rings {
            let pts: Vec<P> = r.iter().map(|&p| plot.px(p)).collect();
            layer.dashed(&pts, 1.3, true, 7.0, 4.0);
        }
    }
    layer.composite_with(img, 0.9, skip, contrast_ink);
}
