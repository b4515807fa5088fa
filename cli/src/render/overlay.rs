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
            .map(|mk| square(plot.px(mk.at), 7.5))
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
