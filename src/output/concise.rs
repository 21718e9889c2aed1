//! `--format concise`: one line per finding,
//! `path:line:col: severity rule-name message`, for a terminal in a hook
//! or an editor's problem matcher.
//!
//! Line and column are 1-based, the column counting characters, as the
//! terminal format places them (`source::line_col`). Suppressed and
//! baselined findings are left out, as in the terminal format; the help
//! text and the secondary places are not printed (the other formats have
//! them). Messages are already free of control characters (the engine
//! escapes them), so each finding stays on its line.

use crate::finding::Finding;
use crate::source::{DbLines, SourceDb};

/// All shown findings, one line each.
pub fn render(findings: &[Finding], db: &SourceDb) -> String {
    let lines = DbLines::new(db);
    let mut out = String::new();
    for f in findings
        .iter()
        .filter(|f| f.suppressed.is_none() && f.baselined != Some(true))
    {
        let (line, col) = lines.line_col(f.primary.file, f.primary.span.start);
        out.push_str(&format!(
            "{}:{line}:{col}: {} {} {}\n",
            db.get(f.primary.file).display,
            f.severity,
            f.rule,
            f.message
        ));
    }
    out
}
