//! One whole-file check (read, YAML, schema, model, analysis with field
//! solves, rules) through the library, as `stackup-lint check FILE` does it.
//! Run with `cargo bench -p stackup-lint --bench whole_file`.
//!
//! Target (issue: benchmarks at scale): the 24-layer, 40-class demo file
//! (`bench/fixtures/`, written by `bench/synth-monorepo.py --single 24 40`)
//! checked cold in under 100 ms on one core. "Cold" is without the disk
//! cache; "warm" reads every solve from a filled cache directory.

use std::path::{Path, PathBuf};

use criterion::{criterion_group, criterion_main, Criterion};
use stackup_lint::analysis::{cache, AnalysisOptions};
use stackup_lint::engine::{check_paths, CheckOptions};
use stackup_lint::pool::Pool;
use std::hint::black_box;

fn check(file: &Path, analysis: &AnalysisOptions) -> usize {
    let root = Path::new(env!("CARGO_MANIFEST_DIR"));
    let opts = CheckOptions {
        analysis: analysis.clone(),
        ..CheckOptions::default()
    };
    let outcome = check_paths(&[file.to_path_buf()], root, &opts).expect("the bench file loads");
    assert!(!outcome.has_input_errors(), "the bench file is valid");
    outcome.findings.len()
}

fn whole_file(c: &mut Criterion) {
    let root = PathBuf::from(env!("CARGO_MANIFEST_DIR"));
    let files = [
        (
            "24l-40c",
            root.join("bench/fixtures/board-24l-40c.stackup.yaml"),
        ),
        (
            "demo-10l",
            root.join("examples/line-card-10l/board.stackup.yaml"),
        ),
    ];
    let cold = AnalysisOptions {
        pool: Pool::single(),
        ..AnalysisOptions::default()
    };
    let mut g = c.benchmark_group("check");
    g.sample_size(10);
    for (name, file) in &files {
        g.bench_function(format!("{name}/cold"), |b| {
            b.iter(|| black_box(check(file, &cold)))
        });
        let dir = tempfile::tempdir().unwrap();
        let warm = AnalysisOptions {
            cache: Some(std::sync::Arc::new(
                cache::DiskCache::open(
                    dir.path(),
                    cache::DEFAULT_MAX_BYTES,
                    cache::engine_identity(),
                )
                .unwrap(),
            )),
            ..cold.clone()
        };
        check(file, &warm);
        g.bench_function(format!("{name}/warm"), |b| {
            b.iter(|| black_box(check(file, &warm)))
        });
    }
    g.finish();
}

criterion_group!(benches, whole_file);
criterion_main!(benches);
