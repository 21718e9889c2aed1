//! `stackup-lint fix`: the fixes the findings carry, applied to the YAML
//! text of copies of the demo boards. The diff is a reviewed snapshot;
//! comments survive; `check` afterwards has fewer findings and none of the
//! fixed ones; a second run has nothing left to do; unsafe plans change
//! nothing.

use std::collections::BTreeSet;
use std::path::Path;

use serde_json::Value;

use crate::common::{copy_dir, output_in, root, run_in};

/// A scratch copy of `examples/` (boards, coupons, the material library);
/// the tests run in it on `<name>/board.stackup.yaml`.
fn copy_examples() -> tempfile::TempDir {
    let dir = tempfile::tempdir().unwrap();
    copy_dir(&root().join("examples"), dir.path());
    dir
}

const LINE_CARD: &str = "line-card-10l/board.stackup.yaml";

/// (rule, pointer of the primary location) of every finding `check` gives.
fn findings(dir: &Path, board: &str) -> BTreeSet<(String, String)> {
    let o = output_in(dir, &["check", board, "--format", "json"]);
    let v: Value = serde_json::from_slice(&o.stdout).expect("JSON report");
    v["findings"]
        .as_array()
        .unwrap()
        .iter()
        .map(|f| {
            (
                f["rule"].as_str().unwrap().to_string(),
                f["pointer"].as_str().unwrap_or_default().to_string(),
            )
        })
        .collect()
}

/// Every comment of a YAML text (from `#` to the end of its line; the demo
/// boards hold no `#` inside a value).
fn comments(text: &str) -> Vec<&str> {
    text.lines()
        .filter_map(|l| l.find('#').map(|i| &l[i..]))
        .collect()
}

#[test]
fn fix_round_trips_on_the_demo_boards() {
    let dir = copy_examples();
    for name in ["line-card-10l", "radar-sensor-6l"] {
        let rel = format!("{name}/board.stackup.yaml");
        let board = dir.path().join(&rel);
        let before = std::fs::read_to_string(&board).unwrap();
        let found = findings(dir.path(), &rel);

        // --dry-run: the diff, and nothing written.
        let (code, diff, err) = run_in(dir.path(), &["fix", &rel, "--dry-run"]);
        assert_eq!(code, Some(0), "{err}");
        assert_eq!(std::fs::read_to_string(&board).unwrap(), before);
        insta::assert_snapshot!(format!("fix_dry_run_{name}"), diff);

        let (code, out, err) = run_in(dir.path(), &["fix", &rel]);
        assert_eq!(code, Some(0), "{err}");
        let after = std::fs::read_to_string(&board).unwrap();
        // Every comment as it was, in order.
        assert_eq!(comments(&before), comments(&after), "{name}");
        assert!(!comments(&before).is_empty(), "{name}");
        let fixed: Vec<&str> = out
            .lines()
            .filter_map(|l| l.split(": ").nth(1))
            .filter(|r| !r.contains(' '))
            .collect();
        let left = findings(dir.path(), &rel);
        if fixed.is_empty() {
            assert_eq!(before, after, "{name}: nothing to fix, nothing changed");
            assert_eq!(found, left);
            continue;
        }
        assert!(left.len() < found.len(), "{name}: {left:?}");
        // None of the fixed findings is reported again (same rule at the
        // same place).
        let gone: BTreeSet<_> = found.difference(&left).collect();
        for rule in &fixed {
            assert!(
                gone.iter().any(|(r, _)| r == rule),
                "{name}: `{rule}` still reported"
            );
        }
        // Nothing left to do.
        let (code, out, _) = run_in(dir.path(), &["fix", &rel]);
        assert_eq!(code, Some(0));
        assert!(out.contains("applied 0 fixes in 0 files"), "{out}");
        assert_eq!(std::fs::read_to_string(&board).unwrap(), after);
    }
}

#[test]
fn fix_rule_limits_the_edits_to_that_rule() {
    let dir = copy_examples();
    let board = dir.path().join(LINE_CARD);
    let before = std::fs::read_to_string(&board).unwrap();
    let (code, out, err) = run_in(
        dir.path(),
        &["fix", LINE_CARD, "--rule", "propagation-skew"],
    );
    assert_eq!(code, Some(0), "{err}");
    assert!(out.contains("applied 1 fix in 1 file"), "{out}");
    let after = std::fs::read_to_string(&board).unwrap();
    let changed: Vec<(&str, &str)> = before
        .lines()
        .zip(after.lines())
        .filter(|(a, b)| a != b)
        .collect();
    assert_eq!(changed.len(), 1, "{changed:?}");
    assert!(changed[0].1.contains("length: "), "{changed:?}");

    let (code, _, err) = run_in(dir.path(), &["fix", LINE_CARD, "--rule", "no-such-rule"]);
    assert_eq!(code, Some(2));
    assert!(err.contains("no rule named `no-such-rule`"), "{err}");
    let (code, _, err) = run_in(dir.path(), &["fix", LINE_CARD, "--rule", "propagation-skw"]);
    assert_eq!(code, Some(2));
    assert!(err.contains("did you mean `propagation-skew`"), "{err}");
}

/// The width of the off-target pair written through a YAML anchor, which
/// an alias shares: the fix would change both, so nothing is written.
#[test]
fn fix_refuses_a_value_in_an_anchor_and_changes_nothing() {
    let dir = copy_examples();
    let board = dir.path().join(LINE_CARD);
    let text = std::fs::read_to_string(&board).unwrap();
    let needle = "    layer: L3\n    width: 0.195 mm\n";
    assert!(text.contains(needle));
    let text = text.replacen(
        needle,
        "    layer: L3\n    width: &pair-width 0.195 mm\n",
        1,
    );
    std::fs::write(&board, &text).unwrap();
    let (code, _, err) = run_in(dir.path(), &["fix", LINE_CARD]);
    assert_eq!(code, Some(1), "{err}");
    assert!(err.contains("inside a YAML anchor"), "{err}");
    assert!(err.contains("nothing was changed"), "{err}");
    assert_eq!(std::fs::read_to_string(&board).unwrap(), text);
    // The other rules' fixes alone are safe.
    let (code, _, err) = run_in(
        dir.path(),
        &["fix", LINE_CARD, "--rule", "propagation-skew"],
    );
    assert_eq!(code, Some(0), "{err}");
}

#[test]
fn fix_on_input_errors_changes_nothing() {
    let dir = copy_examples();
    let board = dir.path().join(LINE_CARD);
    let text = std::fs::read_to_string(&board).unwrap().replacen(
        "width: 0.195 mm",
        "width: 0.195 furlong",
        1,
    );
    std::fs::write(&board, &text).unwrap();
    let (code, out, err) = run_in(dir.path(), &["fix", LINE_CARD]);
    assert_eq!(code, Some(2), "{err}");
    assert!(out.contains("unknown unit `furlong`"), "{out}");
    assert!(err.contains("nothing was changed"), "{err}");
    assert_eq!(std::fs::read_to_string(&board).unwrap(), text);
}
