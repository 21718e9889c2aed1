//! `--format github` and `--format gitlab` against their published formats.
//!
//! GitHub: "Workflow commands for GitHub Actions", GitHub Docs,
//! <https://docs.github.com/en/actions/reference/workflows-and-actions/workflow-commands>
//! (`::error file={name},line={line},endLine={endLine},title={title}::{message}`,
//! `col`/`endColumn` only on single-line annotations; commands `error`,
//! `warning`, `notice`). The escaping is the actions toolkit's
//! (`@actions/core`, `src/command.ts`, `escapeData`/`escapeProperty`):
//! `%`→`%25`, CR→`%0D`, LF→`%0A` everywhere, and `:`→`%3A`, `,`→`%2C` in
//! property values.
//!
//! GitLab: "Code Quality", section "Code Quality report format", GitLab Docs,
//! <https://docs.gitlab.com/ci/testing/code_quality/#code-quality-report-format>
//! (a JSON array of issues with `description`, `check_name`, `fingerprint`
//! unique per issue, `severity` one of info/minor/major/critical/blocker,
//! `location.path`, `location.lines.begin`).

use crate::common;
use std::collections::HashSet;
use std::path::Path;

use crate::common::run_in;

use serde_json::Value;
use stackup_lint::output::github::{escape_data, escape_property};

const BOARD: &str = "examples/line-card-10l/board.stackup.yaml";

fn run(args: &[&str]) -> (Option<i32>, String, String) {
    run_in(common::root(), args)
}

fn json_report(dir: &Path, target: &str) -> Value {
    let (_, out, err) = run_in(dir, &["check", target, "--format", "json"]);
    serde_json::from_str(&out).unwrap_or_else(|e| panic!("{e}: {out}{err}"))
}

/// Undo the documented escaping (for reading lines back).
fn unescape(s: &str) -> String {
    s.replace("%0D", "\r")
        .replace("%0A", "\n")
        .replace("%3A", ":")
        .replace("%2C", ",")
        .replace("%25", "%")
}

#[test]
fn escaping_follows_the_toolkit() {
    // Data: only %, CR and LF are escaped; `%` first so escapes are not doubled.
    assert_eq!(escape_data("10 % of 2:1, ok"), "10 %25 of 2:1, ok");
    assert_eq!(escape_data("a\r\nb\nc"), "a%0D%0Ab%0Ac");
    assert_eq!(escape_data("%0A"), "%250A");
    // Properties: also `:` and `,` (they delimit the command).
    assert_eq!(escape_property("a:b,c"), "a%3Ab%2Cc");
    assert_eq!(escape_property("x%\ny"), "x%25%0Ay");
    assert_eq!(escape_property("plain/path.yaml"), "plain/path.yaml");
    // Round trip of everything special.
    let s = "p%q\r\n:,";
    assert_eq!(unescape(&escape_property(s)), s);
    assert_eq!(unescape(&escape_data(s)), s);
}

/// The annotation the documented format gives for one JSON-report finding.
fn expected_line(f: &Value) -> String {
    let command = match f["severity"].as_str().unwrap() {
        "error" => "error",
        "warning" => "warning",
        "note" => "notice",
        s => panic!("unknown severity {s}"),
    };
    let (line, end_line) = (f["line"].as_u64().unwrap(), f["end_line"].as_u64().unwrap());
    let mut props = format!(
        "file={},line={line}",
        escape_property(f["file"].as_str().unwrap())
    );
    if line == end_line {
        props += &format!(
            ",col={},endLine={end_line},endColumn={}",
            f["column"], f["end_column"]
        );
    } else {
        props += &format!(",endLine={end_line}");
    }
    props += &format!(
        ",title={}",
        escape_property(&format!("stackup-lint: {}", f["rule"].as_str().unwrap()))
    );
    let mut message = f["message"].as_str().unwrap().to_string();
    if let Some(h) = f["help"].as_str() {
        message += "\nhelp: ";
        message += h;
    }
    format!("::{command} {props}::{}", escape_data(&message))
}

#[test]
fn github_lines_for_the_demo_board() {
    let root = Path::new(env!("CARGO_MANIFEST_DIR"));
    let (code, out, err) = run(&["check", BOARD, "--format", "github"]);
    assert_eq!(code, Some(1), "{err}");
    let lines: Vec<&str> = out.lines().collect();
    let report = json_report(root, BOARD);
    let expected: Vec<String> = report["findings"]
        .as_array()
        .unwrap()
        .iter()
        .filter(|f| f["suppressed"].is_null())
        .map(expected_line)
        .collect();
    assert!(
        expected.len() >= 10,
        "the flawed demo board has many findings"
    );
    assert_eq!(lines, expected);
    // Every line is one workflow command: nothing raw that would end it.
    for l in &lines {
        assert!(
            l.starts_with("::error ") || l.starts_with("::warning ") || l.starts_with("::notice "),
            "{l}"
        );
        assert!(!l.contains('\r'));
        let (props, _) = l[2..].split_once("::").unwrap();
        assert_eq!(props.matches(',').count(), props.matches('=').count() - 1);
    }
    // A multi-line span (the unused suppression's mapping) has no columns.
    assert!(lines
        .iter()
        .any(|l| l.contains("unused-suppression") && !l.contains(",col=")));

    // One line written out in full: the `refclk` reference that is a signal
    // layer. Its position is read from the file text itself (the `L3` scalar
    // in `references: [L3]`), independently of the linter.
    let text = std::fs::read_to_string(root.join(BOARD)).unwrap();
    let (idx, src) = text
        .lines()
        .enumerate()
        .find(|(_, l)| l.contains("references: [L3]"))
        .expect("the demo board's refclk reference");
    let col = src.find("L3").unwrap() + 1;
    let want = format!(
        "::error file=examples/line-card-10l/board.stackup.yaml,line={l},col={col},endLine={l},\
endColumn={e},title=stackup-lint%3A missing-reference-plane::net class `refclk` names `L3` as its \
reference, but that layer is a signal layer, not a plane%0Ahelp: set `role: plane` on that layer \
if it is a solid plane under the route",
        l = idx + 1,
        e = col + 2
    );
    assert!(lines.contains(&want.as_str()), "{want}\nnot in\n{out}");
    // `%` in a message is escaped (copper fill percentages).
    assert!(out.contains("%25"), "{out}");
}

#[test]
fn github_escapes_the_file_property() {
    let tmp = tempfile::tempdir().unwrap();
    let dir = tmp.path().join("rev a,b:c");
    std::fs::create_dir_all(&dir).unwrap();
    std::fs::copy(
        Path::new(env!("CARGO_MANIFEST_DIR")).join(BOARD),
        dir.join("board.stackup.yaml"),
    )
    .unwrap();
    crate::common::copy_line_card_coupons(&dir);
    let (code, out, _) = run_in(tmp.path(), &["check", ".", "--format", "github"]);
    assert_eq!(code, Some(1));
    assert!(!out.is_empty());
    for l in out.lines() {
        assert!(
            l.contains("file=rev a%2Cb%3Ac/board.stackup.yaml,line="),
            "{l}"
        );
    }
}

/// A copy of the demo board with one more suppression that matches.
fn suppressed_copy(dir: &Path) -> String {
    let text = std::fs::read_to_string(Path::new(env!("CARGO_MANIFEST_DIR")).join(BOARD)).unwrap();
    let text = text.replacen(
        "  suppress:\n",
        "  suppress:\n    - rule: stackup-mirror-asymmetry\n      at: pp1\n      reason: agreed with the fabricator\n",
        1,
    );
    std::fs::write(dir.join("board.stackup.yaml"), text).unwrap();
    crate::common::copy_line_card_coupons(dir);
    "board.stackup.yaml".to_string()
}

#[test]
fn suppressed_findings_are_left_out() {
    let tmp = tempfile::tempdir().unwrap();
    let file = suppressed_copy(tmp.path());
    let report = json_report(tmp.path(), &file);
    let all = report["findings"].as_array().unwrap();
    let suppressed: Vec<&Value> = all.iter().filter(|f| !f["suppressed"].is_null()).collect();
    assert!(!suppressed.is_empty(), "the added suppression matches");
    let active = all.len() - suppressed.len();

    let (_, gh, _) = run_in(tmp.path(), &["check", &file, "--format", "github"]);
    assert_eq!(gh.lines().count(), active);
    for f in &suppressed {
        assert!(!gh.contains(&escape_data(f["message"].as_str().unwrap())));
    }
    let (_, gl, _) = run_in(tmp.path(), &["check", &file, "--format", "gitlab"]);
    let issues: Vec<Value> = serde_json::from_str(&gl).unwrap();
    assert_eq!(issues.len(), active);
    let fps: HashSet<&str> = issues
        .iter()
        .map(|i| i["fingerprint"].as_str().unwrap())
        .collect();
    for f in &suppressed {
        assert!(!fps.contains(f["fingerprint"].as_str().unwrap()));
    }
}

fn gitlab(dir: &Path, target: &str) -> (Option<i32>, Vec<Value>) {
    let (code, out, err) = run_in(dir, &["check", target, "--format", "gitlab"]);
    let v: Value = serde_json::from_str(&out).unwrap_or_else(|e| panic!("{e}: {out}{err}"));
    (code, v.as_array().expect("a JSON array").clone())
}

#[test]
fn gitlab_report_structure_and_severities() {
    let root = Path::new(env!("CARGO_MANIFEST_DIR"));
    let (code, issues) = gitlab(root, BOARD);
    assert_eq!(code, Some(1));
    let report = json_report(root, BOARD);
    let findings: Vec<&Value> = report["findings"]
        .as_array()
        .unwrap()
        .iter()
        .filter(|f| f["suppressed"].is_null())
        .collect();
    assert_eq!(issues.len(), findings.len());
    let allowed = ["info", "minor", "major", "critical", "blocker"];
    for (i, f) in issues.iter().zip(&findings) {
        let keys: HashSet<&str> = i.as_object().unwrap().keys().map(|k| k.as_str()).collect();
        assert_eq!(
            keys,
            HashSet::from([
                "description",
                "check_name",
                "fingerprint",
                "severity",
                "location"
            ])
        );
        assert!(!i["description"].as_str().unwrap().is_empty());
        assert!(i["description"]
            .as_str()
            .unwrap()
            .starts_with(f["message"].as_str().unwrap()));
        assert_eq!(i["check_name"], f["rule"]);
        let sev = i["severity"].as_str().unwrap();
        assert!(allowed.contains(&sev), "{sev}");
        let want = match f["severity"].as_str().unwrap() {
            "error" => "major",
            "warning" => "minor",
            _ => "info",
        };
        assert_eq!(sev, want);
        // The path is relative to the repository root (where CI runs).
        assert_eq!(i["location"]["path"], BOARD);
        assert_eq!(i["location"]["lines"]["begin"], f["line"]);
        assert!(i["location"]["lines"]["begin"].as_u64().unwrap() >= 1);
    }
    assert!(issues.iter().any(|i| i["severity"] == "major"));
    assert!(issues.iter().any(|i| i["severity"] == "minor"));

    // A file that cannot be read as a stackup is a blocker.
    let bad = tempfile::tempdir().unwrap();
    std::fs::write(
        bad.path().join("broken.stackup.yaml"),
        "stackup-lint: 1\nlayers: [\n",
    )
    .unwrap();
    let (code, issues) = gitlab(bad.path(), ".");
    assert_eq!(code, Some(2));
    assert!(!issues.is_empty());
    for i in &issues {
        assert_eq!(i["check_name"], "invalid-input");
        assert_eq!(i["severity"], "blocker");
        assert_eq!(i["location"]["path"], "broken.stackup.yaml");
    }
}

#[test]
fn gitlab_fingerprints_unique_and_stable() {
    let root = Path::new(env!("CARGO_MANIFEST_DIR"));
    let (_, a) = gitlab(root, "examples/");
    let (_, b) = gitlab(root, "examples/");
    let fp = |v: &[Value]| -> Vec<String> {
        v.iter()
            .map(|i| i["fingerprint"].as_str().unwrap().to_string())
            .collect()
    };
    assert_eq!(fp(&a), fp(&b), "same input, same fingerprints");
    let unique: HashSet<String> = fp(&a).into_iter().collect();
    assert_eq!(unique.len(), a.len(), "fingerprints are unique");

    // Unrelated edits (a comment line added at the top) move every line but
    // keep every fingerprint.
    let tmp = tempfile::tempdir().unwrap();
    let text = std::fs::read_to_string(root.join(BOARD)).unwrap();
    std::fs::write(
        tmp.path().join("board.stackup.yaml"),
        format!("# reviewed\n{text}"),
    )
    .unwrap();
    crate::common::copy_line_card_coupons(tmp.path());
    let (_, moved) = gitlab(tmp.path(), "board.stackup.yaml");
    let (_, orig) = gitlab(root, BOARD);
    assert_eq!(moved.len(), orig.len());
    for (m, o) in moved.iter().zip(&orig) {
        assert_eq!(
            m["location"]["lines"]["begin"].as_u64().unwrap(),
            o["location"]["lines"]["begin"].as_u64().unwrap() + 1
        );
    }
    // Same rule, pointer and numbers in a file of the same name elsewhere:
    // the path is part of the fingerprint, so compare by rule and pointer
    // through a copy at the same relative path.
    let same = tempfile::tempdir().unwrap();
    std::fs::create_dir_all(same.path().join("examples/line-card-10l")).unwrap();
    std::fs::write(same.path().join(BOARD), format!("# reviewed\n{text}")).unwrap();
    crate::common::copy_line_card_coupons(&same.path().join("examples/line-card-10l"));
    let (_, shifted) = gitlab(same.path(), BOARD);
    assert_eq!(fp(&shifted), fp(&orig), "fingerprints ignore moved lines");
}

#[test]
fn baselined_findings_are_left_out() {
    let root = Path::new(env!("CARGO_MANIFEST_DIR"));
    let tmp = tempfile::tempdir().unwrap();
    let base = tmp.path().join("baseline.json");
    let base = base.to_str().unwrap();
    let (code, _, err) = run(&["baseline", "write", BOARD, "-o", base]);
    assert_eq!(code, Some(0), "{err}");
    let (code, gh, _) = run(&["check", BOARD, "--format", "github", "--baseline", base]);
    assert_eq!(code, Some(0));
    assert_eq!(gh, "", "every finding is baselined");
    let (code, gl, _) = run(&["check", BOARD, "--format", "gitlab", "--baseline", base]);
    assert_eq!(code, Some(0));
    let issues: Vec<Value> = serde_json::from_str(&gl).unwrap();
    assert!(issues.is_empty());
    // Without the baseline the same run reports them (the test can fail).
    let (_, all) = gitlab(root, BOARD);
    assert!(!all.is_empty());
}
