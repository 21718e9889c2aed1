//! One lint run: collect files, load them, run the rules, sort the findings.

use std::path::{Path, PathBuf};

use crate::analysis::{Analysis, AnalysisOptions};
use crate::files::Confinement;
use crate::finding::{Finding, INVALID_INPUT};
use crate::load::{self, InputLimits};
use crate::model::Stackup;
use crate::output::escape;
use crate::rules;
use crate::source::{Location, SourceDb, SourceFile};
use crate::walk::{self, Skipped, WalkOptions};

#[derive(Debug, Clone, Default)]
pub struct CheckOptions {
    pub walk: WalkOptions,
    pub limits: InputLimits,
    /// `--root`: the project root every file read must lie in (default:
    /// each file's enclosing git work tree).
    pub root: Option<PathBuf>,
    /// How to solve (mesh budget, cache) and the run's workers, which also
    /// read the files.
    pub analysis: AnalysisOptions,
}

/// The result of a run: every file read and every finding, sorted.
#[derive(Debug, Default)]
pub struct CheckOutcome {
    pub db: SourceDb,
    pub findings: Vec<Finding>,
    /// Number of stackup files checked.
    pub files: usize,
    /// What the directory walk left out.
    pub skipped: Skipped,
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

/// Load one stackup from text, as a file named `name` (tests, fuzzing,
/// the rule pages' examples); no library is read.
pub fn load_text(name: &str, text: &str, limits: &InputLimits) -> load::Loaded {
    load::load_text(name, text, limits, &rules::specs())
}

/// Lint already-loaded stackups.
pub fn lint(loaded: load::Loaded, opts: &AnalysisOptions) -> CheckOutcome {
    lint_inner(loaded, opts, false).0
}

/// Lint already-loaded stackups, and return each with its analysis.
pub fn lint_analysed(
    loaded: load::Loaded,
    opts: &AnalysisOptions,
) -> (CheckOutcome, Vec<(Stackup, Analysis)>) {
    lint_inner(loaded, opts, true)
}

/// Lint, and keep each stackup with its analysis when `keep` is set.
fn lint_inner(
    loaded: load::Loaded,
    opts: &AnalysisOptions,
    keep: bool,
) -> (CheckOutcome, Vec<(Stackup, Analysis)>) {
    let mut findings = loaded.problems;
    let mut kept = Vec::new();
    // Files are independent: analyse and lint them on the solver threads,
    // results taken back in file order.
    let db = &loaded.db;
    let done = opts.pool.map(&loaded.stackups, |s| {
        let analysis = crate::analysis::analyze(s, opts);
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
        skipped: Skipped::default(),
    };
    sort_findings(&mut out.findings, &out.db);
    escape_outcome(&mut out);
    (out, kept)
}

/// Escape control and invisible characters in everything a finding says
/// and in the file names, once, so no output can carry them raw (source
/// text is escaped by the terminal renderer, which shows it).
pub fn escape_outcome(out: &mut CheckOutcome) {
    let fix = |s: &mut String| {
        if let std::borrow::Cow::Owned(e) = escape::controls(s) {
            *s = e;
        }
    };
    for f in &mut out.findings {
        fix(&mut f.message);
        fix(&mut f.primary_label);
        if let Some(h) = &mut f.help {
            fix(h);
        }
        for l in &mut f.labels {
            fix(&mut l.message);
        }
        if let Some(r) = &mut f.suppressed {
            fix(r);
        }
    }
    for file in &mut out.db.files {
        fix(&mut file.display);
    }
}

/// Check the files and directories in `paths`. Display paths are relative
/// to `base` (normally the working directory, the repository root in CI).
pub fn check_paths(
    paths: &[PathBuf],
    base: &Path,
    opts: &CheckOptions,
) -> Result<CheckOutcome, String> {
    let (loaded, files, skipped) = load_paths(paths, base, opts)?;
    let mut outcome = lint(loaded, &opts.analysis);
    outcome.files = files;
    outcome.skipped = skipped;
    Ok(outcome)
}

/// As [`check_paths`], and also return every stackup with its analysis
/// (for the report).
pub fn check_paths_analysed(
    paths: &[PathBuf],
    base: &Path,
    opts: &CheckOptions,
) -> Result<(CheckOutcome, Vec<(Stackup, Analysis)>), String> {
    let (loaded, files, skipped) = load_paths(paths, base, opts)?;
    let (mut outcome, kept) = lint_inner(loaded, &opts.analysis, true);
    outcome.files = files;
    outcome.skipped = skipped;
    Ok((outcome, kept))
}

/// Walk and load; walk problems become input findings. Returns the loaded
/// files, the number of stackup files and what the walk left out.
pub fn load_paths(
    paths: &[PathBuf],
    base: &Path,
    opts: &CheckOptions,
) -> Result<(load::Loaded, usize, Skipped), String> {
    let conf = Confinement::new(opts.root.as_deref(), base)?;
    let walked = walk::collect(paths, &opts.walk, &conf).map_err(|e| e.message)?;
    let files = walked.files;
    let mut loaded = load::load(
        &files,
        &opts.limits,
        &conf,
        opts.analysis.pool,
        &rules::specs(),
    );
    loaded.stackups.sort_by_key(|s| s.file);
    for p in walked.problems {
        let display = p
            .path
            .as_deref()
            .map_or_else(|| "(walk)".to_string(), |x| load::display_path(x, base));
        let id = loaded.db.add(SourceFile {
            path: p.path.clone().unwrap_or_default(),
            display,
            text: String::new(),
            spans: Default::default(),
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
    Ok((loaded, files.len(), walked.skipped))
}
