//! SARIF output: valid against the SARIF 2.1.0 JSON schema and complete
//! enough for code-scanning services.

use std::path::Path;
use std::process::Command;

use serde_json::Value;

fn run_with_sarif(args: &[&str], sarif: &Path) -> std::process::Output {
    Command::new(env!("CARGO_BIN_EXE_stackup-lint"))
        .current_dir(env!("CARGO_MANIFEST_DIR"))
        .args(args)
        .arg("--sarif")
        .arg(sarif)
        .output()
        .expect("binary runs")
}

fn shared_schema() -> Option<Value> {
    let path = Path::new(env!("CARGO_MANIFEST_DIR")).join("../shared/sarif-schema-2.1.0.json");
    let text = std::fs::read_to_string(path).ok()?;
    Some(serde_json::from_str(&text).expect("schema is JSON"))
}

fn sarif_of(args: &[&str]) -> Value {
    let dir = tempfile::tempdir().unwrap();
    let out = dir.path().join("out.sarif");
    let o = run_with_sarif(args, &out);
    assert!(!String::from_utf8_lossy(&o.stderr).contains("panicked"));
    let text = std::fs::read_to_string(&out).expect("SARIF written");
    serde_json::from_str(&text).expect("SARIF is JSON")
}

#[test]
fn sarif_validates_against_the_official_schema() {
    let Some(schema) = shared_schema() else {
        eprintln!("SKIPPED: ../shared/sarif-schema-2.1.0.json is not present; cannot validate SARIF against the schema");
        return;
    };
    // The shared copy uses draft-07 keywords; let jsonschema pick the draft from `$schema`.
    let validator = jsonschema::validator_for(&schema).expect("schema compiles");
    for args in [
        &["check", "examples/", "--color", "never"][..],
        &["check", "tests/bad-input", "--color", "never"][..],
    ] {
        let log = sarif_of(args);
        let errors: Vec<String> = validator
            .iter_errors(&log)
            .map(|e| format!("{} at {}", e, e.instance_path()))
            .collect();
        assert!(errors.is_empty(), "{args:?}: {errors:#?}");
    }
}

#[test]
fn sarif_has_what_code_scanning_needs() {
    let log = sarif_of(&["check", "examples/", "--color", "never"]);
    assert_eq!(log["version"], "2.1.0");
    assert!(log["$schema"].as_str().is_some_and(|s| s.contains("sarif")));
    let run = &log["runs"][0];
    let rules = run["tool"]["driver"]["rules"]
        .as_array()
        .expect("rules array");
    assert!(rules.len() >= 4);
    for r in rules {
        for key in [
            "id",
            "name",
            "shortDescription",
            "fullDescription",
            "helpUri",
            "defaultConfiguration",
        ] {
            assert!(!r[key].is_null(), "rule {} lacks {key}", r["id"]);
        }
    }
    let results = run["results"].as_array().expect("results");
    assert!(!results.is_empty(), "the flawed demo board gives results");
    for res in results {
        assert!(res["message"]["text"]
            .as_str()
            .is_some_and(|t| !t.is_empty()));
        let id = res["ruleId"].as_str().unwrap();
        let idx = res["ruleIndex"].as_u64().unwrap() as usize;
        assert_eq!(rules[idx]["id"], id, "ruleIndex points at the rule");
        let loc = &res["locations"][0]["physicalLocation"];
        let uri = loc["artifactLocation"]["uri"].as_str().unwrap();
        assert!(
            uri.starts_with("examples/"),
            "artifact URI relative to the repo root: {uri}"
        );
        // SARIF 2.1.0 §3.30.2: a text region needs startLine (or an offset).
        assert!(loc["region"]["startLine"].as_u64().is_some_and(|l| l >= 1));
        assert!(loc["region"]["startColumn"]
            .as_u64()
            .is_some_and(|c| c >= 1));
        assert!(res["partialFingerprints"]
            .as_object()
            .is_some_and(|m| !m.is_empty()));
    }
}

#[test]
fn sarif_regions_point_at_the_yaml_text() {
    let log = sarif_of(&["check", "examples/line-card-10l", "--color", "never"]);
    let text = std::fs::read_to_string(
        Path::new(env!("CARGO_MANIFEST_DIR")).join("examples/line-card-10l/board.stackup.yaml"),
    )
    .unwrap();
    let lines: Vec<&str> = text.lines().collect();
    let results = log["runs"][0]["results"].as_array().unwrap();
    let board = results
        .iter()
        .find(|r| r["ruleId"] == "board-thickness-off-target")
        .expect("thickness finding");
    let region = &board["locations"][0]["physicalLocation"]["region"];
    let line = lines[region["startLine"].as_u64().unwrap() as usize - 1];
    let c0 = region["startColumn"].as_u64().unwrap() as usize - 1;
    let c1 = region["endColumn"].as_u64().unwrap() as usize - 1;
    let spanned: String = line.chars().skip(c0).take(c1 - c0).collect();
    assert_eq!(spanned, "2.0 mm");
}

#[test]
fn suppressed_findings_are_kept_as_suppressed() {
    let dir = tempfile::tempdir().unwrap();
    let file = dir.path().join("s.stackup.yaml");
    std::fs::write(
        &file,
        "stackup-lint: 1\nmaterials:\n  fr4: {dk: 4.0, df: 0.02, frequency: 1 GHz}\nlayers:\n  - name: L1\n    copper: {role: signal, thickness: 35 um}\n  - name: core\n    dielectric: {kind: core, material: fr4, thickness: 1.2 mm}\n  - name: L2\n    copper: {role: plane, thickness: 35 um}\nsettings:\n  board-thickness: {target: 1.6 mm, tolerance: 10 %}\n  suppress:\n    - rule: board-thickness-off-target\n      reason: prototype lot, thickness not controlled\n",
    )
    .unwrap();
    let out = dir.path().join("o.sarif");
    let o = run_with_sarif(&["check", file.to_str().unwrap(), "--color", "never"], &out);
    assert_eq!(
        o.status.code(),
        Some(0),
        "a suppressed finding does not fail the run"
    );
    let log: Value = serde_json::from_str(&std::fs::read_to_string(&out).unwrap()).unwrap();
    let res = &log["runs"][0]["results"][0];
    assert_eq!(res["ruleId"], "board-thickness-off-target");
    assert_eq!(res["suppressions"][0]["kind"], "inSource");
    assert_eq!(
        res["suppressions"][0]["justification"],
        "prototype lot, thickness not controlled"
    );
}

/// A SARIF fix, applied as a review tool would (its replacement at its
/// region, columns in code points, the end column exclusive), resolves its
/// finding: the line card's 90 Ω pair at its proposed width no longer
/// misses its target.
#[test]
fn a_sarif_fix_applied_resolves_its_finding() {
    let dir = tempfile::tempdir().unwrap();
    let root = Path::new(env!("CARGO_MANIFEST_DIR"));
    let board = dir.path().join("board.stackup.yaml");
    std::fs::copy(
        root.join("examples/line-card-10l/board.stackup.yaml"),
        &board,
    )
    .unwrap();
    crate::common::copy_line_card_coupons(dir.path());
    let check = |sarif: &Path| {
        Command::new(env!("CARGO_BIN_EXE_stackup-lint"))
            .current_dir(dir.path())
            .args(["check", "board.stackup.yaml", "--root", ".", "--sarif"])
            .arg(sarif)
            .output()
            .expect("binary runs")
    };
    let out = dir.path().join("a.sarif");
    check(&out);
    let log: Value = serde_json::from_str(&std::fs::read_to_string(&out).unwrap()).unwrap();
    let results = log["runs"][0]["results"].as_array().unwrap();
    let fixed: Vec<&Value> = results
        .iter()
        .filter(|r| r.get("fixes").is_some())
        .collect();
    assert!(!fixed.is_empty());
    let r = fixed
        .iter()
        .find(|r| {
            r["message"]["text"]
                .as_str()
                .unwrap()
                .contains("host-56g-pam4")
        })
        .expect("a fix for the host pair");
    let rep = &r["fixes"][0]["artifactChanges"][0]["replacements"][0];
    let (line, c0, c1) = (
        rep["deletedRegion"]["startLine"].as_u64().unwrap() as usize,
        rep["deletedRegion"]["startColumn"].as_u64().unwrap() as usize,
        rep["deletedRegion"]["endColumn"].as_u64().unwrap() as usize,
    );
    let new = rep["insertedContent"]["text"].as_str().unwrap();
    let text = std::fs::read_to_string(&board).unwrap();
    let mut lines: Vec<String> = text.lines().map(str::to_string).collect();
    let l: Vec<char> = lines[line - 1].chars().collect();
    let old: String = l[c0 - 1..c1 - 1].iter().collect();
    assert_eq!(old, "0.195 mm", "the region is the width's value");
    lines[line - 1] = format!(
        "{}{new}{}",
        l[..c0 - 1].iter().collect::<String>(),
        l[c1 - 1..].iter().collect::<String>()
    );
    std::fs::write(&board, lines.join("\n") + "\n").unwrap();
    let out2 = dir.path().join("b.sarif");
    check(&out2);
    let log2: Value = serde_json::from_str(&std::fs::read_to_string(&out2).unwrap()).unwrap();
    let still = log2["runs"][0]["results"]
        .as_array()
        .unwrap()
        .iter()
        .any(|r| {
            r["ruleId"] == "impedance-off-target"
                && r["message"]["text"]
                    .as_str()
                    .unwrap()
                    .contains("host-56g-pam4")
        });
    assert!(!still, "the fixed width still misses its target");
}
