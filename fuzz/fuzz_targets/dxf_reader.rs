//! Arbitrary bytes as a DXF file: the reader, `measure`'s analysis and `explain`.
#![no_main]

use libfuzzer_sys::fuzz_target;

fuzz_target!(|data: &[u8]| {
    sectio_fuzz::dxf_reader(data);
});
