//! `impedance --sweep`: numbers across frequency from one solve per class,
//! held against the engine's own full solve at another frequency and the
//! class's own numbers; Touchstone files that are passive and reciprocal
//! and lose what the loss column says.

use crate::common;
use crate::common::board::Board;
use stackup_lint::analysis::analyze;
use stackup_lint::analysis::sweep::{parse_sweep, sweep};
use stackup_lint::engine::load_text;
use stackup_lint::load::InputLimits;
use stackup_lint::model::Stackup;

/// A microstrip (with a mask coat) and a stripline pair on causal
/// FR-4 class materials, at `f` GHz.
fn board(f: f64) -> String {
    Board::new()
        .material("fr4", "dk: 3.8, df: 0.015, frequency: 10 GHz, valid-to: 60 GHz, method: resonator")
        .material("lpi", "dk: 3.7, df: 0.02, frequency: 1 GHz")
        .foil("ed", "rz: 6 um, rq: 1.5 um")
        .dielectric("mask", "kind: solder-mask, material: lpi, thickness: 20 um, over-copper: 12 um")
        .copper("L1", "role: signal, thickness: 35 um, down: {side: treated, foil: ed}")
        .dielectric("c1", "kind: core, material: fr4, thickness: 0.1 mm")
        .copper("L2", "role: plane, thickness: 17 um, up: {side: treated, foil: ed}, down: {side: treated, foil: ed}")
        .dielectric("c2", "kind: core, material: fr4, thickness: 0.12 mm")
        .copper("L3", "role: signal, thickness: 17 um, up: {side: treated, foil: ed}, down: {side: treated, foil: ed}")
        .dielectric("c3", "kind: core, material: fr4, thickness: 0.12 mm")
        .copper("L4", "role: plane, thickness: 17 um, up: {side: treated, foil: ed}")
        .class(&format!("name: ms, structure: microstrip, layer: L1, width: 0.18 mm, max-frequency: {f} GHz"))
        .class(&format!("name: pair, structure: diff-stripline, layer: L3, width: 0.1 mm, spacing: 0.15 mm, max-frequency: {f} GHz"))
        .class(&format!("name: surface-pair, structure: diff-microstrip, layer: L1, width: 0.15 mm, spacing: 0.15 mm, max-frequency: {f} GHz"))
        .yaml()
}

fn stackup(text: &str) -> Stackup {
    let loaded = load_text("t.stackup.yaml", text, &InputLimits::default());
    assert!(loaded.problems.is_empty(), "{:#?}", loaded.problems);
    loaded.stackups.into_iter().next().unwrap()
}

/// At the class's own frequency the sweep gives the class's numbers; at
/// another it agrees with a full solve there (Dk, roughness layers and
/// all solved at that frequency) within 0.3 % in Z and εeff and 3 % in
/// loss: what carrying one solve across frequency costs. A surface pair's
/// even mode moves by its own energy shares (0.004 % from the solve at
/// 2 GHz; with the odd mode's shares it was 0.08 %): held within 0.03 %
/// there (at 40 GHz, 0.1 %, mostly the dispersion model's substrate Dk
/// taken at the class frequency).
#[test]
fn sweep_matches_the_solves() {
    let s = stackup(&board(10.0));
    let a = analyze(&s, &Default::default());
    for i in 0..3 {
        let ca = &a.classes[i];
        let p = &sweep(&s, &a, i, &[10e9]).unwrap()[0];
        let sm = ca.smooth.as_ref().unwrap();
        assert!((p.smooth.z / sm.z - 1.0).abs() < 1e-12);
        assert!((p.smooth.eps_eff / sm.eps_eff - 1.0).abs() < 1e-12);
        let l = ca.loss.as_ref().unwrap();
        assert!((p.loss.total_rough() / l.total_rough() - 1.0).abs() < 1e-9);
    }
    for f in [2.0, 40.0] {
        let s2 = stackup(&board(f));
        let a2 = analyze(&s2, &Default::default());
        for i in 0..3 {
            let p = &sweep(&s, &a, i, &[f * 1e9]).unwrap()[0];
            let ca = &a2.classes[i];
            let sm = ca.smooth.as_ref().unwrap();
            let rw = ca.rough_worst.as_ref().unwrap();
            let l = ca.loss.as_ref().unwrap();
            let pr = p.rough.as_ref().unwrap();
            for (what, got, want, tol) in [
                ("Z smooth", p.smooth.z, sm.z, 3e-3),
                ("eps_eff smooth", p.smooth.eps_eff, sm.eps_eff, 3e-3),
                ("Z rough", pr.z, rw.z, 3e-3),
                ("eps_eff rough", pr.eps_eff, rw.eps_eff, 3e-3),
                ("loss", p.loss.total_rough(), l.total_rough(), 0.03),
                (
                    "even-mode eps_eff smooth",
                    p.smooth.pair.map_or(1.0, |m| m.eps_eff_even),
                    sm.pair.map_or(1.0, |m| m.eps_eff_even),
                    if f < 10.0 { 3e-4 } else { 3e-3 },
                ),
            ] {
                assert!(
                    (got / want - 1.0).abs() < tol,
                    "class {i} at {f} GHz: {what} {got} swept vs {want} solved"
                );
            }
        }
    }
}

#[test]
fn sweep_ranges_parse_and_bad_ones_are_refused() {
    let f = parse_sweep("1GHz..110GHz:12").unwrap();
    assert_eq!(f.len(), 12);
    assert_eq!((f[0], f[11]), (1e9, 110e9));
    assert_eq!(parse_sweep("1 GHz .. 2 GHz").unwrap().len(), 101);
    for bad in [
        "1GHz",
        "2GHz..1GHz",
        "1GHz..2GHz:1",
        "1GHz..2GHz:x",
        "0Hz..1GHz",
        "1GHz..2THz",
    ] {
        assert!(parse_sweep(bad).is_err(), "{bad}");
    }
}

/// A parsed Touchstone 1.1 file in RI form: its option line and, per
/// frequency, (f GHz, the n×n matrix row by row).
type Row = (f64, Vec<Vec<(f64, f64)>>);

fn read_touchstone(text: &str, n: usize) -> (String, Vec<Row>) {
    let mut option = String::new();
    let mut nums = Vec::new();
    for l in text.lines() {
        if l.starts_with('!') || l.trim().is_empty() {
            continue;
        }
        if l.starts_with('#') {
            option = l.to_string();
            continue;
        }
        nums.extend(l.split_whitespace().map(|x| x.parse::<f64>().unwrap()));
    }
    let per = 1 + 2 * n * n;
    assert_eq!(nums.len() % per, 0);
    let rows = nums
        .chunks(per)
        .map(|c| {
            let m: Vec<Vec<(f64, f64)>> = (0..n)
                .map(|i| {
                    (0..n)
                        .map(|j| (c[1 + 2 * (i * n + j)], c[2 + 2 * (i * n + j)]))
                        .collect()
                })
                .collect();
            (c[0], m)
        })
        .collect();
    (option, rows)
}

fn abs(z: (f64, f64)) -> f64 {
    z.0.hypot(z.1)
}

fn add(a: (f64, f64), b: (f64, f64), sign: f64) -> (f64, f64) {
    (a.0 + sign * b.0, a.1 + sign * b.1)
}

/// A symmetric reciprocal two-port [[s11, s21], [s21, s11]] is passive
/// when |S11 ± S21| ≤ 1 (the eigenvalues of SᴴS are their squares).
fn passive2(s11: (f64, f64), s21: (f64, f64)) -> bool {
    abs(add(s11, s21, 1.0)) <= 1.0 && abs(add(s11, s21, -1.0)) <= 1.0
}

/// The Touchstone files of the radar demo: a two-port per single line, a
/// four-port per pair; passive, reciprocal, and lines lose what the
/// sweep's loss column says over the length (within 0.05 dB and 1 %:
/// the mismatch of a line a few per cent off its reference). A pair's
/// four-port [[A, B], [B, A]] splits into its even and odd two-ports
/// A ± B; the odd one is the differential signal's.
#[test]
fn touchstone_files_are_passive_reciprocal_and_lose_the_loss() {
    let dir = tempfile::tempdir().unwrap();
    let ts = dir.path().join("ts");
    let csv = dir.path().join("sweep.csv");
    let (code, out, err) = common::run_in(
        common::root(),
        &[
            "impedance",
            "--format",
            "json",
            "--sweep",
            "1GHz..40GHz:14",
            "--length",
            "50 mm",
            "--touchstone",
            ts.to_str().unwrap(),
            "--csv",
            csv.to_str().unwrap(),
            "examples/radar-sensor-6l",
        ],
    );
    assert_eq!(code, Some(0), "{err}");
    let v: serde_json::Value = serde_json::from_str(&out).unwrap();
    let classes = v[0]["net_classes"].as_array().unwrap();
    let csv = std::fs::read_to_string(&csv).unwrap();
    assert_eq!(csv.lines().count(), 1 + 14 * classes.len());
    let mut pairs = 0;
    for c in classes {
        let name = c["net_class"].as_str().unwrap();
        let sweep = c["sweep"].as_array().unwrap();
        let two = ts.join(format!("board-{name}.s2p"));
        let (n, path) = if two.exists() {
            (2, two)
        } else {
            pairs += 1;
            (4, ts.join(format!("board-{name}.s4p")))
        };
        let (option, rows) = read_touchstone(&std::fs::read_to_string(&path).unwrap(), n);
        assert_eq!(option, "# GHz S RI R 50");
        assert_eq!(rows.len(), sweep.len());
        for ((f, m), p) in rows.iter().zip(sweep) {
            for (i, row) in m.iter().enumerate() {
                for (j, v) in row.iter().enumerate() {
                    assert_eq!(*v, m[j][i], "{name} at {f} GHz: not reciprocal");
                }
            }
            // The signal's two-port: the line itself, or the odd mode A − B.
            let (s11, s21) = if n == 2 {
                (m[0][0], m[1][0])
            } else {
                let even = (add(m[0][0], m[0][2], 1.0), add(m[1][0], m[1][2], 1.0));
                assert!(
                    passive2(even.0, even.1),
                    "{name} at {f} GHz: even mode not passive"
                );
                (add(m[0][0], m[0][2], -1.0), add(m[1][0], m[1][2], -1.0))
            };
            assert!(passive2(s11, s21), "{name} at {f} GHz: not passive");
            let il = -20.0 * abs(s21).log10();
            let want = p["loss_db_per_mm"].as_f64().unwrap() * 50.0;
            assert!(
                (il - want).abs() < 0.05 + 0.01 * want,
                "{name} at {f} GHz: {il} dB vs {want} dB"
            );
        }
    }
    assert_eq!(pairs, 1, "the radar has one pair");
}
