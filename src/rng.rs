//! Seeded, portable randomness.
//!
//! Every stochastic function in Cloister takes a generator built here from an
//! explicit `u64` seed. The generator is a *named* algorithm (PCG64 with a
//! multiplicative congruential step, `rand_pcg::Pcg64Mcg`) so that a seed gives
//! the same stream on every platform and every release of `rand`.

use rand::SeedableRng;

/// The generator used everywhere in the core.
pub type Rng = rand_pcg::Pcg64Mcg;

/// Builds the generator for `seed`.
pub fn rng_from_seed(seed: u64) -> Rng {
    Rng::seed_from_u64(seed)
}
