//! `via-stub-resonance` and the stub analysis behind it, through the whole
//! pipeline (stackup text → model → analysis → rule), against the scikit-rf
//! table of the physics crate
//! (crates/stackup-physics/tests/reference/via_stub_reference.tsv, written
//! by gen_via_stub_reference.py: first |S21| null of a shunt open stub).

use crate::common::board::Board;
use stackup_lint::analysis::analyze;
use stackup_lint::analysis::vias::StubSide;
use stackup_lint::engine;
use stackup_lint::engine::load_text;
use stackup_lint::finding::{Finding, Severity};
use stackup_lint::load::InputLimits;
use stackup_lint::model::Stackup;

const RULE: &str = "via-stub-resonance";

/// The scikit-rf null of a uniform stub of `length` in `eps`.
fn scikit_rf_null(length: f64, eps: f64) -> f64 {
    let path = concat!(
        env!("CARGO_MANIFEST_DIR"),
        "/crates/stackup-physics/tests/reference/via_stub_reference.tsv"
    );
    let text = std::fs::read_to_string(path).expect("reference table present");
    assert!(text.starts_with("# reference library: scikit-rf "));
    text.lines()
        .filter_map(|l| {
            let cols: Vec<&str> = l.split('\t').collect();
            let (t, e) = cols.get(1)?.split_once(':')?;
            let (t, e): (f64, f64) = (t.parse().ok()?, e.parse().ok()?);
            let hit = cols[0] == "uniform" && (t - length).abs() < 1e-12 && (e - eps).abs() < 1e-12;
            hit.then(|| cols[2].parse().unwrap())
        })
        .next()
        .unwrap_or_else(|| panic!("no uniform row for {length} m in {eps}"))
}

/// Four copper layers: a plane `L1`, the class's layer `L2` (0.2 mm below
/// it), a plane `L3` and a signal layer `L4`. The stub below L2 runs
/// 0.6 mm + 18 µm + 0.864 mm + 18 µm = 1.5 mm through Dk 4.4 only; the one
/// above is 0.218 mm. The material's Dk is given at the class's
/// frequency `f_ghz`, so the stub's εeff is exactly 4.4.
fn board(class: &str, f_ghz: f64) -> Board {
    Board::new()
        .material(
            "lam",
            &format!("class: FR-4 class epoxy/glass, dk: 4.4, df: 0.0001, frequency: {f_ghz} GHz, valid-from: 1 GHz, valid-to: 200 GHz, method: resonator"),
        )
        .copper("L1", "role: plane, thickness: 18 um")
        .dielectric("c1", "kind: core, material: lam, thickness: 0.2 mm")
        .copper("L2", "role: signal, thickness: 18 um")
        .dielectric("c2", "kind: core, material: lam, thickness: 0.6 mm")
        .copper("L3", "role: plane, thickness: 18 um")
        .dielectric("c3", "kind: core, material: lam, thickness: 0.864 mm")
        .copper("L4", "role: signal, thickness: 18 um")
        .class(class)
}

fn rf_class(f_ghz: f64) -> Board {
    board(
        &format!(
            "name: rf, structure: stripline, layer: L2, width: 0.1 mm, max-frequency: {f_ghz} GHz"
        ),
        f_ghz,
    )
}

fn stackup(text: &str) -> Stackup {
    let loaded = load_text("t.stackup.yaml", text, &InputLimits::default());
    assert!(loaded.problems.is_empty(), "{:#?}", loaded.problems);
    loaded.stackups.into_iter().next().unwrap()
}

fn findings(text: &str) -> Vec<Finding> {
    let loaded = load_text("t.stackup.yaml", text, &InputLimits::default());
    engine::lint(loaded, &Default::default())
        .findings
        .into_iter()
        .filter(|f| f.rule == RULE)
        .collect()
}

#[test]
fn stub_of_the_build_resonates_where_scikit_rf_puts_the_null() {
    // Source: scikit-rf shunt open stub, 1.5 mm in εr 4.4 (whole stub) and
    // 0.25 mm in εr 4.4 (the back-drilled residual, inside c2).
    let s = stackup(&rf_class(20.0).yaml());
    let a = analyze(&s, &Default::default());
    let st = a.via_stubs[0].expect("an inner-layer class has stubs");
    assert_eq!(s.layers[st.layer].name, "L2");
    let w = st.worst;
    assert_eq!(w.side, StubSide::Below);
    assert_eq!(s.layers[w.far_copper].name, "L4");
    assert!((w.length - 1.5e-3).abs() < 1e-12, "{}", w.length);
    assert!((w.eps_eff - 4.4).abs() < 1e-9, "{}", w.eps_eff);
    let f_ref = scikit_rf_null(1.5e-3, 4.4);
    assert!(
        ((w.resonance - f_ref) / f_ref).abs() < 1e-6,
        "{} vs {f_ref}",
        w.resonance
    );
    let b = w.backdrill.expect("a 1.5 mm stub can be back-drilled");
    assert!((b.depth - 1.25e-3).abs() < 1e-12, "{}", b.depth);
    let f_ref = scikit_rf_null(0.25e-3, 4.4);
    assert!(
        ((b.resonance - f_ref) / f_ref).abs() < 1e-6,
        "{}",
        b.resonance
    );
    // The other side: L1's 18 µm and c1's 0.2 mm, shorter than a
    // back-drill leaves.
    let o = st.other;
    assert_eq!(o.side, StubSide::Above);
    assert!((o.length - 0.218e-3).abs() < 1e-12, "{}", o.length);
    assert!(o.backdrill.is_none());
}

#[test]
fn resonance_inside_the_margin_is_a_warning_with_the_back_drill() {
    // f_res = 23.8 GHz (scikit-rf, above) against 1.5 × 20 GHz = 30 GHz.
    let f = findings(&rf_class(20.0).yaml());
    assert_eq!(f.len(), 1, "{f:#?}");
    assert_eq!(f[0].severity, Severity::Warning);
    assert_eq!(f[0].primary.pointer, "/net-classes/0/layer");
    let m = &f[0].message;
    assert!(
        m.contains("with a 1.50 mm stub down to `L4` (εeff 4.40 at 20 GHz)"),
        "{m}"
    );
    assert!(
        m.contains("resonance at 23.8 GHz is below 30 GHz, 1.5 × the class's 20 GHz max-frequency"),
        "{m}"
    );
    let h = f[0].help.as_deref().unwrap();
    assert!(
        h.contains("back-drill from the `L4` side to a depth of 1.25 mm (leaving at most 0.25 mm below `L2`), which moves the resonance to 142.9 GHz"),
        "{h}"
    );
}

#[test]
fn resonance_at_or_below_the_highest_frequency_is_an_error() {
    let f = findings(&rf_class(25.0).yaml());
    assert_eq!(f.len(), 1, "{f:#?}");
    assert_eq!(f[0].severity, Severity::Error);
    assert!(
        f[0].message
            .contains("at or below its 25 GHz max-frequency"),
        "{}",
        f[0].message
    );
}

#[test]
fn data_rate_class_is_an_error_at_its_nyquist_frequency() {
    // 50 Gbps NRZ: Nyquist 25 GHz >= 23.8 GHz. 100 Gbps PAM4 has the same
    // Nyquist frequency; 50 Gbps PAM4 (12.5 GHz) is only a warning
    // (3 × 12.5 GHz × 1.5 = 56 GHz).
    let class = |rate: &str, m: &str| {
        board(
            &format!("name: serdes, structure: stripline, layer: L2, width: 0.1 mm, data-rate: {rate}, modulation: {m}"),
            10.0,
        )
        .yaml()
    };
    let f = findings(&class("50 Gbps", "nrz"));
    assert_eq!(f.len(), 1, "{f:#?}");
    assert_eq!(f[0].severity, Severity::Error);
    assert!(
        f[0].message
            .contains("at or below its 25 GHz Nyquist frequency"),
        "{}",
        f[0].message
    );
    let f = findings(&class("50 Gbps", "pam4"));
    assert_eq!(f.len(), 1, "{f:#?}");
    assert_eq!(f[0].severity, Severity::Warning);
    assert!(
        f[0].message.contains("below 56.2 GHz, 1.5 × the class's highest frequency of 37.5 GHz (3 × its 12.5 GHz Nyquist frequency)"),
        "{}",
        f[0].message
    );
}

#[test]
fn passes_when_the_resonance_clears_the_margin() {
    // 23.8 GHz >= 1.5 × 15 GHz = 22.5 GHz.
    assert!(findings(&rf_class(15.0).yaml()).is_empty());
    // A margin of 1 at 20 GHz: 23.8 GHz clears 20 GHz.
    let text = rf_class(20.0)
        .settings("  rules:\n    via-stub-resonance: {margin: 1}\n")
        .yaml();
    assert!(findings(&text).is_empty());
}

#[test]
fn a_back_drill_that_does_not_clear_the_band_is_not_proposed() {
    // At 100 GHz the 0.25 mm residual's 142.9 GHz is below 150 GHz.
    let f = findings(&rf_class(100.0).yaml());
    assert_eq!(f.len(), 1, "{f:#?}");
    let h = f[0].help.as_deref().unwrap();
    assert!(
        h.contains("moves the resonance only to 142.9 GHz, still below 150 GHz: use blind vias"),
        "{h}"
    );
    assert!(!h.contains("depth of"), "{h}");
}

#[test]
fn both_stubs_are_covered_when_both_fail() {
    // At 150 GHz (limit 225 GHz) the 0.218 mm stub above L2 fails too
    // (c0/(4 × 0.218 mm × √4.4) = 164 GHz), and it is already shorter than
    // the 0.25 mm a back-drill leaves.
    let f = findings(&rf_class(150.0).yaml());
    assert_eq!(f.len(), 1, "{f:#?}");
    let h = f[0].help.as_deref().unwrap();
    assert!(h.contains("for vias entered from the top, a back-drill leaving the usual 0.25 mm below `L2` moves the resonance only to 142.9 GHz"), "{h}");
    assert!(h.contains("for vias entered from the bottom, the 0.22 mm stub is already shorter than a back-drill leaves: use blind vias"), "{h}");
}

#[test]
fn outer_layer_class_has_no_stub_of_its_own() {
    let text = board(
        "name: ms, structure: microstrip, layer: L4, width: 0.3 mm, max-frequency: 40 GHz",
        40.0,
    )
    .yaml();
    let s = stackup(&text);
    let a = analyze(&s, &Default::default());
    assert_eq!(a.via_stubs, vec![None]);
    assert!(findings(&text).is_empty());
}
