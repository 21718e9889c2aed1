//! The demo boards, through the binary: exit codes and reviewed snapshots of
//! the terminal text (no colour, fixed width) and of the SARIF log.

use crate::common;
fn run(args: &[&str]) -> (Option<i32>, String, String) {
    common::run_in(common::root(), args)
}

#[test]
fn clean_board_passes() {
    let (code, out, err) = run(&["check", "examples/radar-sensor-6l", "--color", "never"]);
    assert_eq!(code, Some(0), "{out}{err}");
    assert!(
        out.contains("0 errors, 0 warnings, 0 notes in 1 file"),
        "{out}"
    );
}

#[test]
fn flawed_board_fails() {
    let (code, out, err) = run(&["check", "examples/line-card-10l", "--color", "never"]);
    assert_eq!(code, Some(1), "{err}");
    // A related snippet is not headed by a line that says only "Advice:".
    assert!(!out.lines().any(|l| l.trim_end() == "Advice:"), "{out}");
    insta::assert_snapshot!("line_card_human", out);
}

#[test]
fn flawed_board_sarif_snapshot() {
    let dir = tempfile::tempdir().unwrap();
    let path = dir.path().join("out.sarif");
    let (code, _, _) = run(&[
        "check",
        "examples/line-card-10l",
        "--color",
        "never",
        "--sarif",
        path.to_str().unwrap(),
    ]);
    assert_eq!(code, Some(1));
    let mut log: serde_json::Value =
        serde_json::from_str(&std::fs::read_to_string(&path).unwrap()).unwrap();
    // Rule help texts are the rule pages, reviewed on their own; keep the
    // snapshot to what the run produced.
    for r in log["runs"][0]["tool"]["driver"]["rules"]
        .as_array_mut()
        .unwrap()
    {
        r["help"] = serde_json::Value::String("(rule page)".into());
        r["fullDescription"] =
            serde_json::Value::String("(first paragraph of the rule page)".into());
    }
    log["runs"][0]["tool"]["driver"]["version"] = "(version)".into();
    log["runs"][0]["tool"]["driver"]["semanticVersion"] = "(version)".into();
    insta::assert_json_snapshot!("line_card_sarif", log);
}

#[test]
fn json_format_is_stable() {
    let (code, out, _) = run(&["check", "examples/line-card-10l", "--format", "json"]);
    assert_eq!(code, Some(1));
    let v: serde_json::Value = serde_json::from_str(&out).expect("JSON on stdout");
    assert_eq!(v["version"], 1);
    insta::assert_json_snapshot!("line_card_json", v);
}

#[test]
fn fail_on_warning_and_rules_and_explain() {
    let (code, _, _) = run(&["check", "examples/radar-sensor-6l", "--fail-on", "note"]);
    assert_eq!(code, Some(0));
    let (code, out, _) = run(&["rules"]);
    assert_eq!(code, Some(0));
    assert!(out.contains("missing-reference-plane"));
    let (code, out, _) = run(&["explain", "broadside-signal-layers"]);
    assert_eq!(code, Some(0));
    assert!(out.starts_with("# broadside-signal-layers"));
    let (code, _, err) = run(&["explain", "no-such-rule"]);
    assert_eq!(code, Some(2));
    assert!(err.contains("no rule named"));
}

#[test]
fn output_is_deterministic() {
    let a = run(&["check", "examples/", "--format", "json"]).1;
    let b = run(&["check", "examples/", "--format", "json"]).1;
    assert_eq!(a, b);
}

/// The walk-through of `docs/first-stackup.md`: the draft gives the three
/// findings the page describes, with the numbers it quotes; the finished
/// file checks clean.
#[test]
fn first_stackup_walk_through_behaves_as_written() {
    let root = crate::common::root();
    let o = crate::common::output_in(
        root,
        &[
            "check",
            "docs/first-stackup/gateway-4l-draft.stackup.yaml",
            "--format",
            "json",
        ],
    );
    let v: serde_json::Value = serde_json::from_slice(&o.stdout).unwrap();
    let f = v["findings"].as_array().unwrap();
    let mut rules: Vec<(&str, &str)> = f
        .iter()
        .map(|x| (x["rule"].as_str().unwrap(), x["severity"].as_str().unwrap()))
        .collect();
    rules.sort();
    assert_eq!(
        rules,
        [
            ("frequency-beyond-validity", "warning"),
            ("impedance-tolerance-stack", "error"),
            ("impedance-tolerance-stack", "warning")
        ],
        "{v:#}"
    );
    let text = serde_json::to_string(&v).unwrap();
    for quoted in [
        "86.3 to 106.4 Ω",
        "44.1 to 53.7 Ω",
        "+6.1 Ω",
        "239.6 µm",
        "validated 100.0 MHz to 5 GHz",
    ] {
        assert!(text.contains(quoted), "{quoted}: {text}");
    }
    let (code, out, _) = crate::common::run_in(
        root,
        &["check", "docs/first-stackup/gateway-4l-final.stackup.yaml"],
    );
    assert_eq!(code, Some(0), "{out}");
    assert!(
        out.contains("0 errors, 0 warnings, 0 notes in 1 file"),
        "{out}"
    );
}

/// `--format concise` of both demo boards: one line per finding, placed
/// where the terminal format places it (line and column checked against
/// the human output's `╭─[file:line:col]` headers below).
#[test]
fn concise_output_of_the_demo_boards() {
    let (code, out, err) = run(&["check", "examples/", "--format", "concise"]);
    assert_eq!(code, Some(1), "{err}");
    insta::assert_snapshot!("demo_boards_concise", out);
    // Every finding line starts with a place the human format also shows.
    let (_, human, _) = run(&["check", "examples/", "--color", "never"]);
    let lines: Vec<&str> = out.lines().collect();
    let (summary, findings) = lines.split_last().unwrap();
    assert!(summary.contains("in 2 files"), "{summary}");
    for line in findings {
        let mut parts = line.splitn(4, ':');
        let place = format!(
            "[{}:{}:{}]",
            parts.next().unwrap(),
            parts.next().unwrap(),
            parts.next().unwrap()
        );
        assert!(human.contains(&place), "{place} not in the human output");
        let rest: Vec<&str> = parts.next().unwrap().trim_start().splitn(3, ' ').collect();
        assert!(
            ["error", "warning", "note"].contains(&rest[0]),
            "severity of {line}"
        );
        assert!(
            human.contains(&format!("\n{}\n", rest[1])),
            "rule of {line}"
        );
    }
}
