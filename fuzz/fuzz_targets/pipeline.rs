//! Arbitrary bytes decoded into a segment soup and settings, measured and written out.
#![no_main]

use libfuzzer_sys::fuzz_target;

fuzz_target!(|data: &[u8]| {
    sectio_fuzz::pipeline(data);
});
