//! Emitters: they consume the finished list of findings and rule metadata.

pub mod github;
pub mod gitlab;
pub mod human;
pub mod impedance;
pub mod json;
pub mod report;
pub mod sarif;

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

/// Write `contents` to `path` atomically: a temporary file in the same
/// directory, then a rename, so no half-written file is ever left behind.
pub fn write_atomic(path: &std::path::Path, contents: &[u8]) -> std::io::Result<()> {
    use std::io::Write;
    let dir = path
        .parent()
        .filter(|p| !p.as_os_str().is_empty())
        .unwrap_or(std::path::Path::new("."));
    let mut tmp = tempfile::NamedTempFile::new_in(dir)?;
    // Temporary files are created private (0600); the result is an ordinary
    // report that other users and CI upload steps may read.
    #[cfg(unix)]
    {
        use std::os::unix::fs::PermissionsExt;
        tmp.as_file()
            .set_permissions(std::fs::Permissions::from_mode(0o644))?;
    }
    tmp.write_all(contents)?;
    tmp.as_file().sync_all()?;
    tmp.persist(path).map_err(|e| e.error)?;
    Ok(())
}
