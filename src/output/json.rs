//! `--format json`: a documented, stable JSON report (format version 1).
//!
//! ```json
//! { "version": 1,
//!   "findings": [ { "rule", "severity", "message", "help", "file", "pointer",
//!                   "line", "column", "end_line", "end_column",
//!                   "labels": [ { "message", "file", "line", "column" } ],
//!                   "fingerprint", "suppressed", "baselined"? } ],
//!   "summary": { "errors", "warnings", "notes", "suppressed", "baselined",
//!                "files" } }
//! ```
//! `baselined` is present only with `check --baseline`: `true` when the
//! finding is in the baseline (not counted in errors/warnings/notes).
//! Lines and columns are 1-based; columns count Unicode scalar values.

use serde::Serialize;

use crate::finding::Finding;
use crate::output::Summary;
use crate::source::{DbLines, SourceDb};

#[derive(Serialize)]
struct Report<'a> {
    version: u32,
    findings: Vec<JsonFinding<'a>>,
    summary: JsonSummary,
}

#[derive(Serialize)]
struct JsonSummary {
    errors: usize,
    warnings: usize,
    notes: usize,
    suppressed: usize,
    baselined: usize,
    files: usize,
}

#[derive(Serialize)]
struct JsonLabel<'a> {
    message: &'a str,
    file: &'a str,
    line: usize,
    column: usize,
}

#[derive(Serialize)]
struct JsonFinding<'a> {
    rule: &'a str,
    severity: &'a str,
    message: &'a str,
    help: Option<&'a str>,
    file: &'a str,
    pointer: &'a str,
    line: usize,
    column: usize,
    end_line: usize,
    end_column: usize,
    labels: Vec<JsonLabel<'a>>,
    fingerprint: String,
    suppressed: Option<&'a str>,
    /// Present only when `--baseline` was given.
    #[serde(skip_serializing_if = "Option::is_none")]
    baselined: Option<bool>,
}

/// Render the findings as the JSON report.
pub fn render(findings: &[Finding], db: &SourceDb, files: usize) -> String {
    let s = Summary::of(findings, files);
    let lines = DbLines::new(db);
    let report = Report {
        version: 1,
        findings: findings
            .iter()
            .map(|f| {
                let file = db.get(f.primary.file);
                let (line, column) = lines.line_col(f.primary.file, f.primary.span.start);
                let (end_line, end_column) = lines.line_col(f.primary.file, f.primary.span.end);
                JsonFinding {
                    rule: f.rule,
                    severity: f.severity.as_str(),
                    message: &f.message,
                    help: f.help.as_deref(),
                    file: &file.display,
                    pointer: &f.primary.pointer,
                    line,
                    column,
                    end_line,
                    end_column,
                    labels: f
                        .labels
                        .iter()
                        .map(|l| {
                            let lf = db.get(l.location.file);
                            let (line, column) =
                                lines.line_col(l.location.file, l.location.span.start);
                            JsonLabel {
                                message: &l.message,
                                file: &lf.display,
                                line,
                                column,
                            }
                        })
                        .collect(),
                    fingerprint: f.fingerprint(&file.display),
                    suppressed: f.suppressed.as_deref(),
                    baselined: f.baselined,
                }
            })
            .collect(),
        summary: JsonSummary {
            errors: s.errors,
            warnings: s.warnings,
            notes: s.notes,
            suppressed: s.suppressed,
            baselined: s.baselined,
            files: s.files,
        },
    };
    let mut text =
        serde_json::to_string_pretty(&report).unwrap_or_else(|e| format!("{{\"error\": \"{e}\"}}"));
    text.push('\n');
    text
}
