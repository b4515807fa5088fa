//! What the surface samples give the user: surface charge that integrates to each conductor's
//! charge, and the field maxima on surfaces and interfaces, ranked with the maxima inside the
//! free space.
//!
//! Surface charge: `sigma = eps0 eps E.n` at each conductor sample, `n` into the free side.
//! Its integral over the samples (planar: per metre of depth; axisymmetric: times `2 pi r`)
//! differs from the conductor's charge (the operator's reaction, which the capacitance matrix
//! uses) by the discretisation error; the difference is spread over the samples in proportion
//! to `|sigma|` times the surface each stands for, so that the integral equals the charge to
//! rounding while the shape of the distribution stays that of the surface field.
//!
//! Maxima: along each curve of samples, a sample is a maximum when neither neighbour is higher;
//! its position and value are refined by the parabola through it and its neighbours (sub-cell
//! along the outline). Like the lattice maxima ([`crate::peaks`]), a surface maximum counts
//! when the field falls by the persistence share of its value on both ways along the curve to
//! a higher sample. Nodes next to a sampled conductor surface carry the surface's field in the
//! landscape lattice maxima are read on (their own reading is the surface's, less accurate):
//! one smooth peak, one hot spot.
//!
//! Their error estimates and the margins taken with them: [`estimate`].
//!
//! Invariants: hot spots are ranked highest field first (ties by position); every hot spot is
//! at least the separation from a higher one; a surface hot spot's material is that of the
//! side of the surface the sample belongs to.

use crate::design::{Design, Mode, Point};
use crate::hotspot_search::{search, Reading, Readings};
use crate::post::{FieldEval, Hotspot, HotspotParams, SurfacePoint};
use crate::surface::{SurfaceKind, SurfaceSample};
use crate::EPS0;

mod estimate;
#[cfg(test)]
use estimate::coarse_near;
pub use estimate::{
    conductor_fit_bias, estimate_errors, estimate_points, fine_on_coarse_nodes, finish,
    surface_charge_errors, CoarseSurface, AXIS_REACH_CELLS, FIT_BIAS, FIT_BIAS_CUBIC,
    FIT_RESOLVED_CELLS, INTERFACE_FIT_BIAS, INTERFACE_FIT_RESOLVED_CELLS, RESOLVED_RADIUS_CELLS,
};

/// Surface area a sample stands for: planar m^2 per metre of depth, axisymmetric m^2.
fn area(s: &SurfaceSample, mode: Mode) -> f64 {
    match mode {
        Mode::Planar => s.length,
        Mode::Axisymmetric => 2.0 * std::f64::consts::PI * s.x * s.length,
    }
}

/// Surface charge at every conductor sample whose field is known, ordered by conductor, then
/// along the outline; `charges[k]` is conductor k's charge (C/m or C).
pub fn surface_charge(
    samples: &[SurfaceSample],
    design: &Design,
    charges: &[f64],
) -> Vec<SurfacePoint> {
    let nc = design.conductors.len();
    let eps = |m: u16| crate::material::of(design, m).permittivity;
    let mut out: Vec<SurfacePoint> = samples
        .iter()
        .filter_map(|s| match s.kind {
            SurfaceKind::Conductor(k) if s.field[0].is_finite() && s.field[1].is_finite() => {
                Some(SurfacePoint {
                    conductor: k,
                    x: s.x,
                    y: s.y,
                    density: EPS0 * eps(s.material) * s.normal_field(),
                    field: s.magnitude(),
                    area: area(s, design.mode),
                    curve: s.curve,
                    arc: s.arc,
                    error_estimate: None,
                })
            }
            _ => None,
        })
        .collect();
    out.sort_by_key(|p| p.conductor);
    for k in 0..nc {
        let (mut q, mut abs) = (0.0, 0.0);
        for p in out.iter().filter(|p| p.conductor == k) {
            q += p.density * p.area;
            abs += p.density.abs() * p.area;
        }
        if abs > 0.0 {
            let c = (charges[k] - q) / abs;
            for p in out.iter_mut().filter(|p| p.conductor == k) {
                p.density += c * p.density.abs();
            }
        }
    }
    out
}

/// A maximum of the field along a curve of samples, refined between samples.
#[derive(Clone, Debug, PartialEq)]
struct CurveMax {
    at: Point,
    magnitude: f64,
    material: u16,
    persistence: f64,
}

/// Maxima along each curve, with their persistence along it.
fn curve_maxima(samples: &[SurfaceSample]) -> Vec<CurveMax> {
    let mut out = Vec::new();
    let mut start = 0;
    while start < samples.len() {
        let curve = samples[start].curve;
        let curve_end = start + samples[start..].partition_point(|s| s.curve == curve);
        // Samples left out (covered by a conductor, outside the domain) break a curve into
        // runs of neighbours; only an unbroken loop wraps around.
        let adjacent = |k: usize| {
            let (a, b) = (&samples[k - 1], &samples[k]);
            b.arc - a.arc <= 0.75 * (a.length + b.length) * (1.0 + 1e-9)
        };
        let unbroken = (start + 1..curve_end).all(adjacent);
        let end = (start + 1..curve_end)
            .find(|&k| !adjacent(k))
            .unwrap_or(curve_end);
        // A sample whose fit is not determined (NaN) is no reading: its neighbours along the
        // run neighbour each other. Read as zero it would make the next sample a maximum, and
        // the parabola through that zero would raise the maximum by up to an eighth of the
        // field (a flat plate's face under a graded line: 8 962 V/m where the face reads
        // 7 966).
        let run: Vec<&SurfaceSample> = samples[start..end]
            .iter()
            .filter(|s| s.magnitude().is_finite())
            .collect();
        let v: Vec<f64> = run.iter().map(|s| s.magnitude()).collect();
        // A loop wraps around only when its samples go all the way round: a loop with a part
        // left out (outside the domain, as across the axis, or covered) ends where it breaks,
        // even when that part lies at the start or the end of the loop.
        let wrap = samples[start].whole_loop && unbroken && run.len() > 2;
        let n = v.len();
        let at = |i: isize| -> Option<usize> {
            if wrap {
                Some(i.rem_euclid(n as isize) as usize)
            } else if i >= 0 && (i as usize) < n {
                Some(i as usize)
            } else {
                None
            }
        };
        for i in 0..n {
            let m = v[i];
            if m <= 0.0 {
                continue;
            }
            let (l, r) = (at(i as isize - 1), at(i as isize + 1));
            let higher = |j: Option<usize>| j.is_some_and(|j| v[j] > m || (v[j] == m && j < i));
            if higher(l) || higher(r) {
                continue;
            }
            // Persistence: the deepest dip on the way to a higher sample, the shallower side.
            let dip = |step: isize| -> Option<f64> {
                let mut low = m;
                let mut k = i as isize;
                for _ in 1..n {
                    k += step;
                    let j = at(k)?;
                    if v[j] > m || (v[j] == m && j < i) {
                        return Some(low);
                    }
                    low = low.min(v[j]);
                }
                None
            };
            let level = match (dip(-1), dip(1)) {
                (Some(a), Some(b)) => a.max(b),
                (Some(a), None) | (None, Some(a)) => a,
                (None, None) => 0.0,
            };
            // The parabola through the neighbours refines the position and the value.
            let (mut pos, mut mag) = ([run[i].x, run[i].y], m);
            if let (Some(l), Some(r)) = (l, r) {
                let (a, b) = (v[l], v[r]);
                let den = a - 2.0 * m + b;
                if den < 0.0 {
                    let u = (0.5 * (a - b) / den).clamp(-0.5, 0.5);
                    mag = m - 0.25 * (a - b) * u;
                    let nb = if u < 0.0 { &run[l] } else { &run[r] };
                    let w = u.abs();
                    pos = [
                        run[i].x + w * (nb.x - run[i].x),
                        run[i].y + w * (nb.y - run[i].y),
                    ];
                }
            }
            out.push(CurveMax {
                at: pos,
                magnitude: mag.max(m),
                material: run[i].material,
                persistence: (m - level) / m,
            });
        }
        start = end;
    }
    out
}

/// A hot spot at `at` in material `m`.
fn spot(design: &Design, corners: &[Point], reach: f64, at: Point, mag: f64, m: u16) -> Hotspot {
    let (material, strength) = {
        let m = crate::material::of(design, m);
        (m.name.to_string(), m.strength)
    };
    Hotspot {
        magnitude: mag,
        x: at[0],
        y: at[1],
        material,
        strength,
        margin: strength.map(|s| s / mag),
        singular: corners
            .iter()
            .any(|c| (c[0] - at[0]).hypot(c[1] - at[1]) <= reach),
        error_estimate: None,
        under_resolved: false,
    }
}

/// Nodes whose field is read better at the surface they face: those linked to a conductor
/// with sampled (closed) outline.
fn faces_sampled_surface(field: &FieldEval, samples: &[SurfaceSample]) -> Vec<u32> {
    let mut sampled = vec![false; field.op.n_conductors];
    for s in samples {
        if let SurfaceKind::Conductor(k) = s.kind {
            sampled[k] = true;
        }
    }
    field
        .op
        .links
        .iter()
        .filter(|l| (l.target as usize) < sampled.len() && sampled[l.target as usize])
        .map(|l| l.node)
        .collect()
}

/// A copy of `values`, made on every thread.
fn copied(values: &[f64]) -> Vec<f64> {
    use rayon::prelude::*;
    values.par_iter().copied().collect()
}

/// |E| at every node as the hot-spot search reads it: NaN at the nodes `faced` (those facing
/// a sampled surface, [`faces_sampled_surface`]).
fn lattice_magnitudes(field: &FieldEval, faced: &[u32]) -> Vec<f64> {
    let mut out = copied(field.magnitudes());
    for &p in faced {
        out[p as usize] = f64::NAN;
    }
    out
}

/// The landscape the lattice maxima are read on ([`Readings::landscape`]): `magnitude`, and
/// at the nodes facing a sampled surface (no reading of their own) the highest field of that
/// surface's samples within one and a half local cells. A node beside a convex surface is
/// then no maximum against the surface's higher field: it would stand as a second, cruder
/// hot spot of the surface's own peak a few cells from it (the eccentric rod at `--accuracy
/// 1e-3`: 141 259 V/m on the surface and 140 943 V/m at a node 2 um off it, 37 um apart).
fn landscape(
    field: &FieldEval,
    samples: &[SurfaceSample],
    faced_nodes: &[u32],
    magnitude: &[f64],
) -> Vec<f64> {
    let g = &field.op.grid;
    let mut faced = vec![false; g.len()];
    for &p in faced_nodes {
        faced[p as usize] = true;
    }
    let mut out = copied(magnitude);
    for s in samples {
        let m = s.magnitude();
        if !matches!(s.kind, SurfaceKind::Conductor(_)) || !m.is_finite() {
            continue;
        }
        let r = 1.5 * g.spacing_at([s.x, s.y]);
        let (Some(cols), Some(rows)) = (
            g.columns_within(s.x - r, s.x + r),
            g.rows_within(s.y - r, s.y + r),
        ) else {
            continue;
        };
        for j in rows {
            for i in cols.clone() {
                let p = g.idx(i, j);
                if faced[p] && (g.x(i) - s.x).hypot(g.y(j) - s.y) <= r {
                    // NaN (no value yet) gives way to the sample's field.
                    out[p] = out[p].max(m);
                }
            }
        }
    }
    out
}

/// The surface's readings: its maxima with their persistence along their curve, then every
/// sample with persistence 0 (a candidate for the worst margin only).
fn surface_readings(samples: &[SurfaceSample]) -> Vec<Reading> {
    let mut out: Vec<Reading> = curve_maxima(samples)
        .into_iter()
        .map(|m| (m.at, m.magnitude, m.material, m.persistence))
        .collect();
    out.extend(
        samples
            .iter()
            .filter(|s| s.magnitude().is_finite())
            .map(|s| ([s.x, s.y], s.magnitude(), s.material, 0.0)),
    );
    out
}

/// True when some material of the design has a breakdown strength.
pub fn any_strength(design: &Design) -> bool {
    design.background.strength.is_some() || design.dielectrics.iter().any(|d| d.strength.is_some())
}

/// Ranking of hot spots: by margin (lowest first, those without a strength after them by
/// field) when any material has a strength, else by field; ties by position.
pub fn rank(spots: &mut [Hotspot], by_margin: bool) {
    spots.sort_by(|a, b| {
        let key = |h: &Hotspot| match (by_margin, h.margin) {
            (true, Some(m)) => (0, m),
            (true, None) => (1, -h.magnitude),
            (false, _) => (0, -h.magnitude),
        };
        let (ka, kb) = (key(a), key(b));
        ka.0.cmp(&kb.0)
            .then(ka.1.total_cmp(&kb.1))
            .then(a.x.total_cmp(&b.x))
            .then(a.y.total_cmp(&b.y))
    });
}

/// The peak field and the ranked hot spots, from the lattice and the surfaces together. With
/// a strength anywhere, the point of lowest margin is always among the hot spots (whatever
/// its persistence) and heads them.
pub fn peak_and_hotspots(
    field: &FieldEval,
    design: &Design,
    corners: &[Point],
    params: &HotspotParams,
    samples: &[SurfaceSample],
) -> (Option<Hotspot>, Vec<Hotspot>) {
    let g = &field.op.grid;
    // Distances in cells are in the local spacing of the candidate.
    let reach = |at: Point| params.corner_cells * g.spacing_at(at);
    let faced = faces_sampled_surface(field, samples);
    let magnitude = lattice_magnitudes(field, &faced);
    let landscape = landscape(field, samples, &faced, &magnitude);
    let surface = surface_readings(samples);
    let strength = strengths(design);
    let readings = Readings {
        grid: g,
        magnitude: &magnitude,
        landscape: &landscape,
        material: &field.raster.material,
        surface: &surface,
        strength: &strength,
    };
    let (peak, chosen) = search(&readings, params);
    let peak = peak.map(|c| spot(design, corners, reach(c.0), c.0, c.1, c.2));
    let spots = chosen
        .into_iter()
        .map(|c| spot(design, corners, reach(c.0), c.0, c.1, c.2))
        .collect();
    (peak, spots)
}

/// Breakdown strength of every material, by material index.
fn strengths(design: &Design) -> Vec<Option<f64>> {
    (0..=design.dielectrics.len())
        .map(|m| crate::material::of(design, m as u16).strength)
        .collect()
}

/// Points where the field is singular besides the conductors' sharp corners: where a
/// dielectric interface meets a conductor surface (a triple junction; found where the material
/// in front of a conductor's outline changes between neighbouring samples) and the sharp
/// corners of dielectric outlines where the two materials differ (one side of such a corner is
/// re-entrant), but not a corner on a mirror plane or the axis that the unfolded outline does
/// not have (a layer cut square by the plane).
pub fn singular_points(design: &Design, samples: &[SurfaceSample]) -> Vec<Point> {
    let mut out = Vec::new();
    for w in samples.windows(2) {
        let (a, b) = (&w[0], &w[1]);
        if a.curve == b.curve
            && matches!(a.kind, SurfaceKind::Conductor(_))
            && a.material != b.material
        {
            out.push([0.5 * (a.x + b.x), 0.5 * (a.y + b.y)]);
        }
    }
    for d in &design.dielectrics {
        for c in crate::geometry::sharp_corners(&d.shape)
            .into_iter()
            .filter(|&c| !crate::geometry::unfolds_flat(design, &d.shape, c))
        {
            // The corner separates materials when interface samples lie within two of their
            // own (local, graded) stretches of it.
            let near = samples.iter().any(|s| {
                s.kind == SurfaceKind::Interface && (s.x - c[0]).hypot(s.y - c[1]) <= 2.0 * s.length
            });
            if near {
                out.push(c);
            }
        }
    }
    out
}

#[cfg(test)]
mod tests;
