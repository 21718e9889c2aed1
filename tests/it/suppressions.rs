//! Inline suppressions: a `suppress:` list on a layer, material, foil, net
//! class or matched group hides that rule's findings at that element only,
//! is reported when it matches nothing, reaches SARIF as an in-source
//! suppression with its justification, and must give a reason.

use std::path::Path;

use crate::common::output_in as run;

use serde_json::Value;

const BOARD: &str = "examples/line-card-10l/board.stackup.yaml";

/// The demo board with `line` inserted after the first line equal to
/// `after` (trimmed); returns the scratch dir and the 1-based line number
/// of the inserted line.
fn board_with(edits: &[(&str, &str)]) -> (tempfile::TempDir, Vec<usize>) {
    let text = std::fs::read_to_string(Path::new(env!("CARGO_MANIFEST_DIR")).join(BOARD)).unwrap();
    let mut lines: Vec<String> = text.lines().map(str::to_string).collect();
    for (after, line) in edits {
        let i = lines
            .iter()
            .position(|l| l.trim() == *after)
            .unwrap_or_else(|| panic!("no line `{after}`"));
        lines.insert(i + 1, line.to_string());
    }
    let numbers = edits
        .iter()
        .map(|(_, line)| lines.iter().position(|l| l == line).unwrap() + 1)
        .collect();
    let dir = tempfile::tempdir().unwrap();
    std::fs::write(
        dir.path().join("board.stackup.yaml"),
        lines.join("\n") + "\n",
    )
    .unwrap();
    crate::common::copy_line_card_coupons(dir.path());
    (dir, numbers)
}

fn report(dir: &Path) -> (Option<i32>, Value) {
    let o = run(dir, &["check", ".", "--format", "json"]);
    (o.status.code(), serde_json::from_slice(&o.stdout).unwrap())
}

fn findings(j: &Value) -> &Vec<Value> {
    j["findings"].as_array().unwrap()
}

fn find<'a>(j: &'a Value, rule: &str, pointer: &str) -> Option<&'a Value> {
    findings(j)
        .iter()
        .find(|f| f["rule"] == rule && f["pointer"] == pointer)
}

const PP1_REASON: &str = "fab confirmed pp1/pp5 imbalance is within their warp limit";

#[test]
fn inline_suppressions_hide_findings_at_their_element_only() {
    let (plain, _) = board_with(&[]);
    let (_, before) = report(plain.path());
    // The demo board has two mirror findings at the top of the board
    // (pp1 and L2) and a frequency-validity warning on each material.
    assert!(find(&before, "stackup-mirror-asymmetry", "/layers/2/name").is_some());
    assert!(find(&before, "stackup-mirror-asymmetry", "/layers/3/name").is_some());
    assert!(find(
        &before,
        "frequency-beyond-validity",
        "/materials/low-loss-core/valid-to"
    )
    .is_some());
    assert!(find(
        &before,
        "frequency-beyond-validity",
        "/materials/low-loss-prepreg/valid-to"
    )
    .is_some());

    let (dir, _) = board_with(&[
        (
            "- name: pp1",
            &format!("    suppress: [{{rule: stackup-mirror-asymmetry, reason: \"{PP1_REASON}\"}}]"),
        ),
        (
            "low-loss-core:",
            "    suppress: [{rule: frequency-beyond-validity, reason: \"resonator data to 50 GHz on file\"}]",
        ),
    ]);
    let (code, j) = report(dir.path());
    assert_eq!(code, Some(1), "the board's errors remain");
    let pp1 = find(&j, "stackup-mirror-asymmetry", "/layers/2/name").unwrap();
    assert_eq!(pp1["suppressed"], PP1_REASON);
    // Same rule, other layer: not covered.
    let l2 = find(&j, "stackup-mirror-asymmetry", "/layers/3/name").unwrap();
    assert!(l2["suppressed"].is_null());
    let core = find(
        &j,
        "frequency-beyond-validity",
        "/materials/low-loss-core/valid-to",
    )
    .unwrap();
    assert_eq!(core["suppressed"], "resonator data to 50 GHz on file");
    // Same rule, other material: not covered.
    let prepreg = find(
        &j,
        "frequency-beyond-validity",
        "/materials/low-loss-prepreg/valid-to",
    )
    .unwrap();
    assert!(prepreg["suppressed"].is_null());
    assert_eq!(
        j["summary"]["suppressed"].as_u64().unwrap(),
        before["summary"]["suppressed"].as_u64().unwrap() + 2
    );
    assert!(findings(&j)
        .iter()
        .all(|f| f["rule"] != "unused-suppression" || f["pointer"] == "/settings/suppress/0"));
}

#[test]
fn a_secondary_location_inside_the_element_is_covered() {
    // The pp1 mirror finding points at pp1 and, as its secondary location,
    // at its mirror pp5 (/layers/18): a suppression on pp5 covers it.
    let (dir, _) = board_with(&[(
        "- name: pp5",
        "    suppress: [{rule: stackup-mirror-asymmetry, reason: \"thin bottom ply agreed with the fab\"}]",
    )]);
    let (_, j) = report(dir.path());
    let f = find(&j, "stackup-mirror-asymmetry", "/layers/2/name").unwrap();
    assert_eq!(f["suppressed"], "thin bottom ply agreed with the fab");
    assert!(find(&j, "unused-suppression", "/layers/18/suppress/0").is_none());
}

#[test]
fn an_unused_inline_suppression_is_reported_at_its_entry() {
    // L1 (a signal layer next to L2, a plane) has no broadside finding.
    let (dir, lines) = board_with(&[
        (
            "- name: L1",
            "    suppress: [{rule: broadside-signal-layers, reason: \"nothing to hide here\"}]",
        ),
        (
            "- name: refclk-fanout",
            "    suppress: [{rule: propagation-skew, reason: \"the receiver deskews\"}]",
        ),
    ]);
    let (_, j) = report(dir.path());
    let unused = find(&j, "unused-suppression", "/layers/1/suppress/0").expect("reported");
    assert_eq!(unused["line"].as_u64().unwrap() as usize, lines[0]);
    assert_eq!(unused["severity"], "warning");
    assert!(unused["message"]
        .as_str()
        .unwrap()
        .contains("`broadside-signal-layers` at `L1`"));
    // The group one is used (the group's skew finding), so not reported.
    assert!(find(&j, "unused-suppression", "/matched-groups/0/suppress/0").is_none());
    let skew = find(&j, "propagation-skew", "/matched-groups/0/skew-budget").unwrap();
    assert_eq!(skew["suppressed"], "the receiver deskews");
}

#[test]
fn sarif_carries_inline_suppressions_in_source_with_their_justification() {
    let (dir, _) = board_with(&[(
        "- name: host-56g-pam4",
        "    suppress: [{rule: impedance-off-target, reason: \"width retuned on the fab's coupon\"}]",
    )]);
    let sarif = dir.path().join("out.sarif");
    run(
        dir.path(),
        &["check", ".", "--sarif", sarif.to_str().unwrap()],
    );
    let log: Value = serde_json::from_str(&std::fs::read_to_string(&sarif).unwrap()).unwrap();
    let results = log["runs"][0]["results"].as_array().unwrap();
    let r = results
        .iter()
        .find(|r| r["ruleId"] == "impedance-off-target")
        .expect("the finding is still in the log");
    let s = &r["suppressions"][0];
    assert_eq!(s["kind"], "inSource");
    assert_eq!(s["justification"], "width retuned on the fab's coupon");
    // Unsuppressed results carry no suppressions.
    assert!(results
        .iter()
        .filter(|r| r["ruleId"] == "missing-reference-plane")
        .all(|r| r.get("suppressions").is_none()));
}

#[test]
fn an_inline_suppression_needs_a_reason_and_a_real_rule() {
    for (entry, pointer_tail) in [
        ("    suppress: [{rule: stackup-mirror-asymmetry}]", ""),
        (
            "    suppress: [{rule: stackup-mirror-asymmetry, reason: \"\"}]",
            "/reason",
        ),
        (
            "    suppress: [{rule: stackup-mirror-asymetry, reason: \"typo in the rule name\"}]",
            "/rule",
        ),
    ] {
        let (dir, lines) = board_with(&[("- name: pp1", entry)]);
        let (code, j) = report(dir.path());
        assert_eq!(code, Some(2), "{entry}");
        let errors: Vec<&Value> = findings(&j)
            .iter()
            .filter(|f| f["rule"] == "invalid-input")
            .collect();
        assert_eq!(errors.len(), 1, "{entry}: {errors:#?}");
        let e = errors[0];
        assert_eq!(
            e["line"].as_u64().unwrap() as usize,
            lines[0],
            "{entry}: {e:#}"
        );
        assert!(
            e["pointer"]
                .as_str()
                .unwrap()
                .starts_with(&format!("/layers/2/suppress/0{pointer_tail}")),
            "{entry}: {e:#}"
        );
    }
}

/// A board whose ply `c` uses the built-in `generic-fr4` (data validated
/// to 5 GHz) under a class carrying 20 GHz, with `extra` added to its
/// settings.
fn builtin_board(extra: &str) -> String {
    let mut board = crate::common::board::Board::microstrip("generic-fr4", "0.2 mm")
        .class("name: fast, structure: microstrip, layer: L1, width: 0.35 mm, impedance: {target: 50 ohm, tolerance: 20 %}, max-frequency: 20 GHz");
    if !extra.is_empty() {
        board = board.settings(extra);
    }
    let yaml = board.yaml();
    yaml.replacen(
        "stackup-lint: 1\n",
        "stackup-lint: 1\nlibraries: [builtin:generic]\n",
        1,
    )
}

fn run_board(text: &str) -> (tempfile::TempDir, Value, String) {
    let dir = tempfile::tempdir().unwrap();
    std::fs::write(dir.path().join("b.stackup.yaml"), text).unwrap();
    let (_, j) = report(dir.path());
    let o = run(
        dir.path(),
        &[
            "check",
            "b.stackup.yaml",
            "--format",
            "json",
            "--sarif",
            "out.sarif",
        ],
    );
    assert!(
        o.status.code().unwrap_or(9) < 2,
        "{}",
        String::from_utf8_lossy(&o.stdout)
    );
    let sarif = std::fs::read_to_string(dir.path().join("out.sarif")).unwrap();
    (dir, j, sarif)
}

/// A finding about a built-in material sits where the board uses it (the
/// ply's `material:`), never in the built-in library, which SARIF never
/// names as an artifact; `at: <material>` suppresses it.
#[test]
fn library_material_findings_point_at_their_use_and_can_be_suppressed() {
    let (_d, j, sarif) = run_board(&builtin_board(""));
    let f = findings(&j)
        .iter()
        .find(|f| {
            f["rule"] == "frequency-beyond-validity"
                && f["message"].as_str().unwrap().contains("generic-fr4")
        })
        .unwrap_or_else(|| panic!("{j:#}"));
    assert_eq!(f["file"], "b.stackup.yaml");
    assert_eq!(f["pointer"], "/layers/1/dielectric/material");
    assert!(!sarif.contains("builtin:"), "{sarif}");

    let (_d, j, _) = run_board(&builtin_board(
        "  suppress:\n    - {rule: frequency-beyond-validity, at: generic-fr4, reason: \"data to 20 GHz on file\"}\n",
    ));
    let f = findings(&j)
        .iter()
        .find(|f| {
            f["rule"] == "frequency-beyond-validity"
                && f["message"].as_str().unwrap().contains("generic-fr4")
        })
        .unwrap();
    assert_eq!(f["suppressed"], "data to 20 GHz on file");
    assert!(
        !findings(&j)
            .iter()
            .any(|f| f["rule"] == "unused-suppression"),
        "{j:#}"
    );
}

/// A material from a library file: the finding at the ply that names it,
/// the library's entry as a related place.
#[test]
fn library_file_material_findings_relate_to_the_library() {
    let dir = tempfile::tempdir().unwrap();
    std::fs::write(
        dir.path().join("lib.materials.yaml"),
        "stackup-lint-materials: 1\nmaterials:\n  slow-fr4: {class: FR-4 class epoxy/glass (demo values), dk: 4.2, df: 0.02, frequency: 1 GHz, valid-to: 3 GHz}\n",
    )
    .unwrap();
    let text = crate::common::board::Board::microstrip("slow-fr4", "0.2 mm")
        .class("name: fast, structure: microstrip, layer: L1, width: 0.35 mm, impedance: {target: 50 ohm, tolerance: 20 %}, max-frequency: 20 GHz")
        .yaml()
        .replacen("stackup-lint: 1\n", "stackup-lint: 1\nlibraries: [lib.materials.yaml]\n", 1);
    std::fs::write(dir.path().join("b.stackup.yaml"), text).unwrap();
    let (code, j) = report(dir.path());
    assert!(code.unwrap_or(9) < 2, "{j:#}");
    let f = findings(&j)
        .iter()
        .find(|f| {
            f["rule"] == "frequency-beyond-validity"
                && f["message"].as_str().unwrap().contains("slow-fr4")
        })
        .unwrap_or_else(|| panic!("{j:#}"));
    assert_eq!(f["pointer"], "/layers/1/dielectric/material");
    let lib = f["labels"]
        .as_array()
        .unwrap()
        .iter()
        .find(|l| l["file"] == "lib.materials.yaml")
        .unwrap_or_else(|| panic!("{f:#}"));
    assert_eq!(lib["line"], 3);
}
