//! Via-stub resonance against a general-purpose reference library:
//! scikit-rf (PyPI), the first |S21| null of a shunt open-circuited lossless
//! stub, in a table written by tests/reference/gen_via_stub_reference.py
//! (the library name and version are in the table's first line).
//!
//! - uniform stubs (`Freespace(ep_r).shunt_delay_open`): the quarter-wave
//!   formula must agree to 1e-9 relative (the table's null is found to
//!   0.1 Hz; the formula is exact for a uniform lossless stub);
//! - layered stubs (a cascade of `Freespace` sections, impedance stepping
//!   as 1/√εr, scikit-rf inserting the mismatches): the formula with the
//!   thickness-weighted εr is an estimate; the check holds its error to the
//!   bounds the `vias` module documents (1 % for one laminate family, 7 %
//!   for blocks of Dk 3.0 and 4.4).

use stackup_physics::vias::{quarter_wave_stub_resonance, thickness_weighted_eps};

struct Row {
    kind: String,
    segments: Vec<(f64, f64)>,
    f_null: f64,
}

fn table() -> Vec<Row> {
    let lines = crate::scikit_rf_table("via_stub_reference.tsv");
    assert_eq!(lines[0], "kind\tsegments\tf_null\ts21_at_null");
    lines[1..]
        .iter()
        .map(|l| {
            let cols: Vec<&str> = l.split('\t').collect();
            assert_eq!(cols.len(), 4, "{l}");
            let segments = cols[1]
                .split(',')
                .map(|s| {
                    let (t, e) = s.split_once(':').unwrap();
                    (t.parse().unwrap(), e.parse().unwrap())
                })
                .collect();
            let depth: f64 = cols[3].parse().unwrap();
            assert!(depth < 1e-9, "a true null: {l}");
            Row {
                kind: cols[0].to_string(),
                segments,
                f_null: cols[2].parse().unwrap(),
            }
        })
        .collect()
}

fn formula(segments: &[(f64, f64)]) -> f64 {
    let length: f64 = segments.iter().map(|s| s.0).sum();
    let eps = thickness_weighted_eps(segments).unwrap();
    quarter_wave_stub_resonance(length, eps).unwrap()
}

#[test]
fn table_has_every_kind_of_stub() {
    // The header's library name is checked by `scikit_rf_table`.
    let rows = table();
    assert_eq!(rows.iter().filter(|r| r.kind == "uniform").count(), 42);
    assert!(rows.iter().any(|r| r.kind == "layered-mild"));
    assert!(rows.iter().any(|r| r.kind == "layered-hybrid"));
}

#[test]
fn uniform_stub_resonance_matches_scikit_rf() {
    // Source: scikit-rf Freespace(ep_r).shunt_delay_open, first |S21| null.
    let rows = table();
    let mut worst = 0.0f64;
    for r in rows.iter().filter(|r| r.kind == "uniform") {
        let f = formula(&r.segments);
        worst = worst.max(((f - r.f_null) / r.f_null).abs());
    }
    assert!(worst < 1e-9, "worst relative error {worst:e}");
}

#[test]
fn layered_stub_estimate_is_within_its_stated_bounds() {
    // Source: scikit-rf cascade of Freespace sections (stepped impedance),
    // first |S21| null. Bounds as documented in `vias::thickness_weighted_eps`.
    let rows = table();
    for (kind, bound) in [("layered-mild", 0.01), ("layered-hybrid", 0.07)] {
        let mut worst = 0.0f64;
        for r in rows.iter().filter(|r| r.kind == kind) {
            let f = formula(&r.segments);
            worst = worst.max(((f - r.f_null) / r.f_null).abs());
        }
        assert!(worst < bound, "{kind}: worst relative error {worst:.4}");
        assert!(worst > 0.0, "{kind}: a stepped stub is not exact");
    }
}
