//! The colour scale of a map: how values map to colours (linear or logarithmic, sequential or
//! diverging), the numbers and unit prefix of the colour bar, the contour levels and their
//! labels, and drawing the bar.
//!
//! Invariants: the range is never empty (a constant field gets a range around it); a
//! diverging scale is symmetric about zero; NaN maps to `NO_VALUE`; the bar block has a fixed
//! width ([`BAR_BLOCK`]), so a map's layout never depends on its values; a range narrower
//! than the values gets a pointed cap at the saturated end of the bar.

use image::{Rgb, RgbImage};

use super::canvas::{fill_rect, rect_outline};
use super::colormap::{self, Table, NO_VALUE};
use super::layout::{axis_title_style, Plot, TICK};
use super::text::{self, HAlign, Style, VAlign};
use super::{axes, contour, sample, ContourStyle, MapInput, Palette, Scale, GREY_INK, INK};

/// Maps values to colours and writes the colour bar's numbers.
#[derive(Clone, Debug)]
pub(super) struct ColorScale {
    pub(super) lo: f64,
    pub(super) hi: f64,
    pub(super) log: bool,
    pub(super) table: &'static Table,
    /// SI prefix exponent for linear labels.
    pub(super) exp3: i32,
    /// Some values lie above `hi` / below `lo` (a range narrower than the values): the bar
    /// gets a pointed cap at that end.
    pub(super) over: bool,
    pub(super) under: bool,
    /// The values have no unit: numbers are written plainly, without SI prefixes.
    pub(super) plain: bool,
    /// ln(lo) and ln(hi) - ln(lo), for a logarithmic scale (found once, not per pixel).
    ln_lo: f64,
    ln_span: f64,
}

impl ColorScale {
    pub(super) fn new(input: &MapInput) -> ColorScale {
        let found = sample::finite_range(input.values);
        let (mut lo, mut hi) = match (input.range, found) {
            (Some(r), _) if r[0].is_finite() && r[1].is_finite() && r[1] > r[0] => (r[0], r[1]),
            (_, Some(f)) => f,
            _ => (0.0, 1.0),
        };
        let log = input.scale == Scale::Log && hi > 0.0;
        if log {
            let floor = hi * 1e-4;
            let base = if input.range.is_some() && lo > 0.0 {
                lo
            } else {
                sample::min_positive(input.values).unwrap_or(floor)
            };
            lo = base.max(floor);
            if lo >= hi {
                lo = hi / 10.0;
            }
        }
        let diverging = match input.palette {
            Palette::Diverging => true,
            Palette::Sequential => false,
            Palette::Auto => {
                // Both signs, each beyond 1 % of the other: round-off below zero in a
                // one-signed field does not count.
                !log && lo < 0.0 && hi > 0.0 && lo.abs().min(hi) > 0.01 * lo.abs().max(hi)
            }
        } && !log;
        if diverging {
            let m = lo.abs().max(hi.abs());
            (lo, hi) = (-m, m);
        }
        if hi.partial_cmp(&lo) != Some(std::cmp::Ordering::Greater) {
            // A constant field: zero shows on 0..1 (never a negative magnitude), anything
            // else on +-5 % around it.
            (lo, hi) = if lo == 0.0 {
                (0.0, 1.0)
            } else {
                (lo - lo.abs() * 0.05, hi + hi.abs() * 0.05)
            };
        }
        // On a log scale of its own range the values below its floor are not flagged (the
        // floor is part of the scale); below a range the caller set they are.
        let (over, under) = match found {
            Some((flo, fhi)) => (fhi > hi, (!log || input.range.is_some()) && flo < lo),
            None => (false, false),
        };
        let table = if diverging {
            colormap::diverging()
        } else {
            colormap::sequential()
        };
        let exp3 = if input.unit.is_empty() {
            0
        } else {
            // Rounded up to one digit first, so 0.999 V reads as volts, not 999 mV.
            let top = axes::prefix_exponent(axes::round_up(lo.abs().max(hi.abs())));
            let span = hi - lo;
            if span > 0.0 && 100.0 * span < lo.abs().max(hi.abs()) {
                // A range offset far from zero (1000.0 to 1000.9 V) is written in the unit of
                // its span, "1000.4 V" rather than "1.0004 kV", at most one prefix below.
                axes::prefix_exponent(axes::round_up(span)).max(top - 3)
            } else {
                top
            }
        };
        ColorScale {
            lo,
            hi,
            log,
            table,
            exp3,
            over,
            under,
            plain: input.unit.is_empty(),
            ln_lo: lo.ln(),
            ln_span: hi.ln() - lo.ln(),
        }
    }

    /// A value as the bar writes it outside its ticks: with its unit and prefix, or plain.
    pub(super) fn value_text(&self, v: f64, unit: &str) -> String {
        if self.plain || unit.is_empty() {
            return axes::plain(v);
        }
        let s = axes::si(v);
        if s.ends_with(|c: char| c.is_ascii_digit()) {
            format!("{s} {unit}")
        } else {
            format!("{s}{unit}")
        }
    }

    /// What the bar says about its clipped ends: "clipped at 2.1 MV/m", "clipped at ±3 V/m",
    /// "clipped below 0.3"; `None` when nothing is clipped.
    pub(super) fn clip_note(&self, unit: &str) -> Option<[String; 2]> {
        match (self.over, self.under) {
            (true, true) if self.lo == -self.hi => Some([
                "clipped at".into(),
                format!("\u{b1}{}", self.value_text(self.hi, unit)),
            ]),
            (true, true) => Some([
                "clipped to".into(),
                format!(
                    "{} \u{2026} {}",
                    self.value_text(self.lo, unit),
                    self.value_text(self.hi, unit)
                ),
            ]),
            (true, false) => Some(["clipped at".into(), self.value_text(self.hi, unit)]),
            (false, true) => Some(["clipped below".into(), self.value_text(self.lo, unit)]),
            (false, false) => None,
        }
    }

    pub(super) fn t(&self, v: f64) -> f64 {
        if self.log {
            (v.max(self.lo).ln() - self.ln_lo) / self.ln_span
        } else {
            (v - self.lo) / (self.hi - self.lo)
        }
    }

    pub(super) fn color(&self, v: f64) -> Rgb<u8> {
        if v.is_nan() {
            NO_VALUE
        } else {
            self.table.at_or_fill(self.t(v))
        }
    }

    pub(super) fn scale(&self) -> f64 {
        10f64.powi(self.exp3)
    }

    /// The unit as written on the bar: with the prefix on a linear scale.
    pub(super) fn unit(&self, unit: &str) -> String {
        if self.log {
            unit.to_string()
        } else {
            format!("{}{}", axes::prefix(self.exp3), unit)
        }
    }

    /// Bar ticks: (value, label), at most `max`.
    pub(super) fn ticks(&self, max: usize) -> Vec<(f64, String)> {
        if self.log {
            let decades = (self.hi / self.lo).log10();
            let mantissas: &[f64] = if decades > 2.0 {
                &[1.0]
            } else {
                &[1.0, 2.0, 5.0]
            };
            let (d0, d1) = (
                self.lo.log10().floor() as i32,
                self.hi.log10().ceil() as i32,
            );
            let slack = 1e-9;
            let mut v: Vec<f64> = (d0..=d1)
                .flat_map(|d| mantissas.iter().map(move |m| m * 10f64.powi(d)))
                .filter(|&x| x >= self.lo * (1.0 - slack) && x <= self.hi * (1.0 + slack))
                .collect();
            while v.len() > max {
                v = v.into_iter().step_by(2).collect();
            }
            if v.len() < 2 {
                v = vec![self.lo, self.hi];
            }
            let text = |x: f64| {
                if self.plain {
                    axes::plain(x)
                } else {
                    axes::si(x)
                }
            };
            v.into_iter().map(|x| (x, text(x))).collect()
        } else {
            let s = self.scale();
            let (step, t) = axes::ticks(self.lo / s, self.hi / s, max);
            t.into_iter()
                .map(|x| (x * s, axes::tick_label(x, step)))
                .collect()
        }
    }

    /// Contour levels and their labels.
    pub(super) fn levels(&self, style: ContourStyle, unit: &str) -> Vec<(f64, String)> {
        let s = self.scale();
        let with_unit = |n: String| {
            if unit.is_empty() {
                n
            } else {
                format!("{n} {}", self.unit(unit))
            }
        };
        match style {
            ContourStyle::None => Vec::new(),
            ContourStyle::Auto if self.log => contour::log_levels(self.lo, self.hi)
                .into_iter()
                .map(|v| {
                    (
                        v,
                        if unit.is_empty() {
                            axes::plain(v)
                        } else {
                            format!("{}{unit}", axes::si(v))
                        },
                    )
                })
                .map(|(v, l)| (v, l.replace(" ", "\u{2009}").replacen('\u{2009}', " ", 1)))
                .collect(),
            ContourStyle::Auto | ContourStyle::Step(_) => {
                let (step, levels) = match style {
                    ContourStyle::Step(st) => {
                        (st, contour::stepped_levels(self.lo, self.hi, st, 200))
                    }
                    _ => contour::linear_levels(self.lo, self.hi, 10),
                };
                let dec = axes::decimals(step / s);
                levels
                    .into_iter()
                    .map(|v| (v, with_unit(axes::fixed(v / s, dec))))
                    .collect()
            }
        }
    }
}

pub(super) const BAR_GAP: i64 = 22;
pub(super) const BAR_W: i64 = 18;
/// Height of the pointed cap at a saturated end of the colour bar, px.
pub(super) const BAR_CAP: i64 = 12;

pub(super) fn bar_label_style() -> Style {
    Style::new(12.0, INK)
}

/// Width of the colour bar block right of the plot: gap, bar, ticks, labels up to 56 px (wider
/// ones spill into the margin) and the bar's title. Fixed, so that a map's layout depends on
/// its grid and options only, never on its values.
pub(super) const BAR_BLOCK: usize = BAR_GAP as usize + BAR_W as usize + 8 + 56 + 10 + 18 + 8;

/// The colour bar's ticks for a bar `h` px tall: about one per 40 px, and more (down to one
/// per 20 px) when that leaves fewer than two (a short bar over -0.49..0.49 V would show only
/// its 0).
pub(super) fn bar_ticks(cs: &ColorScale, h: usize) -> Vec<(f64, String)> {
    let most = (h / 20).max(2);
    let mut max = (h / 40).clamp(2, 10);
    loop {
        let t = cs.ticks(max);
        if t.len() >= 2 || max >= most {
            return t;
        }
        max += 1;
    }
}

pub(super) fn draw_bar(
    img: &mut RgbImage,
    plot: &Plot,
    cs: &ColorScale,
    ticks: &[(f64, String)],
    label: &str,
    unit: &str,
) {
    let x0 = plot.right() + BAR_GAP;
    let (y0, h) = (plot.y0, plot.h as i64);
    for r in 0..h {
        let t = 1.0 - (r as f64 + 0.5) / h as f64;
        let c = cs.table.at_or_fill(t);
        fill_rect(img, x0, y0 + r, x0 + BAR_W, y0 + r + 1, c, 1.0);
    }
    rect_outline(img, x0 - 1, y0 - 1, x0 + BAR_W + 1, y0 + h + 1, GREY_INK);
    // Pointed caps: values beyond the bar's end take its end colour.
    for (on, base, dir, t) in [(cs.over, y0 - 2, -1, 1.0), (cs.under, y0 + h + 1, 1, 0.0)] {
        if !on {
            continue;
        }
        let c = cs.table.at_or_fill(t);
        for k in 0..BAR_CAP {
            // Row k of the cap: full bar width at its base, narrowing to a point.
            let half = (BAR_W + 2) * (BAR_CAP - k) / (2 * BAR_CAP);
            let y = base + dir * k;
            let mid = x0 + BAR_W / 2;
            fill_rect(img, mid - half, y, mid + half, y + 1, c, 1.0);
            fill_rect(img, mid - half - 1, y, mid - half, y + 1, GREY_INK, 1.0);
            fill_rect(img, mid + half, y, mid + half + 1, y + 1, GREY_INK, 1.0);
        }
    }
    let st = bar_label_style();
    let mut widest = 0.0f32;
    for (v, l) in ticks {
        let t = cs.t(*v).clamp(0.0, 1.0);
        let y = (y0 as f64 + (1.0 - t) * h as f64).round() as i64;
        let y = y.clamp(y0, y0 + h - 1);
        fill_rect(
            img,
            x0 + BAR_W + 1,
            y,
            x0 + BAR_W + 1 + TICK,
            y + 1,
            GREY_INK,
            1.0,
        );
        let b = text::draw(
            img,
            l,
            st,
            (x0 + BAR_W + 8) as f32,
            y as f32 + 0.5,
            HAlign::Left,
            VAlign::Middle,
        );
        widest = widest.max(b[2] - b[0]);
    }
    // What is clipped, under the bar (below its lower cap).
    if let Some(note) = cs.clip_note(unit) {
        let top = y0 + h + 6 + if cs.under { BAR_CAP } else { 0 };
        for (k, line) in note.iter().enumerate() {
            text::draw(
                img,
                line,
                st,
                (x0 - 1) as f32,
                (top + 14 * k as i64) as f32,
                HAlign::Left,
                VAlign::Top,
            );
        }
    }
    let cx = (x0 + BAR_W + 8) as f32 + widest + 10.0 + 9.0;
    text::draw_vertical(
        img,
        label,
        axis_title_style(),
        cx,
        y0 as f32 + h as f32 / 2.0,
    );
}

pub(super) fn bar_rect(plot: &Plot) -> [i64; 4] {
    [plot.right() + BAR_GAP, plot.y0, BAR_W, plot.h as i64]
}
