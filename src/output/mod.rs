//! Emitters: they consume the finished list of findings and rule metadata.

pub mod concise;
pub mod coupons;
pub mod escape;
pub mod github;
pub mod gitlab;
pub mod human;
pub mod impedance;
pub mod json;
pub mod report;
pub mod sarif;
pub mod sweep;

use crate::finding::{Finding, Severity};

/// Counts for the closing summary line.
#[derive(Debug, Default, Clone, Copy, PartialEq, Eq)]
pub struct Summary {
    pub errors: usize,
    pub warnings: usize,
    pub notes: usize,
    pub suppressed: usize,
    /// Findings in the `--baseline` file: not counted above.
    pub baselined: usize,
    pub files: usize,
}

impl Summary {
    pub fn of(findings: &[Finding], files: usize) -> Summary {
        let mut s = Summary {
            files,
            ..Summary::default()
        };
        for f in findings {
            if f.suppressed.is_some() {
                s.suppressed += 1;
                continue;
            }
            if f.baselined == Some(true) {
                s.baselined += 1;
                continue;
            }
            match f.severity {
                Severity::Error => s.errors += 1,
                Severity::Warning => s.warnings += 1,
                Severity::Note => s.notes += 1,
            }
        }
        s
    }

    /// The closing line, with what the walk skipped.
    pub fn line_with(&self, skipped: &crate::walk::Skipped) -> String {
        match skipped.phrase() {
            Some(p) => format!("{}; {p}", self.line()),
            None => self.line(),
        }
    }

    pub fn line(&self) -> String {
        let plural = |n: usize, w: &str| format!("{n} {w}{}", if n == 1 { "" } else { "s" });
        let mut line = format!(
            "{}, {}, {} in {}",
            plural(self.errors, "error"),
            plural(self.warnings, "warning"),
            plural(self.notes, "note"),
            plural(self.files, "file")
        );
        let mut extra = Vec::new();
        if self.suppressed > 0 {
            extra.push(format!("{} suppressed", self.suppressed));
        }
        if self.baselined > 0 {
            extra.push(format!("{} baselined", self.baselined));
        }
        if !extra.is_empty() {
            line.push_str(&format!(" ({})", extra.join(", ")));
        }
        line
    }
}
