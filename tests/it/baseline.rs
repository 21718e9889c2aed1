//! `baseline write` and `check --baseline`: recorded findings stop failing
//! the run, a material change of a finding's numbers makes it new again,
//! and edits that move lines do not.

use std::process::Output;

use serde_json::Value;

use crate::common::{output_in as run, root};

const BOARD: &str = "examples/line-card-10l/board.stackup.yaml";

fn json_of(o: &Output) -> Value {
    serde_json::from_slice(&o.stdout).expect("JSON report")
}

fn findings(report: &Value) -> &Vec<Value> {
    report["findings"].as_array().expect("findings array")
}

/// A scratch directory holding a copy of the demo board at `board.stackup.yaml`,
/// with `edit` applied to its text.
fn copy_board(edit: impl Fn(&str) -> String) -> tempfile::TempDir {
    let dir = tempfile::tempdir().unwrap();
    let text = std::fs::read_to_string(root().join(BOARD)).unwrap();
    std::fs::write(dir.path().join("board.stackup.yaml"), edit(&text)).unwrap();
    crate::common::copy_line_card_coupons(dir.path());
    dir
}

#[test]
fn the_demo_board_is_fully_baselined_by_its_own_baseline() {
    let tmp = tempfile::tempdir().unwrap();
    let base = tmp.path().join("baseline.json");
    let base = base.to_str().unwrap();
    let w = run(
        root(),
        &["baseline", "write", "examples/line-card-10l", "-o", base],
    );
    assert_eq!(
        w.status.code(),
        Some(0),
        "{}",
        String::from_utf8_lossy(&w.stderr)
    );

    // The file is the documented format, one entry per finding of a plain check.
    let b: Value = serde_json::from_str(&std::fs::read_to_string(base).unwrap()).unwrap();
    assert_eq!(b["stackup-lint-baseline"], 1);
    let plain = json_of(&run(
        root(),
        &["check", "examples/line-card-10l", "--format", "json"],
    ));
    assert_eq!(
        b["findings"].as_array().unwrap().len(),
        findings(&plain).len()
    );
    for e in b["findings"].as_array().unwrap() {
        assert_eq!(e["file"], BOARD);
        assert!(e["rule"].as_str().is_some_and(|r| !r.is_empty()));
        assert!(e["message"].as_str().is_some_and(|m| !m.is_empty()));
        assert_eq!(e["fingerprint"].as_str().unwrap().len(), 16);
    }

    // Without the baseline the demo board fails; with it, it passes.
    let o = run(
        root(),
        &["check", "examples/line-card-10l", "--color", "never"],
    );
    assert_eq!(o.status.code(), Some(1));
    let o = run(
        root(),
        &[
            "check",
            "examples/line-card-10l",
            "--color",
            "never",
            "--baseline",
            base,
        ],
    );
    assert_eq!(o.status.code(), Some(0));
    let text = String::from_utf8_lossy(&o.stdout);
    let n = findings(&plain).len();
    assert!(
        text.trim_end().ends_with(&format!(
            "0 errors, 0 warnings, 0 notes in 1 file ({n} baselined)"
        )),
        "{text}"
    );
    assert!(
        !text.contains("[roughness-impedance-drift]")
            && !text.contains("roughness-impedance-drift")
    );

    let j = json_of(&run(
        root(),
        &[
            "check",
            "examples/line-card-10l",
            "--format",
            "json",
            "--baseline",
            base,
        ],
    ));
    assert!(findings(&j).iter().all(|f| f["baselined"] == true));
    assert_eq!(j["summary"]["baselined"], n);
    assert_eq!(j["summary"]["errors"], 0);
    // Without a baseline the field is absent.
    assert!(findings(&plain)
        .iter()
        .all(|f| f.get("baselined").is_none()));

    // SARIF: every result is "unchanged".
    let sarif = tmp.path().join("out.sarif");
    run(
        root(),
        &[
            "check",
            "examples/line-card-10l",
            "--baseline",
            base,
            "--sarif",
            sarif.to_str().unwrap(),
        ],
    );
    let log: Value = serde_json::from_str(&std::fs::read_to_string(&sarif).unwrap()).unwrap();
    let results = log["runs"][0]["results"].as_array().unwrap();
    assert_eq!(results.len(), n);
    assert!(results.iter().all(|r| r["baselineState"] == "unchanged"));
    // And the log stays valid SARIF 2.1.0 (OASIS schema, shared copy).
    let schema_path = root().join("../shared/sarif-schema-2.1.0.json");
    match std::fs::read_to_string(&schema_path) {
        Ok(text) => {
            let schema: Value = serde_json::from_str(&text).unwrap();
            let validator = jsonschema::validator_for(&schema).expect("schema compiles");
            let errors: Vec<String> = validator.iter_errors(&log).map(|e| e.to_string()).collect();
            assert!(errors.is_empty(), "{errors:#?}");
        }
        Err(_) => eprintln!("SKIPPED: {} is not present", schema_path.display()),
    }
}

#[test]
fn a_material_change_is_new_and_an_unrelated_edit_is_not() {
    let original = copy_board(|t| t.to_string());
    let w = run(
        original.path(),
        &["baseline", "write", ".", "-o", "baseline.json"],
    );
    assert_eq!(w.status.code(), Some(0));
    let base = original.path().join("baseline.json");
    let base = base.to_str().unwrap();

    // A comment line at the top moves every line down by one; the
    // fingerprints use JSON pointers, not lines.
    let commented = copy_board(|t| format!("# reviewed for the next build\n{t}"));
    let o = run(
        commented.path(),
        &["check", ".", "--format", "json", "--baseline", base],
    );
    assert_eq!(o.status.code(), Some(0));
    let j = json_of(&o);
    assert!(!findings(&j).is_empty());
    assert!(findings(&j).iter().all(|f| f["baselined"] == true), "{j:#}");

    // pp3 sits between the planes L5 and L6, on the board's centre line:
    // 0.20 mm -> 0.30 mm changes the total thickness by 100 um (ten key
    // steps of 10 um), so the board-thickness error is new and fails the
    // run. It also lies in the through-via stubs below L3 and above L7,
    // which grow by the same 100 um: those two warnings are new too.
    // Nothing else changes.
    let thicker = copy_board(|t| {
        let from = "dielectric: {kind: prepreg, material: low-loss-prepreg, thickness: 0.20 mm}";
        assert_eq!(t.matches(from).count(), 1);
        t.replace(
            from,
            "dielectric: {kind: prepreg, material: low-loss-prepreg, thickness: 0.30 mm}",
        )
    });
    let o = run(
        thicker.path(),
        &["check", ".", "--format", "json", "--baseline", base],
    );
    assert_eq!(o.status.code(), Some(1));
    let j = json_of(&o);
    let new: Vec<&Value> = findings(&j)
        .iter()
        .filter(|f| f["baselined"] == false)
        .collect();
    let mut rules: Vec<&str> = new.iter().map(|f| f["rule"].as_str().unwrap()).collect();
    rules.sort_unstable();
    assert_eq!(
        rules,
        [
            "board-thickness-off-target",
            "via-stub-resonance",
            "via-stub-resonance"
        ],
        "{new:#?}"
    );
    assert_eq!(j["summary"]["errors"], 1);

    // SARIF marks them "new", the rest "unchanged".
    let sarif = thicker.path().join("out.sarif");
    run(
        thicker.path(),
        &[
            "check",
            ".",
            "--baseline",
            base,
            "--sarif",
            sarif.to_str().unwrap(),
        ],
    );
    let log: Value = serde_json::from_str(&std::fs::read_to_string(&sarif).unwrap()).unwrap();
    let states: Vec<(&str, &str)> = log["runs"][0]["results"]
        .as_array()
        .unwrap()
        .iter()
        .map(|r| {
            (
                r["ruleId"].as_str().unwrap(),
                r["baselineState"].as_str().unwrap(),
            )
        })
        .collect();
    assert!(states.contains(&("board-thickness-off-target", "new")));
    assert_eq!(
        states
            .iter()
            .filter(|s| **s == ("via-stub-resonance", "new"))
            .count(),
        2
    );
    assert_eq!(states.iter().filter(|s| s.1 == "new").count(), 3);
}

#[test]
fn a_missing_or_malformed_baseline_is_a_usage_error() {
    let tmp = tempfile::tempdir().unwrap();
    let missing = tmp.path().join("nope.json");
    let o = run(
        root(),
        &[
            "check",
            "examples/line-card-10l",
            "--baseline",
            missing.to_str().unwrap(),
        ],
    );
    assert_eq!(o.status.code(), Some(2));
    assert!(String::from_utf8_lossy(&o.stderr).contains("cannot read the baseline"));

    for (name, text) in [
        (
            "truncated.json",
            "{\"stackup-lint-baseline\": 1, \"findings\": [",
        ),
        ("other.json", "{\"version\": 1, \"findings\": []}"),
        (
            "v9.json",
            "{\"stackup-lint-baseline\": 9, \"findings\": []}",
        ),
    ] {
        let p = tmp.path().join(name);
        std::fs::write(&p, text).unwrap();
        let o = run(
            root(),
            &[
                "check",
                "examples/line-card-10l",
                "--baseline",
                p.to_str().unwrap(),
            ],
        );
        assert_eq!(o.status.code(), Some(2), "{name}");
        assert!(o.stdout.is_empty(), "{name}: no report on a bad baseline");
        assert!(String::from_utf8_lossy(&o.stderr).contains(name), "{name}");
    }
}

#[test]
fn input_errors_are_never_baselined() {
    let dir = copy_board(|t| t.replace("thickness: 0.20 mm}", "thickness: 0.20 furlongs}"));
    let o = run(
        dir.path(),
        &["baseline", "write", ".", "-o", "baseline.json"],
    );
    assert_eq!(o.status.code(), Some(2));
    assert!(!dir.path().join("baseline.json").exists());
    assert!(String::from_utf8_lossy(&o.stdout).contains("invalid-input"));

    // A baseline that somehow lists an invalid-input fingerprint does not
    // hide it: the run still exits 2 and the finding is new.
    let plain = json_of(&run(dir.path(), &["check", ".", "--format", "json"]));
    let bad = findings(&plain)
        .iter()
        .find(|f| f["rule"] == "invalid-input")
        .expect("an input error")
        .clone();
    let forged = serde_json::json!({
        "stackup-lint-baseline": 1,
        "findings": [{"rule": "invalid-input", "file": bad["file"], "fingerprint": bad["fingerprint"], "message": bad["message"]}]
    });
    std::fs::write(dir.path().join("forged.json"), forged.to_string()).unwrap();
    let o = run(
        dir.path(),
        &[
            "check",
            ".",
            "--format",
            "json",
            "--baseline",
            "forged.json",
        ],
    );
    assert_eq!(o.status.code(), Some(2));
    let j = json_of(&o);
    assert!(findings(&j)
        .iter()
        .filter(|f| f["rule"] == "invalid-input")
        .all(|f| f["baselined"] == false));
}

#[test]
fn baseline_write_walks_like_check() {
    // The same --include/--exclude/--suffix as `check`: excluding the flawed
    // board leaves only the clean one, so nothing is recorded.
    let dir = tempfile::tempdir().unwrap();
    let out = dir.path().join("b.json");
    let o = run(
        root(),
        &[
            "baseline",
            "write",
            "examples",
            "--exclude",
            "**/line-card-10l/**",
            "-o",
            out.to_str().unwrap(),
        ],
    );
    assert_eq!(o.status.code(), Some(0), "{o:?}");
    let b: Value = serde_json::from_str(&std::fs::read_to_string(&out).unwrap()).unwrap();
    assert_eq!(b["findings"].as_array().unwrap().len(), 0, "{b}");
    let o = run(
        root(),
        &[
            "baseline",
            "write",
            "examples",
            "--include",
            "**/line-card-10l/*",
            "-o",
            out.to_str().unwrap(),
        ],
    );
    assert_eq!(o.status.code(), Some(0), "{o:?}");
    let b: Value = serde_json::from_str(&std::fs::read_to_string(&out).unwrap()).unwrap();
    let files: Vec<&str> = b["findings"]
        .as_array()
        .unwrap()
        .iter()
        .map(|f| f["file"].as_str().unwrap())
        .collect();
    assert!(!files.is_empty());
    assert!(
        files.iter().all(|f| f.contains("line-card-10l")),
        "{files:?}"
    );
}
