//! Hostile input through the binary: a 10 MB file, 1000 levels of nesting,
//! an unreadable file, a symbolic link loop in the walked tree, and runs
//! that fail while a `--sarif` path is given. Each ends with a clear message
//! and exit code 2, never a panic, never a partial output file. The limits
//! (size, depth, nodes) are the `--max-*` options; their defaults are in
//! the README's command-line table and in DEVELOPERS.md ("Hostile input").

use std::process::Output;

use serde_json::Value;

use crate::common::output_in as run;

const BASELINE: &str = include_str!("../common/baseline.stackup.yaml");

fn no_panic(out: &Output) {
    let stderr = String::from_utf8_lossy(&out.stderr);
    assert!(
        !stderr.contains("panicked") && !stderr.contains("overflow"),
        "{stderr}"
    );
    // A crash by signal (stack overflow, abort) has no exit code.
    assert!(out.status.code().is_some(), "killed: {:?}", out.status);
}

/// The messages of the JSON report's findings.
fn messages(out: &Output) -> Vec<String> {
    let report: Value = serde_json::from_slice(&out.stdout)
        .unwrap_or_else(|e| panic!("JSON report: {e}\n{}", String::from_utf8_lossy(&out.stdout)));
    report["findings"]
        .as_array()
        .unwrap()
        .iter()
        .map(|f| f["message"].as_str().unwrap().to_string())
        .collect()
}

/// A 10 MB file (generated here, not committed) is refused by the size
/// limit before it is read or parsed: the message gives the size and the
/// limit. The file is valid YAML (one long comment) so only the size check
/// can refuse it.
#[test]
fn ten_megabyte_file_is_refused_by_the_size_limit() {
    let dir = tempfile::tempdir().unwrap();
    let mut text = String::from(BASELINE);
    let line = format!("# {}\n", "x".repeat(1022));
    while text.len() < 10 * 1024 * 1024 {
        text.push_str(&line);
    }
    let size = text.len();
    std::fs::write(dir.path().join("big.stackup.yaml"), &text).unwrap();
    let out = run(
        dir.path(),
        &["check", "big.stackup.yaml", "--format", "json"],
    );
    no_panic(&out);
    assert_eq!(out.status.code(), Some(2));
    assert_eq!(
        messages(&out),
        vec![format!(
            "the file is {size} bytes, above the 4194304 byte limit for one stackup"
        )]
    );
    // The limit is an option: a small limit refuses the ordinary file too.
    std::fs::write(dir.path().join("small.stackup.yaml"), BASELINE).unwrap();
    let out = run(
        dir.path(),
        &[
            "check",
            "small.stackup.yaml",
            "--format",
            "json",
            "--max-file-size",
            "100",
        ],
    );
    assert_eq!(out.status.code(), Some(2));
    assert!(
        messages(&out)[0].ends_with("above the 100 byte limit for one stackup"),
        "{:?}",
        messages(&out)
    );
}

/// 1000 levels of nested block mappings are refused at the depth limit (64
/// by default); 1000 levels of nested flow lists are refused by the YAML
/// parser's own recursion limit, which comes first. One finding each.
#[test]
fn thousand_levels_of_nesting_are_refused() {
    let dir = tempfile::tempdir().unwrap();
    let flow = format!(
        "{BASELINE}extra: {}deep{}\n",
        "[".repeat(1000),
        "]".repeat(1000)
    );
    let mut block = format!("{BASELINE}extra:\n");
    for i in 0..1000 {
        block.push_str(&" ".repeat(i + 1));
        block.push_str("k:\n");
    }
    for (name, text) in [("flow", flow), ("block", block)] {
        let file = format!("{name}.stackup.yaml");
        std::fs::write(dir.path().join(&file), text).unwrap();
        let out = run(dir.path(), &["check", &file, "--format", "json"]);
        no_panic(&out);
        assert_eq!(out.status.code(), Some(2), "{name}");
        let m = messages(&out);
        assert_eq!(m.len(), 1, "{name}: {m:?}");
        // Block nesting meets our depth limit; deep flow nesting meets the
        // YAML parser's own recursion limit first, reworded for people.
        let want = if name == "flow" {
            "the YAML nests too deeply: flow collections"
        } else {
            "nests deeper than 64 levels"
        };
        assert!(m[0].contains(want), "{name}: {m:?}");
    }
}

/// A file without read permission gives "cannot read the file" and exit 2.
/// Skipped (with a message) where permissions do not stop reading, as for
/// root in CI containers.
#[cfg(unix)]
#[test]
fn unreadable_file_is_reported() {
    use std::os::unix::fs::PermissionsExt;
    let dir = tempfile::tempdir().unwrap();
    let path = dir.path().join("locked.stackup.yaml");
    std::fs::write(&path, BASELINE).unwrap();
    std::fs::set_permissions(&path, std::fs::Permissions::from_mode(0o000)).unwrap();
    if std::fs::read(&path).is_ok() {
        eprintln!("skipped: mode 000 does not stop this user reading files (root?)");
        return;
    }
    let out = run(
        dir.path(),
        &["check", "locked.stackup.yaml", "--format", "json"],
    );
    no_panic(&out);
    assert_eq!(out.status.code(), Some(2));
    let m = messages(&out);
    assert!(m[0].starts_with("cannot read the file"), "{m:?}");
}

/// A symbolic link that points back up the walked tree is reported once as
/// a loop and skipped; the real stackup in the tree is still checked.
#[cfg(unix)]
#[test]
fn symlink_loop_is_reported_and_skipped() {
    let dir = tempfile::tempdir().unwrap();
    let boards = dir.path().join("boards");
    std::fs::create_dir(&boards).unwrap();
    std::fs::write(boards.join("a.stackup.yaml"), BASELINE).unwrap();
    std::os::unix::fs::symlink("..", boards.join("up")).unwrap();
    std::os::unix::fs::symlink("loop-b", boards.join("loop-a")).unwrap();
    std::os::unix::fs::symlink("loop-a", boards.join("loop-b")).unwrap();
    let out = run(dir.path(), &["check", "boards", "--format", "json"]);
    no_panic(&out);
    assert_eq!(out.status.code(), Some(2));
    let report: Value = serde_json::from_slice(&out.stdout).unwrap();
    let findings = report["findings"].as_array().unwrap();
    let loops: Vec<_> = findings
        .iter()
        .filter(|f| f["message"] == "symbolic link loop; skipped")
        .collect();
    assert_eq!(loops.len(), 1, "{findings:#?}");
    assert!(loops[0]["file"]
        .as_str()
        .is_some_and(|f| f.ends_with("boards/up")));
    // Two links pointing at each other cannot be resolved: reported too.
    assert!(
        findings
            .iter()
            .any(|f| f["file"].as_str().is_some_and(|p| p.contains("loop-"))),
        "{findings:#?}"
    );
    // The real file was checked (its findings are there, not input errors).
    assert!(findings
        .iter()
        .any(|f| f["file"] == "boards/a.stackup.yaml"));
}

/// A run that fails leaves no SARIF file, not even a partial one: when the
/// log cannot be written (its directory is a file) the run says so and
/// exits 2 with nothing left behind; when the input paths do not exist the
/// log holds the input error, complete; and a glob error stops the run
/// before anything is written.
#[test]
fn failed_runs_leave_no_partial_sarif() {
    let dir = tempfile::tempdir().unwrap();
    std::fs::write(dir.path().join("a.stackup.yaml"), BASELINE).unwrap();
    std::fs::write(dir.path().join("not-a-dir"), "").unwrap();
    let out = run(
        dir.path(),
        &[
            "check",
            "a.stackup.yaml",
            "--sarif",
            "not-a-dir/out.sarif",
            "--color",
            "never",
        ],
    );
    no_panic(&out);
    assert_eq!(out.status.code(), Some(2));
    let stderr = String::from_utf8_lossy(&out.stderr);
    assert!(
        stderr.contains("cannot write the SARIF log to not-a-dir/out.sarif"),
        "{stderr}"
    );
    let mut names: Vec<String> = std::fs::read_dir(dir.path())
        .unwrap()
        .map(|e| e.unwrap().file_name().to_string_lossy().into_owned())
        .collect();
    names.sort();
    assert_eq!(names, ["a.stackup.yaml", "not-a-dir"], "left behind");

    let out = run(
        dir.path(),
        &[
            "check",
            "a.stackup.yaml",
            "--include",
            "[",
            "--sarif",
            "glob.sarif",
        ],
    );
    no_panic(&out);
    assert_eq!(out.status.code(), Some(2));
    assert!(String::from_utf8_lossy(&out.stderr).contains("bad glob"));
    assert!(!dir.path().join("glob.sarif").exists());

    let out = run(
        dir.path(),
        &["check", "missing.stackup.yaml", "--sarif", "missing.sarif"],
    );
    no_panic(&out);
    assert_eq!(out.status.code(), Some(2));
    let log: Value =
        serde_json::from_str(&std::fs::read_to_string(dir.path().join("missing.sarif")).unwrap())
            .expect("the SARIF log is complete JSON");
    assert_eq!(log["runs"][0]["results"][0]["ruleId"], "invalid-input");
}

/// The field solver's mesh budget (`--max-mesh-nodes`): a section that
/// needs a bigger mesh is reported at its net class with the limit and the
/// option that raises it, and the run goes on (no panic, no exit 2).
#[test]
fn mesh_budget_reports_the_class_and_the_option() {
    let dir = tempfile::tempdir().unwrap();
    std::fs::write(dir.path().join("board.stackup.yaml"), BASELINE).unwrap();
    let out = run(
        dir.path(),
        &[
            "check",
            "--no-cache",
            "--format",
            "json",
            "--max-mesh-nodes",
            "300",
            "board.stackup.yaml",
        ],
    );
    no_panic(&out);
    assert_ne!(out.status.code(), Some(2));
    let m = messages(&out);
    assert!(
        m.iter()
            .any(|m| m.contains("limit of 300") && m.contains("--max-mesh-nodes")),
        "{m:#?}"
    );
    // With the default budget the same board is solved.
    let out = run(
        dir.path(),
        &[
            "check",
            "--no-cache",
            "--format",
            "json",
            "board.stackup.yaml",
        ],
    );
    assert!(messages(&out).iter().all(|m| !m.contains("limit of")));
}
