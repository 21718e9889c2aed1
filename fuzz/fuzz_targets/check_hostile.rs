//! The whole check (load, schema, model, analysis with the field solver,
//! rules, every renderer) on structurally valid stackups with numerically
//! hostile values (`fuzz/hostile.rs`). Set `STACKUP_FUZZ_PRINT=1` to print
//! each generated stackup (used to turn a crash into a replay file).
#![no_main]

use arbitrary::{Arbitrary, Unstructured};
use libfuzzer_sys::fuzz_target;

#[path = "../hostile.rs"]
mod hostile;
#[path = "../pipeline.rs"]
mod pipeline;

fuzz_target!(|data: &[u8]| {
    let mut u = Unstructured::new(data);
    let Ok(board) = hostile::Board::arbitrary(&mut u) else {
        return;
    };
    let text = board.to_yaml();
    if std::env::var_os("STACKUP_FUZZ_PRINT").is_some() {
        println!("{text}");
    }
    pipeline::check_text(&text);
});
