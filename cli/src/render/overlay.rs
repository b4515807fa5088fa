//! What is drawn over the colours besides lines and labels: conductors (filled, outlined;
//! a floating one dashed), dashed dielectric outlines, another revision's dotted outlines,
//! numbered marks and the symbols of pins (probes, the worst-margin point).
//!
//! Invariants: a mark's number always gets a place; marks and pin symbols are reserved before
//! names and names before contour labels, so later labels give way; ink over colours takes
//! the contrasting tone.

use image::{Rgb, RgbImage};

use super::canvas::{rect_outline, Layer, P};
use super::colormap;
use super::labels::{boxed_label, pin_radius, Taken};
use super::layout::Plot;
use super::text::{self, Style};
use super::{Edge, Marker, Outline, Pin, PinKind, INK, PAPER};

/// Black ink on light colours, white on dark ones.
pub(super) fn contrast_ink(under: Rgb<u8>) -> Rgb<u8> {
    let l = colormap::lab_of(under).l;
    if l > 0.6 {
        Rgb([0, 0, 0])
    } else {
        Rgb([255, 255, 255])
    }
}

/// Radius of a hot-spot mark's ring, px; its centre stays open so that the conductor edge it
/// marks shows through.
pub(super) const MARK_RING: f64 = 5.5;

/// Draws the numbered marks: an open ink ring on a paper halo (kept off conductors), the
/// number in a box beside it.
/// `ink(x, y)` tells the pixels of conductors (fill, outlines, thin copper): a number box
/// takes the first of its four places clear of them, of `taken` and inside the plot, else the
/// first clear of `taken`, else the upper right.
pub(super) fn draw_markers(
    img: &mut RgbImage,
    plot: &Plot,
    markers: &[Marker],
    taken: &mut Taken,
    ink: &dyn Fn(usize, usize) -> bool,
) {
    let (w, h) = img.dimensions();
    let mut halo = Layer::new(w, h);
    let mut ring = Layer::new(w, h);
    let mut labels = Vec::new();
    let st = Style::new(12.0, INK).bold();
    let covers_ink = |b: [f32; 4]| {
        let (x0, y0) = (
            b[0].floor().max(0.0) as usize,
            b[1].floor().max(0.0) as usize,
        );
        let (x1, y1) = (b[2].ceil().max(0.0) as usize, b[3].ceil().max(0.0) as usize);
        (y0..=y1.min(h as usize - 1)).any(|y| (x0..=x1.min(w as usize - 1)).any(|x| ink(x, y)))
    };
    for mk in markers {
        let p = plot.px(mk.at);
        let xs = plot.x0 as f64 - 0.5..=plot.right() as f64 + 0.5;
        let ys = plot.y0 as f64 - 0.5..=plot.bottom() as f64 + 0.5;
        if !(xs.contains(&p[0]) && ys.contains(&p[1])) {
            continue;
        }
        let circle: Vec<P> = (0..40)
            .map(|s| {
                let a = f64::from(s) * std::f64::consts::TAU / 40.0;
                [p[0] + MARK_RING * a.cos(), p[1] + MARK_RING * a.sin()]
            })
            .collect();
        halo.polyline(&circle, 4.0, true);
        ring.polyline(&circle, 1.7, true);
        let s = mk.number.to_string();
        let m = text::measure(&s, st);
        let (bw, bh) = (m.width + 6.0, m.height() + 2.0);
        let (px, py) = (p[0] as f32, p[1] as f32);
        let places: Vec<[f32; 4]> = [(1.0, -1.0), (1.0, 1.0), (-1.0, -1.0), (-1.0, 1.0)]
            .iter()
            .map(|(dx, dy)| {
                let cx = px + dx * (MARK_RING as f32 + 3.0 + bw / 2.0);
                let cy = py + dy * (MARK_RING as f32 - 1.0 + bh / 2.0);
                [cx - bw / 2.0, cy - bh / 2.0, cx + bw / 2.0, cy + bh / 2.0]
            })
            .collect();
        let fits = |b: &&[f32; 4]| plot.holds(**b) && taken.free(**b);
        let chosen = places
            .iter()
            .filter(fits)
            .find(|b| !covers_ink(**b))
            .or_else(|| places.iter().find(fits))
            .copied();
        let b = chosen.unwrap_or_else(|| {
            let cx = (px + 7.0 + bw / 2.0).min(plot.right() as f32 - bw / 2.0 - 1.0);
            let cy = (py - 5.0 - bh / 2.0).max(plot.y0 as f32 + bh / 2.0 + 1.0);
            [cx - bw / 2.0, cy - bh / 2.0, cx + bw / 2.0, cy + bh / 2.0]
        });
        taken.0.push(b);
        labels.push((s, b));
    }
    // The halo lightens the colours round the ring, never the conductor it marks.
    halo.composite(img, PAPER, 0.85, ink);
    ring.composite(img, INK, 1.0, |_, _| false);
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
            match c.edge {
                Edge::Solid => l.edge.polyline(r, 1.6, true),
                Edge::Dashed => l.edge.dashed(r, 2.0, true, 6.0, 4.0),
            }
        }
        for line in &c.lines {
            let pts: Vec<P> = line.iter().map(|&p| plot.px(p)).collect();
            l.thin.polyline(&pts, 3.0, false);
        }
    }
    l
}

/// The boxes of the marks and of the pins' symbols.
pub(super) fn mark_boxes(plot: &Plot, markers: &[Marker], pins: &[Pin]) -> Taken {
    let square = |p: P, r: f32| {
        [
            p[0] as f32 - r,
            p[1] as f32 - r,
            p[0] as f32 + r,
            p[1] as f32 + r,
        ]
    };
    Taken(
        markers
            .iter()
            .map(|mk| square(plot.px(mk.at), MARK_RING as f32 + 2.0))
            .chain(
                pins.iter()
                    .map(|p| square(plot.px(p.at), pin_radius(p.kind) + 0.5)),
            )
            .collect(),
    )
}

/// The symbols of the pins: a probe's diamond, the worst-margin point's double ring.
pub(super) fn draw_pins(img: &mut RgbImage, plot: &Plot, pins: &[Pin]) {
    let (w, h) = img.dimensions();
    // Probes: an ink diamond with a paper centre; rings: ink over a paper halo.
    let (mut diamond, mut centre) = (Layer::new(w, h), Layer::new(w, h));
    let (mut halo, mut rings) = (Layer::new(w, h), Layer::new(w, h));
    for p in pins {
        let c = plot.px(p.at);
        if plot.local(c[0] as usize, c[1] as usize).is_none() || c[0] < 0.0 || c[1] < 0.0 {
            continue;
        }
        let r = f64::from(pin_radius(p.kind));
        match p.kind {
            PinKind::Probe => {
                let d = |k: f64| {
                    vec![
                        [c[0], c[1] - k],
                        [c[0] + k, c[1]],
                        [c[0], c[1] + k],
                        [c[0] - k, c[1]],
                    ]
                };
                diamond.fill(&[d(r)]);
                centre.fill(&[d(r - 2.5)]);
            }
            PinKind::WorstMargin => {
                let ring = |k: f64| -> Vec<P> {
                    (0..48)
                        .map(|s| {
                            let a = s as f64 * std::f64::consts::TAU / 48.0;
                            [c[0] + k * a.cos(), c[1] + k * a.sin()]
                        })
                        .collect()
                };
                halo.polyline(&ring(r), 4.5, true);
                halo.polyline(&ring(r - 4.0), 4.5, true);
                rings.polyline(&ring(r), 2.0, true);
                rings.polyline(&ring(r - 4.0), 2.0, true);
            }
        }
    }
    diamond.composite(img, INK, 1.0, |_, _| false);
    centre.composite(img, PAPER, 1.0, |_, _| false);
    halo.composite(img, PAPER, 1.0, |_, _| false);
    rings.composite(img, INK, 1.0, |_, _| false);
}

/// Another revision's outlines: dotted, not filled.
pub(super) fn outline_former(
    img: &mut RgbImage,
    plot: &Plot,
    former: &[Outline],
    skip: &dyn Fn(usize, usize) -> bool,
) {
    let (w, h) = img.dimensions();
    let mut layer = Layer::new(w, h);
    for o in former {
        for r in &o.rings {
            let pts: Vec<P> = r.iter().map(|&p| plot.px(p)).collect();
            layer.dashed(&pts, 1.8, true, 2.5, 4.0);
        }
        for l in &o.lines {
            let pts: Vec<P> = l.iter().map(|&p| plot.px(p)).collect();
            layer.dashed(&pts, 1.8, false, 2.5, 4.0);
        }
    }
    layer.composite_with(img, 1.0, skip, contrast_ink);
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
