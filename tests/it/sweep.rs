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
/// loss: what carrying one solve across frequency costs.
#[test]
fn sweep_matches_the_solves() {
    let s = stackup(&board(10.0));
    let a = analyze(&s, &Default::default());
    for i in 0..2 {
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
        for i in 0..2 {
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

/// A parsed Touchstone 1.1 two-port in RI form: (f GHz, S11, S21, S12, S22).
type Row = (f64, [(f64, f64); 4]);

fn read_s2p(text: &str) -> (String, Vec<Row>) {
    let mut option = String::new();
    let mut rows = Vec::new();
    for l in text.lines() {
        if l.starts_with('!') || l.trim().is_empty() {
            continue;
        }
        if l.starts_with('#') {
            option = l.to_string();
            continue;
        }
        let v: Vec<f64> = l.split_whitespace().map(|x| x.parse().unwrap()).collect();
        assert_eq!(v.len(), 9, "{l}");
        rows.push((
            v[0],
            [(v[1], v[2]), (v[3], v[4]), (v[5], v[6]), (v[7], v[8])],
        ));
    }
    (option, rows)
}

/// The Touchstone files of the radar demo: one per class, passive (for a
/// symmetric reciprocal two-port the eigenvalues of SᴴS are |S11 ± S21|²,
/// both at most 1), reciprocal, and matched lines lose what the sweep's
/// loss column says over the length (within 0.05 dB: the mismatch of a
/// line a few per cent off its reference).
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
    for c in classes {
        let name = c["net_class"].as_str().unwrap();
        let path = ts.join(format!("board-{name}.s2p"));
        let (option, rows) = read_s2p(&std::fs::read_to_string(&path).unwrap());
        assert!(option.starts_with("# GHz S RI R "), "{option}");
        let sweep = c["sweep"].as_array().unwrap();
        assert_eq!(rows.len(), sweep.len());
        for ((f, s), p) in rows.iter().zip(sweep) {
            let [s11, s21, s12, s22] = *s;
            assert_eq!(s21, s12, "{name} at {f} GHz: not reciprocal");
            assert_eq!(s11, s22);
            let plus = ((s11.0 + s21.0).powi(2) + (s11.1 + s21.1).powi(2)).sqrt();
            let minus = ((s11.0 - s21.0).powi(2) + (s11.1 - s21.1).powi(2)).sqrt();
            assert!(
                plus <= 1.0 && minus <= 1.0,
                "{name} at {f} GHz: not passive"
            );
            let il = -20.0 * (s21.0.hypot(s21.1)).log10();
            let want = p["loss_db_per_mm"].as_f64().unwrap() * 50.0;
            assert!(
                (il - want).abs() < 0.05 + 0.01 * want,
                "{name} at {f} GHz: {il} dB vs {want} dB"
            );
        }
    }
}
