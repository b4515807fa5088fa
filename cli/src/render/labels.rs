//! Where labels go: names of conductors, dielectrics and another revision's outlines, and
//! the labels of pins, each on a light box, greedily, first come first placed.
//!
//! A label is tried inside its own shape, then just beside it (above and below from the
//! middle towards the ends, right, left; slid inside the plot where it sticks out), then at
//! growing distances in eight directions with a leader line back to its shape.
//!
//! Invariants: a placed box lies inside the plot, clear of every box already taken and of
//! every pixel of a conductor other than its own (a dielectric's or a pin's label of every
//! conductor); a label that finds no such place is left out (except where a caller forces a
//! place, see [`place_pin_labels`]); a leader line joins the box to a pixel of its own shape,
//! crossing no other conductor wherever such a place exists, and never for a dielectric or a
//! pin.

use image::{Rgb, RgbImage};

use super::canvas::{fill_rect, scan_fill, Layer, P};
use super::layout::Plot;
use super::text::{self, HAlign, Style, VAlign};
use super::{Outline, Pin, PinKind, INK, PAPER};

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

/// Text on a light box.
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

/// Which conductor covers each picture pixel: 0 none, k + 1 conductor k (the later one where
/// two overlap); thin conductors are 3 px wide.
pub(super) struct Owners {
    w: usize,
    h: usize,
    id: Vec<u16>,
}

impl Owners {
    pub(super) fn new(img: &RgbImage, plot: &Plot, conductors: &[Outline]) -> Owners {
        let (w, h) = (img.width() as usize, img.height() as usize);
        let mut id = vec![0u16; w * h];
        for (k, c) in conductors.iter().enumerate() {
            let tag = (k + 1).min(u16::MAX as usize) as u16;
            let rings: Vec<Vec<P>> = c
                .rings
                .iter()
                .map(|r| r.iter().map(|&p| plot.px(p)).collect())
                .collect();
            scan_fill(&rings, w, h, |y, x0, x1| {
                id[y * w + x0..y * w + x1].fill(tag);
            });
            for line in &c.lines {
                for seg in line.windows(2) {
                    let (a, b) = (plot.px(seg[0]), plot.px(seg[1]));
                    let n = ((b[0] - a[0]).hypot(b[1] - a[1]) * 2.0).ceil().max(1.0) as usize;
                    for s in 0..=n {
                        let t = s as f64 / n as f64;
                        let (x, y) = (a[0] + t * (b[0] - a[0]), a[1] + t * (b[1] - a[1]));
                        for dy in -1..=1 {
                            for dx in -1..=1 {
                                let (px, py) = (x.floor() as i64 + dx, y.floor() as i64 + dy);
                                if px >= 0 && py >= 0 && (px as usize) < w && (py as usize) < h {
                                    id[py as usize * w + px as usize] = tag;
                                }
                            }
                        }
                    }
                }
            }
        }
        Owners { w, h, id }
    }

    fn at(&self, x: i64, y: i64) -> u16 {
        if x < 0 || y < 0 || x as usize >= self.w || y as usize >= self.h {
            0
        } else {
            self.id[y as usize * self.w + x as usize]
        }
    }

    /// True when no pixel of box `b` belongs to a conductor other than `own` (a tag, 0 for
    /// none: then every conductor counts as other).
    pub(super) fn clear(&self, b: [f32; 4], own: u16) -> bool {
        let (x0, x1) = (b[0].floor() as i64, b[2].ceil() as i64);
        let (y0, y1) = (b[1].floor() as i64, b[3].ceil() as i64);
        (y0..y1).all(|y| {
            (x0..x1).all(|x| {
                let o = self.at(x, y);
                o == 0 || o == own
            })
        })
    }

    /// True when the segment a..b crosses no pixel of a conductor other than `own`.
    fn path_clear(&self, a: P, b: P, own: u16) -> bool {
        let n = (b[0] - a[0]).hypot(b[1] - a[1]).ceil().max(1.0) as usize;
        (0..=n).all(|k| {
            let t = k as f64 / n as f64;
            let o = self.at(
                (a[0] + t * (b[0] - a[0])).floor() as i64,
                (a[1] + t * (b[1] - a[1])).floor() as i64,
            );
            o == 0 || o == own
        })
    }

    /// The pixel centre of conductor `own` nearest to `p` within the pixel box `pb`.
    fn nearest(&self, own: u16, pb: [f64; 4], p: [f32; 2]) -> Option<P> {
        let mut best: Option<(f32, P)> = None;
        for y in (pb[1].floor() as i64)..=(pb[3].ceil() as i64) {
            for x in (pb[0].floor() as i64)..=(pb[2].ceil() as i64) {
                if self.at(x, y) != own {
                    continue;
                }
                let c = [x as f32 + 0.5, y as f32 + 0.5];
                let d = (c[0] - p[0]).hypot(c[1] - p[1]);
                if best.is_none_or(|(bd, _)| d < bd) {
                    best = Some((d, [f64::from(c[0]), f64::from(c[1])]));
                }
            }
        }
        best.map(|b| b.1)
    }
}

/// A label to write on a light box, with a leader line from `leader[0]` (on the box's edge)
/// to `leader[1]` (on its shape) when it was moved away.
pub(super) struct Name {
    pub(super) text: String,
    pub(super) style: Style,
    pub(super) at: [f32; 4],
    pub(super) bg_alpha: f32,
    pub(super) leader: Option<[P; 2]>,
}

/// Draws the leader lines first, then the boxes over them.
pub(super) fn draw_names(img: &mut RgbImage, names: &[Name]) {
    let (w, h) = img.dimensions();
    let mut lines = Layer::new(w, h);
    let mut ends = Layer::new(w, h);
    for n in names {
        if let Some([a, b]) = n.leader {
            lines.segment(a, b, 1.0);
            ends.disc(b, 1.8);
        }
    }
    lines.composite(img, INK, 0.9, |_, _| false);
    ends.composite(img, INK, 1.0, |_, _| false);
    for n in names {
        boxed_label(img, &n.text, n.style, n.at, n.bg_alpha);
    }
}

/// The point of `b`'s edge nearest to `p`.
fn edge_point(b: [f32; 4], p: P) -> P {
    [
        p[0].clamp(f64::from(b[0]), f64::from(b[2])),
        p[1].clamp(f64::from(b[1]), f64::from(b[3])),
    ]
}

/// What is being labelled: its pixel bounds on the plot, its owner tag (0: not a
/// conductor) and whether a label inside is tried first in its top-left corner.
struct Target {
    pb: [f64; 4],
    own: u16,
    inside_first: bool,
    /// Has an inside a label can sit in.
    has_inside: bool,
}

/// A place for a `bw` x `bh` box labelling `t`, with its leader line when moved away.
fn place(
    bw: f32,
    bh: f32,
    t: &Target,
    plot: &Plot,
    taken: &Taken,
    owners: &Owners,
) -> Option<([f32; 4], Option<[P; 2]>)> {
    let pb = t.pb.map(|v| v as f32);
    let (cx, cy) = ((pb[0] + pb[2]) / 2.0, (pb[1] + pb[3]) / 2.0);
    let ok = |b: [f32; 4]| plot.holds(b) && taken.free(b) && owners.clear(b, t.own);
    // A box centred on (x, y), moved inside the plot where it sticks out (a label beside a
    // body that lies along the plot's edge slides along the edge).
    let (lo, hi) = (
        [plot.x0 as f32 + 1.0, plot.y0 as f32 + 1.0],
        [plot.right() as f32 - 1.0, plot.bottom() as f32 - 1.0],
    );
    let boxed = |x: f32, y: f32| {
        let x = x.min(hi[0] - bw / 2.0).max(lo[0] + bw / 2.0);
        let y = y.min(hi[1] - bh / 2.0).max(lo[1] + bh / 2.0);
        [x - bw / 2.0, y - bh / 2.0, x + bw / 2.0, y + bh / 2.0]
    };
    // (centre, inside): a box beside the shape stays off its bounds even where sliding it
    // into the plot would move it there.
    let mut near = Vec::new();
    let fits = t.has_inside && pb[2] - pb[0] >= bw + 4.0 && pb[3] - pb[1] >= bh + 4.0;
    if fits && t.inside_first {
        near.push((pb[0] + 3.0 + bw / 2.0, pb[1] + 3.0 + bh / 2.0, true));
    }
    if fits {
        near.push((cx, cy, true));
    }
    // Above and below, from the middle towards the ends (a long, thin body may be covered
    // in its middle), then right and left.
    for f in [0.5, 0.25, 0.75, 0.1, 0.9] {
        let x = pb[0] + f * (pb[2] - pb[0]);
        near.push((x, pb[1] - 3.0 - bh / 2.0, false));
        near.push((x, pb[3] + 3.0 + bh / 2.0, false));
    }
    near.push((pb[2] + 4.0 + bw / 2.0, cy, false));
    near.push((pb[0] - 4.0 - bw / 2.0, cy, false));
    let off_shape = |b: [f32; 4]| b[2] < pb[0] || b[0] > pb[2] || b[3] < pb[1] || b[1] > pb[3];
    for (x, y, inside) in near {
        let b = boxed(x, y);
        if ok(b) && (inside || off_shape(b)) {
            return Some((b, None));
        }
    }
    // Farther away, with a leader line: up, down, right, left, then the diagonals.
    let dirs: [(f32, f32); 8] = [
        (0.0, -1.0),
        (0.0, 1.0),
        (1.0, 0.0),
        (-1.0, 0.0),
        (1.0, -1.0),
        (-1.0, -1.0),
        (1.0, 1.0),
        (-1.0, 1.0),
    ];
    // First with leaders that cross no other conductor (one that does could be read as
    // pointing at it), then, for a conductor rather than leave its name out, with any leader:
    // its dot sits on its own shape. A dielectric's or a pin's label is left out instead.
    let passes: &[bool] = if t.own > 0 { &[false, true] } else { &[false] };
    for &crossing in passes {
        for step in 1..=20 {
            let d = 14.0 * step as f32;
            for (dx, dy) in dirs {
                let x = if dx > 0.0 {
                    pb[2] + d + bw / 2.0
                } else if dx < 0.0 {
                    pb[0] - d - bw / 2.0
                } else {
                    cx
                };
                let y = if dy > 0.0 {
                    pb[3] + d + bh / 2.0
                } else if dy < 0.0 {
                    pb[1] - d - bh / 2.0
                } else {
                    cy
                };
                let b = boxed(x, y);
                if !ok(b) || !off_shape(b) {
                    continue;
                }
                let centre = [(b[0] + b[2]) / 2.0, (b[1] + b[3]) / 2.0];
                let anchor = if t.own > 0 {
                    owners.nearest(t.own, t.pb, centre)
                } else {
                    None
                }
                .unwrap_or([
                    f64::from(centre[0].clamp(pb[0], pb[2])),
                    f64::from(centre[1].clamp(pb[1], pb[3])),
                ]);
                let from = edge_point(b, anchor);
                if crossing || owners.path_clear(from, anchor, t.own) {
                    return Some((b, Some([from, anchor])));
                }
            }
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

/// The box of `s` in style `st` with its padding: width, height.
fn box_size(s: &str, st: Style) -> (f32, f32) {
    let m = text::measure(s, st);
    (m.width + 8.0, m.height() + 3.0)
}

/// Places the names of conductors (bold, inside or beside their own), dielectrics (inside
/// their top-left corner or beside) and another revision's outlines (beside), reserving
/// their boxes.
pub(super) fn place_names(
    plot: &Plot,
    conductors: &[Outline],
    dielectrics: &[Outline],
    former: &[Outline],
    owners: &Owners,
    taken: &mut Taken,
) -> Vec<Name> {
    let mut out = Vec::new();
    let groups = [
        (conductors, Style::new(13.0, INK).bold(), false, 0.85, true),
        (
            dielectrics,
            Style::new(12.0, Rgb([50, 50, 50])),
            true,
            0.7,
            false,
        ),
        (former, Style::new(12.0, INK), false, 0.8, false),
    ];
    for (items, style, inside_first, bg_alpha, owned) in groups {
        for (k, o) in items.iter().enumerate() {
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
            let target = Target {
                pb,
                own: if owned {
                    (k + 1).min(u16::MAX as usize) as u16
                } else {
                    0
                },
                inside_first,
                // A thin conductor has no inside: its name goes beside it.
                has_inside: !o.rings.is_empty(),
            };
            let (bw, bh) = box_size(&o.name, style);
            if let Some((b, leader)) = place(bw, bh, &target, plot, taken, owners) {
                taken.0.push(b);
                out.push(Name {
                    text: o.name.clone(),
                    style,
                    at: b,
                    bg_alpha,
                    leader,
                });
            }
        }
    }
    out
}

/// Half the size of a pin's symbol, px.
pub(super) fn pin_radius(kind: PinKind) -> f32 {
    match kind {
        PinKind::Probe => 6.0,
        PinKind::WorstMargin => 12.0,
    }
}

/// The style of a pin's label.
pub(super) fn pin_style(kind: PinKind) -> Style {
    match kind {
        PinKind::Probe => Style::new(12.0, INK),
        PinKind::WorstMargin => Style::new(13.0, INK).bold(),
    }
}

/// Places the labels of the pins of `kind` beside their symbols, clear of conductors. A
/// worst-margin label that finds no clear place still gets one (inside the plot, at its
/// top-left corner): that point is never left unnamed.
pub(super) fn place_pin_labels(
    plot: &Plot,
    pins: &[Pin],
    kind: PinKind,
    owners: &Owners,
    taken: &mut Taken,
) -> Vec<Name> {
    let mut out = Vec::new();
    for p in pins
        .iter()
        .filter(|p| p.kind == kind && !p.label.is_empty())
    {
        let c = plot.px(p.at);
        if plot.local(c[0] as usize, c[1] as usize).is_none() || c[0] < 0.0 || c[1] < 0.0 {
            continue;
        }
        let r = f64::from(pin_radius(kind));
        let target = Target {
            pb: [c[0] - r, c[1] - r, c[0] + r, c[1] + r],
            own: 0,
            inside_first: false,
            has_inside: false,
        };
        let st = pin_style(kind);
        let (bw, bh) = box_size(&p.label, st);
        let placed = place(bw, bh, &target, plot, taken, owners).or_else(|| {
            (kind == PinKind::WorstMargin).then(|| {
                let (x, y) = (plot.x0 as f32 + 2.0, plot.y0 as f32 + 2.0);
                let b = [x, y, x + bw, y + bh];
                (b, Some([edge_point(b, c), c]))
            })
        });
        if let Some((b, leader)) = placed {
            taken.0.push(b);
            out.push(Name {
                text: p.label.clone(),
                style: st,
                at: b,
                bg_alpha: 0.9,
                leader,
            });
        }
    }
    out
}

#[cfg(test)]
mod tests {
    use super::*;

    fn plot() -> Plot {
        Plot::for_tests()
    }

    fn square(name: &str, x: f64, y: f64, s: f64) -> Outline {
        Outline::polygon(name, vec![[x, y], [x + s, y], [x + s, y + s], [x, y + s]])
    }

    fn overlaps(a: [f32; 4], b: [f32; 4]) -> bool {
        !(a[2] < b[0] || a[0] > b[2] || a[3] < b[1] || a[1] > b[3])
    }

    #[test]
    fn crowded_names_never_overlap_leave_the_plot_or_cover_another_conductor() {
        // A 6 x 5 array of 2-unit squares 1.2 units apart (20 px by 12 px gaps), names
        // wider than the squares and the gaps, and one conductor wrapped round another's
        // bounding box.
        let p = plot();
        let mut cs = Vec::new();
        for j in 0..5 {
            for i in 0..6 {
                cs.push(square(
                    &format!("e{}", j * 6 + i),
                    4.0 + 3.2 * i as f64,
                    4.0 + 3.2 * j as f64,
                    2.0,
                ));
            }
        }
        let ring = Outline {
            name: "foil".into(),
            rings: vec![
                vec![[26.0, 4.0], [38.0, 4.0], [38.0, 16.0], [26.0, 16.0]],
                vec![[27.0, 5.0], [37.0, 5.0], [37.0, 15.0], [27.0, 15.0]],
            ],
            ..Outline::default()
        };
        cs.push(ring);
        cs.push(square("rod", 30.0, 8.0, 4.0));
        let img = RgbImage::new(420, 320);
        let owners = Owners::new(&img, &p, &cs);
        let mut taken = Taken::default();
        let names = place_names(&p, &cs, &[], &[], &owners, &mut taken);
        assert_eq!(names.len(), 32, "every name placed");
        for (a, n) in names.iter().enumerate() {
            assert!(p.holds(n.at), "{} off the plot", n.text);
            for m in &names[a + 1..] {
                assert!(!overlaps(n.at, m.at), "{} on {}", n.text, m.text);
            }
            let own = cs.iter().position(|c| c.name == n.text).unwrap() + 1;
            assert!(owners.clear(n.at, own as u16), "{} on another", n.text);
            if let Some([a, b]) = n.leader {
                assert_eq!(owners.at(b[0] as i64, b[1] as i64), own as u16);
                assert_eq!(edge_point(n.at, a), a);
            }
        }
        // The rod sits inside the foil's bounding box: the foil's name is not on the rod,
        // the rod's is on the rod.
        let rod = names.iter().find(|n| n.text == "rod").expect("rod named");
        assert!(owners.clear(rod.at, 32));
        assert!(names.iter().any(|n| n.text == "foil"));
    }

    #[test]
    fn a_name_with_no_room_nearby_gets_a_leader_line_to_its_own_shape() {
        // A small square boxed in by a wide plate above and below and the plot's edge.
        let p = plot();
        let cs = vec![
            square("s", 1.0, 14.0, 1.0),
            Outline::polygon(
                "plate above",
                vec![[0.0, 15.2], [12.0, 15.2], [12.0, 22.0], [0.0, 22.0]],
            ),
            Outline::polygon(
                "plate below",
                vec![[0.0, 7.0], [12.0, 7.0], [12.0, 13.8], [0.0, 13.8]],
            ),
        ];
        let img = RgbImage::new(420, 320);
        let owners = Owners::new(&img, &p, &cs);
        let mut taken = Taken::default();
        let names = place_names(&p, &cs[..1], &[], &[], &owners, &mut taken);
        let n = &names[0];
        assert!(owners.clear(n.at, 1));
        let [a, b] = n.leader.expect("moved away with a leader");
        assert_eq!(owners.at(b[0] as i64, b[1] as i64), 1);
        assert!(owners.path_clear(a, b, 1), "the leader crosses a plate");
    }
}
