//! Error estimates of the surface results: the surface charge, the peak field and the hot
//! spots, each from the study on a coarser lattice (Richardson-style, with the ratio and order
//! of the capacitance's error model) and the surface fit's model bias, and the margins taken
//! from the field plus its estimated error.
//!
//! Error model: a surface value's error is the lattice's (converging at the model's order,
//! which the two-grid difference extrapolates) plus the fit's bias (bounded by
//! [`conductor_fit_bias`] on conductors and [`INTERFACE_FIT_BIAS`] on interfaces). On convex
//! conductors the lattice's error holds a first-order part that the two-grid difference does
//! not follow (the symmetric cut rows' offset where the surface runs along a lattice row,
//! [`row_offset_bound`]); its bound is the floor of the extrapolated difference. Both
//! lattices carry the conductor fit's bias at their own spacing, so the two-grid difference
//! already holds it wherever it falls with h as the lattice's error does: there the estimate
//! is the larger of the extrapolated difference and the fine fit's bias bound (the bound
//! stays the floor where the lattice's error and the fit's offset each other in the
//! difference). That holds in the plane and about the axis away from it; within
//! [`AXIS_REACH_CELLS`] cells of the axis, where the fit reads several times its bound and the
//! lattice's error is first order, and for the interface fit's bias, the two are added.
//! Where the coarse lattice is below the fit's resolution at a surface hot spot
//! ([`FIT_RESOLVED_CELLS`], [`INTERFACE_FIT_RESOLVED_CELLS`]) and the fine one is not, the
//! coarse fit's bias is out of its model's range and would dominate the difference: the
//! coarse fit then reads both the coarse potential and the fine one at the coarse nodes
//! ([`fine_on_coarse_nodes`]), so that its bias cancels in the difference (the fit is linear
//! in the node potentials), and the fine fit's bias bound is added to the extrapolated
//! lattices' difference.
//!
//! Invariants: a surface charge compares with the coarse value at the same place of the same
//! curve (the parabola through the three coarse samples nearest along it); a peak or hot spot
//! with the largest coarse reading near it in the same material. Every estimate is
//! non-negative, and a margin is never taken from less than the field plus its estimate.

use super::{any_strength, lattice_magnitudes, rank, surface_charge, surface_readings};
use crate::design::{Design, Mode, Point};
use crate::grid::Grid;
use crate::hotspot_search::coarse_value;
use crate::post::{FieldEval, Hotspot, SurfacePoint};
use crate::surface::{SurfaceKind, SurfaceSample};

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
/// samples differently adds an error of third order only), joined with the surface fit's
/// model bias on convex surfaces ([`conductor_fit_bias`] of `h kappa`, h the fine spacing) by
/// [`with_conductor_bias`], as for the hot spots. A point with no coarse sample within two of its stretches along its curve
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
        let (bias, row, h) = fine
            .get(&(p.curve, p.arc.to_bits()))
            .map_or((0.0, 0.0, 0.0), |s| {
                let h = grid.spacing_at([s.x, s.y]);
                let hk = h * s.curvature.max(0.0);
                let d = p.density.abs();
                let row = row_offset_bound(near_axis(design.mode, p.x, h), hk);
                (conductor_fit_bias(hk) * d, row * d, h)
            });
        let lattice = (p.density - sc).abs() / factor;
        let lattice = lattice.max(row);
        p.error_estimate = Some(with_conductor_bias(lattice, bias, design.mode, p.x, h));
    }
}

/// The coarse value at `arc` on one curve: (distance to the nearest coarse sample, value of
/// the parabola through the three nearest). `pts` are ordered by arc; on a whole loop of
/// length `period` the arcs wrap.
pub(super) fn coarse_near(pts: &[(f64, f64)], period: Option<f64>, arc: f64) -> Option<(f64, f64)> {
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
///
/// `fine_read`: the coarse lattice's surface samples (sampled as `coarse_samples`) reading
/// the fine potential at the coarse nodes ([`fine_on_coarse_nodes`]), when it can be read
/// there; called once, and only when a hot spot needs it. At a non-singular surface hot spot where the coarse lattice is below the fit's
/// resolution and the fine one is not, the estimate is
/// `|E_coarse - E_fine_read| / (ratio^order - 1)` at the nearest coarse sample of its
/// material plus the fine conductor fit's bias bound: Richardson's extrapolation (L. F.
/// Richardson, 1911) of the lattices' error alone, the fit's bias bounded apart (each error
/// source estimated on its own; common practice).
pub fn estimate_errors(
    peak: &mut Option<Hotspot>,
    spots: &mut [Hotspot],
    design: &Design,
    coarse: &FieldEval,
    coarse_samples: &[SurfaceSample],
    fine_read: &dyn Fn() -> Option<Vec<SurfaceSample>>,
    model: &crate::study::ErrorModel,
) {
    let read = std::cell::OnceCell::new();
    let cg = &coarse.op.grid;
    let radius = |at: Point| coarse_radius(cg, at);
    let magnitude = lattice_magnitudes(
        coarse,
        &super::faces_sampled_surface(coarse, coarse_samples),
    );
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
        let hc = cg.spacing_at(at);
        let hf = hc / model.ratio;
        let (mut kc, mut ki) = (0.0f64, 0.0f64);
        for s in coarse_samples
            .iter()
            .filter(|s| (s.x - h.x).hypot(s.y - h.y) <= 2.0 * hc)
        {
            if s.kind == SurfaceKind::Interface {
                ki = ki.max(s.curvature.abs());
            } else {
                kc = kc.max(s.curvature);
            }
        }
        let below = |cells: f64, k: f64| cells * hc * k > 1.0 && cells * hf * k <= 1.0;
        let unresolved_fit = !h.singular
            && (below(FIT_RESOLVED_CELLS, kc) || below(INTERFACE_FIT_RESOLVED_CELLS, ki));
        if let Some(d) = Some(&read)
            .filter(|_| unresolved_fit)
            .and_then(|r| r.get_or_init(fine_read).as_deref())
            .and_then(|f| lattice_difference(coarse_samples, f, at, m, radius(at)))
        {
            h.error_estimate = Some(d.abs() / factor + h.magnitude * conductor_fit_bias(hf * kc));
            return;
        }
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

/// The fine lattice's potential read at the nodes of the coarse one (`coarse.phi`'s layout,
/// its fixed nodes keeping their values), when every coarse grid line is a fine one (a graded
/// lattice, or a uniform one with an even number of cells along each axis); `None` otherwise.
/// The coarse lattice's surface fit reads it as it reads the coarse potential, so that the
/// difference of the two readings is the lattices' difference with the coarse fit's bias
/// taken out (the fit is linear in the node potentials, with the same boundary values).
pub fn fine_on_coarse_nodes(fine: &FieldEval, coarse: &FieldEval) -> Option<Vec<f64>> {
    let (fg, cg) = (&fine.op.grid, &coarse.op.grid);
    let lines = |f: &[f64], c: &[f64]| -> Option<Vec<usize>> {
        let tol = 1e-9 * (f[f.len() - 1] - f[0]).abs();
        c.iter()
            .map(|&v| {
                let k = f.partition_point(|&w| w < v - tol);
                (k < f.len() && (f[k] - v).abs() <= tol).then_some(k)
            })
            .collect()
    };
    let (ix, jy) = (lines(fg.xs(), cg.xs())?, lines(fg.ys(), cg.ys())?);
    let mut out = coarse.phi.to_vec();
    for (j, &fj) in jy.iter().enumerate() {
        for (i, &fi) in ix.iter().enumerate() {
            let p = cg.idx(i, j);
            if coarse.op.stencil.unknown[p] {
                out[p] = fine.phi[fg.idx(fi, fj)];
            }
        }
    }
    Some(out)
}

/// The coarse lattices' difference at a surface hot spot, seen through the coarse surface
/// fit: at the coarse sample nearest `at` of the hot spot's material, with a field in both
/// readings, `|E(coarse potential)| - |E(fine potential on the coarse nodes)|` (V/m); the
/// samples are those of one sampling of the coarse lattice, so they pair by index. `None`
/// when no such sample lies within `radius`.
fn lattice_difference(
    coarse: &[SurfaceSample],
    fine_read: &[SurfaceSample],
    at: Point,
    material: u16,
    radius: f64,
) -> Option<f64> {
    coarse
        .iter()
        .zip(fine_read)
        .filter(|(c, f)| {
            c.material == material && c.magnitude().is_finite() && f.magnitude().is_finite()
        })
        .map(|(c, f)| {
            (
                (c.x - at[0]).hypot(c.y - at[1]),
                c.magnitude() - f.magnitude(),
            )
        })
        .filter(|(d, _)| *d <= radius)
        .min_by(|a, b| a.0.total_cmp(&b.0))
        .map(|(_, d)| d)
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

/// The cells across a convex conductor's radius from which [`FIT_BIAS`] bounds the conductor
/// fit's bias (below, the bias is out of its model's range and changes sign).
pub const FIT_RESOLVED_CELLS: f64 = 7.0;

/// The cells across a curved interface's radius from which [`INTERFACE_FIT_BIAS`] bounds the
/// interface fit's bias.
pub const INTERFACE_FIT_RESOLVED_CELLS: f64 = 10.0;

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

/// Within this many cells of the axis (axisymmetric) the conductor fit's bias is added to
/// the two-grid estimate, not merely its floor: there the fit does not follow its bound
/// (exact data at a sphere's pole read 4.0 to 5.2 times [`conductor_fit_bias`] high from 10
/// to 40 cells per radius, and 1 to 4 degrees off the pole up to 3 times:
/// `conductor_fit_bias_bounds_the_fit_error_on_a_sphere_in_a_uniform_field_off_the_axis`),
/// and the lattice's error next to the axis converges at first order, so the two-grid
/// difference follows neither (a conducting sphere's pole in a uniform field at 40 cells
/// read 4.2e-4 high, its two-grid difference said 7.4e-5 and the bias bound 1.1e-4).
pub const AXIS_REACH_CELLS: f64 = 5.0;

/// How far the symmetric cut-cell rows may offset a convex conductor's surface value,
/// relative to the value, in units of `h kappa` (first order), away from the axis: beside a
/// surface that runs along a lattice row the rows leave an error that depends on where the
/// surface crosses the edges and falls at about first order, with a sign set by where the
/// body sits relative to the rows, and the two-grid difference does not follow it (the
/// twice coarser lattice sits differently). Measured on a conducting cylinder in a uniform
/// field (planar), its centre 0 to 1 cell off its row and column in steps of 0.05 cell, at 10,
/// 20 and 40 cells per radius: the peak field and the peak surface charge read low by up to
/// 0.0106 `h kappa` (0.027 % at 40 cells, 0.5 cell off; `tests/reference/off_row.rs`).
pub const ROW_OFFSET: f64 = 0.015;

/// [`ROW_OFFSET`] within [`AXIS_REACH_CELLS`] cells of the axis, where the pole of a body on
/// the axis runs along a lattice row and the lattice's error next to the axis is first order
/// too. Measured on a conducting sphere in a uniform field as for [`ROW_OFFSET`]: its pole
/// read low by up to 0.044 `h kappa` (0.11 % at 40 cells, 0.5 cell off; 0.19 % at 20 cells,
/// 0.5 cell off), where the two-grid difference and the fit's bias bound together said as
/// little as 0.019 %.
pub const AXIS_ROW_OFFSET: f64 = 0.05;

/// Whether a point at `r` (m) with the local spacing `h` is within [`AXIS_REACH_CELLS`] cells
/// of the axis (axisymmetric mode only).
fn near_axis(mode: Mode, r: f64, h: f64) -> bool {
    mode == Mode::Axisymmetric && r < AXIS_REACH_CELLS * h
}

/// The bound of the cut rows' offset relative to a convex conductor's value: [`ROW_OFFSET`] or,
/// within [`AXIS_REACH_CELLS`] cells of the axis, [`AXIS_ROW_OFFSET`] times `h kappa`. It is
/// part of the lattice's error, so it is the floor of the extrapolated two-grid difference.
pub fn row_offset_bound(near_axis: bool, h_kappa: f64) -> f64 {
    let per_h_kappa = if near_axis {
        AXIS_ROW_OFFSET
    } else {
        ROW_OFFSET
    };
    per_h_kappa * h_kappa.max(0.0)
}

/// The estimate of a value on or next to a conductor from its extrapolated two-grid
/// difference `lattice` and the conductor fit's bias bound `bias` (both in the value's
/// units), at `r` (m; the distance from the axis in axisymmetric mode) with the local spacing
/// `h`: the larger of the two, or their sum within [`AXIS_REACH_CELLS`] cells of the axis
/// (see the module's error model).
fn with_conductor_bias(lattice: f64, bias: f64, mode: Mode, r: f64, h: f64) -> f64 {
    if near_axis(mode, r, h) {
        lattice + bias
    } else {
        lattice.max(bias)
    }
}

/// The fit's model bias at a point, h the local spacing: [`conductor_fit_bias`] with the
/// largest convex curvature of the conductor and side samples within `2 h`, the cut rows'
/// offset bound there (both relative to the value), [`INTERFACE_FIT_BIAS`] `c (h kappa)^3`
/// with the largest curvature and permittivity ratio of the interface samples there,
/// relative to the interface's peak field as the bound was measured, and that peak (V/m: the
/// largest field on either side along the curves of those samples; on the side of the
/// higher permittivity it is up to c times the value itself).
fn fit_bias(design: &Design, samples: &[SurfaceSample], at: Point, h: f64) -> [f64; 4] {
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
    let mut curves = Vec::new();
    for s in near().filter(|s| s.kind == SurfaceKind::Interface) {
        kappa_i = kappa_i.max(s.curvature.abs());
        lo = lo.min(eps(s.material));
        hi = hi.max(eps(s.material));
        curves.push(s.curve);
    }
    let peak = samples
        .iter()
        .filter(|s| s.kind == SurfaceKind::Interface && curves.contains(&s.curve))
        .map(|s| s.magnitude())
        .filter(|m| m.is_finite())
        .fold(0.0f64, f64::max);
    let contrast = if lo > 0.0 && hi >= lo { hi / lo } else { 1.0 };
    [
        conductor_fit_bias(h * kappa),
        row_offset_bound(near_axis(design.mode, at[0], h), h * kappa),
        INTERFACE_FIT_BIAS * contrast * (h * kappa_i).powi(3),
        peak,
    ]
}

/// Joins the fit's model bias ([`fit_bias`]) with the error estimate of the non-singular hot
/// spots that have one (the conductor fit's by [`with_conductor_bias`], the interface fit's
/// added); marks the hot spots that sit on a convex rounding narrower than
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
            let [conductor, row, interface, peak] = fit_bias(design, samples, [hs.x, hs.y], h);
            let joined = |e: f64| {
                let m = hs.magnitude;
                let lattice = e.max(m * row);
                with_conductor_bias(lattice, m * conductor, design.mode, hs.x, h)
                    + m.max(peak) * interface
            };
            hs.error_estimate = hs.error_estimate.map(joined);
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

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn the_fit_bias_is_a_floor_away_from_the_axis_and_added_next_to_it() {
        let h = 1e-4;
        for (lattice, bias) in [(3.0, 1.0), (1.0, 3.0), (0.0, 2.0), (2.0, 0.0)] {
            let larger = f64::max(lattice, bias);
            // In the plane, anywhere; about the axis, from AXIS_REACH_CELLS cells on.
            assert_eq!(
                with_conductor_bias(lattice, bias, Mode::Planar, 0.0, h),
                larger
            );
            let far = AXIS_REACH_CELLS * h;
            let r_z = with_conductor_bias(lattice, bias, Mode::Axisymmetric, far, h);
            assert_eq!(r_z, larger);
            // Next to the axis, both.
            for r in [0.0, 0.5 * far, 0.999 * far] {
                let near = with_conductor_bias(lattice, bias, Mode::Axisymmetric, r, h);
                assert_eq!(near, lattice + bias, "r {r}");
            }
        }
    }

    #[test]
    fn the_fine_potential_on_the_coarse_nodes_is_read_only_where_every_coarse_line_is_fine() {
        use crate::design::{Conductor, Domain, Drive, Shape};
        use crate::study::{self, StudyParams};
        // A rod in a box (domain edges grounded by default).
        let design = Design {
            domain: Domain {
                x: [0.0, 4e-3],
                y: [0.0, 4e-3],
                cell: 0.2e-3,
            },
            conductors: vec![Conductor {
                name: "rod".into(),
                drive: Drive::Fixed(1.0),
                joined: Vec::new(),
                shape: Shape::Circle {
                    center: [2.03e-3, 1.96e-3],
                    radius: 1e-3,
                },
            }],
            ..Design::default()
        };
        let params = StudyParams::default();
        let solve = |cells: usize| {
            let grid = Grid::regular([0.0; 2], [4e-3 / cells as f64; 2], [cells + 1; 2]);
            let plan = study::plan(&design, &params).unwrap().with_grid(grid);
            study::run_planned(&design, &plan, &params).unwrap()
        };
        for (fine_cells, shared) in [(20, true), (21, false)] {
            let (fine, coarse) = (solve(fine_cells), solve(fine_cells.div_ceil(2)));
            let (f, c) = (fine.field(), coarse.field());
            let read = fine_on_coarse_nodes(&f, &c);
            assert_eq!(read.is_some(), shared, "{fine_cells} cells");
            let Some(read) = read else { continue };
            let (fg, cg) = (&f.op.grid, &c.op.grid);
            let mut free = 0;
            for j in 0..cg.ny {
                for i in 0..cg.nx {
                    let p = cg.idx(i, j);
                    if c.op.stencil.unknown[p] {
                        free += 1;
                        assert_eq!(read[p], f.phi[fg.idx(2 * i, 2 * j)]);
                    } else {
                        assert_eq!(read[p], c.phi[p]);
                    }
                }
            }
            assert!(free > 50, "{free} free nodes");
        }
    }

    #[test]
    fn the_row_offset_bound_is_first_order_and_larger_next_to_the_axis() {
        for hk in [0.01, 0.1] {
            assert_eq!(row_offset_bound(false, hk), ROW_OFFSET * hk);
            assert_eq!(row_offset_bound(true, hk), AXIS_ROW_OFFSET * hk);
            assert_eq!(
                row_offset_bound(false, 2.0 * hk),
                2.0 * row_offset_bound(false, hk)
            );
        }
        // Concave or straight: none.
        assert_eq!(row_offset_bound(true, -0.1), 0.0);
        let h = 1e-4;
        assert!(near_axis(Mode::Axisymmetric, 4.9 * h, h));
        assert!(!near_axis(Mode::Axisymmetric, AXIS_REACH_CELLS * h, h));
        assert!(!near_axis(Mode::Planar, 0.0, h));
    }
}
