//! `stackup-lint coupons`: each measured coupon against the stackup's
//! model, as text tables or JSON.

use serde::Serialize;

use crate::analysis::coupons::CouponAnalysis;
use crate::analysis::Analysis;
use crate::model::Stackup;

/// One file's stackup and analysis, with its display name.
pub type FileCoupons<'a> = (&'a str, &'a Stackup, &'a Analysis);

fn round(v: f64, digits: i32) -> f64 {
    let k = 10f64.powi(digits);
    (v * k).round() / k
}

#[derive(Serialize)]
struct PointJson {
    frequency_ghz: f64,
    eps_eff_measured: f64,
    eps_eff_model: f64,
    loss_measured_db_per_mm: Option<f64>,
    loss_model_db_per_mm: f64,
    tan_delta_measured: Option<f64>,
    tan_delta_model: Option<f64>,
    reliable: bool,
    in_range: bool,
}

#[derive(Serialize)]
struct ImpliedJson<'a> {
    material: &'a str,
    stated_dk: f64,
    at_ghz: f64,
    implied_dk: f64,
    uncertainty: f64,
    energy_share: f64,
    bands: Vec<BandJson>,
}

#[derive(Serialize)]
struct BandJson {
    from_ghz: f64,
    to_ghz: f64,
    implied_dk: f64,
}

#[derive(Serialize)]
struct ResonanceJson {
    mode: u32,
    frequency_ghz: f64,
    insertion_loss_db: f64,
    q_loaded: f64,
    q_unloaded: Option<f64>,
    eps_eff: f64,
    clean: bool,
}

#[derive(Serialize)]
struct CouponJson<'a> {
    coupon: &'a str,
    net_class: &'a str,
    kind: &'static str,
    valid_from_ghz: Option<f64>,
    valid_to_ghz: Option<f64>,
    range_notes: &'a [String],
    eps_eff_difference: Option<f64>,
    loss_difference: Option<f64>,
    implied_dk: Option<ImpliedJson<'a>>,
    resonances: Vec<ResonanceJson>,
    failure: Option<&'a str>,
    points: Vec<PointJson>,
}

#[derive(Serialize)]
struct FileJson<'a> {
    file: &'a str,
    coupons: Vec<CouponJson<'a>>,
}

fn coupon_json<'a>(s: &'a Stackup, ca: &'a CouponAnalysis) -> CouponJson<'a> {
    let c = &s.coupons[ca.coupon];
    CouponJson {
        coupon: &c.name,
        net_class: &s.net_classes[c.net_class].name,
        kind: c.kind.keyword(),
        valid_from_ghz: ca.range.map(|r| round(r.0 / 1e9, 6)),
        valid_to_ghz: ca.range.map(|r| round(r.1 / 1e9, 6)),
        range_notes: &ca.range_notes,
        eps_eff_difference: ca.eps_difference.map(|d| round(d, 5)),
        loss_difference: ca.loss_difference.map(|d| round(d, 4)),
        implied_dk: ca.implied_dk.as_ref().map(|im| ImpliedJson {
            material: &im.material,
            stated_dk: im.stated,
            at_ghz: round(im.frequency / 1e9, 6),
            implied_dk: round(im.implied, 4),
            uncertainty: round(im.uncertainty, 4),
            energy_share: round(im.share, 4),
            bands: im
                .bands
                .iter()
                .map(|b| BandJson {
                    from_ghz: round(b.0 / 1e9, 6),
                    to_ghz: round(b.1 / 1e9, 6),
                    implied_dk: round(b.2, 4),
                })
                .collect(),
        }),
        resonances: ca
            .resonances
            .iter()
            .map(|r| ResonanceJson {
                mode: r.mode,
                frequency_ghz: round(r.freq / 1e9, 6),
                insertion_loss_db: round(r.insertion_loss_db, 3),
                q_loaded: round(r.q_loaded, 1),
                q_unloaded: r.q_unloaded.map(|q| round(q, 1)),
                eps_eff: round(r.eps_eff, 5),
                clean: r.flags.is_empty(),
            })
            .collect(),
        failure: ca.failure.as_deref(),
        points: ca
            .points
            .iter()
            .map(|p| PointJson {
                frequency_ghz: round(p.frequency / 1e9, 6),
                eps_eff_measured: round(p.eps_measured, 5),
                eps_eff_model: round(p.eps_model, 5),
                loss_measured_db_per_mm: p.loss_measured.map(|l| round(l / 1e3, 6)),
                loss_model_db_per_mm: round(p.loss_model / 1e3, 6),
                tan_delta_measured: p.tan_delta.map(|t| round(t.0, 6)),
                tan_delta_model: p.tan_delta.map(|t| round(t.1, 6)),
                reliable: p.reliable,
                in_range: p.in_range,
            })
            .collect(),
    }
}

/// The coupons as JSON: per file, per coupon, with every point.
pub fn json(files: &[FileCoupons<'_>]) -> String {
    let v: Vec<FileJson> = files
        .iter()
        .map(|(name, s, a)| FileJson {
            file: name,
            coupons: a.coupons.iter().map(|ca| coupon_json(s, ca)).collect(),
        })
        .collect();
    serde_json::to_string_pretty(&v).unwrap_or_else(|_| "[]".into()) + "\n"
}

/// At most this many rows per coupon in the text table: evenly spaced
/// points of the valid range (JSON has them all).
const TABLE_ROWS: usize = 12;

/// The coupons as text: a summary and a table per coupon.
pub fn table(files: &[FileCoupons<'_>]) -> String {
    let mut out = String::new();
    for (name, s, a) in files {
        out.push_str(&format!("{name}\n"));
        if a.coupons.is_empty() {
            out.push_str("  no coupons\n");
        }
        for ca in &a.coupons {
            let c = &s.coupons[ca.coupon];
            let nc = &s.net_classes[c.net_class];
            out.push_str(&format!(
                "  {} ({}, net class {})\n",
                c.name,
                c.kind.keyword(),
                nc.name
            ));
            if let Some(why) = &ca.failure {
                out.push_str(&format!("    not extracted: {why}\n"));
                continue;
            }
            match ca.range {
                Some((lo, hi)) => {
                    out.push_str(&format!("    valid {:.2} to {:.2} GHz", lo / 1e9, hi / 1e9))
                }
                None => out.push_str("    no valid range"),
            }
            if let Some(d) = ca.eps_difference {
                out.push_str(&format!("; eps_eff {:+.2} % from the model", 100.0 * d));
            }
            if let Some(d) = ca.loss_difference {
                out.push_str(&format!("; loss {:+.1} %", 100.0 * d));
            }
            out.push('\n');
            for n in &ca.range_notes {
                out.push_str(&format!("    - {n}\n"));
            }
            if let Some(im) = &ca.implied_dk {
                out.push_str(&format!(
                    "    implied Dk of `{}` at {:.3} GHz: {:.3} ± {:.3} (stated {:.3}; {:.0} % of the field)\n",
                    im.material,
                    im.frequency / 1e9,
                    im.implied,
                    im.uncertainty,
                    im.stated,
                    100.0 * im.share
                ));
                if !im.bands.is_empty() {
                    let b: Vec<String> = im
                        .bands
                        .iter()
                        .map(|b| format!("{:.1}-{:.1} GHz {:.3}", b.0 / 1e9, b.1 / 1e9, b.2))
                        .collect();
                    out.push_str(&format!("      by band: {}\n", b.join(", ")));
                }
            }
            if !ca.resonances.is_empty() {
                out.push_str(&format!(
                    "    {:>4}  {:>9}  {:>7}  {:>7}  {:>7}  {:>8}  {:>9}  {:>14}\n",
                    "n", "f GHz", "IL dB", "Q_L", "Q_u", "eps_eff", "eps model", "tand meas/model"
                ));
                for (r, p) in ca.resonances.iter().zip(&ca.points) {
                    out.push_str(&format!(
                        "    {:>4}  {:>9.4}  {:>7.2}  {:>7.1}  {:>7}  {:>8.4}  {:>9.4}  {:>14}{}\n",
                        r.mode,
                        r.freq / 1e9,
                        r.insertion_loss_db,
                        r.q_loaded,
                        r.q_unloaded.map_or("—".into(), |q| format!("{q:.1}")),
                        r.eps_eff,
                        p.eps_model,
                        p.tan_delta
                            .map_or("—".into(), |t| format!("{:.4}/{:.4}", t.0, t.1)),
                        if r.flags.is_empty() {
                            ""
                        } else {
                            "  (left out)"
                        }
                    ));
                }
                continue;
            }
            let used: Vec<_> = ca.points.iter().filter(|p| p.in_range).collect();
            if used.is_empty() {
                continue;
            }
            out.push_str(&format!(
                "    {:>9}  {:>8}  {:>8}  {:>10}  {:>10}\n",
                "f GHz", "eps meas", "eps model", "dB/mm meas", "dB/mm model"
            ));
            let step = used.len().div_ceil(TABLE_ROWS).max(1);
            for p in used.iter().step_by(step) {
                out.push_str(&format!(
                    "    {:>9.3}  {:>8.4}  {:>8.4}  {:>10}  {:>10.5}\n",
                    p.frequency / 1e9,
                    p.eps_measured,
                    p.eps_model,
                    p.loss_measured
                        .map_or("—".into(), |l| format!("{:.5}", l / 1e3)),
                    p.loss_model / 1e3
                ));
            }
        }
    }
    out.push_str("  eps meas/model: the signal mode's effective Dk (a pair's odd mode) measured by the coupon and computed from the stackup; only points inside the valid range are shown (--format json has all)\n");
    out
}
