//! Round numbers for axes, colour bars and contour levels, and how they are written.
//!
//! Invariants: steps are 1, 2 or 5 times a power of ten; ticks are whole multiples of the step
//! inside the closed range (to a relative 1e-9); labels of one axis share one number of
//! decimals; negative numbers use the minus sign U+2212; SI prefixes run from femto to peta.
//! Every function is total over f64: a range too narrow, too wide or not finite for round
//! steps gets no ticks (or its ends), never a panic and never an unbounded list.

/// Smallest and largest step: 1-2-5 steps stay normal, finite numbers between them.
const STEP_RANGE: [f64; 2] = [1e-300, 1e300];

/// Most multiples one scale may have.
const MAX_MULTIPLES: f64 = 100_000.0;

/// The 1-2-5 step nearest above `raw`; `raw` outside [1e-300, 1e300] (or NaN) gives the
/// nearer end of that range.
pub fn nice_step(raw: f64) -> f64 {
    if raw.is_nan() || raw <= STEP_RANGE[0] {
        return STEP_RANGE[0];
    }
    if raw >= STEP_RANGE[1] {
        return STEP_RANGE[1];
    }
    let e = raw.log10().floor();
    let p = 10f64.powf(e);
    let m = raw / p;
    let k = if m <= 1.0 + 1e-9 {
        1.0
    } else if m <= 2.0 + 1e-9 {
        2.0
    } else if m <= 5.0 + 1e-9 {
        5.0
    } else {
        10.0
    };
    k * p
}

/// Multiples of `step` inside [lo, hi] (ends included to a relative 1e-9); none when the
/// numbers are not finite, the step not positive, the multiples not distinct in f64 (beyond
/// 2^53 steps from zero) or more than 100 000.
pub fn multiples(lo: f64, hi: f64, step: f64) -> Vec<f64> {
    if !(lo.is_finite() && hi.is_finite() && step > 0.0 && step.is_finite()) {
        return Vec::new();
    }
    let slack = 1e-9 * (hi - lo).abs().max(step);
    let a = ((lo - slack) / step).ceil();
    let b = ((hi + slack) / step).floor();
    const DISTINCT: f64 = 9.0e15;
    if !(a.abs() < DISTINCT && b.abs() < DISTINCT) || b - a > MAX_MULTIPLES {
        return Vec::new();
    }
    let (k0, k1) = (a as i64, b as i64);
    (k0..=k1)
        .map(|k| if k == 0 { 0.0 } else { k as f64 * step })
        .collect()
}

/// Round ticks over [lo, hi], at most `max` of them (at least 2 when the range allows):
/// returns the step and the ticks.
pub fn ticks(lo: f64, hi: f64, max: usize) -> (f64, Vec<f64>) {
    let span = (hi - lo).abs();
    let mut step = nice_step(span / max.max(1) as f64);
    loop {
        let t = multiples(lo, hi, step);
        if t.len() <= max.max(2) {
            return (step, t);
        }
        let wider = nice_step(step * 1.5);
        if wider <= step {
            // The largest step still gives too many: no ticks rather than a crowded axis.
            return (step, Vec::new());
        }
        step = wider;
    }
}

/// Decimals needed to write multiples of `step` exactly.
pub fn decimals(step: f64) -> usize {
    let d = (-step.log10() - 1e-9).ceil();
    if d > 0.0 {
        (d as usize).min(15)
    } else {
        0
    }
}

/// Writes `v` with `dec` decimals, minus sign U+2212, no "-0".
pub fn fixed(v: f64, dec: usize) -> String {
    let s = format!("{:.*}", dec, v.abs());
    let zero = s.bytes().all(|b| b == b'0' || b == b'.');
    if v < 0.0 && !zero {
        format!("\u{2212}{s}")
    } else {
        s
    }
}

/// A tick label for `v` on an axis of step `step`: fixed decimals for everyday magnitudes,
/// otherwise mantissa and exponent ("2.5e−7").
pub fn tick_label(v: f64, step: f64) -> String {
    let e = step.log10().floor();
    if (-5.0..=6.0).contains(&e) {
        fixed(v, decimals(step))
    } else if v == 0.0 {
        "0".to_string()
    } else {
        let ev = v.abs().log10().floor();
        let mant = v / 10f64.powf(ev);
        let dec = decimals(step / 10f64.powf(ev)).min(6);
        format!("{}e{}", fixed(mant, dec), fixed(ev, 0))
    }
}

const PREFIXES: [(i32, &str); 11] = [
    (-15, "f"),
    (-12, "p"),
    (-9, "n"),
    (-6, "µ"),
    (-3, "m"),
    (0, ""),
    (3, "k"),
    (6, "M"),
    (9, "G"),
    (12, "T"),
    (15, "P"),
];

/// The SI prefix exponent (multiple of 3) for numbers up to `magnitude` in size.
pub fn prefix_exponent(magnitude: f64) -> i32 {
    if !(magnitude.is_finite() && magnitude > 0.0) {
        return 0;
    }
    // A hair of slack so that 999.9999999 and 1000 pick the same prefix.
    // (In floats: the largest doubles overflow the slack to infinity.)
    let e = ((magnitude * (1.0 + 1e-9)).log10() / 3.0).floor() * 3.0;
    e.clamp(-15.0, 15.0) as i32
}

/// `v` (> 0) rounded up to one significant digit: 0.993 -> 1, 0.85 -> 0.9, 1.2e6 -> 2e6.
pub fn round_up(v: f64) -> f64 {
    if !(v.is_finite() && v > 0.0) {
        return v;
    }
    let p = 10f64.powf(v.log10().floor());
    // Slack so that an exact 0.3 is not pushed to 0.4 by representation error.
    (v / p * (1.0 - 1e-12)).ceil() * p
}

/// The prefix symbol of a multiple-of-3 exponent in [-15, 15].
pub fn prefix(exp3: i32) -> &'static str {
    PREFIXES
        .iter()
        .find(|p| p.0 == exp3)
        .map(|p| p.1)
        .unwrap_or("")
}

/// `v` written with its own SI prefix and up to 3 significant digits: "250 k", "1.5 M", "3 m".
pub fn si(v: f64) -> String {
    si_digits(v, 3)
}

/// `v` with an SI prefix to `digits` significant digits (at least 3), trailing zeros
/// dropped: `si_digits(1001.0, 5)` is "1.001 k".
pub fn si_digits(v: f64, digits: usize) -> String {
    if v == 0.0 {
        return "0".to_string();
    }
    let e = prefix_exponent(v.abs());
    let m = v / 10f64.powi(e);
    let extra = digits.max(3) - 3;
    let dec = extra
        + if m.abs() >= 100.0 {
            0
        } else if m.abs() >= 10.0 {
            1
        } else {
            2
        };
    let mut s = fixed(m, dec);
    if s.contains('.') {
        while s.ends_with('0') {
            s.pop();
        }
        if s.ends_with('.') {
            s.pop();
        }
    }
    let p = prefix(e);
    if p.is_empty() {
        s
    } else {
        format!("{s} {p}")
    }
}

/// `v` written so that numbers `step` apart read apart, next to numbers up to `top` in size:
/// with its own SI prefix to three digits when those tell such numbers apart (`top` within
/// 100 steps), otherwise in the unit that writes `step` as a whole number or a decimal (at
/// most one prefix below `top`'s), with the decimals `step` needs and no trailing zeros
/// dropped, so that an offset reads at face value: `si_step(1000.9, 0.9, 1000.9)` is
/// "1000.9", `si_step(1000.0, 0.9, 1000.9)` is "1000.0", `si_step(5e4, 5e4, 5e4)` is "50 k".
pub fn si_step(v: f64, step: f64, top: f64) -> String {
    if !(step.is_finite() && step > 0.0 && top.is_finite()) || top <= 100.0 * step {
        return si(v);
    }
    let e = prefix_exponent(round_up(step)).max(prefix_exponent(top) - 3);
    let scale = 10f64.powi(e);
    let s = fixed(v / scale, decimals(step / scale));
    match prefix(e) {
        "" => s,
        p => format!("{s} {p}"),
    }
}

/// A number without a unit to three significant digits, trailing zeros dropped: 0.5, 20,
/// 1000, 0.0012; mantissa and exponent beyond 1e-4 ..= 1e6 ("2.5e7").
pub fn plain(v: f64) -> String {
    if v == 0.0 || !v.is_finite() {
        return fixed(v, 0);
    }
    let e = v.abs().log10().floor() as i32;
    if !(-4..=6).contains(&e) {
        let m = v / 10f64.powi(e);
        if !m.is_finite() {
            return format!("{v:.2e}");
        }
        let s = fixed(m, 2);
        let s = s.trim_end_matches('0').trim_end_matches('.');
        return format!("{s}e{}", fixed(f64::from(e), 0));
    }
    let s = fixed(v, (2 - e).max(0) as usize);
    if s.contains('.') {
        s.trim_end_matches('0').trim_end_matches('.').to_string()
    } else {
        s
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn plain_numbers_keep_three_digits_and_no_prefix() {
        assert_eq!(plain(0.5), "0.5");
        assert_eq!(plain(0.304), "0.304");
        assert_eq!(plain(20.0), "20");
        assert_eq!(plain(1000.0), "1000");
        assert_eq!(plain(123456.0), "123456");
        assert_eq!(plain(2.5e7), "2.5e7");
        assert_eq!(plain(-1.25), "\u{2212}1.25");
        // The largest double takes the largest prefix (its slack overflows to infinity).
        assert_eq!(prefix_exponent(f64::MAX), 15);
    }

    #[test]
    fn offsets_are_written_in_the_unit_of_their_step() {
        assert_eq!(si_step(1000.9, 0.9, 1000.9), "1000.9");
        assert_eq!(si_step(1000.0, 0.9, 1000.9), "1000.0");
        assert_eq!(si_step(30_005.0, 5.0, 30_005.0), "30005");
        assert_eq!(si_step(1.000_002e6, 2.0, 1.000_002e6), "1000.002 k");
        assert_eq!(si_step(5e4, 5e4, 5e4), "50 k");
        assert_eq!(si_step(34_112.766, 5e3, 5e4), "34.1 k");
        assert_eq!(si_step(0.5, f64::INFINITY, 0.5), "500 m");
    }

    #[test]
    fn ticks_of_subnormal_huge_and_non_finite_ranges_do_not_panic() {
        let cases = [
            (0.0, 5e-324),
            (0.0, 2e-323),
            (5e-324, 5e-324),
            (1.0, 1.0 + 1e-15),
            (1e6, 1e6 + 1e-300),
            (-1e308, 1e308),
            (f64::MIN, f64::MAX),
            (0.0, f64::INFINITY),
            (f64::NAN, 1.0),
            (3.0, 3.0),
        ];
        for (lo, hi) in cases {
            for max in [0, 1, 2, 10] {
                let (step, t) = ticks(lo, hi, max);
                assert!(step > 0.0 && step.is_finite(), "{lo} {hi}: step {step}");
                assert!(t.len() <= max.max(2) + 1, "{lo} {hi}: {} ticks", t.len());
                for v in &t {
                    assert!(v.is_finite() && *v >= lo.min(hi) - step && *v <= lo.max(hi) + step);
                    let _ = tick_label(*v, step);
                }
            }
        }
        assert_eq!(nice_step(0.0), 1e-300);
        assert_eq!(nice_step(f64::INFINITY), 1e300);
        assert!(multiples(0.0, 1e300, 1e-300).is_empty());
    }

    #[test]
    fn steps_are_one_two_five() {
        assert_eq!(nice_step(0.7), 1.0);
        assert_eq!(nice_step(1.0), 1.0);
        assert_eq!(nice_step(1.3), 2.0);
        assert_eq!(nice_step(3.0), 5.0);
        assert_eq!(nice_step(7.0), 10.0);
        assert!((nice_step(0.013) - 0.02).abs() < 1e-15);
        assert!((nice_step(2.4e5) - 5e5).abs() < 1e-6);
    }

    #[test]
    fn ticks_stay_in_range_and_under_the_count() {
        let (step, t) = ticks(0.0, 10.0, 6);
        assert_eq!(step, 2.0);
        assert_eq!(t, vec![0.0, 2.0, 4.0, 6.0, 8.0, 10.0]);
        let (_, t) = ticks(-0.37, 0.52, 5);
        assert!(t.len() <= 5 && t.len() >= 2);
        assert!(t.iter().all(|&v| (-0.37..=0.52).contains(&v)));
        // A range narrower than float noise must still end with few ticks, inside it.
        let (_, t) = ticks(1.0, 1.0 + 1e-12, 5);
        assert!(
            t.len() <= 5 && t.iter().all(|&v| (1.0 - 1e-15..=1.0 + 2e-12).contains(&v)),
            "{t:?}"
        );
    }

    #[test]
    fn labels_are_written_plainly() {
        assert_eq!(tick_label(0.5, 0.5), "0.5");
        assert_eq!(tick_label(-2.0, 1.0), "\u{2212}2");
        assert_eq!(tick_label(-0.0, 0.1), "0.0");
        assert_eq!(tick_label(1.25, 0.05), "1.25");
        assert_eq!(tick_label(3.0e-7, 1.0e-7), "3e\u{2212}7");
        assert_eq!(si(2.5e5), "250 k");
        assert_eq!(si(1.0e6), "1 M");
        assert_eq!(si(1.5e-3), "1.5 m");
        assert_eq!(si(4.0), "4");
        assert_eq!(prefix(prefix_exponent(1.2e6)), "M");
        assert_eq!(prefix(prefix_exponent(999.0)), "");
        assert_eq!(prefix(prefix_exponent(1000.0)), "k");
        assert_eq!(round_up(0.993), 1.0);
        assert!((round_up(0.85) - 0.9).abs() < 1e-15 && (round_up(0.3) - 0.3).abs() < 1e-15);
        assert_eq!(prefix(prefix_exponent(round_up(0.999))), "");
        assert_eq!(prefix(prefix_exponent(round_up(999.7))), "k");
    }
}
