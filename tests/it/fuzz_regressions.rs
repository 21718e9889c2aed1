//! Replays inputs from the fuzz runs (`fuzz/`): each crash, hang or
//! misbehaviour once fixed, and inputs picked from the corpora that reach
//! deep code. They run through the same code as the targets
//! (`fuzz/pipeline.rs` is compiled into this test). Files:
//!
//! - `tests/fuzz-regressions/load_bytes/*`: raw bytes, as `load_bytes` got them;
//! - `tests/fuzz-regressions/check_hostile/*.stackup.yaml`: the stackup text
//!   `check_hostile` generated (printed with `STACKUP_FUZZ_PRINT=1`).
//!
//! Each must end without a panic; an input that does not load must carry an
//! `invalid-input` finding (exit code 2), and the JSON, SARIF and GitLab
//! renderings must be JSON (the pipeline asserts both).

use std::path::{Path, PathBuf};

#[path = "../../fuzz/pipeline.rs"]
mod pipeline;

fn files(sub: &str) -> Vec<PathBuf> {
    let dir = Path::new(env!("CARGO_MANIFEST_DIR"))
        .join("tests/fuzz-regressions")
        .join(sub);
    let mut v: Vec<PathBuf> = std::fs::read_dir(&dir)
        .unwrap_or_else(|e| panic!("{}: {e}", dir.display()))
        .map(|e| e.unwrap().path())
        .filter(|p| p.is_file())
        .collect();
    v.sort();
    v
}

#[test]
fn load_bytes_regressions() {
    for p in files("load_bytes") {
        let data = std::fs::read(&p).unwrap();
        eprintln!("replaying {}", p.display());
        pipeline::load_bytes(&data);
    }
}

#[test]
fn check_hostile_regressions() {
    for p in files("check_hostile") {
        let text = std::fs::read_to_string(&p).unwrap();
        eprintln!("replaying {}", p.display());
        pipeline::check_text(&text);
    }
}
