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
//! Invariants: hot spots are ranked highest field first (ties by position); every hot spot is
//! at least the separation from a higher one; a surface hot spot's material is that of the
//! side of the surface the sample belongs to.

use crate::design::{Design, Mode, Point};
use crate::grid::Grid;
use crate::hotspot_search::{coarse_value, search, Reading, Readings};
use crate::post::{FieldEval, Hotspot, HotspotParams, SurfacePoint};
use crate::surface::{SurfaceKind, SurfaceSample};
use crate::EPS0;

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

/// The surface of the study on a coarser lattice, for error estimates.
#[derive(Clone, Copy, Debug)]
pub struct CoarseSurface<'a> {
    /// Its surface samples.
    pub samples: &'a [SurfaceSample],
    /// Its conductor charges at the operating point.
    pub charges: &'a [f64],
    /// Coarse over fine spacing.
    pub ratio: f64,
    /// The convergence order of the error model.
    pub order: f64,
}

/// Error estimates of the surface charge (`points`, from `samples` by [`surface_charge`])
/// from the study on a coarser lattice (`coarse`), with its ratio and order as for the
/// capacitance: `|sigma_h - sigma_coarse| / (ratio^order - 1)`, where
/// `sigma_coarse` is the coarse surface charge at the same place of the same curve (the
/// parabola through the three coarse samples nearest along the curve, so that placing the
/// samples differently adds an error of third order only), plus the surface fit's model bias
/// on convex surfaces ([`conductor_fit_bias`] of `h kappa`, h the fine spacing) as for
/// the hot spots. A point with no coarse sample within two of its stretches along its curve
/// (a face the coarse lattice does not resolve) gets none.
pub fn surface_charge_errors(
    points: &mut [SurfacePoint],
    samples: &[SurfaceSample],
    design: &Design,
    grid: &Grid,
    coarse: &CoarseSurface,
) {
    let coarse_samples = coarse.samples;
    let factor = coarse.ratio.powf(coarse.order) - 1.0;
    let coarse = surface_charge(coarse_samples, design, coarse.charges);
    // Per curve: the coarse (arc, density, stretch) in order, and the loop length of a curve
    // sampled all the way round (the sum of its stretches), across which arcs wrap.
    let curves = samples
        .iter()
        .chain(coarse_samples)
        .map(|s| s.curve + 1)
        .max()
        .unwrap_or(0);
    let mut by_curve: Vec<Vec<(f64, f64)>> = vec![Vec::new(); curves];
    let mut stretch = vec![0.0f64; curves];
    for p in &coarse {
        by_curve[p.curve].push((p.arc, p.density));
    }
    let mut length = vec![0.0f64; curves];
    let mut whole = vec![false; curves];
    for s in coarse_samples {
        length[s.curve] += s.length;
        whole[s.curve] = s.whole_loop;
        stretch[s.curve] = stretch[s.curve].max(s.length);
    }
    let period: Vec<Option<f64>> = (0..curves).map(|c| whole[c].then_some(length[c])).collect();
    let fine: std::collections::HashMap<(usize, u64), &SurfaceSample> = samples
        .iter()
        .map(|s| ((s.curve, s.arc.to_bits()), s))
        .collect();
    for p in points.iter_mut() {
        let near = coarse_near(&by_curve[p.curve], period[p.curve], p.arc);
        let Some(sc) = near.filter(|n| n.0 <= 2.0 * stretch[p.curve]).map(|n| n.1) else {
            continue;
        };
        let bias = fine.get(&(p.curve, p.arc.to_bits())).map_or(0.0, |s| {
            let h = grid.spacing_at([s.x, s.y]);
            conductor_fit_bias(h * s.curvature.max(0.0)) * p.density.abs()
        });
        p.error_estimate = Some((p.density - sc).abs() / factor + bias);
    }
}

/// The coarse value at `arc` on one curve: (distance to the nearest coarse sample, value of
/// the parabola through the three nearest). `pts` are ordered by arc; on a whole loop of
/// length `period` the arcs wrap.
fn coarse_near(pts: &[(f64, f64)], period: Option<f64>, arc: f64) -> Option<(f64, f64)> {
    let n = pts.len();
    if n == 0 {
        return None;
    }
    let i = pts.partition_point(|p| p.0 < arc) as isize;
    let at = |k: isize| -> Option<(f64, f64)> {
        match period {
            Some(l) => {
                let wraps = k.div_euclid(n as isize) as f64;
                let p = pts[k.rem_euclid(n as isize) as usize];
                Some((p.0 + wraps * l, p.1))
            }
            None => (k >= 0 && (k as usize) < n).then(|| pts[k as usize]),
        }
    };
    let reach = 3.min(n as isize);
    let mut near: Vec<(f64, f64)> = (i - reach..i + reach).filter_map(at).collect();
    near.sort_by(|a, b| (a.0 - arc).abs().total_cmp(&(b.0 - arc).abs()));
    near.dedup_by(|a, b| a.0 == b.0);
    let d = (near[0].0 - arc).abs();
    if near.len() < 3 {
        return Some((d, near[0].1));
    }
    let [(x0, y0), (x1, y1), (x2, y2)] = [near[0], near[1], near[2]];
    let l = |xa: f64, xb: f64, xc: f64| (arc - xb) * (arc - xc) / ((xa - xb) * (xa - xc));
    let value = y0 * l(x0, x1, x2) + y1 * l(x1, x0, x2) + y2 * l(x2, x0, x1);
    Some((d, value))
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
        let run = &samples[start..end];
        let v: Vec<f64> = run
            .iter()
            .map(|s| {
                let m = s.magnitude();
                if m.is_finite() {
                    m
                } else {
                    0.0
                }
            })
            .collect();
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

/// |E| at every node as the hot-spot search reads it: NaN at nodes facing a sampled surface.
fn lattice_magnitudes(field: &FieldEval, samples: &[SurfaceSample]) -> Vec<f64> {
    let mut out = field.magnitudes().to_vec();
    for p in faces_sampled_surface(field, samples) {
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
fn landscape(field: &FieldEval, samples: &[SurfaceSample], magnitude: &[f64]) -> Vec<f64> {
    let g = &field.op.grid;
    let mut faced = vec![false; g.len()];
    for p in faces_sampled_surface(field, samples) {
        faced[p as usize] = true;
    }
    let mut out = magnitude.to_vec();
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
    let magnitude = lattice_magnitudes(field, samples);
    let landscape = landscape(field, samples, &magnitude);
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

/// How far from a point the coarse readings that estimate its error are taken: one and a
/// half coarse cells, m.
fn coarse_radius(coarse: &Grid, at: Point) -> f64 {
    1.5 * coarse.spacing_at(at)
}

/// The points whose errors [`estimate_errors`] estimates (the peak and the hot spots), each
/// with the distance its coarse readings come from (m): the coarse study's side and interface
/// samples are needed only there ([`crate::surface::sample_near`]).
pub fn estimate_points(
    peak: &Option<Hotspot>,
    spots: &[Hotspot],
    coarse: &Grid,
) -> Vec<(Point, f64)> {
    peak.iter()
        .chain(spots)
        .map(|h| ([h.x, h.y], coarse_radius(coarse, [h.x, h.y])))
        .collect()
}

/// Error estimates of the peak and the hot spots from the solve on a coarser lattice
/// (`coarse`, with its surface samples), Richardson-style with the ratio and order of the
/// capacitance's error model: `|E_h - E_coarse| / (ratio^order - 1)`, where `E_coarse` is the
/// largest coarse reading within one and a half coarse cells of the point in the same
/// material. The margins then use the field plus its estimated error (never optimistic
/// because of the grid), and the hot spots are ranked again.
///
/// One exception to the model's order: on a uniform lattice of a design without singular
/// points the order is read from the matrix on the fine, twice and four times coarser
/// lattices, and a rounding narrower than [`RESOLVED_RADIUS_CELLS`] cells on the four times
/// coarser lattice makes that reading depend on things far from the rounding (the demo needle
/// with its 0.5 mm tip at 0.05 mm: 1.41 with the stem's corners on the mirror plane rounded,
/// 0.95 with them square, 1.92 for both from the 0.1 / 0.05 / 0.025 mm lattices). A
/// non-singular hot spot on such a rounding takes the scheme's order 2 instead; the
/// surface fit's bias, added by [`finish`], covers what the coarse lattice does not yet
/// resolve.
pub fn estimate_errors(
    peak: &mut Option<Hotspot>,
    spots: &mut [Hotspot],
    design: &Design,
    coarse: &FieldEval,
    coarse_samples: &[SurfaceSample],
    model: &crate::study::ErrorModel,
) {
    let cg = &coarse.op.grid;
    let radius = |at: Point| coarse_radius(cg, at);
    let magnitude = lattice_magnitudes(coarse, coarse_samples);
    let surface = surface_readings(coarse_samples);
    let read_order = model.observed_order.is_some() && !model.graded_family;
    let material = |name: &str| -> u16 {
        design
            .dielectrics
            .iter()
            .position(|d| d.name == name)
            .map_or(0, |k| k as u16 + 1)
    };
    let apply = |h: &mut Hotspot| {
        let m = material(&h.material);
        let at = [h.x, h.y];
        let coarsest = model.ratio * cg.spacing_at(at);
        let kappa = coarse_samples
            .iter()
            .filter(|s| (s.x - h.x).hypot(s.y - h.y) <= 2.0 * cg.spacing_at(at))
            .map(|s| s.curvature)
            .fold(0.0f64, f64::max);
        let order = if read_order && !h.singular && RESOLVED_RADIUS_CELLS * coarsest * kappa > 1.0 {
            2.0
        } else {
            model.order
        };
        let factor = model.ratio.powf(order) - 1.0;
        h.error_estimate = coarse_value(
            cg,
            &magnitude,
            &coarse.raster.material,
            &surface,
            at,
            m,
            radius(at),
        )
        .map(|c| (h.magnitude - c).abs() / factor);
    };
    if let Some(p) = peak.as_mut() {
        apply(p);
    }
    spots.iter_mut().for_each(apply);
}

/// A convex rounding whose radius spans fewer cells than this is not resolved: the fit around
/// a surface point reaches five cells, and below four cells across the radius the peak of a
/// rounded tip reads low by more than the coarse comparison shows (the demo needle with a
/// 0.1 mm fillet at a 0.05 mm cell: 42 % low; 0.15 mm: 15 %; 0.2 mm: 1.7 %).
pub const RESOLVED_RADIUS_CELLS: f64 = 4.0;

/// How far the surface fit may read off on a convex surface, relative to the value and in
/// units of `(h kappa)^2` (h the local spacing, kappa the curvature). Measured on exact data
/// sampled at the nodes (planar: `ln(rho / R)` around a circle of radius R; axisymmetric:
/// `1 - R / rho` around a sphere on the axis; centres 0, 1/4 and 1/2 cell off a node): the
/// planar fit reads high by up to 0.18 % at 14 cells per radius, 0.43 % at 10 and 0.93 % at
/// 7, the axisymmetric one by -0.86 % to +0.14 % from 7 to 14 cells; at most 0.46 (h kappa)^2
/// from 7 cells up (`fit_bias_bounds_the_fit_error_on_a_convex_surface`). This bias of the
/// fit's polynomial model adds to the lattice's error, and on the grid twice as coarse it is
/// not yet in its asymptotic range for roundings of fewer than about 14 cells per radius (it
/// changes sign below 7 cells), so the difference between the two grids can miss it: a
/// rounded tip of 10 cells per radius read 0.47 % high where the two-grid estimate alone
/// said 0.14 %.
pub const FIT_BIAS: f64 = 0.5;

/// The conductor fit's bias in units of `(h kappa)^3`, third order from about 14 cells per
/// radius on. On the exact data of [`FIT_BIAS`] (40 points over +-86 degrees, centres 0 to 0.9
/// cells off a node), from 14 to 226 cells per radius: worst 5.5 to 6.7 in the plane, 4.0 to
/// 5.9 about the axis (`conductor_fit_bias_bounds_the_fit_error_on_fine_grids`).
pub const FIT_BIAS_CUBIC: f64 = 7.0;

/// The conductor fit's model bias relative to the value: `min(FIT_BIAS, FIT_BIAS_CUBIC hk) hk^2`.
pub fn conductor_fit_bias(h_kappa: f64) -> f64 {
    let hk = h_kappa.max(0.0);
    (FIT_BIAS * hk * hk).min(FIT_BIAS_CUBIC * hk * hk * hk)
}

/// How far the fit on either side of a curved dielectric interface may read off, relative to
/// the value, in units of `c (h kappa)^3` (c the permittivity ratio across the interface, at
/// least 1). The interface fit is third order (a cubic on each side, coupled by the interface
/// conditions, not the conductor's constrained model of [`FIT_BIAS`]). Measured on the exact
/// potential of a dielectric cylinder in a uniform field (J. D. Jackson, Classical
/// Electrodynamics, 3rd ed., 1999, sec. 4.4 with sec. 2.11) from 10 to 40 cells across the
/// radius: its worst error on either side was 0.35-0.62, 1.1-1.4 and 2.3-2.6 `(h kappa)^3` of
/// the interface's peak field for c = 2, 4 and 10, and at that peak 0.1, 0.55 and 1.5
/// (`interface_fit_error_is_within_the_interface_fit_bias` in
/// `tests/reference/uniform_field.rs`). Like [`FIT_BIAS`], it covers what the grid twice as
/// coarse (five cells across a radius of ten) does not yet show: the peak outside an eps 4
/// cylinder at 10 cells reads 0.16 % low where the two-grid difference alone said 0.07 %
/// (the conductors' `(h kappa)^2` bias would add 0.5 %).
pub const INTERFACE_FIT_BIAS: f64 = 0.5;

/// The fit's model bias at a point, relative to the value: [`conductor_fit_bias`] with
/// the largest convex curvature of the conductor and side samples within `2 h`, plus
/// [`INTERFACE_FIT_BIAS`] `c (h kappa)^3` with the largest curvature and permittivity ratio
/// of the interface samples there (h the local spacing).
fn fit_bias(design: &Design, samples: &[SurfaceSample], at: Point, h: f64) -> f64 {
    let near = || {
        samples
            .iter()
            .filter(move |s| (s.x - at[0]).hypot(s.y - at[1]) <= 2.0 * h)
    };
    let kappa = near()
        .filter(|s| s.kind != SurfaceKind::Interface)
        .map(|s| s.curvature)
        .fold(0.0f64, f64::max);
    let eps = |m: u16| crate::material::of(design, m).permittivity;
    let (mut kappa_i, mut lo, mut hi) = (0.0f64, f64::INFINITY, 0.0f64);
    for s in near().filter(|s| s.kind == SurfaceKind::Interface) {
        kappa_i = kappa_i.max(s.curvature.abs());
        lo = lo.min(eps(s.material));
        hi = hi.max(eps(s.material));
    }
    let contrast = if lo > 0.0 && hi >= lo { hi / lo } else { 1.0 };
    conductor_fit_bias(h * kappa) + INTERFACE_FIT_BIAS * contrast * (h * kappa_i).powi(3)
}

/// Adds the fit's model bias ([`fit_bias`]) to the error estimate of the non-singular hot
/// spots that have one; marks the hot spots that sit on a convex rounding narrower than
/// [`RESOLVED_RADIUS_CELLS`] cells, widens their error estimate to at least
/// `magnitude (RESOLVED_RADIUS_CELLS h / radius - 1)`, h the local spacing (the value may
/// be low by that much;
/// measured: 0.71 of the value at 2 cells, 0.18 at 3), then takes every margin from the
/// field plus its estimated error and ranks the hot spots.
pub fn finish(
    peak: &mut Option<Hotspot>,
    spots: &mut [Hotspot],
    design: &Design,
    samples: &[SurfaceSample],
    grid: &Grid,
) {
    let apply = |hs: &mut Hotspot| {
        let h = grid.spacing_at([hs.x, hs.y]);
        let kappa = samples
            .iter()
            .filter(|s| (s.x - hs.x).hypot(s.y - hs.y) <= 2.0 * h)
            .map(|s| s.curvature)
            .fold(0.0f64, f64::max);
        if !hs.singular {
            let bias = hs.magnitude * fit_bias(design, samples, [hs.x, hs.y], h);
            hs.error_estimate = hs.error_estimate.map(|e| e + bias);
        }
        let factor = RESOLVED_RADIUS_CELLS * h * kappa - 1.0;
        if factor > 0.0 && !hs.singular {
            hs.under_resolved = true;
            let bound = hs.magnitude * factor;
            hs.error_estimate = Some(hs.error_estimate.map_or(bound, |e| e.max(bound)));
        }
        hs.margin = hs
            .strength
            .map(|s| s / (hs.magnitude + hs.error_estimate.unwrap_or(0.0)));
    };
    if let Some(p) = peak.as_mut() {
        apply(p);
    }
    spots.iter_mut().for_each(apply);
    rank(spots, any_strength(design));
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
