//! Measured coupons through the whole tool: the demo coupons are synthetic
//! measurements of a known truth (examples/gen_demo_coupons.py: the
//! engine's own line at two lengths or as a gap-coupled resonator, with
//! imperfect launches added by scikit-rf and noise), so what the
//! extraction must recover is known.

use serde_json::Value;

use crate::common::{root, run_in};

fn coupons_json(board: &str) -> Value {
    let (code, out, err) = run_in(root(), &["coupons", board, "--format", "json"]);
    assert_eq!(code, Some(0), "{err}");
    serde_json::from_str(&out).unwrap()
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
