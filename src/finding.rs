//! The one finding type every rule returns and every emitter consumes.

use std::fmt;

use crate::source::Location;

/// How serious a finding is.
#[derive(Debug, Clone, Copy, PartialEq, Eq, PartialOrd, Ord, Hash)]
pub enum Severity {
    Note,
    Warning,
    Error,
}

impl Severity {
    pub fn as_str(self) -> &'static str {
        match self {
            Severity::Note => "note",
            Severity::Warning => "warning",
            Severity::Error => "error",
        }
    }

    pub fn parse(s: &str) -> Option<Severity> {
        match s {
            "note" => Some(Severity::Note),
            "warning" => Some(Severity::Warning),
            "error" => Some(Severity::Error),
            _ => None,
        }
    }
}

impl fmt::Display for Severity {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        f.write_str(self.as_str())
    }
}

/// A secondary place that explains a finding (the material entry, the foil
/// on the other face, the mirrored layer).
#[derive(Debug, Clone, PartialEq)]
pub struct Label {
    pub location: Location,
    pub message: String,
}

/// A problem found in a stackup.
#[derive(Debug, Clone, PartialEq)]
pub struct Finding {
    /// Rule name (kebab-case); `invalid-input` for load and schema errors.
    pub rule: &'static str,
    pub severity: Severity,
    /// What is wrong, with computed and assumed numbers and units;
    /// lowercase start, no trailing period.
    pub message: String,
    /// Where it is.
    pub primary: Location,
    /// Short text shown at the primary span.
    pub primary_label: String,
    pub labels: Vec<Label>,
    /// The concrete change that would pass.
    pub help: Option<String>,
    /// The numbers that identify this finding, rounded, for the stable
    /// fingerprint (a finding whose numbers change materially is new).
    pub key_numbers: Vec<String>,
    /// Set when a suppression matched: its reason.
    pub suppressed: Option<String>,
    /// Baseline state: `None` when no baseline was applied, `Some(true)`
    /// when this finding's fingerprint is in the baseline (not counted for
    /// the exit code), `Some(false)` when it is new.
    pub baselined: Option<bool>,
    /// The rule chose this finding's severity itself (e.g. a warning-level
    /// variant of an error rule); a severity configured by the project
    /// still overrides it.
    pub severity_chosen: bool,
    /// An edit of the YAML that resolves the finding, where the change
    /// needs no judgement (a solved width, say); SARIF carries it as a
    /// `fix` review tools can offer.
    pub fix: Option<Fix>,
    /// Findings this one is the root cause of: of rule `.0`, placed (first
    /// or second place) at the element with JSON pointer `.1` of the same
    /// file. The run folds them into this one as related places instead of
    /// reporting them on their own (`rules::fold_consequences`).
    pub explains: Vec<(&'static str, String)>,
}

/// A fix: what it does, and the text edits that make it.
#[derive(Debug, Clone, PartialEq)]
pub struct Fix {
    pub description: String,
    pub edits: Vec<Edit>,
}

/// One text edit of a YAML file: the text at `location.span` (a scalar's
/// span, or an empty span where a key is inserted) becomes `text`, after
/// which the node at `location.pointer` reads `value` (its source text).
/// Built by [`crate::edit`], which keeps the user's unit and quoting.
#[derive(Debug, Clone, PartialEq)]
pub struct Edit {
    pub location: Location,
    pub text: String,
    pub value: String,
}

impl Finding {
    pub fn new(rule: &'static str, primary: Location, message: impl Into<String>) -> Finding {
        Finding {
            rule,
            severity: Severity::Error,
            message: message.into(),
            primary,
            primary_label: String::new(),
            labels: Vec::new(),
            help: None,
            key_numbers: Vec::new(),
            suppressed: None,
            baselined: None,
            severity_chosen: false,
            fix: None,
            explains: Vec::new(),
        }
    }

    /// A fix made of `edits`; none when any edit could not be placed
    /// (a value the file does not hold as a plain scalar, a mapping
    /// written in flow style): a partial fix would be wrong.
    pub fn with_fix(
        mut self,
        description: impl Into<String>,
        edits: impl IntoIterator<Item = Option<Edit>>,
    ) -> Self {
        let edits: Option<Vec<Edit>> = edits.into_iter().collect();
        if let Some(edits) = edits.filter(|e| !e.is_empty()) {
            self.fix = Some(Fix {
                description: description.into(),
                edits,
            });
        }
        self
    }

    /// Findings of `rule` at the element `pointer` follow from this one
    /// (see `explains`).
    pub fn explains(mut self, rule: &'static str, pointer: impl Into<String>) -> Self {
        self.explains.push((rule, pointer.into()));
        self
    }

    /// Give this finding its own severity (see `severity_chosen`).
    pub fn with_severity(mut self, severity: Severity) -> Self {
        self.severity = severity;
        self.severity_chosen = true;
        self
    }

    pub fn label(mut self, text: impl Into<String>) -> Self {
        self.primary_label = text.into();
        self
    }

    pub fn with_help(mut self, help: impl Into<String>) -> Self {
        self.help = Some(help.into());
        self
    }

    /// A secondary place, where there is one.
    pub fn also(self, location: Option<Location>, message: impl Into<String>) -> Self {
        match location {
            Some(l) => self.secondary(l, message),
            None => self,
        }
    }

    pub fn secondary(mut self, location: Location, message: impl Into<String>) -> Self {
        self.labels.push(Label {
            location,
            message: message.into(),
        });
        self
    }

    pub fn key(mut self, number: impl Into<String>) -> Self {
        self.key_numbers.push(number.into());
        self
    }

    /// Stable fingerprint: rule, file path, JSON pointer and key numbers.
    /// It does not change when unrelated lines move.
    pub fn fingerprint(&self, display_path: &str) -> String {
        let mut text = format!(
            "{}\u{0}{}\u{0}{}",
            self.rule, display_path, self.primary.pointer
        );
        for k in &self.key_numbers {
            text.push('\u{0}');
            text.push_str(k);
        }
        format!("{:016x}", fnv1a64(text.as_bytes()))
    }
}

/// A key number for [`Finding::key`]: `value` rounded to the nearest
/// multiple of `step`, printed with just the decimals the step needs.
/// Choose `step` so solver noise stays inside one step and a material
/// change crosses several (e.g. 1 ohm, 0.01 Dk, 1 ps). Negative zero
/// prints as `0`; NaN and infinities print as themselves.
pub fn key_step(value: f64, step: f64) -> String {
    if !(value.is_finite() && step.is_finite() && step > 0.0) {
        return format!("{value}");
    }
    let n = (value / step).round();
    let decimals = (-step.log10()).ceil().max(0.0) as usize;
    let v = n * step;
    let v = if v == 0.0 { 0.0 } else { v };
    format!("{v:.decimals$}")
}

/// FNV-1a 64-bit hash (Fowler, Noll, Vo): deterministic across platforms
/// and releases, unlike `std`'s `DefaultHasher`.
pub fn fnv1a64(bytes: &[u8]) -> u64 {
    let mut h: u64 = 0xcbf2_9ce4_8422_2325;
    for &b in bytes {
        h ^= u64::from(b);
        h = h.wrapping_mul(0x0000_0100_0000_01b3);
    }
    h
}

/// The rule name used for load, YAML, schema and model errors.
pub const INVALID_INPUT: &str = "invalid-input";

#[cfg(test)]
mod tests {
    use super::*;
    #[test]
    fn fnv_reference_values() {
        // Test vectors from the FNV reference (Noll, "FNV hash", test suite).
        assert_eq!(fnv1a64(b""), 0xcbf29ce484222325);
        assert_eq!(fnv1a64(b"a"), 0xaf63dc4c8601ec8c);
        assert_eq!(fnv1a64(b"foobar"), 0x85944171f73967e8);
    }

    #[test]
    fn key_step_rounds_to_the_step() {
        // Arithmetic of rounding to a grid (no external source needed).
        assert_eq!(key_step(50.4, 1.0), "50");
        assert_eq!(key_step(50.6, 1.0), "51");
        assert_eq!(key_step(3.4449, 0.01), "3.44");
        assert_eq!(key_step(3.46, 0.05), "3.45");
        assert_eq!(key_step(3.48, 0.05), "3.50");
        assert_eq!(key_step(-0.2, 1.0), "0");
        assert_eq!(key_step(1234.0, 10.0), "1230");
        assert_eq!(key_step(f64::NAN, 1.0), "NaN");
    }
}
