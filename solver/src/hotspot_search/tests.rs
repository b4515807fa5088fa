//! The lazy search gives the exhaustive search's peak and hot spots on seeded random readings.

use super::*;
use crate::seeded::uniform;

/// Readings of a random scene: node lines graded at random, smooth hills of field with a
/// ripple, holes (conductors), nodes whose landscape value is not a reading, values quantised so that equal values occur, three materials
/// in bands, and surface readings (some persistent) scattered over the domain.
struct Scene {
    grid: Grid,
    magnitude: Vec<f64>,
    landscape: Vec<f64>,
    material: Vec<u16>,
    surface: Vec<Reading>,
}

fn scene(seed: u64, nx: usize, ny: usize, hills: usize) -> Scene {
    let mut rnd = uniform(seed);
    let lines = |n: usize, rnd: &mut dyn FnMut() -> f64| {
        let mut v = vec![0.0];
        for _ in 1..n {
            let last = *v.last().unwrap();
            v.push(last + 0.2 + rnd());
        }
        v
    };
    let (xs, ys) = (lines(nx, &mut rnd), lines(ny, &mut rnd));
    let (w, h) = (*xs.last().unwrap(), *ys.last().unwrap());
    let grid = Grid::from_lines(xs, ys).unwrap();
    let centres: Vec<[f64; 4]> = (0..hills)
        .map(|_| [rnd() * w, rnd() * h, 0.2 + rnd(), 2.0 + 10.0 * rnd()])
        .collect();
    let mut magnitude = Vec::with_capacity(grid.len());
    let mut landscape = Vec::with_capacity(grid.len());
    let mut material = Vec::with_capacity(grid.len());
    for p in 0..grid.len() {
        let (x, y) = (grid.x(p % nx), grid.y(p / nx));
        let r = rnd();
        let v: f64 = centres
            .iter()
            .map(|c| c[2] * (-((x - c[0]).powi(2) + (y - c[1]).powi(2)) / c[3].powi(2)).exp())
            .sum();
        let value = ((0.05 + v + 0.01 * (3.0 * x).sin() * r) * 512.0).round() / 512.0;
        // Holes, and nodes without a reading whose landscape carries a higher value (as
        // nodes facing a sampled surface do).
        magnitude.push(if r < 0.05 { f64::NAN } else { value });
        landscape.push(if r < 0.02 {
            f64::NAN
        } else if r < 0.05 {
            1.1 * value
        } else {
            value
        });
        material.push(((3.0 * y / h) as u16).min(2));
    }
    let surface = (0..40)
        .map(|_| {
            let at = [rnd() * w, rnd() * h];
            let q = if rnd() < 0.5 { 0.0 } else { rnd() };
            (at, 0.1 + 2.0 * rnd(), (rnd() * 3.0) as u16, q)
        })
        .collect();
    Scene {
        grid,
        magnitude,
        landscape,
        material,
        surface,
    }
}

#[test]
fn lazy_search_gives_the_hot_spots_of_ranking_every_reading() {
    let strengths: [[Option<f64>; 3]; 4] = [
        [None, None, None],
        [Some(3.0), None, Some(1.5)],
        [Some(2.0), Some(2.0), Some(2.0)],
        [None, Some(0.7), None],
    ];
    let mut cases = 0;
    for seed in 1..=6u64 {
        // Few hills: fewer persistent maxima than asked for, the whole lattice swept; many:
        // the search stops early.
        let hills = if seed % 2 == 0 { 3 } else { 40 };
        let s = scene(seed, 140 + 7 * seed as usize, 90, hills);
        for strength in &strengths {
            for (persistence, count, separation) in [
                (0.05, 10, 6.0),
                (0.01, 4, 2.0),
                (0.3, 10, 1.0),
                (0.0, 5, 3.0),
            ] {
                let params = HotspotParams {
                    count,
                    separation_cells: separation,
                    persistence,
                    ..HotspotParams::default()
                };
                let r = Readings {
                    grid: &s.grid,
                    magnitude: &s.magnitude,
                    landscape: &s.landscape,
                    material: &s.material,
                    surface: &s.surface,
                    strength,
                };
                let (lazy, every) = (search(&r, &params), search_exhaustive(&r, &params));
                assert_eq!(lazy, every, "seed {seed}, {strength:?}, {params:?}");
                assert!(!lazy.1.is_empty() && lazy.0.is_some());
                cases += 1;
            }
        }
    }
    assert_eq!(cases, 96);
}

#[test]
fn coarse_value_is_the_largest_reading_within_the_radius_in_the_material() {
    let s = scene(11, 60, 50, 10);
    let r = Readings {
        grid: &s.grid,
        magnitude: &s.magnitude,
        landscape: &s.landscape,
        material: &s.material,
        surface: &s.surface,
        strength: &[None; 3],
    };
    let mut rnd = uniform(12);
    for _ in 0..200 {
        let at = [rnd() * s.grid.x(59), rnd() * s.grid.y(49)];
        let (m, radius) = ((rnd() * 3.0) as u16, 0.3 + 5.0 * rnd());
        // Every reading, each tested against the circle.
        let mut want: Option<f64> = None;
        for p in 0..s.grid.len() {
            let x = [s.grid.x(p % 60), s.grid.y(p / 60)];
            let v = s.magnitude[p];
            if v.is_finite()
                && v > 0.0
                && s.material[p] == m
                && (x[0] - at[0]).hypot(x[1] - at[1]) <= radius
            {
                want = Some(want.map_or(v, |w| w.max(v)));
            }
        }
        for c in s.surface.iter().filter(|c| c.2 == m) {
            if (c.0[0] - at[0]).hypot(c.0[1] - at[1]) <= radius {
                want = Some(want.map_or(c.1, |w| w.max(c.1)));
            }
        }
        let got = coarse_value(r.grid, r.magnitude, r.material, r.surface, at, m, radius);
        assert_eq!(got, want, "at {at:?}, material {m}, radius {radius}");
    }
}
