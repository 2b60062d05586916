//! Deterministic random numbers for the unit tests: xorshift64 (Marsaglia 2003, "Xorshift
//! RNGs", J. Stat. Softw. 8(14)) from a fixed seed, so that every run tests the same data.

/// Raw 64-bit outputs.
pub(crate) fn xorshift(seed: u64) -> impl FnMut() -> u64 {
    let mut x = seed;
    move || {
        x ^= x << 13;
        x ^= x >> 7;
        x ^= x << 17;
        x
    }
}

/// Uniform numbers in [0, 1) from the top 53 bits.
pub(crate) fn uniform(seed: u64) -> impl FnMut() -> f64 {
    let mut next = xorshift(seed);
    move || (next() >> 11) as f64 / (1u64 << 53) as f64
}
