//! Field lines: seeded on the conductors' surfaces in proportion to their surface charge and
//! traced along the electric field of the potential samples.
//!
//! Construction: just outside every conductor outline the surface charge density
//! sigma = eps0 eps_r E_n (the normal field times the permittivity there, when it is given) is
//! integrated along the outline; the lines are
//! spread so that each carries the same share of that flux (Faraday's picture: line density
//! follows charge). Lines start on the positive charge, unless the negative carries more than
//! twice the flux (a design driven negative), and run along E (or against it, for negative
//! seeds) until they reach a conductor, the domain's edge or a point without field.
//!
//! Invariants: all work is in plot pixel coordinates (x right, y down, sample (i, j) at
//! (i + 0.5, j + 0.5)); directions are physical even when the axes are not to scale (the
//! pixel gradient is converted with the pixels-per-metre of each axis); the potential never
//! rises along a line traced with E from a positive seed (up to the tracer's step error); the
//! output depends only on the inputs.

use super::canvas::P;
use super::sample::Samples;

/// Pixel-space potential with the conversion to physical directions.
pub struct Potential<'a> {
    /// Potential at pixel centres, no NaN (holes filled).
    s: &'a Samples,
    /// Pixels per metre along x and along y.
    k: [f64; 2],
    /// Field (pixel measure) below which a point counts as field-free: 1e-9 of the typical.
    floor: f64,
    /// Relative permittivity at pixel centres, if known (otherwise 1 everywhere).
    eps: Option<&'a Samples>,
}

impl<'a> Potential<'a> {
    /// The potential `s` (pixel centres, no NaN) of a plot with `k` pixels per metre along x
    /// and y.
    pub fn new(s: &'a Samples, k: [f64; 2]) -> Potential<'a> {
        let span =
            s.v.iter()
                .fold((f64::INFINITY, f64::NEG_INFINITY), |(a, b), &v| {
                    (a.min(v), b.max(v))
                });
        let floor = 1e-9 * (span.1 - span.0).abs() * k[0].max(k[1]) / (s.w + s.h) as f64;
        Potential {
            s,
            k,
            floor,
            eps: None,
        }
    }

    /// The same with the relative permittivity at pixel centres, so that seeds follow the
    /// surface charge eps0 eps_r E_n rather than E_n alone.
    pub fn with_permittivity(self, eps: &'a Samples) -> Potential<'a> {
        assert_eq!(
            (eps.w, eps.h),
            (self.s.w, self.s.h),
            "permittivity on the same raster"
        );
        Potential {
            eps: Some(eps),
            ..self
        }
    }

    fn permittivity(&self, p: P) -> f64 {
        match self.eps {
            None => 1.0,
            Some(e) => {
                let x = (p[0].max(0.0) as usize).min(e.w - 1);
                let y = (p[1].max(0.0) as usize).min(e.h - 1);
                let v = e.at(x, y);
                if v.is_finite() && v > 0.0 {
                    v
                } else {
                    1.0
                }
            }
        }
    }

    /// Gradient of the bilinear potential in pixel coordinates, volts per pixel.
    fn grad(&self, p: P) -> [f64; 2] {
        let (w, h) = (self.s.w, self.s.h);
        if w < 2 || h < 2 {
            return [0.0, 0.0];
        }
        let u = (p[0] - 0.5).clamp(0.0, (w - 1) as f64);
        let v = (p[1] - 0.5).clamp(0.0, (h - 1) as f64);
        let i = (u.floor() as usize).min(w - 2);
        let j = (v.floor() as usize).min(h - 2);
        let (fx, fy) = (u - i as f64, v - j as f64);
        let a = |x: usize, y: usize| self.s.v[x + y * w];
        let (v00, v10, v01, v11) = (a(i, j), a(i + 1, j), a(i, j + 1), a(i + 1, j + 1));
        [
            (v10 - v00) * (1.0 - fy) + (v11 - v01) * fy,
            (v01 - v00) * (1.0 - fx) + (v11 - v10) * fx,
        ]
    }

    /// Bilinear potential at pixel point `p`.
    fn value(&self, p: P) -> f64 {
        let (w, h) = (self.s.w, self.s.h);
        let u = (p[0] - 0.5).clamp(0.0, (w - 1) as f64);
        let v = (p[1] - 0.5).clamp(0.0, (h - 1) as f64);
        let i = (u.floor() as usize).min(w.saturating_sub(2));
        let j = (v.floor() as usize).min(h.saturating_sub(2));
        let (fx, fy) = (u - i as f64, v - j as f64);
        let a = |x: usize, y: usize| self.s.v[x.min(w - 1) + y.min(h - 1) * w];
        (a(i, j) * (1.0 - fx) + a(i + 1, j) * fx) * (1.0 - fy)
            + (a(i, j + 1) * (1.0 - fx) + a(i + 1, j + 1) * fx) * fy
    }

    /// Physical field (Ex, Ey) in volts per metre at pixel point `p`.
    pub fn field(&self, p: P) -> [f64; 2] {
        let g = self.grad(p);
        // x = X / kx, y = y1 - Y / ky: Ex = -kx dphi/dX, Ey = +ky dphi/dY.
        [-self.k[0] * g[0], self.k[1] * g[1]]
    }

    /// Unit pixel-space direction of the field at `p` (None where it vanishes).
    fn direction(&self, p: P) -> Option<P> {
        let floor = self.floor;
        let e = self.field(p);
        // A physical displacement (dx, dy) is (kx dx, -ky dy) in pixels.
        let d = [self.k[0] * e[0], -self.k[1] * e[1]];
        let n = d[0].hypot(d[1]);
        (n > floor && n.is_finite()).then(|| [d[0] / n, d[1] / n])
    }
}

/// True when any of the four samples the field at `p` is interpolated from (on a `w` x `h`
/// raster) is `blocked`; points outside the raster are blocked.
pub fn stencil_blocked(w: usize, h: usize, p: P, blocked: impl Fn(usize, usize) -> bool) -> bool {
    if !(p[0] >= 0.0 && p[1] >= 0.0 && p[0] <= w as f64 && p[1] <= h as f64) {
        return true;
    }
    let (i, j) = ((p[0] - 0.5).floor() as i64, (p[1] - 0.5).floor() as i64);
    let cx = |i: i64| i.clamp(0, w as i64 - 1) as usize;
    let cy = |j: i64| j.clamp(0, h as i64 - 1) as usize;
    blocked(cx(i), cy(j))
        || blocked(cx(i + 1), cy(j))
        || blocked(cx(i), cy(j + 1))
        || blocked(cx(i + 1), cy(j + 1))
}

/// A traced line: points in plot pixels, in the direction of the field.
#[derive(Clone, Debug, PartialEq)]
pub struct FieldLine {
    /// Points from the start (positive end) to the finish, along E.
    pub points: Vec<P>,
}

/// Where a line starts: a pixel point just outside a conductor and whether it runs with the
/// field (+1) or against it (-1).
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct Seed {
    /// Start, plot pixels.
    pub at: P,
    /// +1 along E, -1 against.
    pub sign: f64,
}

/// Places about `count` seeds `offset` px outside the outlines (closed rings and open lines,
/// plot pixels), spaced by equal normal flux. `inside(p)` tells points inside a conductor.
pub fn seeds(
    pot: &Potential,
    rings: &[Vec<P>],
    lines: &[Vec<P>],
    count: usize,
    offset: f64,
    inside: &dyn Fn(P) -> bool,
) -> Vec<Seed> {
    // Inside the rings' bodies: an odd number of ring edges crossed by a ray to the right
    // (holes and the rings of several bodies alike).
    let solid = |p: P| {
        let crossings: usize = rings
            .iter()
            .map(|r| {
                let n = r.len();
                (0..n)
                    .filter(|&k| {
                        let (a, b) = (r[k], r[(k + 1) % n]);
                        (a[1] > p[1]) != (b[1] > p[1])
                            && p[0] < a[0] + (p[1] - a[1]) * (b[0] - a[0]) / (b[1] - a[1])
                    })
                    .count()
            })
            .sum();
        crossings % 2 == 1
    };
    // (seed point, signed flux through this piece)
    let mut pieces: Vec<(P, f64)> = Vec::new();
    // A closed ring seeds on its outer side only (the side away from the conductor); an open
    // line (a thin conductor) on both.
    let mut walk = |path: &[P], closed: bool| {
        let n = path.len();
        let segs = if closed { n } else { n.saturating_sub(1) };
        // One side at a time, so that seeds spaced along the cumulative flux are not drawn
        // to one side by the order in which the two sides' pieces would interleave.
        for side in [1.0, -1.0] {
            for k in 0..segs {
                let (a, b) = (path[k], path[(k + 1) % n]);
                let len = (b[0] - a[0]).hypot(b[1] - a[1]);
                if len == 0.0 {
                    continue;
                }
                let t = [(b[0] - a[0]) / len, (b[1] - a[1]) / len];
                let steps = len.ceil() as usize;
                for s in 0..steps {
                    let f = (s as f64 + 0.5) / steps as f64;
                    let m = [a[0] + (b[0] - a[0]) * f, a[1] + (b[1] - a[1]) * f];
                    {
                        let nrm = [side * t[1], -side * t[0]];
                        let q = [m[0] + offset * nrm[0], m[1] + offset * nrm[1]];
                        // A ring's own side is told by the outlines themselves, a quarter
                        // pixel in: a body thinner than two offsets (a copper pad) has free
                        // space on both sides at the offset.
                        let own = [m[0] + 0.25 * nrm[0], m[1] + 0.25 * nrm[1]];
                        if inside(q) || (closed && solid(own)) {
                            continue;
                        }
                        // Physical piece: tangent (tX / kx, -tY / ky) per pixel, normal outward.
                        let tp = [t[0] / pot.k[0], -t[1] / pot.k[1]];
                        let ds = tp[0].hypot(tp[1]) * len / steps as f64;
                        let mut np = [tp[1], -tp[0]];
                        let out = [nrm[0] / pot.k[0], -nrm[1] / pot.k[1]];
                        if np[0] * out[0] + np[1] * out[1] < 0.0 {
                            np = [-np[0], -np[1]];
                        }
                        let nl = np[0].hypot(np[1]);
                        let e = pot.field(q);
                        let flux = pot.permittivity(q) * (e[0] * np[0] + e[1] * np[1]) / nl * ds;
                        if flux.is_finite() {
                            pieces.push((q, flux));
                        }
                    }
                }
            }
        }
    };
    for r in rings {
        walk(r, true);
    }
    for l in lines {
        walk(l, false);
    }
    let pos: f64 = pieces.iter().map(|p| p.1.max(0.0)).sum();
    let neg: f64 = pieces.iter().map(|p| (-p.1).max(0.0)).sum();
    let sign = if pos >= 0.5 * neg { 1.0 } else { -1.0 };
    let total = if sign > 0.0 { pos } else { neg };
    if count == 0 || total.is_nan() || total <= 0.0 {
        return Vec::new();
    }
    let spacing = total / count as f64;
    let mut out = Vec::new();
    let mut acc = 0.0;
    let mut next = 0.5 * spacing;
    for (q, flux) in pieces {
        let f = sign * flux;
        if f <= 0.0 {
            continue;
        }
        acc += f;
        while acc >= next && out.len() < count {
            out.push(Seed { at: q, sign });
            next += spacing;
        }
    }
    out
}

/// Traces a line from `seed` with steps of half a pixel (midpoint rule) until it enters a
/// conductor, leaves the plot, reaches a point without field, would climb the potential
/// (going with E it must fall: a rise means the line has met the interpolation's ridge just
/// outside a conductor, or a saddle) or has taken a bounded number of steps. The points run
/// along E whatever the seed's sign.
pub fn trace(pot: &Potential, seed: Seed, inside: &dyn Fn(P) -> bool) -> FieldLine {
    const H: f64 = 0.5;
    let (w, h) = (pot.s.w as f64, pot.s.h as f64);
    let max_steps = (3.0 * (w + h) / H) as usize;
    let mut pts = vec![seed.at];
    let mut p = seed.at;
    let mut level = seed.sign * pot.value(p);
    for _ in 0..max_steps {
        let Some(d1) = pot.direction(p) else {
            break;
        };
        let mid = [
            p[0] + seed.sign * d1[0] * H / 2.0,
            p[1] + seed.sign * d1[1] * H / 2.0,
        ];
        let Some(d2) = pot.direction(mid) else {
            break;
        };
        let q = [p[0] + seed.sign * d2[0] * H, p[1] + seed.sign * d2[1] * H];
        if !(q[0] >= 0.0 && q[1] >= 0.0 && q[0] <= w && q[1] <= h) {
            break;
        }
        let next = seed.sign * pot.value(q);
        if next > level {
            break;
        }
        level = next;
        pts.push(q);
        p = q;
        if inside(q) {
            break;
        }
    }
    if seed.sign < 0.0 {
        pts.reverse();
    }
    FieldLine { points: pts }
}

#[cfg(test)]
mod tests {
    use super::*;

    /// A coaxial pair: inner conductor radius a at 1 V, potential ln(R/r)/ln(R/a) between
    /// (the coaxial line's closed form, common practice), on a 200 x 200 pixel raster.
    fn coax() -> (Samples, P, f64) {
        let (w, h) = (200, 200);
        let c = [100.0, 100.0];
        let (a, rr) = (20.0, 400.0);
        let v = (0..w * h)
            .map(|k| {
                let r = ((k % w) as f64 + 0.5 - c[0])
                    .hypot((k / w) as f64 + 0.5 - c[1])
                    .max(a);
                (rr / r).ln() / (rr / a).ln()
            })
            .collect();
        (Samples { w, h, v }, c, a)
    }

    fn circle(c: P, r: f64, n: usize) -> Vec<P> {
        (0..n)
            .map(|k| {
                let t = std::f64::consts::TAU * k as f64 / n as f64;
                [c[0] + r * t.cos(), c[1] + r * t.sin()]
            })
            .collect()
    }

    #[test]
    fn seeds_on_a_uniformly_charged_circle_are_evenly_spaced() {
        let (s, c, a) = coax();
        let pot = Potential::new(&s, [1000.0, 1000.0]);
        let inside = |p: P| (p[0] - c[0]).hypot(p[1] - c[1]) < a;
        let seeds = seeds(&pot, &[circle(c, a, 256)], &[], 12, 2.5, &inside);
        assert_eq!(seeds.len(), 12);
        let mut ang: Vec<f64> = seeds
            .iter()
            .map(|s| (s.at[1] - c[1]).atan2(s.at[0] - c[0]))
            .collect();
        ang.sort_by(|x, y| x.total_cmp(y));
        for w in ang.windows(2) {
            let gap = (w[1] - w[0]).to_degrees();
            assert!((gap - 30.0).abs() < 2.0, "gap {gap} deg");
        }
        assert!(seeds.iter().all(|s| s.sign == 1.0));
    }

    #[test]
    fn lines_run_radially_and_downhill() {
        let (s, c, a) = coax();
        let pot = Potential::new(&s, [1000.0, 1000.0]);
        let inside = |p: P| (p[0] - c[0]).hypot(p[1] - c[1]) < a;
        for seed in seeds(&pot, &[circle(c, a, 256)], &[], 8, 2.5, &inside) {
            let line = trace(&pot, seed, &inside);
            assert!(line.points.len() > 100, "the line reaches the edge");
            let first = line.points[0];
            let ang0 = (first[1] - c[1]).atan2(first[0] - c[0]);
            let mut last = f64::INFINITY;
            for p in &line.points {
                // Radial: the angle stays that of the seed.
                let ang = (p[1] - c[1]).atan2(p[0] - c[0]);
                assert!((ang - ang0).abs() < 0.02, "{ang} vs {ang0}");
                let r = (p[0] - c[0]).hypot(p[1] - c[1]);
                let phi = (400.0 / r).ln();
                assert!(phi <= last + 1e-12, "potential rose along the line");
                last = phi;
            }
        }
    }

    #[test]
    fn negative_conductors_seed_lines_that_run_into_them() {
        let (mut s, c, a) = coax();
        for v in &mut s.v {
            *v = -*v;
        }
        let pot = Potential::new(&s, [1000.0, 1000.0]);
        let inside = |p: P| (p[0] - c[0]).hypot(p[1] - c[1]) < a;
        let seeds = seeds(&pot, &[circle(c, a, 256)], &[], 6, 2.5, &inside);
        assert!(seeds.len() == 6 && seeds.iter().all(|s| s.sign == -1.0));
        let line = trace(&pot, seeds[0], &inside);
        // Points run along E: from the edge inwards, ending at the conductor.
        let end = *line.points.last().unwrap();
        assert!(((end[0] - c[0]).hypot(end[1] - c[1]) - a).abs() < 4.0);
    }

    #[test]
    fn lines_stop_in_a_valley_instead_of_zigzagging() {
        // v = |x - 50.3|: the field drives both sides into the valley at x = 50.3.
        let (w, h) = (100, 20);
        let v = (0..w * h)
            .map(|k| ((k % w) as f64 + 0.5 - 50.3).abs())
            .collect();
        let s = Samples { w, h, v };
        let pot = Potential::new(&s, [1.0, 1.0]);
        let line = trace(
            &pot,
            Seed {
                at: [10.0, 10.0],
                sign: 1.0,
            },
            &|_| false,
        );
        let end = *line.points.last().unwrap();
        assert!((end[0] - 50.3).abs() < 1.0, "{end:?}");
        assert!(line.points.len() < 90, "{} points", line.points.len());
    }

    #[test]
    fn seeds_follow_charge_not_field_across_a_dielectric() {
        // A thin conductor along y = 50 at 1 V between grounds at y = 0 and y = 100: the same
        // |E_n| on both faces, but permittivity 4 below it, so four times the charge there
        // (sigma = eps0 eps_r E_n, Gauss's law at a conductor surface).
        let (w, h) = (100, 100);
        let v = (0..w * h)
            .map(|k| 1.0 - (((k / w) as f64 + 0.5) - 50.0).abs() / 50.0)
            .collect();
        let e = (0..w * h)
            .map(|k| if (k / w) >= 50 { 4.0 } else { 1.0 })
            .collect();
        let (s, eps) = (Samples { w, h, v }, Samples { w, h, v: e });
        let line = vec![[0.0, 50.0], [100.0, 50.0]];
        let count = |pot: &Potential| {
            let seeds = seeds(pot, &[], std::slice::from_ref(&line), 10, 2.5, &|_| false);
            assert_eq!(seeds.len(), 10);
            seeds.iter().filter(|s| s.at[1] > 50.0).count()
        };
        assert_eq!(count(&Potential::new(&s, [1.0, 1.0])), 5);
        assert_eq!(
            count(&Potential::new(&s, [1.0, 1.0]).with_permittivity(&eps)),
            8
        );
    }
    #[test]
    fn a_pad_thinner_than_the_seed_offset_seeds_both_faces() {
        // A 1.6 px thick pad across y = 50 at 1 V between grounds at y = 0 and y = 100, its
        // seeds 6 px out: both faces face free space at that distance, and each carries half
        // of the charge.
        let (w, h) = (100, 100);
        let v = (0..w * h)
            .map(|k| (1.0 - ((((k / w) as f64 + 0.5) - 50.0).abs() - 0.8).max(0.0) / 49.2).min(1.0))
            .collect();
        let s = Samples { w, h, v };
        let pad = vec![[10.0, 49.2], [90.0, 49.2], [90.0, 50.8], [10.0, 50.8]];
        let inside = |p: P| (10.0..=90.0).contains(&p[0]) && (48.5..=51.5).contains(&p[1]);
        let seeds = seeds(
            &Potential::new(&s, [1.0, 1.0]),
            &[pad],
            &[],
            10,
            6.0,
            &inside,
        );
        let below = seeds.iter().filter(|s| s.at[1] > 52.0).count();
        let above = seeds.iter().filter(|s| s.at[1] < 48.0).count();
        assert_eq!((above, below), (5, 5), "{seeds:?}");
    }
}
