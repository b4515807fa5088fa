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
//! The generator's state after m steps is the seed plus m times its constant, so draw m of
//! the stream is computed directly ([`SplitMix64::draw`]): sample k ([`sample`]) needs no
//! earlier sample, and the samples of a run divided into shards are those of the whole run.
//!
//! Invariants: `low <= nominal <= high` for every spread; samples depend only on the seed,
//! the nominal values and tolerances and their own index, so sample k is the same whatever
//! the count and whichever samples are drawn before it.

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
        self.state = self.state.wrapping_add(GAMMA);
        mix(self.state)
    }

    /// A number uniform in [0, 1): the top 53 bits.
    pub fn next_unit(&mut self) -> f64 {
        unit(self.next_u64())
    }

    /// Draw `m` (counted from 0) of the stream seeded with `seed`, as [`Self::next_unit`]
    /// gives it after m earlier draws, without them.
    pub fn draw(seed: u64, m: u64) -> f64 {
        unit(mix(seed.wrapping_add(m.wrapping_add(1).wrapping_mul(GAMMA))))
    }
}

/// SplitMix64's increment of the state (the odd constant 2^64 / golden ratio).
const GAMMA: u64 = 0x9E37_79B9_7F4A_7C15;

/// SplitMix64's output function of a state.
fn mix(mut z: u64) -> u64 {
    z = (z ^ (z >> 30)).wrapping_mul(0xBF58_476D_1CE4_E5B9);
    z = (z ^ (z >> 27)).wrapping_mul(0x94D0_49BB_1331_11EB);
    z ^ (z >> 31)
}

/// 64 random bits to a number uniform in [0, 1): the top 53 bits.
fn unit(bits: u64) -> f64 {
    (bits >> 11) as f64 * (1.0 / (1u64 << 53) as f64)
}

/// `count` parameter points, each parameter uniform in [nominal - tol, nominal + tol], from
/// the generator seeded with `seed`: samples 0 to count - 1 of [`sample`].
pub fn samples(nominal: &[f64], tol: &[f64], count: usize, seed: u64) -> Vec<Vec<f64>> {
    (0..count).map(|k| sample(nominal, tol, seed, k)).collect()
}

/// Sample `k` (counted from 0) of the parameter points of [`samples`]: the draws k * n ..
/// (k + 1) * n of the stream seeded with `seed` (n parameters), parameter i uniform in
/// [nominal_i - tol_i, nominal_i + tol_i].
pub fn sample(nominal: &[f64], tol: &[f64], seed: u64, k: usize) -> Vec<f64> {
    assert_eq!(nominal.len(), tol.len(), "one tolerance per parameter");
    let first = (k as u64).wrapping_mul(nominal.len() as u64);
    nominal
        .iter()
        .zip(tol)
        .enumerate()
        .map(|(i, (p, t))| p + t * (2.0 * SplitMix64::draw(seed, first + i as u64) - 1.0))
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
    fn sample_k_is_the_stream_read_in_order() {
        // The stream read one draw after another, as the generator gives it.
        let mut rng = SplitMix64::new(99);
        let (nominal, tol) = ([1.0, 5.0, -2.0], [0.1, 0.5, 0.3]);
        for k in 0..50 {
            let read: Vec<f64> = nominal
                .iter()
                .zip(&tol)
                .map(|(p, t)| p + t * (2.0 * rng.next_unit() - 1.0))
                .collect();
            assert_eq!(sample(&nominal, &tol, 99, k), read, "sample {k}");
        }
        // Any subset, in any order, draws the same points: a run divided into shards.
        let all = samples(&nominal, &tol, 12, 5);
        for k in (0..12).rev().filter(|k| k % 3 == 1) {
            assert_eq!(sample(&nominal, &tol, 5, k), all[k]);
        }
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
