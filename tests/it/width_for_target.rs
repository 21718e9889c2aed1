//! The width the tool proposes meets the target when it is applied: every
//! net class of the 24-layer, 40-class demo board (widths far off target,
//! stripline, pairs, microstrip) is re-solved at its proposed width and must
//! then read the target with the declared (worst-case) copper.
//!
//! The check is against the field solver's full, extrapolated solve, whose
//! own accuracy is checked against Cohn's exact striplines and
//! Hammerstad-Jensen microstrip in
//! `crates/stackup-physics/tests/checks/tline_fieldsolver.rs`; the search's
//! agreement with the inverses of those closed forms is checked in
//! `crates/stackup-physics/tests/checks/tline_solver_paths.rs`.

use crate::common;
use std::path::Path;

fn impedance(file: &Path) -> Vec<serde_json::Value> {
    let o = common::output(
        common::command(common::root())
            .args(["impedance", "--no-cache", "--format", "json"])
            .arg(file),
    );
    assert!(
        o.status.code().is_some_and(|c| c <= 1),
        "{}",
        String::from_utf8_lossy(&o.stderr)
    );
    let v: serde_json::Value = serde_json::from_slice(&o.stdout).unwrap();
    v[0]["net_classes"].as_array().unwrap().clone()
}

#[test]
fn proposed_widths_meet_their_targets() {
    let fixtures = common::root().join("bench/fixtures");
    let dir = tempfile::tempdir().unwrap();
    std::fs::copy(
        fixtures.join("bench.materials.yaml"),
        dir.path().join("bench.materials.yaml"),
    )
    .unwrap();
    let board = std::fs::read_to_string(fixtures.join("board-24l-40c.stackup.yaml")).unwrap();
    let first = dir.path().join("first.stackup.yaml");
    std::fs::write(&first, &board).unwrap();
    let before = impedance(&first);
    assert_eq!(before.len(), 40);

    // Write each class's proposed width into its `width:` line.
    let mut proposed = Vec::new();
    let mut out = String::new();
    let mut in_classes = false;
    let mut k = 0;
    for line in board.lines() {
        in_classes |= line.starts_with("net-classes:");
        let indent = line.len() - line.trim_start().len();
        if in_classes && line.trim_start().starts_with("width:") {
            let w = before[k]["width_for_target_um"].as_f64();
            proposed.push(w);
            k += 1;
            if let Some(w) = w {
                out.push_str(&format!("{}width: {w} um\n", " ".repeat(indent)));
                continue;
            }
        }
        out.push_str(line);
        out.push('\n');
    }
    assert_eq!(k, 40, "one width line per class");
    let second = dir.path().join("second.stackup.yaml");
    std::fs::write(&second, out).unwrap();
    let after = impedance(&second);

    let mut checked = 0;
    for ((b, a), w) in before.iter().zip(&after).zip(&proposed) {
        let (Some(target), Some(_)) = (b["target_ohm"].as_f64(), w) else {
            continue;
        };
        let z = a["rough_worst"]["z_ohm"].as_f64().unwrap();
        // 0.1 % search tolerance + the 0.1 µm rounding of the printed width.
        assert!(
            ((z - target) / target).abs() < 2.5e-3,
            "{}: {} µm proposed, reads {z} Ω against {target} Ω",
            b["net_class"],
            w.unwrap()
        );
        // Most classes of this board are far off target, so the search is
        // exercised over large changes.
        checked += 1;
    }
    assert!(checked >= 35, "{checked} classes checked");
    let far = before
        .iter()
        .zip(&proposed)
        .filter(|(b, w)| {
            let w0 = b["width_um"].as_f64().unwrap();
            w.is_some_and(|w| (w / w0 - 1.0).abs() > 0.3)
        })
        .count();
    assert!(far >= 10, "{far} classes more than 30 % off");
}

/// The spacing proposed for a pair off its target (at its drawn width)
/// meets the target when applied: the line card's two 90 Ω pairs, one low
/// and one high, re-solved at their proposed spacings read 90 Ω within
/// 0.3 % with the declared copper.
#[test]
fn proposed_spacings_meet_their_targets() {
    use stackup_lint::analysis::analyze;
    use stackup_lint::engine::load_text;
    use stackup_lint::load::InputLimits;
    let path = common::root().join("examples/line-card-10l/board.stackup.yaml");
    let text = std::fs::read_to_string(&path).unwrap();
    let solve = |text: &str| {
        let loaded = load_text("board.stackup.yaml", text, &InputLimits::default());
        assert!(loaded.problems.is_empty(), "{:#?}", loaded.problems);
        let s = loaded.stackups.into_iter().next().unwrap();
        let a = analyze(&s, &Default::default());
        (s, a)
    };
    let (s, a) = solve(&text);
    let mut edited = text.clone();
    let mut checked = Vec::new();
    for (nc, ca) in s.net_classes.iter().zip(&a.classes) {
        let (Some(sp), Some(now)) = (ca.spacing_for_target, nc.spacing) else {
            continue;
        };
        if (sp - now).abs() < 1e-7 {
            continue;
        }
        // Each pair's `spacing:` line follows its `name:` in the file.
        let at = edited.find(&format!("name: {}\n", nc.name)).unwrap();
        let rel = edited[at..].find("spacing: ").unwrap() + at;
        let end = edited[rel..].find('\n').unwrap() + rel;
        edited.replace_range(rel..end, &format!("spacing: {:.2} um", sp * 1e6));
        checked.push(nc.name.clone());
    }
    assert_eq!(checked.len(), 2, "{checked:?}");
    let (s2, a2) = solve(&edited);
    for name in &checked {
        let i = s2.net_classes.iter().position(|c| &c.name == name).unwrap();
        let z = a2.classes[i].rough_worst.unwrap().z;
        let t = s2.net_classes[i].impedance.unwrap().target;
        assert!((z / t - 1.0).abs() < 3e-3, "{name}: {z} against {t}");
    }
}

/// A pair designed for a target and a coupling coefficient: the width and
/// spacing the tool proposes, applied, give both (a full solve through the
/// whole pipeline: Z_diff within 0.5 %, k within 0.005), and Cohn's exact
/// coupled stripline (S. B. Cohn, IRE Trans. MTT-3, 1955) at
/// those dimensions agrees: its strips have no thickness, so it reads
/// higher than the 2 µm strips by about 2 % (a strip of thickness t acts
/// some (t/π)(1 + ln(4πw/t)) ≈ 5 µm wider, common practice, no source);
/// held within 0 to 3 % above in Z_diff and 0.01 in k.
#[test]
fn width_and_spacing_for_a_target_and_a_coupling() {
    use stackup_lint::analysis::analyze;
    use stackup_lint::engine::load_text;
    use stackup_lint::load::InputLimits;
    let board = |w_um: f64, s_um: f64| {
        common::board::Board::new()
            .material("m", "dk: 3.6, df: 0.004, frequency: 5 GHz")
            .foil("smooth", "rq: 0 um")
            .copper("P1", "role: plane, thickness: 18 um, down: {side: treated, foil: smooth}")
            .dielectric("c1", "kind: core, material: m, thickness: 0.2 mm")
            .copper("S", "role: signal, thickness: 2 um, up: {side: treated, foil: smooth}, down: {side: treated, foil: smooth}")
            .dielectric("c2", "kind: core, material: m, thickness: 0.2 mm")
            .copper("P2", "role: plane, thickness: 18 um, up: {side: treated, foil: smooth}")
            .class(&format!("name: p, structure: diff-stripline, layer: S, width: {w_um} um, spacing: {s_um} um, impedance: {{target: 100 ohm, coupling: 0.15}}, max-frequency: 5 GHz"))
            .yaml()
    };
    let solve = |text: String| {
        let loaded = load_text("t.stackup.yaml", &text, &InputLimits::default());
        assert!(loaded.problems.is_empty(), "{:#?}", loaded.problems);
        let a = analyze(&loaded.stackups[0], &Default::default());
        a.classes[0].clone()
    };
    let ca = solve(board(100.0, 200.0));
    let (w, s) = ca
        .pair_for_target
        .expect("width and spacing for the coupling");
    eprintln!("width {:.2} um, spacing {:.2} um", w * 1e6, s * 1e6);
    let applied = solve(board(w * 1e6, s * 1e6));
    let n = applied.smooth.unwrap();
    let p = n.pair.unwrap();
    let k = (p.z_even - p.z_odd) / (p.z_even + p.z_odd);
    eprintln!("applied: Z_diff {:.3} ohm, k {k:.4}", n.z);
    assert!((n.z / 100.0 - 1.0).abs() < 5e-3, "{}", n.z);
    assert!((k - 0.15).abs() < 5e-3, "{k}");
    let cohn = stackup_physics::coupled::cohn_coupled_stripline(w, s, 0.4e-3 + 2e-6, n.eps_eff)
        .unwrap()
        .modes;
    let kc = (cohn.z_even - cohn.z_odd) / (cohn.z_even + cohn.z_odd);
    eprintln!("Cohn: Z_diff {:.3} ohm, k {kc:.4}", 2.0 * cohn.z_odd);
    let above = 2.0 * cohn.z_odd / n.z - 1.0;
    assert!((0.0..0.03).contains(&above), "{above}");
    assert!((kc - 0.15).abs() < 0.01);
}

/// A coupling on a single line, or one of 0.95, is an input error at its
/// value.
#[test]
fn a_coupling_must_be_a_pairs_and_plausible() {
    use stackup_lint::engine::load_text;
    use stackup_lint::load::InputLimits;
    for (class, want) in [
        ("name: a, structure: microstrip, layer: L1, width: 0.3 mm, impedance: {target: 50 ohm, coupling: 0.1}", "this class is a single line"),
        ("name: a, structure: diff-microstrip, layer: L1, width: 0.1 mm, spacing: 0.1 mm, impedance: {target: 100 ohm, coupling: 0.95}", "lies between 0 and 0.9"),
    ] {
        let text = common::board::Board::microstrip("m", "0.2 mm")
            .material("m", "dk: 3.6, df: 0.004, frequency: 5 GHz")
            .class(class)
            .yaml();
        let loaded = load_text("t.stackup.yaml", &text, &InputLimits::default());
        let p = &loaded.problems[0];
        assert!(p.message.contains(want), "{}", p.message);
        assert_eq!(p.primary.pointer, "/net-classes/0/impedance/coupling");
    }
}
