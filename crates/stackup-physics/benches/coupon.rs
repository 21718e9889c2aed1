//! Coupon extraction timing (criterion). Run with
//! `cargo bench -p stackup-physics --bench coupon`.
//! Target: a two-line extraction of 1,000 frequency points under 50 ms,
//! one core; a 1,000-point resonator sweep likewise.

use criterion::{criterion_group, criterion_main, Criterion};
use num_complex::Complex64;
use stackup_physics::consts::C0;
use stackup_physics::coupon::{
    resonator_analysis, two_line_propagation, ResonatorOptions, SMatrix2, TwoLineOptions,
};
use stackup_physics::twoport::{line_s_params, Rlgc};
use std::hint::black_box;

/// A lossy 50-ohm line (εeff 3.2) of `len` metres at every frequency.
fn line(freqs: &[f64], len: f64) -> Vec<SMatrix2> {
    let rlgc = Rlgc {
        r: 20.0,
        l: 50.0 * 3.2f64.sqrt() / C0,
        g: 1e-4,
        c: 3.2f64.sqrt() / (50.0 * C0),
    };
    freqs
        .iter()
        .map(|&f| line_s_params(&rlgc, f, len, 50.0).unwrap())
        .collect()
}

fn bench(c: &mut Criterion) {
    let freqs: Vec<f64> = (1..=1000).map(|k| k as f64 * 40e6).collect();
    let short = line(&freqs, 0.025);
    let long = line(&freqs, 0.075);
    c.bench_function("two-line, 1000 points", |b| {
        b.iter(|| {
            two_line_propagation(
                black_box(&freqs),
                black_box(&short),
                black_box(&long),
                0.05,
                &TwoLineOptions::default(),
            )
            .unwrap()
        })
    });
    // A gap-coupled resonator: the line between two small series
    // capacitances, |S21| from its ABCD (1,000 points, 1-8 GHz).
    let freqs: Vec<f64> = (0..1000).map(|k| 1e9 + k as f64 * 7e6).collect();
    let s21: Vec<Complex64> = freqs
        .iter()
        .map(|&f| {
            let w = 2.0 * std::f64::consts::PI * f;
            let beta = w * 3.2f64.sqrt() / C0;
            let g = Complex64::new(0.5, beta) * 0.06;
            let zc = Complex64::new(1.0 / (w * 0.02e-12), 0.0) * Complex64::new(0.0, -1.0);
            let (a, bb, cc, d) = (g.cosh(), g.sinh() * 50.0, g.sinh() / 50.0, g.cosh());
            // [1 zc; 0 1] · [a b; c d] · [1 zc; 0 1]
            let a2 = a + zc * cc;
            let b2 = (a + zc * cc) * zc + bb + zc * d;
            let c2 = cc;
            let d2 = cc * zc + d;
            2.0 / (a2 + b2 / 50.0 + c2 * 50.0 + d2)
        })
        .collect();
    c.bench_function("resonator, 1000 points", |b| {
        b.iter(|| {
            resonator_analysis(
                black_box(&freqs),
                black_box(&s21),
                0.06,
                0.0,
                &ResonatorOptions::default(),
            )
            .unwrap()
        })
    });
}

criterion_group!(benches, bench);
criterion_main!(benches);
