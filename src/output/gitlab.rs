//! `--format gitlab`: a GitLab code quality report (`artifacts:reports:codequality`).
//!
//! Format (GitLab Docs, "Code Quality", section "Code Quality report format",
//! <https://docs.gitlab.com/ci/testing/code_quality/#code-quality-report-format>):
//! a JSON array of objects with `description`, `check_name`, `fingerprint`
//! (unique per issue), `severity` (one of `info`, `minor`, `major`,
//! `critical`, `blocker`), `location.path` (relative to the repository root)
//! and `location.lines.begin`.
//!
//! Severity mapping (our choice): note → `info`, warning → `minor`,
//! error → `major`, a file that cannot be read as a stackup
//! (`invalid-input`) → `blocker`. Suppressed findings and findings recorded
//! in a `--baseline` file are left out.
//!
//! Fingerprints are the findings' stable fingerprints; should two findings
//! share one (same rule, file, pointer and key numbers), the later ones get
//! a derived fingerprint so that every issue in the report is unique.

use std::collections::HashMap;

use serde::Serialize;

use crate::finding::{fnv1a64, Finding, Severity, INVALID_INPUT};
use crate::source::{DbLines, SourceDb};

#[derive(Serialize)]
struct Lines {
    begin: usize,
    end: usize,
}

#[derive(Serialize)]
struct Location<'a> {
    path: &'a str,
    lines: Lines,
}

#[derive(Serialize)]
struct Issue<'a> {
    description: String,
    check_name: &'a str,
    fingerprint: String,
    severity: &'static str,
    location: Location<'a>,
}

/// GitLab severity of a finding.
pub fn severity(f: &Finding) -> &'static str {
    if f.rule == INVALID_INPUT {
        return "blocker";
    }
    match f.severity {
        Severity::Note => "info",
        Severity::Warning => "minor",
        Severity::Error => "major",
    }
}

/// Render the unsuppressed, not baselined findings as a code quality report.
pub fn render(findings: &[Finding], db: &SourceDb) -> String {
    let mut seen: HashMap<String, usize> = HashMap::new();
    let lines = DbLines::new(db);
    let issues: Vec<Issue> = findings
        .iter()
        .filter(|f| f.suppressed.is_none() && f.baselined != Some(true))
        .map(|f| {
            let file = db.get(f.primary.file);
            let (begin, _) = lines.line_col(f.primary.file, f.primary.span.start);
            let (end, _) = lines.line_col(f.primary.file, f.primary.span.end);
            let base = f.fingerprint(&file.display);
            let n = seen.entry(base.clone()).or_insert(0);
            let fingerprint = if *n == 0 {
                base.clone()
            } else {
                format!("{:016x}", fnv1a64(format!("{base}\u{0}{n}").as_bytes()))
            };
            *n += 1;
            let mut description = f.message.clone();
            if let Some(h) = &f.help {
                description.push_str(". Fix: ");
                description.push_str(h);
            }
            Issue {
                description,
                check_name: f.rule,
                fingerprint,
                severity: severity(f),
                location: Location {
                    path: &file.display,
                    lines: Lines { begin, end },
                },
            }
        })
        .collect();
    let mut text = serde_json::to_string_pretty(&issues).unwrap_or_else(|_| "[]".to_string());
    text.push('\n');
    text
}
