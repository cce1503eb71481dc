//! The seed of one test run: fresh each run, printed, and replayable.

use std::time::{SystemTime, UNIX_EPOCH};

/// Environment variable that replays a run with a given seed.
pub const SEED_VAR: &str = "INKLING_TEST_SEED";

/// The run's base seed: `INKLING_TEST_SEED` if set, else drawn from the clock. Printed either way
/// so a failing run can be replayed (`cargo test` shows it with the failure).
pub fn base_seed() -> u64 {
    let seed = match std::env::var(SEED_VAR) {
        Ok(text) => text
            .trim()
            .parse()
            .unwrap_or_else(|_| panic!("{SEED_VAR}={text:?} is not an unsigned integer")),
        Err(_) => {
            let now = SystemTime::now()
                .duration_since(UNIX_EPOCH)
                .expect("system clock is before 1970");
            // Keep it small enough to retype.
            now.as_nanos() as u64 % 1_000_000_007
        }
    };
    println!("base seed {seed} (replay with {SEED_VAR}={seed})");
    seed
}

/// SplitMix64 (Steele, Lea & Flood 2014, "Fast splittable pseudorandom number generators"):
/// enough to draw a random shape from the seed without a dependency.
pub struct SplitMix64(u64);

impl SplitMix64 {
    /// A generator started at `seed`.
    pub fn new(seed: u64) -> Self {
        Self(seed)
    }

    /// The next 64 random bits.
    pub fn next_u64(&mut self) -> u64 {
        self.0 = self.0.wrapping_add(0x9E37_79B9_7F4A_7C15);
        let mut z = self.0;
        z = (z ^ (z >> 30)).wrapping_mul(0xBF58_476D_1CE4_E5B9);
        z = (z ^ (z >> 27)).wrapping_mul(0x94D0_49BB_1331_11EB);
        z ^ (z >> 31)
    }

    /// A value in `low..=high` (the slight modulo bias does not matter here).
    pub fn in_range(&mut self, low: usize, high: usize) -> usize {
        low + (self.next_u64() % (high - low + 1) as u64) as usize
    }
}
