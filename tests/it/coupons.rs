//! Measured coupons through the whole tool: the demo coupons are synthetic
//! measurements of a known truth (examples/gen_demo_coupons.py: the
//! engine's own line at two lengths or as a gap-coupled resonator, with
//! imperfect launches added by scikit-rf and noise), so what the
//! extraction must recover is known.

use serde_json::Value;

use crate::common::{root, run_in};

fn coupons_json(board: &str) -> Value {
    json_in(root(), "coupons", board)
}

/// `stackup-lint CMD BOARD --root . --format json` run in `dir`; it must
/// exit 0.
fn json_in(dir: &std::path::Path, cmd: &str, board: &str) -> Value {
    let (code, out, err) = run_in(dir, &[cmd, board, "--root", ".", "--format", "json"]);
    assert_eq!(code, Some(0), "{err}");
    serde_json::from_str(&out).unwrap()
}

/// A scratch project holding a copy of the sensor board and the material
/// library (and `more` example subdirectories); its `examples` directory.
fn sensor_project(more: &[&str]) -> (tempfile::TempDir, std::path::PathBuf) {
    let dir = tempfile::tempdir().unwrap();
    let ex = dir.path().join("examples");
    for sub in ["radar-sensor-6l", "materials"].iter().chain(more) {
        std::fs::create_dir_all(ex.join(sub)).unwrap();
        for f in std::fs::read_dir(root().join("examples").join(sub)).unwrap() {
            let f = f.unwrap().path();
            if f.is_file() {
                std::fs::copy(&f, ex.join(sub).join(f.file_name().unwrap())).unwrap();
            }
        }
    }
    (dir, ex)
}

fn coupon<'a>(j: &'a Value, name: &str) -> &'a Value {
    j[0]["coupons"]
        .as_array()
        .unwrap()
        .iter()
        .find(|c| c["coupon"] == name)
        .unwrap()
}

/// The sensor board's coupons were made from the stackup as written:
/// the line pair recovers its εeff within 0.2 % and its loss within 3 %
/// through launches that reflect up to 10 dB (the two-line method cancels
/// them), the resonator within 0.5 % and its effective loss tangent
/// within 10 %; neither is left without a valid range.
#[test]
fn a_coupon_of_the_stackup_as_written_agrees() {
    let j = coupons_json("examples/radar-sensor-6l");
    let line = coupon(&j, "lo-line");
    assert!(
        line["eps_eff_difference"].as_f64().unwrap().abs() < 2e-3,
        "{line}"
    );
    assert!(
        line["loss_difference"].as_f64().unwrap().abs() < 0.03,
        "{line}"
    );
    let used = line["points"]
        .as_array()
        .unwrap()
        .iter()
        .filter(|p| p["in_range"] == true)
        .count();
    assert!(used > 100, "{used}");
    // Ill-conditioned points are left out, not reported.
    assert!(line["points"]
        .as_array()
        .unwrap()
        .iter()
        .any(|p| p["reliable"] == false && p["in_range"] == false));
    let res = coupon(&j, "lo-resonator");
    assert!(
        res["eps_eff_difference"].as_f64().unwrap().abs() < 5e-3,
        "{res}"
    );
    let modes = res["resonances"].as_array().unwrap();
    assert_eq!(modes.len(), 5, "{res}");
    for p in res["points"].as_array().unwrap() {
        let (m, t) = (
            p["tan_delta_measured"].as_f64().unwrap(),
            p["tan_delta_model"].as_f64().unwrap(),
        );
        assert!((m / t - 1.0).abs() < 0.1, "{p}");
    }
    let (code, out, _) = run_in(
        root(),
        &["check", "examples/radar-sensor-6l", "--format", "json"],
    );
    assert_eq!(code, Some(0));
    assert!(!out.contains("coupon-disagrees-with-stackup"));
}

/// The line card's coupon was made from the board built with its outer
/// prepreg at Dk 3.25 where the stackup states 3.05: the coupon implies
/// 3.25 within 0.5 %, and `check` says so at the stated Dk.
#[test]
fn a_coupon_of_a_different_dk_implies_that_dk() {
    let j = coupons_json("examples/line-card-10l");
    let c = coupon(&j, "cal-line");
    let im = &c["implied_dk"];
    assert_eq!(im["material"], "low-loss-prepreg");
    let dk = im["implied_dk"].as_f64().unwrap();
    assert!((dk / 3.25 - 1.0).abs() < 5e-3, "{c}");
    assert!(im["uncertainty"].as_f64().unwrap() < 0.05);
    // The launches' return loss ends the valid range below the sweep's top.
    assert!(c["valid_to_ghz"].as_f64().unwrap() < 40.0);
    assert!(c["range_notes"]
        .as_array()
        .unwrap()
        .iter()
        .any(|n| n.as_str().unwrap().contains("return loss")));
    let (code, out, _) = run_in(
        root(),
        &["check", "examples/line-card-10l", "--format", "json"],
    );
    assert_eq!(code, Some(1));
    let v: Value = serde_json::from_str(&out).unwrap();
    let f = v["findings"]
        .as_array()
        .unwrap()
        .iter()
        .find(|f| f["rule"] == "coupon-disagrees-with-stackup")
        .unwrap();
    assert_eq!(f["pointer"], "/materials/low-loss-prepreg/dk");
}

/// The human table names the valid range, the implied Dk and the
/// resonances.
#[test]
fn the_table_says_what_was_found() {
    let (code, out, _) = run_in(root(), &["coupons", "examples/"]);
    assert_eq!(code, Some(0));
    for want in [
        "cal-line (line-pair, net class cal-line-28g)",
        "implied Dk of `low-loss-prepreg`",
        "lo-resonator (resonator, net class lo-microstrip)",
        "tand meas/model",
    ] {
        assert!(out.contains(want), "{want}\n{out}");
    }
}

/// A coupon that agrees validates the material that holds most of its
/// line's field up to the top of its valid range: with the sensor's
/// PTFE/ceramic data stated only to 5 GHz, its 12 GHz and 24 GHz classes
/// are beyond the data; the coupon (valid to about 37 GHz) covers both.
#[test]
fn an_agreeing_coupon_extends_the_validated_range() {
    let copy = |with_coupons: bool| {
        let (dir, ex) = sensor_project(&["radar-sensor-6l/coupons"]);
        let lib = ex.join("materials/demo-generic.materials.yaml");
        let text = std::fs::read_to_string(&lib).unwrap();
        let text = text.replacen("    valid-to: 40 GHz\n", "    valid-to: 5 GHz\n", 1);
        std::fs::write(&lib, text).unwrap();
        let board = ex.join("radar-sensor-6l/board.stackup.yaml");
        let text = std::fs::read_to_string(&board).unwrap();
        if !with_coupons {
            let (head, tail) = text.split_once("\ncoupons:\n").unwrap();
            let rest = &tail[tail.find("\nsettings:").unwrap()..];
            std::fs::write(&board, format!("{head}{rest}")).unwrap();
        }
        let (_, out, err) = run_in(
            dir.path(),
            &["check", "examples", "--format", "json", "--root", "."],
        );
        let v: Value = serde_json::from_str(&out).unwrap_or_else(|_| panic!("{err}"));
        v["findings"]
            .as_array()
            .unwrap()
            .iter()
            .filter(|f| {
                f["rule"] == "frequency-beyond-validity"
                    && f["message"].as_str().unwrap().contains("ptfe-ceramic-3.15")
            })
            .count()
    };
    assert!(copy(false) > 0);
    assert_eq!(copy(true), 0);
}

/// A pair's four-port coupon files (ports 1-2 one line, 3-4 the other)
/// give the odd mode through their mixed-mode two-ports: the engine's own
/// four-ports of the sensor board's LVDS pair at 20 and 60 mm (from its
/// even and odd modes) read back within 0.2 % in εeff and 3 % in loss.
#[test]
fn a_pair_coupon_gives_the_odd_mode() {
    let (dir, ex) = sensor_project(&[]);
    let board = ex.join("radar-sensor-6l/board.stackup.yaml");
    let text = std::fs::read_to_string(&board).unwrap();
    let (head, tail) = text.split_once("\ncoupons:\n").unwrap();
    let rest = &tail[tail.find("\nsettings:").unwrap()..];
    std::fs::write(&board, format!("{head}{rest}")).unwrap();
    for len in ["20", "60"] {
        let (code, _, err) = run_in(
            dir.path(),
            &[
                "impedance",
                "examples/radar-sensor-6l",
                "--root",
                ".",
                "--sweep",
                "0.5GHz..20GHz:200",
                "--length",
                &format!("{len} mm"),
                "--touchstone",
                &format!("examples/radar-sensor-6l/ts{len}"),
            ],
        );
        assert_eq!(code, Some(0), "{err}");
    }
    let entry = "\ncoupons:\n  - name: lvds\n    net-class: adc-lvds\n    kind: line-pair\n    files: [ts20/board-adc-lvds.s4p, ts60/board-adc-lvds.s4p]\n    lengths: [20 mm, 60 mm]\n";
    std::fs::write(&board, format!("{head}{entry}{rest}")).unwrap();
    let j = json_in(dir.path(), "coupons", "examples/radar-sensor-6l");
    let c = coupon(&j, "lvds");
    assert!(c["failure"].is_null(), "{c}");
    assert!(
        c["eps_eff_difference"].as_f64().unwrap().abs() < 2e-3,
        "{c}"
    );
    assert!(c["loss_difference"].as_f64().unwrap().abs() < 0.03, "{c}");
}

/// A coupon that gives nothing to compare is reported, not skipped: a
/// plain line's file named as a resonator has no resonance.
#[test]
fn a_coupon_that_checks_nothing_is_reported() {
    let (dir, ex) = sensor_project(&["radar-sensor-6l/coupons"]);
    let board = ex.join("radar-sensor-6l/board.stackup.yaml");
    let text = std::fs::read_to_string(&board).unwrap();
    let text = text.replace(
        "files: [coupons/lo-resonator-60mm.s2p]",
        "files: [coupons/lo-line-25mm.s2p]",
    );
    std::fs::write(&board, text).unwrap();
    let v = json_in(dir.path(), "check", "examples/radar-sensor-6l");
    let f = v["findings"]
        .as_array()
        .unwrap()
        .iter()
        .find(|f| f["rule"] == "coupon-disagrees-with-stackup")
        .expect("a finding for the unused coupon");
    assert_eq!(f["severity"], "warning");
    let m = f["message"].as_str().unwrap();
    assert!(
        m.contains("lo-resonator") && m.contains("checks nothing"),
        "{m}"
    );
}
