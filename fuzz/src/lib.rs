//! Fuzz targets for sectio's readers and geometry pipeline (`cargo +nightly fuzz run TARGET`;
//! see `scripts/fuzz.sh` and DEVELOPERS.md, "Robustness: fuzzing").
//!
//! The target bodies live in `targets.rs`, which `tests/fuzz_seeded.rs` also includes, so the
//! stable seeded test runs the same paths.

mod targets;
pub use targets::*;
