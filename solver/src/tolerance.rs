//! How far a result moves when the design's parameters vary within their tolerances: the
//! linear worst case and the root-sum-square spread from sensitivities, the parameter that
//! dominates, and seeded Monte Carlo samples of the parameters.
//!
//! A tolerance t of parameter p means p may lie anywhere in [p - t, p + t]. With derivatives
//! d_i = dQ/dp_i, the linear worst case is Q +/- sum |d_i| t_i (every parameter at the end
//! that moves Q the same way) and the RSS spread is sqrt(sum (d_i t_i)^2), the usual
//! statistical stack-up of independent contributions (common practice in tolerance
//! analysis). Each |d_i| is first widened by its error estimate e_i, so a derivative the
//! discretisation blurs makes the spread wider, never narrower. Both are first-order: a result that curves within the tolerances is better
//! served by the Monte Carlo samples, which solve the design at each drawn point.
//!
//! Monte Carlo draws each toleranced parameter uniformly in [p - t, p + t] from SplitMix64
//! (G. L. Steele, D. Lea, C. H. Flood, "Fast splittable pseudorandom number generators",
//! OOPSLA 2014), seeded by the caller: the generator is written here rather than taken from
//! a crate because its exact stream is part of the results (the same seed gives the same
//! samples, bit for bit, in every version of this library).
//!
//! Invariants: `low <= nominal <= high` for every spread; samples depend only on the seed,
//! the count and the nominal values and tolerances, and sample k is the same whatever the
//! count.

/// The spread of one quantity under the tolerances.
#[derive(Clone, Debug, PartialEq)]
pub struct Spread {
    /// The nominal value.
    pub nominal: f64,
    /// Linear worst case, low end: nominal - sum of the contributions.
    pub low: f64,
    /// Linear worst case, high end: nominal + sum of the contributions.
    pub high: f64,
    /// Root-sum-square of the contributions (same unit as the quantity).
    pub rss: f64,
    /// Each parameter's contribution (|d_i| + e_i) t_i, in parameter order.
    pub contributions: Vec<f64>,
    /// The index of the largest contribution (`None` when every contribution is zero).
    pub dominant: Option<usize>,
}

/// The spread of a quantity of value `nominal` with derivatives `d` (per unit of each
/// parameter) and their error estimates `e` under tolerances `t` (same units as the
/// parameters). A NaN derivative (the quantity missing at a perturbed point) makes the
/// spread NaN rather than optimistic.
pub fn spread(nominal: f64, d: &[f64], e: &[f64], t: &[f64]) -> Spread {
    assert_eq!(d.len(), t.len(), "one derivative per tolerance");
    assert_eq!(e.len(), t.len(), "one error estimate per tolerance");
    let contributions: Vec<f64> = d
        .iter()
        .zip(e)
        .zip(t)
        .map(|((d, e), t)| (d.abs() + e.abs()) * t.abs())
        .collect();
    let sum: f64 = contributions.iter().sum();
    let rss = contributions.iter().map(|c| c * c).sum::<f64>().sqrt();
    let dominant = contributions
        .iter()
        .enumerate()
        .filter(|(_, c)| **c > 0.0)
        .max_by(|a, b| a.1.total_cmp(b.1))
        .map(|(i, _)| i);
    Spread {
        nominal,
        low: nominal - sum,
        high: nominal + sum,
        rss,
        contributions,
        dominant,
    }
}

/// SplitMix64: a 64-bit state advanced by a fixed odd constant, output mixed.
#[derive(Clone, Debug)]
pub struct SplitMix64 {
    state: u64,
}

impl SplitMix64 {
    /// A generator seeded with `seed`.
    pub fn new(seed: u64) -> Self {
        SplitMix64 { state: seed }
    }

    /// The next 64 random bits.
    pub fn next_u64(&mut self) -> u64 {
        self.state = self.state.wrapping_add(0x9E37_79B9_7F4A_7C15);
        let mut z = self.state;
        z = (z ^ (z >> 30)).wrapping_mul(0xBF58_476D_1CE4_E5B9);
        z = (z ^ (z >> 27)).wrapping_mul(0x94D0_49BB_1331_11EB);
        z ^ (z >> 31)
    }

    /// A number uniform in [0, 1): the top 53 bits.
    pub fn next_unit(&mut self) -> f64 {
        (self.next_u64() >> 11) as f64 * (1.0 / (1u64 << 53) as f64)
    }
}

/// `count` parameter points, each parameter uniform in [nominal - tol, nominal + tol], from
/// the generator seeded with `seed`. Sample k holds the draws k * n .. (k + 1) * n of the
/// stream (n parameters), so the first samples do not change when `count` grows.
pub fn samples(nominal: &[f64], tol: &[f64], count: usize, seed: u64) -> Vec<Vec<f64>> {
    assert_eq!(nominal.len(), tol.len(), "one tolerance per parameter");
    let mut rng = SplitMix64::new(seed);
    (0..count)
        .map(|_| {
            nominal
                .iter()
                .zip(tol)
                .map(|(p, t)| p + t * (2.0 * rng.next_unit() - 1.0))
                .collect()
        })
        .collect()
}

/// Most toleranced parameters whose corners [`vertices`] lists (2^6 = 64 corners).
pub const MAX_VERTEX_PARAMETERS: usize = 6;

/// Every corner of the box [nominal - tol, nominal + tol]: corner k has parameter i at its
/// upper end when bit i of k is set. Their extremes are the vertex worst case, exact for a
/// result monotonic in each parameter, where the linear worst case is only first-order.
///
/// # Panics
/// When more than [`MAX_VERTEX_PARAMETERS`] parameters are given.
pub fn vertices(nominal: &[f64], tol: &[f64]) -> Vec<Vec<f64>> {
    assert_eq!(nominal.len(), tol.len(), "one tolerance per parameter");
    assert!(nominal.len() <= MAX_VERTEX_PARAMETERS, "too many corners");
    (0..1usize << nominal.len())
        .map(|k| {
            nominal
                .iter()
                .zip(tol)
                .enumerate()
                .map(|(i, (p, t))| if k >> i & 1 == 1 { p + t } else { p - t })
                .collect()
        })
        .collect()
}

/// Sample statistics of one quantity.
#[derive(Clone, Debug, PartialEq)]
pub struct Stats {
    /// Number of values.
    pub count: usize,
    /// Mean.
    pub mean: f64,
    /// Sample standard deviation (n - 1 in the denominator; 0 for one value).
    pub std: f64,
    /// Smallest value.
    pub min: f64,
    /// Largest value.
    pub max: f64,
}

/// The statistics of `values` (summed in order, so they are reproducible); `None` when
/// empty.
pub fn stats(values: &[f64]) -> Option<Stats> {
    let n = values.len();
    if n == 0 {
        return None;
    }
    let mean = values.iter().sum::<f64>() / n as f64;
    let var = if n > 1 {
        values.iter().map(|v| (v - mean).powi(2)).sum::<f64>() / (n - 1) as f64
    } else {
        0.0
    };
    Some(Stats {
        count: n,
        mean,
        std: var.sqrt(),
        min: values.iter().copied().fold(f64::INFINITY, f64::min),
        max: values.iter().copied().fold(f64::NEG_INFINITY, f64::max),
    })
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn worst_case_and_rss_of_two_contributions() {
        // d = (3, -4), t = (1, 1): contributions 3 and 4, worst case +/- 7, RSS 5.
        let s = spread(10.0, &[3.0, -4.0], &[0.0, 0.0], &[1.0, 1.0]);
        assert_eq!(
            (s.low, s.high, s.rss, s.dominant),
            (3.0, 17.0, 5.0, Some(1))
        );
        assert_eq!(spread(1.0, &[0.0], &[0.0], &[1.0]).dominant, None);
        assert!(spread(1.0, &[f64::NAN], &[0.0], &[1.0]).rss.is_nan());
        // Error estimates widen each contribution: 3 + 1 and 4 + 2 -> +/- 10, RSS sqrt(52).
        let w = spread(10.0, &[3.0, -4.0], &[1.0, 2.0], &[1.0, 1.0]);
        assert_eq!((w.low, w.high), (0.0, 20.0));
        assert!((w.rss - 52f64.sqrt()).abs() < 1e-12);
    }

    #[test]
    fn splitmix64_gives_its_published_stream() {
        // The first outputs for seed 1234567 of the reference implementation (Vigna's
        // splitmix64.c, the same algorithm as Steele et al.), from memory.
        let mut r = SplitMix64::new(1234567);
        assert_eq!(r.next_u64(), 6457827717110365317);
        assert_eq!(r.next_u64(), 3203168211198807973);
    }

    #[test]
    fn samples_are_reproducible_and_within_tolerance() {
        let a = samples(&[1.0, 5.0], &[0.1, 0.5], 200, 42);
        assert_eq!(a, samples(&[1.0, 5.0], &[0.1, 0.5], 200, 42));
        assert_ne!(a, samples(&[1.0, 5.0], &[0.1, 0.5], 200, 43));
        assert_eq!(a[..10], samples(&[1.0, 5.0], &[0.1, 0.5], 10, 42)[..]);
        assert!(a
            .iter()
            .all(|s| (0.9..=1.1).contains(&s[0]) && (4.5..=5.5).contains(&s[1])));
        // Uniform on [-1, 1] has standard deviation 1/sqrt(3).
        let u: Vec<f64> = samples(&[0.0], &[1.0], 20000, 7)
            .iter()
            .map(|s| s[0])
            .collect();
        let st = stats(&u).unwrap();
        assert!(st.mean.abs() < 0.02 && (st.std - 3f64.sqrt().recip()).abs() < 0.01);
    }

    #[test]
    fn vertices_are_every_corner_once() {
        let v = vertices(&[1.0, 10.0], &[0.5, 2.0]);
        assert_eq!(
            v,
            vec![
                vec![0.5, 8.0],
                vec![1.5, 8.0],
                vec![0.5, 12.0],
                vec![1.5, 12.0]
            ]
        );
        assert_eq!(vertices(&[], &[]), vec![Vec::<f64>::new()]);
    }

    #[test]
    fn stats_of_a_small_set() {
        let s = stats(&[1.0, 2.0, 3.0, 4.0]).unwrap();
        assert_eq!((s.mean, s.min, s.max, s.count), (2.5, 1.0, 4.0, 4));
        assert!((s.std - (5.0f64 / 3.0).sqrt()).abs() < 1e-15);
        assert_eq!(stats(&[]), None);
    }
}
