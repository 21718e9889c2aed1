//! The impedance at the build tolerances' corners, held against closed
//! forms whose dependence on the moved quantity is known.

use crate::common::board::Board;
use stackup_lint::analysis::analyze;
use stackup_lint::analysis::tolerance::ToleranceStack;
use stackup_lint::engine::load_text;
use stackup_lint::load::InputLimits;
use stackup_physics::microstrip::hammerstad_jensen;

fn stack(text: &str) -> ToleranceStack {
    let loaded = load_text("t.stackup.yaml", text, &InputLimits::default());
    assert!(loaded.problems.is_empty(), "{:#?}", loaded.problems);
    let a = analyze(&loaded.stackups[0], &Default::default());
    a.classes[0].tolerance.clone().expect("a tolerance stack")
}

fn dz(t: &ToleranceStack, what: &str) -> f64 {
    t.contributions
        .iter()
        .find(|c| c.what.starts_with(what))
        .unwrap_or_else(|| panic!("{what}: {t:#?}"))
        .dz
}

/// A stripline in one material is a TEM line: Z ∝ 1/√εr exactly, so a
/// Dk 2 % higher gives Z·(1/√1.02 − 1) = −0.985 % (any electromagnetics
/// text). The stack's Dk contribution matches within 0.05 % of Z.
#[test]
fn dk_moves_a_stripline_as_one_over_root_eps() {
    let t = stack(
        &Board::stripline("m", "0.2 mm", "0.2 mm")
            .material("m", "dk: 3.6, df: 0.004, frequency: 10 GHz")
            .class("name: s, structure: stripline, layer: S, width: 0.15 mm, impedance: {target: 50 ohm}, max-frequency: 1 GHz")
            .yaml(),
    );
    let want = t.nominal * (1.0 / 1.02f64.sqrt() - 1.0);
    let got = dz(&t, "Dk of `m`");
    eprintln!("Dk +2 %: {got:.5} vs {want:.5} ohm");
    assert!((got - want).abs() < 5e-4 * t.nominal, "{got} vs {want}");
}

/// A microstrip on thin copper: the width and substrate-thickness
/// contributions against Hammerstad-Jensen 1980 evaluated at the moved
/// geometry (closed form accurate to about 1 %, so the changes, a few per
/// cent of Z, are held within 10 % of themselves); the solved corners
/// within 10 % of the summed contributions.
#[test]
fn width_and_height_move_a_microstrip_as_hammerstad_jensen() {
    let fab =
        "  fabrication: {etch-width: 10 um, dielectric-thickness: 10 %, copper-thickness: 5 %}\n";
    let t = stack(
        &Board::new()
            .material("m", "dk: 3.4, df: 0.003, frequency: 10 GHz")
            .copper("L1", "role: signal, thickness: 5 um")
            .dielectric("c", "kind: core, material: m, thickness: 0.25 mm")
            .copper("L2", "role: plane, thickness: 18 um")
            .class("name: ms, structure: microstrip, layer: L1, width: 0.5 mm, impedance: {target: 50 ohm}, max-frequency: 1 GHz")
            .settings(fab)
            .yaml(),
    );
    let z = |w: f64, h: f64| hammerstad_jensen(w, h, 5e-6, 3.4).unwrap().z0;
    let (w, h) = (0.5e-3, 0.25e-3);
    let hj_w = z(w + 10e-6, h) - z(w, h);
    let hj_h = z(w, h * 1.1) - z(w, h);
    let (got_w, got_h) = (dz(&t, "etched width"), dz(&t, "thickness of `c`"));
    eprintln!("width {got_w:.4} vs HJ {hj_w:.4} ohm; height {got_h:.4} vs HJ {hj_h:.4} ohm");
    assert!((got_w / hj_w - 1.0).abs() < 0.1, "{got_w} vs {hj_w}");
    assert!((got_h / hj_h - 1.0).abs() < 0.1, "{got_h} vs {hj_h}");
    let (lo, hi) = t.corners.unwrap();
    let sum: f64 = t.contributions.iter().map(|c| c.dz.abs()).sum();
    assert!(((hi - t.nominal) / sum - 1.0).abs() < 0.1, "{t:#?}");
    assert!(((t.nominal - lo) / sum - 1.0).abs() < 0.1, "{t:#?}");
    assert!(t.rss.1 - t.nominal < sum && t.rss.1 > t.nominal);
}

/// `settings.fabrication` reads its keys; an implausible one is an input
/// error at its value.
#[test]
fn fabrication_tolerances_are_read_and_checked() {
    let text = |fab: &str| {
        Board::microstrip("m", "0.2 mm")
            .material("m", "dk: 3.4, df: 0.003, frequency: 10 GHz")
            .class("name: ms, structure: microstrip, layer: L1, width: 0.4 mm, impedance: {target: 50 ohm}")
            .settings(&format!("  fabrication: {{{fab}}}\n"))
            .yaml()
    };
    let t = stack(&text("etch-width: 0.3 mil, dk: 1 %"));
    let c = t
        .contributions
        .iter()
        .find(|c| c.what == "etched width")
        .unwrap();
    assert_eq!(c.tolerance, "±7.6 µm");
    let c = t
        .contributions
        .iter()
        .find(|c| c.what == "Dk of `m`")
        .unwrap();
    assert_eq!(c.tolerance, "±1 %");
    let loaded = load_text(
        "t.stackup.yaml",
        &text("dielectric-thickness: 80 %"),
        &InputLimits::default(),
    );
    assert!(
        loaded
            .problems
            .iter()
            .any(|p| p.message.contains("is not a build tolerance")),
        "{:#?}",
        loaded.problems
    );
}

/// A microstrip solved again, in full, with each toleranced quantity moved
/// in its YAML (each full solve on its own mesh, extrapolated: the outside
/// check here). The worst-case corners are solved in full too, so a full
/// solve of a board built at that corner gives the same number (measured:
/// equal to 0.001 Ω; before they were confirmed by a full solve, coarse
/// ratios read 0.17 % and 0.25 % off): this holds each move to the YAML
/// change it stands for, within 0.5 %.
/// The one-at-a-time contributions are ratios of second-level solves on
/// one mesh topology; against the full solves' changes they read width
/// 0.8 %, substrate thickness 2.0 %, copper thickness 0.9 %, Dk 0.05 %
/// small (first-level ratios, used before: 1.7, 3.1, 4.2 and 0.2 %). A
/// full solve's own error, about 0.1 % of Z on its own mesh, is 2 % of a
/// 3 Ω change, so the comparison cannot go much finer: held at 2.5 %. The
/// stack is closer to Hammerstad-Jensen 1980 (scikit-rf 2.2.0 `MLine`, run
/// by hand: −1.941, +3.148, −0.460, −0.932 Ω) than the full solves' changes
/// are for width and thickness.
#[test]
fn contributions_and_corners_match_full_solves() {
    // Width, substrate thickness, copper thickness (µm) and Dk.
    let board = |w: f64, h: f64, t: f64, dk: f64| {
        Board::new()
            .material("m", &format!("dk: {dk}, df: 0.003, frequency: 10 GHz"))
            .foil("smooth", "rq: 0 um")
            .copper("L1", &format!("role: signal, thickness: {t} um, down: {{side: treated, foil: smooth}}"))
            .dielectric("c", &format!("kind: core, material: m, thickness: {h} um"))
            .copper("L2", "role: plane, thickness: 18 um, up: {side: treated, foil: smooth}")
            .class(&format!("name: ms, structure: microstrip, layer: L1, width: {w} um, impedance: {{target: 50 ohm}}, max-frequency: 1 GHz"))
            .settings("  fabrication: {etch-width: 20 um, dielectric-thickness: 10 %, copper-thickness: 20 %, dk: 4 %}\n")
            .yaml()
    };
    let full = |text: String| {
        let loaded = load_text("t.stackup.yaml", &text, &InputLimits::default());
        assert!(loaded.problems.is_empty(), "{:#?}", loaded.problems);
        let a = analyze(&loaded.stackups[0], &Default::default());
        let ca = &a.classes[0];
        ca.rough_worst
            .map(|n| n.z)
            .or(ca.smooth.as_ref().ok().map(|n| n.z))
            .unwrap()
    };
    let (w, h, t, dk) = (300.0, 180.0, 35.0, 3.5);
    let s = stack(&board(w, h, t, dk));
    let z0 = full(board(w, h, t, dk));
    assert!((s.nominal - z0).abs() < 1e-9 * z0, "{} vs {z0}", s.nominal);
    let cases = [
        ("etched width", full(board(w + 20.0, h, t, dk))),
        ("thickness of `c`", full(board(w, h * 1.1, t, dk))),
        ("copper thickness of `L1`", full(board(w, h, t * 1.2, dk))),
        ("Dk of `m`", full(board(w, h, t, dk * 1.04))),
    ];
    for (what, z) in cases {
        let got = dz(&s, what);
        eprintln!(
            "{what}: stack {got:+.4} ohm, full solves {:+.4} ohm",
            z - z0
        );
        assert!(
            (got / (z - z0) - 1.0).abs() < 0.05,
            "{what}: {got} vs {}",
            z - z0
        );
    }
    let (lo, hi) = s.corners.expect("corners solved");
    let z_hi = full(board(w - 20.0, h * 1.1, t * 0.8, dk * 0.96));
    let z_lo = full(board(w + 20.0, h * 0.9, t * 1.2, dk * 1.04));
    eprintln!("corners: stack {lo:.3} / {hi:.3}, full {z_lo:.3} / {z_hi:.3} ohm");
    assert!((hi / z_hi - 1.0).abs() < 0.005, "{hi} vs {z_hi}");
    assert!((lo / z_lo - 1.0).abs() < 0.005, "{lo} vs {z_lo}");
}

/// A hand example in the style of IPC-2141: the surface-microstrip formula
/// Z = 87/√(εr + 1.41) · ln(5.98 h / (0.8 w + t)) (IPC-2141A, 2004, from
/// memory; valid for 0.1 < w/h < 2 and εr < 15, a few per cent in Z) and
/// its derivatives worked by hand for w = 8 mil, h = 5 mil, t = 1.4 mil,
/// εr = 4.0 (our own numbers; 87/√5.41 = 37.405): Z = 37.405 · ln 3.8333
/// = 50.26 Ω; etch +0.5 mil moves Z by −37.405 · 0.8 · 0.5/7.8 = −1.92 Ω,
/// pressed thickness +10 % by 37.405 · ln 1.1 = +3.57 Ω, Dk +2 % by
/// −50.26 · 0.08/(2 · 5.41) = −0.37 Ω, copper +10 % by
/// −37.405 · 0.14/7.8 = −0.67 Ω; worst case by hand ±6.53 Ω.
///
/// The hand formula's error in the changes is larger than in Z. The tool
/// is held within 20 % of the hand values for width and thickness; the
/// formula's Dk term (εr + 1.41) and copper term (t added to 0.8 w) are
/// cruder (the tool gives −0.45 and −0.26 Ω), so all four are also held
/// against Hammerstad-Jensen 1980 with its thickness correction
/// (scikit-rf 2.2.0 `MLine`, run by hand: −1.684, +2.963, −0.451 and
/// −0.276 Ω; 53.76 Ω nominal), within 5 % (copper 10 %: that correction is
/// itself approximate).
#[test]
fn microstrip_tolerance_hand_example_in_the_style_of_ipc_2141() {
    let t = stack(
        &Board::new()
            .material("m", "dk: 4.0, df: 0.02, frequency: 1 GHz")
            .foil("smooth", "rq: 0 um")
            .copper("L1", "role: signal, thickness: 1.4 mil, down: {side: treated, foil: smooth}")
            .dielectric("c", "kind: core, material: m, thickness: 5 mil")
            .copper("L2", "role: plane, thickness: 1.4 mil, up: {side: treated, foil: smooth}")
            .class("name: ms, structure: microstrip, layer: L1, width: 8 mil, impedance: {target: 50 ohm}, max-frequency: 1 GHz")
            .settings("  fabrication: {etch-width: 0.5 mil, dielectric-thickness: 10 %, copper-thickness: 10 %, dk: 2 %}\n")
            .yaml(),
    );
    // (quantity, by hand, within, Hammerstad-Jensen, within)
    let refs = [
        ("etched width", -1.92, 0.2, -1.684, 0.05),
        ("thickness of `c`", 3.57, 0.2, 2.963, 0.05),
        ("Dk of `m`", -0.37, f64::INFINITY, -0.451, 0.05),
        (
            "copper thickness of `L1`",
            -0.67,
            f64::INFINITY,
            -0.276,
            0.1,
        ),
    ];
    for (what, hand, hand_within, hj, hj_within) in refs {
        let got = dz(&t, what);
        eprintln!("{what}: {got:+.3} ohm; by hand {hand:+.2}, Hammerstad-Jensen {hj:+.3} ohm");
        assert!(
            (got / hand - 1.0).abs() < hand_within,
            "{what}: {got} vs {hand}"
        );
        assert!((got / hj - 1.0).abs() < hj_within, "{what}: {got} vs {hj}");
    }
    eprintln!(
        "nominal {:.2} ohm (by hand 50.26, Hammerstad-Jensen 53.76)",
        t.nominal
    );
    assert!((t.nominal / 50.26 - 1.0).abs() < 0.08);
    assert!((t.nominal / 53.76 - 1.0).abs() < 0.02);
}

/// A layer's own tolerances win over `settings.fabrication`: a core held
/// to ±5 % moves Z about half as much as at the default ±10 % (Z is close
/// to linear in a small change), a layer's etch tolerance and copper
/// tolerance replace the defaults in the stack; a 60 % tolerance is an
/// input error at its value.
#[test]
fn per_layer_tolerances_override_the_fabricators() {
    let text = |core: &str, l1: &str| {
        Board::new()
            .material("m", "dk: 3.4, df: 0.003, frequency: 10 GHz")
            .copper("L1", &format!("role: signal, thickness: 35 um{l1}"))
            .dielectric("c", &format!("kind: core, material: m, thickness: 0.2 mm{core}"))
            .copper("L2", "role: plane, thickness: 18 um")
            .class("name: ms, structure: microstrip, layer: L1, width: 0.4 mm, impedance: {target: 50 ohm}")
            .yaml()
    };
    let default = stack(&text("", ""));
    let own = stack(&text(
        ", thickness-tolerance: 5 %",
        ", etch-tolerance: 1 mil, thickness-tolerance: 20 %",
    ));
    let c = |t: &ToleranceStack, what: &str| {
        t.contributions
            .iter()
            .find(|c| c.what.starts_with(what))
            .unwrap()
            .clone()
    };
    assert_eq!(c(&default, "thickness of `c`").tolerance, "±10 %");
    assert_eq!(c(&own, "thickness of `c`").tolerance, "±5 %");
    let ratio = c(&own, "thickness of `c`").dz / c(&default, "thickness of `c`").dz;
    assert!((ratio - 0.5).abs() < 0.05, "{ratio}");
    assert_eq!(c(&own, "etched width").tolerance, "±25.4 µm");
    assert_eq!(c(&own, "copper thickness of `L1`").tolerance, "±20 %");
    let ratio = c(&own, "etched width").dz / c(&default, "etched width").dz;
    assert!((ratio - 2.0).abs() < 0.2, "{ratio}");
    let loaded = load_text(
        "t.stackup.yaml",
        &text(", thickness-tolerance: 60 %", ""),
        &InputLimits::default(),
    );
    let p = &loaded.problems[0];
    assert!(
        p.message
            .contains("dielectric thickness tolerance of 60.0 % is not a build tolerance"),
        "{p:#?}"
    );
    assert_eq!(
        p.primary.pointer,
        "/layers/1/dielectric/thickness-tolerance"
    );
}
