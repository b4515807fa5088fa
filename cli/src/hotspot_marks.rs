//! Which hot spots a picture marks: those near the top of the field (or below a margin of
//! 1), a few at most, the rest left to `hotspots.csv`.
//!
//! Invariants: the choice depends on the hot spots in the picture's window alone, keeps their
//! ranking order, never exceeds [`MARKED_HOTSPOTS`], and marks equal hot spots (mirror images)
//! together or not at all.

use fieldgrid_solver::post::Hotspot;

/// At most this many hot spots are marked on a picture (the rest are in `hotspots.csv`).
pub const MARKED_HOTSPOTS: usize = 5;

/// A hot spot is marked on a picture when its field reaches this share of the reference: the
/// largest hot spot off the sharp corners in the window (the largest of all when every one is
/// at a corner), whose value does not grow with refinement as a corner's does.
pub const MARKED_SHARE: f64 = 0.5;

/// Which of `spots` (hot spots in the picture's window, in their ranking) get a marker: those
/// whose field reaches [`MARKED_SHARE`] of the reference, and every one with a margin below 1
/// (the field there reaches the material's strength), the first [`MARKED_HOTSPOTS`] of them in
/// ranking order, less those equal (within 1 %) to the first one left out. Minor maxima far
/// below the peak (the field along a trace's face) stay in the table only.
pub fn marked_hotspots(spots: &[&Hotspot]) -> Vec<usize> {
    let largest = |smooth_only: bool| {
        spots
            .iter()
            .filter(|h| !(smooth_only && h.singular))
            .map(|h| h.magnitude)
            .filter(|m| m.is_finite())
            .fold(None, |a: Option<f64>, m| Some(a.map_or(m, |a| a.max(m))))
    };
    let Some(reference) = largest(true).or_else(|| largest(false)) else {
        return Vec::new();
    };
    let worth: Vec<usize> = spots
        .iter()
        .enumerate()
        .filter(|(_, h)| {
            h.magnitude >= MARKED_SHARE * reference || h.margin.is_some_and(|m| m < 1.0)
        })
        .map(|(k, _)| k)
        .collect();
    let mut marked: Vec<usize> = worth.iter().copied().take(MARKED_HOTSPOTS).collect();
    if let Some(&first_left) = worth.get(MARKED_HOTSPOTS) {
        // Equal hot spots (mirror images) are marked together or not at all: marking one of
        // four equal maxima would single it out.
        let left = spots[first_left].magnitude;
        while marked
            .last()
            .is_some_and(|&k| (spots[k].magnitude - left).abs() <= 0.01 * left)
        {
            marked.pop();
        }
    }
    marked
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn minor_maxima_far_below_the_peak_get_no_marker() {
        let spot = |magnitude: f64, singular: bool, margin: Option<f64>| Hotspot {
            magnitude,
            x: 0.0,
            y: 0.0,
            material: "background".into(),
            strength: margin.map(|m| m * magnitude),
            margin,
            singular,
            error_estimate: None,
            under_resolved: false,
        };
        // The microstrip's list: a trace edge (singular), the field under the trace, the
        // trace's end on its mirror plane, then maxima along the trace's faces far below.
        let strip = [
            spot(2.47e5, true, None),
            spot(1623.0, false, None),
            spot(1240.0, true, None),
            spot(387.0, false, None),
            spot(157.0, false, None),
            spot(103.0, false, None),
        ];
        let refs: Vec<&Hotspot> = strip.iter().collect();
        assert_eq!(marked_hotspots(&refs), vec![0, 1, 2]);
        // Every one at a corner: measured against the largest; at most a few.
        let corners: Vec<Hotspot> = (0..8)
            .map(|k| spot(2e4 - 1e3 * f64::from(k), true, None))
            .collect();
        let refs: Vec<&Hotspot> = corners.iter().collect();
        assert_eq!(marked_hotspots(&refs), vec![0, 1, 2, 3, 4]);
        // The coupled pair: four trace edges, then four equal maxima on the planes (mirror
        // images): all four or none.
        let pair = [
            spot(8.5e5, true, None),
            spot(5.6e5, true, None),
            spot(5.3e5, true, None),
            spot(4.0e5, true, None),
            spot(1251.0, false, None),
            spot(1251.0, false, None),
            spot(1251.0, false, None),
            spot(1251.0, false, None),
        ];
        let refs: Vec<&Hotspot> = pair.iter().collect();
        assert_eq!(marked_hotspots(&refs), vec![0, 1, 2, 3]);
        // A margin below 1 is marked however far below the reference its field is.
        let tip = [
            spot(9.9e6, false, Some(0.30)),
            spot(3.8e6, false, Some(0.79)),
            spot(2.2e6, false, Some(1.38)),
        ];
        let refs: Vec<&Hotspot> = tip.iter().collect();
        assert_eq!(marked_hotspots(&refs), vec![0, 1]);
        assert!(marked_hotspots(&[]).is_empty());
    }
}
