//! `--format github`: GitHub Actions workflow-command annotations, one line
//! per finding, that the Actions runner turns into annotations on the files
//! and the pull-request diff.
//!
//! Format (GitHub Docs, "Workflow commands for GitHub Actions",
//! <https://docs.github.com/en/actions/reference/workflows-and-actions/workflow-commands>,
//! sections "Setting an error message", "Setting a warning message",
//! "Setting a notice message"):
//!
//! ```text
//! ::error file={name},line={line},endLine={endLine},col={col},endColumn={endColumn},title={title}::{message}
//! ```
//!
//! Escaping, as the runner and the actions toolkit (`@actions/core`,
//! `command.ts`) decode it: in the message `%` → `%25`, CR → `%0D`,
//! LF → `%0A`; in property values additionally `:` → `%3A` and `,` → `%2C`.
//! `col`/`endColumn` are only valid when the annotation starts and ends on
//! the same line, so they are left out for multi-line spans.
//!
//! Suppressed findings and findings recorded in a `--baseline` file are not
//! printed (they are not problems to act on; the terminal output hides them
//! too).

use crate::finding::{Finding, Severity};
use crate::source::{line_col, SourceDb};

/// Escape a command value (the text after `::`).
pub fn escape_data(s: &str) -> String {
    s.replace('%', "%25")
        .replace('\r', "%0D")
        .replace('\n', "%0A")
}

/// Escape a property value (`file=`, `title=`).
pub fn escape_property(s: &str) -> String {
    escape_data(s).replace(':', "%3A").replace(',', "%2C")
}

/// The workflow command for a severity.
pub fn command(s: Severity) -> &'static str {
    match s {
        Severity::Error => "error",
        Severity::Warning => "warning",
        Severity::Note => "notice",
    }
}

/// One annotation line (without the trailing newline).
pub fn annotation(f: &Finding, db: &SourceDb) -> String {
    let file = db.get(f.primary.file);
    let (line, col) = line_col(&file.text, f.primary.span.start);
    let (end_line, end_col) = line_col(&file.text, f.primary.span.end);
    let mut props = format!("file={},line={line}", escape_property(&file.display));
    if end_line == line {
        props.push_str(&format!(
            ",col={col},endLine={end_line},endColumn={end_col}"
        ));
    } else {
        props.push_str(&format!(",endLine={end_line}"));
    }
    props.push_str(&format!(
        ",title={}",
        escape_property(&format!("stackup-lint: {}", f.rule))
    ));
    let mut message = f.message.clone();
    if let Some(h) = &f.help {
        message.push_str("\nhelp: ");
        message.push_str(h);
    }
    format!(
        "::{} {props}::{}",
        command(f.severity),
        escape_data(&message)
    )
}

/// All unsuppressed findings as annotation lines (baselined ones left out).
pub fn render(findings: &[Finding], db: &SourceDb) -> String {
    let mut out = String::new();
    for f in findings
        .iter()
        .filter(|f| f.suppressed.is_none() && f.baselined != Some(true))
    {
        out.push_str(&annotation(f, db));
        out.push('\n');
    }
    out
}
