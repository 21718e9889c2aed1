//! Field-solver timing (criterion). Run with
//! `cargo bench -p stackup-physics --bench tline_solver`.
//! Targets: single-ended solve at 0.3 % accuracy < 5 ms, coupled < 20 ms,
//! one core.

use criterion::{criterion_group, criterion_main, Criterion};
use stackup_physics::fieldsolver::*;
use std::hint::black_box;

fn layer(thickness: f64, eps_r: f64) -> DielectricLayer {
    DielectricLayer { thickness, eps_r }
}

fn microstrip() -> CrossSection {
    // 50-ohm class line: 0.2 mm dielectric, 0.36 mm trapezoidal trace, 35 um copper.
    CrossSection {
        layers: vec![layer(0.2e-3, 3.8)],
        bottom_plane: true,
        top_plane: false,
        conductors: vec![Trace {
            x_center: 0.0,
            y_bottom: 0.2e-3,
            width_bottom: 0.36e-3,
            width_top: 0.33e-3,
            thickness: 35e-6,
        }],
        ..Default::default()
    }
}

fn stripline() -> CrossSection {
    // Core below, prepreg above, 17 um trace.
    CrossSection {
        layers: vec![layer(0.2e-3, 3.7), layer(0.22e-3, 3.4)],
        bottom_plane: true,
        top_plane: true,
        conductors: vec![Trace {
            x_center: 0.0,
            y_bottom: 0.2e-3,
            width_bottom: 0.14e-3,
            width_top: 0.12e-3,
            thickness: 17e-6,
        }],
        ..Default::default()
    }
}

fn pair(mut cs: CrossSection, gap: f64) -> CrossSection {
    let t = cs.conductors[0];
    let pitch = t.width_bottom + gap;
    cs.conductors = vec![
        Trace {
            x_center: -pitch / 2.0,
            ..t
        },
        Trace {
            x_center: pitch / 2.0,
            ..t
        },
    ];
    cs
}

fn bench(c: &mut Criterion) {
    let opt = SolverOptions::default();
    let ms = microstrip();
    let sl = stripline();
    let ms2 = pair(microstrip(), 0.2e-3);
    let sl2 = pair(stripline(), 0.15e-3);
    c.bench_function("single-ended microstrip", |b| {
        b.iter(|| solve(black_box(&ms), &opt).unwrap())
    });
    c.bench_function("single-ended stripline", |b| {
        b.iter(|| solve(black_box(&sl), &opt).unwrap())
    });
    c.bench_function("coupled microstrip", |b| {
        b.iter(|| solve(black_box(&ms2), &opt).unwrap())
    });
    c.bench_function("coupled stripline", |b| {
        b.iter(|| solve(black_box(&sl2), &opt).unwrap())
    });
    c.bench_function("vacuum-only stripline", |b| {
        b.iter(|| solve_vacuum(black_box(&sl), &opt).unwrap())
    });
}

criterion_group! {
    name = benches;
    config = Criterion::default().sample_size(20);
    targets = bench
}
criterion_main!(benches);
