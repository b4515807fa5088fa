//! Seeded pseudo-random numbers for unit tests: one 64-bit linear congruential generator
//! (Knuth's MMIX multiplier and increment; common practice), so every test that draws a
//! random scene draws it the same way on every run and platform.
//!
//! Invariant: the sequences are fixed; a test's pinned figures depend on them, so the
//! constants and the order of draws never change.

/// Advances the generator's state by one step.
fn step(state: u64) -> u64 {
    state
        .wrapping_mul(6364136223846793005)
        .wrapping_add(1442695040888963407)
}

/// A generator of uniform numbers in [0, 1) from `seed` (53 bits of each state, the first
/// drawn from the state one step after the seed).
pub(crate) fn uniform(seed: u64) -> impl FnMut() -> f64 {
    let mut state = seed;
    move || {
        state = step(state);
        (state >> 11) as f64 / (1u64 << 53) as f64
    }
}

/// `n` numbers in [-1, 1) from `seed`: [`uniform`]'s sequence after its first draw, mapped.
pub(crate) fn noise(n: usize, seed: u64) -> Vec<f64> {
    let mut u = uniform(seed);
    u();
    (0..n).map(|_| u() * 2.0 - 1.0).collect()
}
