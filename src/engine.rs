//! One lint run: collect files, load them, run the rules, sort the findings.

use std::path::{Path, PathBuf};

use crate::analysis::Analysis;
use crate::finding::{Finding, INVALID_INPUT};
use crate::load::{self, InputLimits};
use crate::model::Stackup;
use crate::rules;
use crate::source::{Location, SourceDb, SourceFile};
use crate::walk::{self, WalkOptions};

#[derive(Debug, Clone, Default)]
pub struct CheckOptions {
    pub walk: WalkOptions,
    pub limits: InputLimits,
}

/// The result of a run: every file read and every finding, sorted.
#[derive(Debug, Default)]
pub struct CheckOutcome {
    pub db: SourceDb,
    pub findings: Vec<Finding>,
    /// Number of stackup files checked.
    pub files: usize,
}

impl CheckOutcome {
    /// True when some input could not be read as a stackup (exit code 2).
    pub fn has_input_errors(&self) -> bool {
        self.findings
            .iter()
            .any(|f| f.rule == INVALID_INPUT && f.suppressed.is_none())
    }
}

/// Sort findings by file, position, rule and message, so output is the
/// same on every run.
pub fn sort_findings(findings: &mut [Finding], db: &SourceDb) {
    findings.sort_by(|a, b| {
        db.get(a.primary.file)
            .display
            .cmp(&db.get(b.primary.file).display)
            .then(a.primary.span.start.cmp(&b.primary.span.start))
            .then(a.rule.cmp(b.rule))
            .then(a.message.cmp(&b.message))
    });
}

/// Lint already-loaded stackups.
pub fn lint(loaded: load::Loaded) -> CheckOutcome {
    lint_inner(loaded, false).0
}

/// Lint, and keep each stackup with its analysis when `keep` is set.
fn lint_inner(loaded: load::Loaded, keep: bool) -> (CheckOutcome, Vec<(Stackup, Analysis)>) {
    let mut findings = loaded.problems;
    let mut kept = Vec::new();
    // Files are independent: analyse and lint them on the solver threads,
    // results taken back in file order.
    let db = &loaded.db;
    let done = crate::analysis::in_parallel(&loaded.stackups, |s| {
        let analysis = crate::analysis::analyze(s);
        let found = rules::run(s, &analysis, db);
        (analysis, found)
    });
    for (s, (analysis, found)) in loaded.stackups.into_iter().zip(done) {
        findings.extend(found);
        if keep {
            kept.push((s, analysis));
        }
    }
    let files = loaded
        .db
        .files
        .iter()
        .filter(|f| !f.path.to_string_lossy().ends_with(".materials.yaml"))
        .count();
    let mut out = CheckOutcome {
        db: loaded.db,
        findings,
        files,
    };
    sort_findings(&mut out.findings, &out.db);
    (out, kept)
}

/// Check the files and directories in `paths`. Display paths are relative
/// to `base` (normally the working directory, the repository root in CI).
pub fn check_paths(
    paths: &[PathBuf],
    base: &Path,
    opts: &CheckOptions,
) -> Result<CheckOutcome, String> {
    let (loaded, files) = load_paths(paths, base, opts)?;
    let mut outcome = lint(loaded);
    outcome.files = files;
    Ok(outcome)
}

/// As [`check_paths`], and also return every stackup with its analysis
/// (for the report).
pub fn check_paths_analysed(
    paths: &[PathBuf],
    base: &Path,
    opts: &CheckOptions,
) -> Result<(CheckOutcome, Vec<(Stackup, Analysis)>), String> {
    let (loaded, files) = load_paths(paths, base, opts)?;
    let (mut outcome, kept) = lint_inner(loaded, true);
    outcome.files = files;
    Ok((outcome, kept))
}

/// Walk and load; walk problems become input findings.
fn load_paths(
    paths: &[PathBuf],
    base: &Path,
    opts: &CheckOptions,
) -> Result<(load::Loaded, usize), String> {
    let (files, problems) = walk::collect(paths, &opts.walk).map_err(|e| e.message)?;
    let mut loaded = load::load(&files, base, &opts.limits);
    loaded.stackups.sort_by_key(|s| s.file);
    for p in problems {
        let display = p
            .path
            .as_deref()
            .map_or_else(|| "(walk)".to_string(), |x| load::display_path(x, base));
        let id = loaded.db.add(SourceFile {
            path: p.path.clone().unwrap_or_default(),
            display,
            text: String::new(),
            tree: None,
        });
        loaded.problems.push(
            Finding::new(
                INVALID_INPUT,
                Location {
                    file: id,
                    pointer: String::new(),
                    span: 0..0,
                },
                p.message,
            )
            .label("cannot read"),
        );
    }
    Ok((loaded, files.len()))
}
