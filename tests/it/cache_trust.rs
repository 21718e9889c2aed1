//! The closed-form check that a cached field-solver result must pass
//! (`stackup_physics::fieldsolver::estimate`): how far each form's air
//! impedance and effective permittivity lie from the solver on real
//! sections, and that every honest solution passes.
//!
//! `calibrate` (ignored: it solves every section of a synthetic repository)
//! prints, per form, the largest deviation seen; `bench/RESULTS.md` keeps
//! the figures the tolerances in `estimate.rs` were set from. Run it with
//! `cargo test --release --test it -- --ignored --nocapture cache_trust::calibrate`
//! (`STACKUP_LINT_CALIBRATE_FILES`, default 200 boards).

use crate::common;
use std::collections::BTreeMap;
use std::path::Path;

use stackup_lint::analysis::{analyze, family_sections};
use stackup_lint::engine::{self, CheckOptions};
use stackup_lint::model::Stackup;
use stackup_physics::fieldsolver::estimate::{check_solution, estimate};
use stackup_physics::fieldsolver::{
    solve, CoplanarGrounds, CrossSection, DielectricBlock, DielectricLayer, SolverOptions, Trace,
};

/// Deviations seen for one form: air impedance (signed, relative) and the
/// effective permittivity's place in its band.
#[derive(Default, Debug)]
struct Seen {
    sections: usize,
    air_min: f64,
    air_max: f64,
    eps_below: f64,
    eps_above: f64,
    failed: Vec<String>,
    /// The section farthest from its form (air impedance), described.
    worst: (f64, String),
}

/// The stackups under `dir`, loaded as `check` loads them (libraries too).
fn boards(dir: &Path) -> Vec<Stackup> {
    let (loaded, _, _) =
        engine::load_paths(&[dir.to_path_buf()], dir, &CheckOptions::default()).unwrap();
    assert!(loaded.problems.is_empty(), "{:#?}", loaded.problems);
    loaded.stackups
}

/// A small deterministic generator (64-bit LCG, Knuth's MMIX constants).
struct Lcg(u64);

impl Lcg {
    fn unit(&mut self) -> f64 {
        self.0 = self
            .0
            .wrapping_mul(6_364_136_223_846_793_005)
            .wrapping_add(1_442_695_040_888_963_407);
        (self.0 >> 11) as f64 / (1u64 << 53) as f64
    }
    fn range(&mut self, lo: f64, hi: f64) -> f64 {
        lo + (hi - lo) * self.unit()
    }
}

/// `count` random sections of every structure the analysis builds, over
/// the ranges of real boards: dielectric 50-400 µm, W/h 0.3-4, copper
/// 9-70 µm (at most h/2), etch factor 2 to none, pair gap S/h 0.4-4,
/// stripline h2/h1 0.33-3 with a different Dk on each side, a resin-filled
/// copper slot and a solder mask over microstrip half the time, roughness
/// blocks of a few µm on the plane and trace faces half the time.
fn random_sections(count: usize) -> Vec<(String, CrossSection)> {
    let mut r = Lcg(20_261_202);
    let mut out = Vec::new();
    for kind in 0..5 {
        for _ in 0..count {
            let h1 = r.range(50e-6, 400e-6);
            let w = h1 * r.range(0.3, 4.0);
            let t = r.range(9e-6, 70e-6).min(0.5 * h1);
            let etch = if r.unit() < 0.5 {
                0.0
            } else {
                r.range(2.0, 6.0)
            };
            let w_top = if etch > 0.0 {
                (w - 2.0 * t / etch).max(0.3 * w)
            } else {
                w
            };
            let (e1, e2) = (r.range(3.0, 4.5), r.range(3.0, 4.5));
            let pair = kind == 3 || kind == 4;
            let stripline = kind == 1 || kind == 4;
            let s = h1 * r.range(0.4, 4.0);
            let mut layers = vec![
                DielectricLayer {
                    thickness: h1,
                    eps_r: e1,
                },
                DielectricLayer {
                    thickness: t,
                    eps_r: e2,
                },
            ];
            if stripline {
                layers.push(DielectricLayer {
                    thickness: h1 * r.range(0.33, 3.0),
                    eps_r: e2,
                });
            } else if r.unit() < 0.5 {
                layers[1].eps_r = r.range(3.0, 4.0);
                layers.push(DielectricLayer {
                    thickness: r.range(10e-6, 30e-6),
                    eps_r: r.range(3.0, 4.0),
                });
            } else {
                layers[1].eps_r = 1.0;
            }
            let pitch = w + s;
            let xs: Vec<f64> = if pair {
                vec![-0.5 * pitch, 0.5 * pitch]
            } else {
                vec![0.0]
            };
            let conductors: Vec<Trace> = xs
                .iter()
                .map(|&x| Trace {
                    x_center: x,
                    y_bottom: h1,
                    width_bottom: w,
                    width_top: w_top,
                    thickness: t,
                })
                .collect();
            let mut blocks = Vec::new();
            if r.unit() < 0.5 {
                let tr = r.range(1e-6, 6e-6);
                blocks.push(DielectricBlock {
                    x0: -1.0,
                    x1: 1.0,
                    y0: 0.0,
                    y1: tr,
                    eps_r: 4.0 * e1,
                });
                for c in &conductors {
                    blocks.push(DielectricBlock {
                        x0: c.x_center - 0.5 * w,
                        x1: c.x_center + 0.5 * w,
                        y0: h1 - tr,
                        y1: h1,
                        eps_r: 4.0 * e1,
                    });
                }
            }
            let coplanar_grounds = (kind == 2).then(|| CoplanarGrounds {
                gap: h1 * r.range(0.3, 3.0),
                width: None,
                y_bottom: h1,
                thickness: t,
            });
            let cs = CrossSection {
                layers,
                bottom_plane: true,
                top_plane: stripline,
                conductors,
                blocks,
                coplanar_grounds,
            };
            out.push((format!("random {kind}"), cs));
        }
    }
    out
}

/// Record one solved section against its estimate.
fn record(name: &str, cs: &CrossSection, seen: &mut BTreeMap<&'static str, Seen>) {
    let Ok(solved) = solve(cs, &SolverOptions::default()) else {
        return;
    };
    let Some(e) = estimate(cs) else { return };
    let entry = seen.entry(e.form.name()).or_insert(Seen {
        air_min: f64::INFINITY,
        air_max: f64::NEG_INFINITY,
        ..Seen::default()
    });
    entry.sections += 1;
    let mut modes = Vec::new();
    if let Some(x) = solved.single {
        modes.push((x.z0, x.eps_eff, e.signal));
    }
    if let (Some(p), Some(even)) = (solved.pair, e.even) {
        modes.push((p.z_odd, p.eps_eff_odd, e.signal));
        modes.push((p.z_even, p.eps_eff_even, even));
    }
    for (k, (z, eps, m)) in modes.into_iter().enumerate() {
        let z_air = z * eps.sqrt();
        let off = if z_air < m.z_air_low {
            z_air / m.z_air_low - 1.0
        } else if z_air > m.z_air_high {
            z_air / m.z_air_high - 1.0
        } else {
            0.0
        };
        entry.air_min = entry.air_min.min(off);
        entry.air_max = entry.air_max.max(off);
        entry.eps_below = entry.eps_below.max(m.eps_low / eps - 1.0);
        entry.eps_above = entry.eps_above.max(eps / m.eps_high - 1.0);
        if off.abs() > entry.worst.0 {
            let c = cs.conductors[0];
            let h: f64 = cs.layers.iter().map(|l| l.thickness).sum();
            let gap = cs
                .conductors
                .get(1)
                .map(|d| d.x_center - c.x_center - c.width_bottom);
            entry.worst = (
                off.abs(),
                format!(
                    "{name}: {off:+.3} mode {k}: w {:.1}/{:.1} um, t {:.1} um, h1 {:.1} um, h above {:.1} um, gap {:?} um, cpw {:?}",
                    c.width_bottom * 1e6,
                    c.width_top * 1e6,
                    c.thickness * 1e6,
                    c.y_bottom * 1e6,
                    (h - c.y_bottom - c.thickness) * 1e6,
                    gap.map(|g| g * 1e6),
                    cs.coplanar_grounds.map(|g| g.gap * 1e6)
                ),
            );
        }
    }
    if let Err(why) = check_solution(cs, &solved) {
        let c = cs.conductors[0];
        entry.failed.push(format!(
            "{name}: {why} [w {:.0}/{:.0} um, t {:.0} um, h1 {:.0} um, layers {:?}, blocks {}]",
            c.width_bottom * 1e6,
            c.width_top * 1e6,
            c.thickness * 1e6,
            c.y_bottom * 1e6,
            cs.layers
                .iter()
                .map(|l| (
                    format!("{:.0}", l.thickness * 1e6),
                    format!("{:.2}", l.eps_r)
                ))
                .collect::<Vec<_>>(),
            cs.blocks.len()
        ));
    }
}

/// Every section of every class of `stackups`, solved, against its estimate.
fn survey(stackups: &[Stackup], seen: &mut BTreeMap<&'static str, Seen>) {
    for s in stackups {
        let name = s.board.clone().unwrap_or_default();
        {
            let a = analyze(s, &Default::default());
            for (nc, ca) in s.net_classes.iter().zip(&a.classes) {
                let (Ok(g), Ok(_)) = (&ca.geometry, &ca.smooth) else {
                    continue;
                };
                for cs in family_sections(g, ca.frequency) {
                    record(&format!("{name} class {}", nc.name), &cs, seen);
                }
            }
        }
    }
}

/// Every honest solution of the demo boards and the bench board passes.
#[test]
fn honest_solutions_of_the_demo_boards_pass() {
    let root = common::root();
    let mut all = boards(&root.join("examples"));
    all.extend(boards(&root.join("bench/fixtures")));
    let mut seen = BTreeMap::new();
    survey(&all, &mut seen);
    assert!(seen.values().map(|s| s.sections).sum::<usize>() > 20);
    for (form, s) in &seen {
        assert!(s.failed.is_empty(), "{form}: {:#?}", s.failed);
    }
}

#[test]
#[ignore = "solves every section of a synthetic repository; run in release"]
fn calibrate() {
    let files: usize = std::env::var("STACKUP_LINT_CALIBRATE_FILES")
        .ok()
        .and_then(|v| v.parse().ok())
        .unwrap_or(200);
    let dir = tempfile::tempdir().unwrap();
    let repo = dir.path().join("repo");
    let status = std::process::Command::new("python3")
        .arg(common::root().join("bench/synth-monorepo.py"))
        .arg(&repo)
        .args(["--files", &files.to_string()])
        .status()
        .expect("python3 runs");
    assert!(status.success());
    let mut all = boards(&repo);
    all.extend(boards(&common::root().join("examples")));
    let mut seen = BTreeMap::new();
    survey(&all, &mut seen);
    let random: usize = std::env::var("STACKUP_LINT_CALIBRATE_RANDOM")
        .ok()
        .and_then(|v| v.parse().ok())
        .unwrap_or(300);
    for (name, cs) in random_sections(random) {
        record(&name, &cs, &mut seen);
    }
    println!("| form | sections | air impedance, solver beyond the form's range | eps below band | eps above band | failed |");
    println!("|---|---|---|---|---|---|");
    for (form, s) in &seen {
        println!(
            "| {form} | {} | {:+.2} % to {:+.2} % | {:.2} % | {:.2} % | {} |",
            s.sections,
            100.0 * s.air_min,
            100.0 * s.air_max,
            100.0 * s.eps_below,
            100.0 * s.eps_above,
            s.failed.len()
        );
    }
    for (form, s) in &seen {
        println!("worst {form}: {}", s.worst.1);
    }
    for s in seen.values() {
        for f in s.failed.iter().take(5) {
            println!("  {f}");
        }
    }
    assert!(seen.values().all(|s| s.failed.is_empty()));
}
