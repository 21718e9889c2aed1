//! One `impedance --sweep` of 100 points per class through the library:
//! the line card's five classes carried across 1 to 110 GHz from their one
//! solve each (the analysis itself is done once, outside the timing).
//! Run with `cargo bench -p stackup-lint --bench sweep`.
//!
//! Target (issue: loss, dispersion and mask): a 100-point sweep reuses the
//! class's solve, so it costs a small fraction of the analysis.

use criterion::{criterion_group, criterion_main, Criterion};
use stackup_lint::analysis::sweep::{parse_sweep, sweep};
use stackup_lint::analysis::{analyze, AnalysisOptions};
use stackup_lint::engine::load_text;
use stackup_lint::load::InputLimits;
use stackup_lint::pool::Pool;
use std::hint::black_box;

fn sweeps(c: &mut Criterion) {
    let path = concat!(
        env!("CARGO_MANIFEST_DIR"),
        "/examples/line-card-10l/board.stackup.yaml"
    );
    let text = std::fs::read_to_string(path).expect("the demo board");
    let loaded = load_text("board.stackup.yaml", &text, &InputLimits::default());
    let s = loaded
        .stackups
        .first()
        .expect("the demo board loads")
        .clone();
    let opts = AnalysisOptions {
        pool: Pool::single(),
        cache: None,
        ..AnalysisOptions::default()
    };
    let a = analyze(&s, &opts);
    let freqs = parse_sweep("1GHz..110GHz:100").unwrap();
    let mut g = c.benchmark_group("sweep");
    g.bench_function("line-card/100-points", |b| {
        b.iter(|| {
            for i in 0..s.net_classes.len() {
                black_box(sweep(&s, &a, i, &freqs));
            }
        })
    });
    g.bench_function("line-card/analysis", |b| {
        b.iter(|| black_box(analyze(&s, &opts)))
    });
    g.finish();
}

criterion_group!(benches, sweeps);
criterion_main!(benches);
