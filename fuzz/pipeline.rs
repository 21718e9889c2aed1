//! The code paths the fuzz targets drive, shared with the regression test
//! `tests/fuzz_regressions.rs` (included there with `#[path]`), so a committed
//! crash input replays exactly what the fuzzer ran.
//!
//! Each function also checks what must hold for any input: a stackup that
//! does not load has at least one `invalid-input` finding (a clear
//! diagnostic, exit code 2), and the JSON and SARIF renderings are JSON.

use stackup_lint::engine::{self, CheckOutcome};
use stackup_lint::finding::INVALID_INPUT;
use stackup_lint::load::{self, InputLimits};
use stackup_lint::output::{github, gitlab, human, json, sarif, Summary};
use stackup_lint::rules;

/// Render the outcome in every output format `check` has and check that
/// the machine-readable ones parse.
pub fn render_all(outcome: &CheckOutcome) {
    let text = human::render(
        &outcome.findings,
        &outcome.db,
        human::HumanOptions {
            color: false,
            width: 100,
            pool: stackup_lint::pool::Pool::single(),
        },
    );
    let _ = Summary::of(&outcome.findings, outcome.files).line();
    assert!(
        outcome.findings.is_empty() || !text.is_empty(),
        "findings but an empty report"
    );
    let j = json::render(&outcome.findings, &outcome.db, outcome.files);
    serde_json::from_str::<serde_json::Value>(&j).expect("JSON report is JSON");
    let s = sarif::render(
        &outcome.findings,
        &outcome.db,
        &rules::all_meta(),
        sarif::DEFAULT_DOCS_URL,
    );
    serde_json::from_str::<serde_json::Value>(&s).expect("SARIF log is JSON");
    let _ = github::render(&outcome.findings, &outcome.db);
    let g = gitlab::render(&outcome.findings, &outcome.db);
    serde_json::from_str::<serde_json::Value>(&g).expect("GitLab report is JSON");
}

/// Target `load_bytes`: arbitrary bytes as a stackup file through reading,
/// YAML, schema and model (no field solving), then every renderer on the
/// problems found. Text that is not UTF-8 goes through a real file so the
/// reader's UTF-8 diagnostic is exercised as well.
#[allow(dead_code)] // each includer uses what it needs
pub fn load_bytes(data: &[u8]) {
    let limits = InputLimits::default();
    let loaded = match std::str::from_utf8(data) {
        Ok(text) => stackup_lint::engine::load_text("fuzz.stackup.yaml", text, &limits),
        Err(_) => {
            let dir = std::env::temp_dir().join(format!("stackup-fuzz-{}", std::process::id()));
            std::fs::create_dir_all(&dir).expect("temporary directory");
            let path = dir.join("fuzz.stackup.yaml");
            std::fs::write(&path, data).expect("temporary file");
            let conf = stackup_lint::files::Confinement::new(None, &dir)
                .expect("the temporary directory exists");
            load::load(
                &[path],
                &limits,
                &conf,
                stackup_lint::pool::Pool::single(),
                &stackup_lint::rules::specs(),
            )
        }
    };
    if loaded.stackups.is_empty() {
        assert!(
            loaded.problems.iter().any(|f| f.rule == INVALID_INPUT),
            "a file that does not load must say why"
        );
    }
    let outcome = CheckOutcome {
        files: 1,
        findings: loaded.problems,
        db: loaded.db,
        ..CheckOutcome::default()
    };
    render_all(&outcome);
}

/// Target `check_hostile` (and its replays): a stackup text through the
/// whole check as the CLI runs it (load, schema, model, analysis with the
/// field solver, rules), then every renderer.
#[allow(dead_code)]
pub fn check_text(text: &str) -> CheckOutcome {
    // One thread, and no on-disk solver cache: every section is solved, so
    // an input behaves the same whatever ran before it.
    let opts = stackup_lint::analysis::AnalysisOptions {
        pool: stackup_lint::pool::Pool::single(),
        ..Default::default()
    };
    let loaded =
        stackup_lint::engine::load_text("fuzz.stackup.yaml", text, &InputLimits::default());
    let loaded_ok = !loaded.stackups.is_empty();
    let outcome = engine::lint(loaded, &opts);
    if !loaded_ok {
        assert!(
            outcome.has_input_errors(),
            "a stackup that does not load must say why"
        );
    }
    render_all(&outcome);
    outcome
}
