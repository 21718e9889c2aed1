//! Arbitrary bytes as a stackup file: reading, YAML, schema and model, then
//! every renderer on the problems found. See `fuzz/pipeline.rs`.
#![no_main]

use libfuzzer_sys::fuzz_target;

#[path = "../pipeline.rs"]
mod pipeline;

fuzz_target!(|data: &[u8]| {
    pipeline::load_bytes(data);
});
