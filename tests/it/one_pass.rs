//! Input errors confined to one net class, matched group or coupon leave
//! that element out, and the rest of the board is analysed as before: a
//! bad class does not hide the findings of the other classes.

use std::collections::BTreeSet;

use serde_json::Value;

use crate::common;

/// `check --format json` of `dir/board.stackup.yaml`, `dir` the project
/// root: exit code and report.
fn check_json(dir: &std::path::Path) -> (Option<i32>, Value) {
    let args = [
        "check",
        "--root",
        ".",
        "board.stackup.yaml",
        "--format",
        "json",
    ];
    let (code, out, err) = common::run_in(dir, &args);
    let v: Value = serde_json::from_str(&out).unwrap_or_else(|_| panic!("{err}"));
    (code, v)
}

/// `check --format json` of the line card with `edit` applied to its
/// board text: exit code and findings as (rule, pointer, message).
fn check_line_card(edit: &dyn Fn(&str) -> String) -> (Option<i32>, Vec<(String, String, String)>) {
    let dir = tempfile::tempdir().unwrap();
    let board =
        std::fs::read_to_string(common::root().join("examples/line-card-10l/board.stackup.yaml"))
            .unwrap();
    std::fs::write(dir.path().join("board.stackup.yaml"), edit(&board)).unwrap();
    common::copy_line_card_coupons(dir.path());
    let (code, v) = check_json(dir.path());
    let findings = v["findings"]
        .as_array()
        .unwrap()
        .iter()
        .map(|f| {
            let s = |k: &str| f[k].as_str().unwrap_or_default().to_string();
            (s("rule"), s("pointer"), s("message"))
        })
        .collect();
    (code, findings)
}

/// The findings that do not mention any of `names`, without messages.
fn unrelated(findings: &[(String, String, String)], names: &[&str]) -> BTreeSet<(String, String)> {
    findings
        .iter()
        .filter(|(rule, _, m)| {
            rule != "invalid-input" && !names.iter().any(|n| m.contains(&format!("`{n}`")))
        })
        .map(|(r, p, _)| (r.clone(), p.clone()))
        .collect()
}

#[test]
fn a_bad_class_leaves_the_other_classes_analysed() {
    let (code, clean) = check_line_card(&|t| t.to_string());
    assert_eq!(code, Some(1));
    // `refclk` with a misspelt unit: the class is left out, and with it the
    // matched group that routes it.
    let (code, broken) =
        check_line_card(&|t| t.replacen("    width: 0.18 mm\n", "    width: 0.18 mn\n", 1));
    assert_eq!(code, Some(2), "an input error still fails the run");
    let errors: Vec<_> = broken.iter().filter(|f| f.0 == "invalid-input").collect();
    assert_eq!(errors.len(), 1, "{errors:#?}");
    assert_eq!(errors[0].1, "/net-classes/4/width");
    assert!(errors[0].2.contains("unknown unit `mn`"), "{errors:#?}");
    // Nothing is said about the class or its group beyond the error...
    let about = |name: &str| {
        broken
            .iter()
            .filter(|f| f.0 != "invalid-input" && f.2.contains(&format!("`{name}`")))
            .count()
    };
    assert_eq!(about("refclk"), 0, "{broken:#?}");
    assert_eq!(about("refclk-fanout"), 0, "{broken:#?}");
    // ...and every other finding is the one the clean board gets.
    let names = ["refclk", "refclk-fanout"];
    assert_eq!(unrelated(&broken, &names), unrelated(&clean, &names));
    assert!(
        unrelated(&broken, &names)
            .iter()
            .any(|(r, p)| r == "impedance-off-target" && p.starts_with("/net-classes/0")),
        "the first class is still solved"
    );
}

#[test]
fn a_bad_coupon_file_leaves_the_board_analysed() {
    let (_, clean) = check_line_card(&|t| t.to_string());
    let (code, broken) = check_line_card(&|t| {
        t.replacen("coupons/cal-line-100mm.s2p", "coupons/no-such-file.s2p", 1)
    });
    assert_eq!(code, Some(2));
    let errors: Vec<_> = broken.iter().filter(|f| f.0 == "invalid-input").collect();
    assert_eq!(errors.len(), 1, "{errors:#?}");
    assert!(errors[0].2.contains("no-such-file.s2p"), "{errors:#?}");
    // The coupon is out: its disagreement is not reported, the rest is.
    assert!(!broken
        .iter()
        .any(|f| f.0 == "coupon-disagrees-with-stackup"));
    let names = ["cal-line"];
    let without_coupon = |f: &[(String, String, String)]| {
        unrelated(f, &names)
            .into_iter()
            .filter(|(r, _)| r != "coupon-disagrees-with-stackup")
            .collect::<BTreeSet<_>>()
    };
    assert_eq!(without_coupon(&broken), without_coupon(&clean));
}

/// A board with six independent mistakes of six kinds (a schema key, a
/// unit, a foil, a material and a layer reference, a rule name): all six
/// are reported in one run, each with the name it most likely means.
const SIX_MISTAKES: &str = "\
stackup-lint: 1
board: six independent mistakes (test)
materials:
  fr4: {dk: 4.2, df: 0.018, frequency: 1 GHz}
foils:
  std-ed: {rz: 5 um}
layers:
  - name: L1
    copper: {role: signal, thickness: 35 uM, down: {side: treated, foil: std-ed}}
  - name: core
    dielectric: {kind: core, material: fr-4, thickness: 0.2 mm}
  - name: L2
    copper: {role: plane, thickness: 35 um, up: {side: treated, foil: std-edd}}
net-classes:
  - name: se50
    structure: microstrip
    layer: l1
    width: 0.3 mm
    impedance: {target: 50 ohm}
  - name: pair100
    structure: diff-microstrip
    layer: L1
    width: 0.15 mm
    diff-spacing: 0.2 mm
    impedance: {target: 100 ohm}
settings:
  rules:
    impedance-of-target: warning
";

#[test]
fn six_mistakes_are_reported_in_one_run_with_suggestions() {
    let dir = tempfile::tempdir().unwrap();
    std::fs::write(dir.path().join("board.stackup.yaml"), SIX_MISTAKES).unwrap();
    let (code, v) = check_json(dir.path());
    assert_eq!(code, Some(2));
    let got: Vec<(u64, String)> = v["findings"]
        .as_array()
        .unwrap()
        .iter()
        .map(|f| {
            assert_eq!(f["rule"], "invalid-input", "{f}");
            (
                f["line"].as_u64().unwrap(),
                f["help"].as_str().unwrap().to_string(),
            )
        })
        .collect();
    // Written out by hand: each mistake's line and the name it means.
    let want = [
        (9, "did you mean `35 um`?"),
        (11, "did you mean `fr4`?"),
        (13, "did you mean `std-ed`?"),
        (17, "did you mean `L1`?"),
        (24, "did you mean `spacing`?"),
        (28, "did you mean `impedance-off-target`?"),
    ];
    let mut got_sorted = got.clone();
    got_sorted.sort();
    assert_eq!(
        got_sorted,
        want.map(|(l, h)| (l, h.to_string())).to_vec(),
        "{got:#?}"
    );
    let (code, human, _) = common::run_in(
        dir.path(),
        &[
            "check",
            "--root",
            ".",
            "board.stackup.yaml",
            "--color",
            "never",
        ],
    );
    assert_eq!(code, Some(2));
    insta::assert_snapshot!("six_mistakes_human", human);
}

/// The six-mistake board with its mistakes corrected (the material only
/// when `material` is set) but for one: the pair's spacing in the unit
/// `mn`.
fn one_unit_mistake(material: bool) -> String {
    let t = SIX_MISTAKES
        .replace("35 uM", "35 um")
        .replace("foil: std-edd", "foil: std-ed")
        .replace("layer: l1", "layer: L1")
        .replace("    diff-spacing: 0.2 mm\n", "    spacing: 0.2 mn\n")
        .replace(
            "    impedance-of-target: warning\n",
            "    impedance-off-target: warning\n",
        );
    if material {
        t.replace("fr-4", "fr4")
    } else {
        t
    }
}

/// A library that cannot be read does not hide the file's own errors: the
/// missing library and a misspelt unit in a net class come in one run, and
/// a material the file's layers name, which might be the library's, is not
/// reported as undefined.
#[test]
fn a_missing_library_does_not_hide_the_files_own_errors() {
    let dir = tempfile::tempdir().unwrap();
    let board = one_unit_mistake(false).replace(
        "materials:\n",
        "libraries: [no-such.materials.yaml]\nmaterials:\n",
    );
    // `fr-4` is still written: not defined here, perhaps in the library.
    assert!(board.contains("material: fr-4"));
    std::fs::write(dir.path().join("board.stackup.yaml"), board).unwrap();
    let (code, v) = check_json(dir.path());
    assert_eq!(code, Some(2));
    let messages: Vec<&str> = v["findings"]
        .as_array()
        .unwrap()
        .iter()
        .map(|f| f["message"].as_str().unwrap())
        .collect();
    assert_eq!(messages.len(), 2, "{messages:#?}");
    assert!(messages[0].contains("material library `no-such.materials.yaml` does not exist"));
    assert!(messages[1].contains("unknown unit `mn`"), "{messages:#?}");
}

/// The model reads only elements the schema found valid, so when a file
/// has more schema errors than are reported (50), no model is built: an
/// unreported error could lie in any element. Below that bound the unit
/// error of a valid class comes in the same run.
#[test]
fn a_file_with_unreported_schema_errors_is_not_modelled() {
    let board = |bad_classes: usize| {
        let mut t = one_unit_mistake(true).replace("net-classes:\n", "net-classes:\n%CLASSES%");
        let classes: String = (0..bad_classes)
            .map(|i| format!("  - {{name: c{i}, structure: microstrip, layer: L1, width: 0.3 mm, colour: red}}\n"))
            .collect();
        t = t.replace("%CLASSES%", &classes);
        t
    };
    let run = |bad_classes: usize| {
        let dir = tempfile::tempdir().unwrap();
        std::fs::write(dir.path().join("board.stackup.yaml"), board(bad_classes)).unwrap();
        let (code, v) = check_json(dir.path());
        assert_eq!(code, Some(2));
        v["findings"]
            .as_array()
            .unwrap()
            .iter()
            .map(|f| {
                let s = |k: &str| f[k].as_str().unwrap().to_string();
                (s("rule"), s("message"))
            })
            .collect::<Vec<_>>()
    };
    let count = |m: &[(String, String)], rule: &str, text: &str| {
        m.iter()
            .filter(|(r, m)| r == rule && m.contains(text))
            .count()
    };
    let few = run(10);
    assert_eq!(count(&few, "invalid-input", ""), 11, "{few:#?}");
    assert_eq!(count(&few, "invalid-input", "unknown unit `mn`"), 1);
    // The valid class is analysed too.
    assert_eq!(count(&few, "impedance-off-target", "`se50`"), 1, "{few:#?}");
    let many = run(60);
    assert_eq!(many.len(), 50, "the first 50 schema errors");
    assert_eq!(count(&many, "invalid-input", "unknown key `colour`"), 50);
}
