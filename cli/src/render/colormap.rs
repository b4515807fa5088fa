//! Colour maps of our own construction, designed in the OKLab colour space.
//!
//! OKLab is the perceptual colour space published by Björn Ottosson, "A perceptual color space
//! for image processing" (2020); its reference code is in the public domain (also offered under
//! the MIT licence), and the matrices below are the ones given there. sRGB transfer curve:
//! IEC 61966-2-1.
//!
//! Construction: a path is laid in OKLCh (lightness, chroma, hue), every point is pulled into
//! the sRGB gamut by lowering its chroma (lightness and hue kept), and the path is resampled
//! at equal steps of OKLab distance, so that equal steps of the mapped value give equal steps
//! of perceived colour difference.
//! - [`sequential`]: deep indigo through magenta and orange to pale yellow, lightness rising
//!   monotonically from 0.32 to 0.95 (no black end, so dark ink stays readable on it).
//! - [`diverging`]: blue, through near-white at the middle, to red; both halves have the same
//!   lightness profile, so +v and -v look equally strong.
//!
//! Invariants: each table has [`LEN`] entries; lookups clamp to [0, 1] and map NaN to `None`
//! (callers paint NaN with [`NO_VALUE`]); [`NO_VALUE`] is a neutral grey that neither map
//! contains.

use std::sync::OnceLock;

use image::Rgb;

/// Entries per table (odd, so that the middle value 0.5 has an entry of its own).
pub const LEN: usize = 257;

/// Fill colour for nodes without a value (inside conductors) and for conductor shapes.
pub const NO_VALUE: Rgb<u8> = Rgb([150, 150, 150]);

/// A colour in OKLab: lightness L in [0, 1], opponent axes a and b.
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct Lab {
    /// Lightness.
    pub l: f64,
    /// Green-red axis.
    pub a: f64,
    /// Blue-yellow axis.
    pub b: f64,
}

/// A resampled colour map: the float colours (OKLab) and their 8-bit sRGB rendering.
#[derive(Clone, Debug)]
pub struct Table {
    /// OKLab colour of each entry, before 8-bit quantisation.
    pub lab: Vec<Lab>,
    /// 8-bit sRGB of each entry.
    pub rgb: Vec<Rgb<u8>>,
}

impl Table {
    /// Colour of `t` in [0, 1] (clamped); `None` for NaN.
    pub fn at(&self, t: f64) -> Option<Rgb<u8>> {
        if t.is_nan() {
            return None;
        }
        let i = (t.clamp(0.0, 1.0) * (LEN - 1) as f64).round() as usize;
        Some(self.rgb[i])
    }

    /// Colour of `t`, NaN painted [`NO_VALUE`].
    pub fn at_or_fill(&self, t: f64) -> Rgb<u8> {
        self.at(t).unwrap_or(NO_VALUE)
    }
}

/// The sequential map (for magnitudes and one-signed potentials).
pub fn sequential() -> &'static Table {
    static T: OnceLock<Table> = OnceLock::new();
    T.get_or_init(|| {
        // Lightness rises linearly; the hue turns from indigo (285 deg) through magenta, red and
        // orange to yellow (95 deg); chroma swells in the middle and is clipped to the gamut.
        let path = |t: f64| {
            let l = 0.32 + 0.63 * t;
            let h = 285.0 + 170.0 * t;
            let c = 0.10 + 0.10 * (std::f64::consts::PI * t).sin() - 0.03 * t;
            lch(l, c, h)
        };
        resample_uniform(&dense(path))
    })
}

/// The diverging map (for potentials of both signs, centred on zero).
pub fn diverging() -> &'static Table {
    static T: OnceLock<Table> = OnceLock::new();
    T.get_or_init(|| {
        // Two straight OKLab legs from a saturated end to a common near-white centre; each leg
        // is resampled on its own so the centre lands exactly on the middle entry.
        let centre = Lab {
            l: 0.965,
            a: 0.0,
            b: 0.0,
        };
        let cold = lch(0.45, 0.15, 255.0);
        let warm = lch(0.45, 0.17, 28.0);
        let leg = |from: Lab, to: Lab| {
            dense(move |t| Lab {
                l: from.l + (to.l - from.l) * t,
                a: from.a + (to.a - from.a) * t,
                b: from.b + (to.b - from.b) * t,
            })
        };
        let half = LEN / 2 + 1;
        let lower = resample(&leg(cold, centre), half);
        let upper = resample(&leg(centre, warm), half);
        let mut lab = lower;
        lab.pop();
        lab.extend(upper);
        debug_assert_eq!(lab.len(), LEN);
        finish(lab)
    })
}

/// OKLab from lightness, chroma and hue (degrees), pulled into the sRGB gamut by lowering
/// the chroma.
pub fn lch(l: f64, c: f64, h_deg: f64) -> Lab {
    let (s, co) = h_deg.to_radians().sin_cos();
    let at = |c: f64| Lab {
        l,
        a: c * co,
        b: c * s,
    };
    if in_gamut(at(c)) {
        return at(c);
    }
    let (mut lo, mut hi) = (0.0, c);
    for _ in 0..40 {
        let mid = 0.5 * (lo + hi);
        if in_gamut(at(mid)) {
            lo = mid;
        } else {
            hi = mid;
        }
    }
    at(lo)
}

/// Distance between two OKLab colours (the space's own difference measure).
pub fn delta_e(p: Lab, q: Lab) -> f64 {
    ((p.l - q.l).powi(2) + (p.a - q.a).powi(2) + (p.b - q.b).powi(2)).sqrt()
}

/// Linear-light sRGB (each in [0, 1]) to OKLab.
pub fn lab_from_linear(rgb: [f64; 3]) -> Lab {
    let [r, g, b] = rgb;
    let l = 0.412_221_470_8 * r + 0.536_332_536_3 * g + 0.051_445_992_9 * b;
    let m = 0.211_903_498_2 * r + 0.680_699_545_1 * g + 0.107_396_956_6 * b;
    let s = 0.088_302_461_9 * r + 0.281_718_837_6 * g + 0.629_978_700_5 * b;
    let (l, m, s) = (l.cbrt(), m.cbrt(), s.cbrt());
    Lab {
        l: 0.210_454_255_3 * l + 0.793_617_785_0 * m - 0.004_072_046_8 * s,
        a: 1.977_998_495_1 * l - 2.428_592_205_0 * m + 0.450_593_709_9 * s,
        b: 0.025_904_037_1 * l + 0.782_771_766_2 * m - 0.808_675_766_0 * s,
    }
}

/// OKLab to linear-light sRGB (not clamped: out-of-gamut colours leave [0, 1]).
pub fn linear_from_lab(c: Lab) -> [f64; 3] {
    let l = c.l + 0.396_337_777_4 * c.a + 0.215_803_757_3 * c.b;
    let m = c.l - 0.105_561_345_8 * c.a - 0.063_854_172_8 * c.b;
    let s = c.l - 0.089_484_177_5 * c.a - 1.291_485_548_0 * c.b;
    let (l, m, s) = (l * l * l, m * m * m, s * s * s);
    [
        4.076_741_662_1 * l - 3.307_711_591_3 * m + 0.230_969_929_2 * s,
        -1.268_438_004_6 * l + 2.609_757_401_1 * m - 0.341_319_396_5 * s,
        -0.004_196_086_3 * l - 0.703_418_614_7 * m + 1.707_614_701_0 * s,
    ]
}

/// sRGB transfer curve (IEC 61966-2-1): linear light to encoded value, both in [0, 1].
pub fn encode_srgb(x: f64) -> f64 {
    let x = x.clamp(0.0, 1.0);
    if x <= 0.003_130_8 {
        12.92 * x
    } else {
        1.055 * x.powf(1.0 / 2.4) - 0.055
    }
}

/// Inverse of [`encode_srgb`].
pub fn decode_srgb(v: f64) -> f64 {
    if v <= 0.040_45 {
        v / 12.92
    } else {
        ((v + 0.055) / 1.055).powf(2.4)
    }
}

/// 8-bit sRGB of an OKLab colour (clamped to the gamut).
pub fn rgb8(c: Lab) -> Rgb<u8> {
    let lin = linear_from_lab(c);
    let q = |x: f64| (encode_srgb(x) * 255.0).round() as u8;
    Rgb([q(lin[0]), q(lin[1]), q(lin[2])])
}

/// OKLab of an 8-bit sRGB colour.
pub fn lab_of(c: Rgb<u8>) -> Lab {
    // Each 8-bit level decoded once (ink over the maps asks for the colour underneath
    // pixel by pixel).
    static LINEAR: OnceLock<[f64; 256]> = OnceLock::new();
    let lin = LINEAR.get_or_init(|| std::array::from_fn(|v| decode_srgb(v as f64 / 255.0)));
    lab_from_linear([lin[c[0] as usize], lin[c[1] as usize], lin[c[2] as usize]])
}

fn in_gamut(c: Lab) -> bool {
    const EPS: f64 = 1e-9;
    linear_from_lab(c)
        .iter()
        .all(|&v| (-EPS..=1.0 + EPS).contains(&v))
}

/// Dense samples of a path, for arc-length resampling.
fn dense(path: impl Fn(f64) -> Lab) -> Vec<Lab> {
    const N: usize = 4096;
    (0..=N).map(|k| path(k as f64 / N as f64)).collect()
}

fn resample_uniform(dense: &[Lab]) -> Table {
    finish(resample(dense, LEN))
}

/// `n` points at equal OKLab arc length along the polyline `dense`, ends included.
fn resample(dense: &[Lab], n: usize) -> Vec<Lab> {
    let mut cum = Vec::with_capacity(dense.len());
    let mut s = 0.0;
    cum.push(0.0);
    for w in dense.windows(2) {
        s += delta_e(w[0], w[1]);
        cum.push(s);
    }
    let total = s;
    let mut out = Vec::with_capacity(n);
    let mut k = 0;
    for i in 0..n {
        let target = total * i as f64 / (n - 1) as f64;
        while k + 2 < cum.len() && cum[k + 1] < target {
            k += 1;
        }
        let seg = cum[k + 1] - cum[k];
        let f = if seg > 0.0 {
            ((target - cum[k]) / seg).clamp(0.0, 1.0)
        } else {
            0.0
        };
        let (p, q) = (dense[k], dense[k + 1]);
        out.push(Lab {
            l: p.l + (q.l - p.l) * f,
            a: p.a + (q.a - p.a) * f,
            b: p.b + (q.b - p.b) * f,
        });
    }
    out
}

fn finish(lab: Vec<Lab>) -> Table {
    let rgb = lab.iter().map(|&c| rgb8(c)).collect();
    Table { lab, rgb }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn oklab_white_is_neutral_and_round_trips() {
        // Ottosson (2020): white maps to L = 1, a = b = 0 (to the printed precision).
        let w = lab_from_linear([1.0, 1.0, 1.0]);
        assert!(
            (w.l - 1.0).abs() < 1e-6 && w.a.abs() < 1e-6 && w.b.abs() < 1e-6,
            "{w:?}"
        );
        for rgb in [[0.2, 0.5, 0.9], [1.0, 0.0, 0.0], [0.01, 0.7, 0.3]] {
            let back = linear_from_lab(lab_from_linear(rgb));
            for k in 0..3 {
                assert!((back[k] - rgb[k]).abs() < 1e-6, "{rgb:?} -> {back:?}");
            }
        }
    }

    fn steps(t: &Table) -> Vec<f64> {
        t.lab.windows(2).map(|w| delta_e(w[0], w[1])).collect()
    }

    #[test]
    fn sequential_is_perceptually_uniform_and_monotone_in_lightness() {
        let t = sequential();
        assert_eq!(t.rgb.len(), LEN);
        let d = steps(t);
        let mean = d.iter().sum::<f64>() / d.len() as f64;
        for (i, &s) in d.iter().enumerate() {
            assert!(
                (s / mean - 1.0).abs() < 0.02,
                "step {i}: {s} vs mean {mean}"
            );
        }
        for w in t.lab.windows(2) {
            assert!(w[1].l > w[0].l, "lightness must rise");
        }
        // Quantised colours keep rising in lightness too (8-bit noise stays below the step).
        let l: Vec<f64> = t.rgb.iter().map(|&c| lab_of(c).l).collect();
        for w in l.windows(2) {
            assert!(w[1] >= w[0] - 1e-3);
        }
        assert!(
            l[0] > 0.30 && l[LEN - 1] < 0.97,
            "ends {} {}",
            l[0],
            l[LEN - 1]
        );
    }

    #[test]
    fn diverging_is_symmetric_in_lightness_and_uniform_per_half() {
        let t = diverging();
        assert_eq!(t.rgb.len(), LEN);
        let mid = LEN / 2;
        for i in 0..=mid {
            let (lo, hi) = (t.lab[mid - i].l, t.lab[mid + i].l);
            assert!((lo - hi).abs() < 1e-9, "entry {i}: {lo} vs {hi}");
        }
        let d = steps(t);
        for leg in [&d[..mid], &d[mid..]] {
            let mean = leg.iter().sum::<f64>() / leg.len() as f64;
            for &s in leg.iter() {
                assert!((s / mean - 1.0).abs() < 0.02);
            }
        }
        assert!(t.lab[mid].l > 0.96, "centre is near white");
        assert_eq!(t.at(0.5), Some(t.rgb[mid]));
    }

    #[test]
    fn no_value_grey_is_in_neither_map() {
        let g = lab_of(NO_VALUE);
        for t in [sequential(), diverging()] {
            for &c in &t.rgb {
                assert_ne!(c, NO_VALUE);
                assert!(delta_e(lab_of(c), g) > 0.05);
            }
        }
    }

    #[test]
    fn nan_maps_to_fill_and_out_of_range_clamps() {
        let t = sequential();
        assert_eq!(t.at(f64::NAN), None);
        assert_eq!(t.at_or_fill(f64::NAN), NO_VALUE);
        assert_eq!(t.at(-3.0), Some(t.rgb[0]));
        assert_eq!(t.at(7.0), Some(t.rgb[LEN - 1]));
        assert_eq!(t.at(f64::INFINITY), Some(t.rgb[LEN - 1]));
    }
}
