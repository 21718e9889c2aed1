//! Baselines: record today's findings so that a later `check --baseline`
//! counts only findings that are new.
//!
//! The file is JSON (format version 1):
//!
//! ```json
//! {
//!   "stackup-lint-baseline": 1,
//!   "findings": [
//!     {"rule": "propagation-skew", "file": "boards/a.stackup.yaml",
//!      "fingerprint": "3f0c9a1e5b7d2c44", "message": "..."}
//!   ]
//! }
//! ```
//!
//! A finding is baselined when its fingerprint ([`Finding::fingerprint`]:
//! rule, display path, JSON pointer and the rule's rounded key numbers) is
//! in the file. Moving lines, adding comments or reordering unrelated keys
//! keeps it; a material change of its numbers makes it new. `rule`, `file`
//! and `message` are for people reading or reviewing the file. Invalid-input
//! findings are never recorded nor matched; suppressed findings are not
//! recorded (the suppression already covers them).

use std::collections::BTreeSet;
use std::path::Path;

use serde::{Deserialize, Serialize};

use crate::engine::CheckOutcome;
use crate::finding::INVALID_INPUT;

/// The key that names the format and its version.
pub const FORMAT_KEY: &str = "stackup-lint-baseline";
/// Current format version.
pub const FORMAT_VERSION: u32 = 1;

/// One recorded finding.
#[derive(Debug, Clone, PartialEq, Eq, PartialOrd, Ord, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct Entry {
    pub rule: String,
    pub file: String,
    pub fingerprint: String,
    pub message: String,
}

/// A baseline file.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct Baseline {
    #[serde(rename = "stackup-lint-baseline")]
    pub version: u32,
    pub findings: Vec<Entry>,
}

/// Largest baseline file read (about 100,000 findings).
pub const MAX_BASELINE_BYTES: u64 = 64 * 1024 * 1024;

impl Baseline {
    /// Record the findings of a run (not invalid-input, not suppressed).
    pub fn record(outcome: &CheckOutcome) -> Baseline {
        let mut findings: Vec<Entry> = outcome
            .findings
            .iter()
            .filter(|f| f.rule != INVALID_INPUT && f.suppressed.is_none())
            .map(|f| {
                let file = &outcome.db.get(f.primary.file).display;
                Entry {
                    rule: f.rule.to_string(),
                    file: file.clone(),
                    fingerprint: f.fingerprint(file),
                    message: f.message.clone(),
                }
            })
            .collect();
        findings.sort();
        findings.dedup();
        Baseline {
            version: FORMAT_VERSION,
            findings,
        }
    }

    /// The file text: pretty JSON with a final newline.
    pub fn to_json(&self) -> String {
        let mut s = serde_json::to_string_pretty(self)
            .unwrap_or_else(|e| format!("{{\"error\": \"{e}\"}}"));
        s.push('\n');
        s
    }

    /// Parse a baseline file's text; the error says what is wrong.
    pub fn parse(text: &str) -> Result<Baseline, String> {
        // serde's own message can quote the file (an unexpected string, an
        // unknown key): say only where and what kind of problem.
        let b: Baseline = serde_json::from_str(text).map_err(|e| {
            let kind = match e.classify() {
                serde_json::error::Category::Io => "cannot be read",
                serde_json::error::Category::Syntax => "is not JSON",
                serde_json::error::Category::Data => "does not have the baseline's fields",
                serde_json::error::Category::Eof => "ends too early",
            };
            format!(
                "not a stackup-lint baseline: the file {kind} (line {}, column {})",
                e.line(),
                e.column()
            )
        })?;
        if b.version != FORMAT_VERSION {
            return Err(format!(
                "baseline format version {} is not supported (this build reads version {FORMAT_VERSION})",
                b.version
            ));
        }
        if let Some(i) = b.findings.iter().position(|e| {
            e.fingerprint.len() != 16 || !e.fingerprint.bytes().all(|c| c.is_ascii_hexdigit())
        }) {
            return Err(format!(
                "the fingerprint of finding {} is not 16 hexadecimal digits",
                i + 1
            ));
        }
        Ok(b)
    }

    /// Read and parse a baseline file.
    /// Only a regular file is read, at most [`MAX_BASELINE_BYTES`].
    pub fn read(path: &Path) -> Result<Baseline, String> {
        let shown = crate::output::escape::controls(&path.to_string_lossy()).into_owned();
        let bytes = crate::files::read_regular(path, MAX_BASELINE_BYTES).map_err(|e| {
            format!(
                "cannot read the baseline {shown}: {}",
                e.message().replace("for one stackup", "for a baseline")
            )
        })?;
        let text = String::from_utf8(bytes).map_err(|_| {
            format!("{shown}: not a stackup-lint baseline: the file is not UTF-8 text")
        })?;
        Baseline::parse(&text).map_err(|e| format!("{shown}: {e}"))
    }

    /// Mark every finding of `outcome` as baselined (`Some(true)`) or new
    /// (`Some(false)`). Invalid-input findings are always new.
    pub fn apply(&self, outcome: &mut CheckOutcome) {
        let known: BTreeSet<&str> = self
            .findings
            .iter()
            .map(|e| e.fingerprint.as_str())
            .collect();
        for f in &mut outcome.findings {
            let file = &outcome.db.get(f.primary.file).display;
            let hit = f.rule != INVALID_INPUT && known.contains(f.fingerprint(file).as_str());
            f.baselined = Some(hit);
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn parse_rejects_what_is_not_a_baseline() {
        assert!(Baseline::parse("").is_err());
        assert!(Baseline::parse("{}").is_err());
        assert!(Baseline::parse(r#"{"stackup-lint-baseline": 2, "findings": []}"#).is_err());
        assert!(Baseline::parse(
            r#"{"stackup-lint-baseline": 1, "findings": [{"rule": "r", "file": "f", "fingerprint": "xyz", "message": "m"}]}"#
        )
        .is_err());
        let ok = Baseline::parse(
            r#"{"stackup-lint-baseline": 1, "findings": [{"rule": "r", "file": "f", "fingerprint": "00112233445566aa", "message": "m"}]}"#,
        )
        .unwrap();
        assert_eq!(ok.findings.len(), 1);
        assert_eq!(Baseline::parse(&ok.to_json()).unwrap(), ok);
    }
}
