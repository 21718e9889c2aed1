//! The reader the model stage builds with: typed access to the schema-valid
//! YAML tree of one file (numbers, quantities with units, bounded values,
//! fractions, tolerances), every problem collected as an `invalid-input`
//! finding at its span instead of stopping at the first.

use std::collections::BTreeSet;

use super::*;
use crate::finding::{Finding, Severity, INVALID_INPUT};
use crate::input::yaml::{Node, Value};
use crate::source::SourceDb;
use crate::units::{self, Dimension};

pub(super) struct Reader<'a> {
    pub(super) db: &'a SourceDb,
    pub(super) file: FileId,
    pub(super) root: &'a Node,
    pub(super) errors: Vec<Finding>,
    /// Names of materials, foils, layers and net classes that are defined
    /// but failed to load. A reference to one of them is not reported
    /// again: the definition already has its finding.
    pub(super) unusable: BTreeSet<String>,
    /// Elements (layers, classes, groups, coupons, materials, foils, by
    /// pointer) left out for their schema errors: not read, their names
    /// unusable.
    pub(super) skip: BTreeSet<String>,
    /// A library the file names failed to load.
    pub(super) library_failed: bool,
}

impl<'a> Reader<'a> {
    pub(super) fn new(db: &'a SourceDb, file: FileId, root: &'a Node) -> Option<Self> {
        Some(Reader {
            db,
            file,
            root,
            errors: Vec::new(),
            unusable: BTreeSet::new(),
            skip: BTreeSet::new(),
            library_failed: false,
        })
    }

    /// Whether a material or foil `name` the model lacks was defined but
    /// did not load (here, or possibly in a library that failed): a
    /// reference to it is not reported, its definition already is.
    pub(super) fn lost(&self, name: &str) -> bool {
        self.unusable.contains(name) || self.library_failed
    }

    pub(super) fn node(&self, ptr: &str) -> Option<&'a Node> {
        self.root.pointer(ptr)
    }

    /// Record a finding made by the caller.
    pub(super) fn push(&mut self, f: Finding) {
        self.errors.push(f);
    }

    pub(super) fn error(
        &mut self,
        ptr: &str,
        message: impl Into<String>,
        label: &str,
        help: Option<String>,
    ) {
        let loc = self.db.locate(self.file, ptr);
        let mut f = Finding::new(INVALID_INPUT, loc, message).label(label);
        f.severity = Severity::Error;
        f.help = help;
        self.errors.push(f);
    }

    /// 1-based line of the node at `ptr`, for messages that name a
    /// second place ("first at line 14").
    pub(super) fn line_of(&self, ptr: &str) -> usize {
        let loc = self.db.locate(self.file, ptr);
        crate::source::line_col(&self.db.get(self.file).text, loc.span.start).0
    }

    pub(super) fn string(&self, ptr: &str) -> Option<String> {
        match &self.node(ptr)?.value {
            Value::String(s) => Some(s.clone()),
            Value::Number(n) => Some(format!("{n}")),
            _ => None,
        }
    }

    pub(super) fn bool(&self, ptr: &str) -> Option<bool> {
        match self.node(ptr)?.value {
            Value::Bool(b) => Some(b),
            _ => None,
        }
    }

    /// A plain YAML number (Dk, Df, etch factor), finite.
    pub(super) fn number(&mut self, ptr: &str, what: &str) -> Option<f64> {
        match self.node(ptr)?.value {
            Value::Number(n) if n.is_finite() => Some(n),
            Value::Number(_) => {
                self.error(
                    ptr,
                    format!("{what} is not a finite number"),
                    "NaN or infinity",
                    None,
                );
                None
            }
            _ => None,
        }
    }

    /// A quantity with a unit (or a bare number where the dimension allows).
    pub(super) fn quantity(&mut self, ptr: &str, dim: Dimension, what: &str) -> Option<f64> {
        let node = self.node(ptr)?;
        let result = match &node.value {
            Value::String(s) => units::parse_quantity(s, dim),
            Value::Number(n) => units::bare_number(*n, dim),
            _ => return None,
        };
        match result {
            Ok(v) => Some(v),
            Err(e) => {
                let fix = match (&e, &node.value) {
                    (units::UnitError::UnknownUnit { unit, .. }, Value::String(text)) => {
                        units::suggest_unit(unit, dim).and_then(|u| {
                            let at = text.rfind(unit.as_str())?;
                            Some(format!("{}{u}{}", &text[..at], &text[at + unit.len()..]))
                        })
                    }
                    _ => None,
                };
                let help = Some(match fix {
                    Some(fix) => crate::suggest::did_you_mean(&fix),
                    None => format!("write {what} as {}", dim.describe()),
                });
                self.error(
                    ptr,
                    format!("{what}: {e}"),
                    "cannot read this quantity",
                    help,
                );
                None
            }
        }
    }

    /// A quantity that must lie in (min, max]; `min` exclusive.
    pub(super) fn bounded(
        &mut self,
        ptr: &str,
        dim: Dimension,
        what: &str,
        min: f64,
        max: f64,
        fmt: fn(f64) -> String,
    ) -> Option<f64> {
        let v = self.quantity(ptr, dim, what)?;
        if v <= min {
            self.error(
                ptr,
                format!("{what} must be greater than {}, got {}", fmt(min), fmt(v)),
                "not physical",
                None,
            );
            return None;
        }
        if v > max {
            self.error(
                ptr,
                format!(
                    "{what} of {} is not plausible (more than {})",
                    fmt(v),
                    fmt(max)
                ),
                "implausibly large",
                Some("check the unit (mm vs mil vs um)".into()),
            );
            return None;
        }
        Some(v)
    }

    pub(super) fn fraction(&mut self, ptr: &str, what: &str) -> Option<f64> {
        let v = self.quantity(ptr, Dimension::Fraction, what)?;
        if !(0.0..=1.0).contains(&v) {
            // Show the value as written ("150 %"), not only as a fraction.
            let written = self.string(ptr).unwrap_or_else(|| format!("{v}"));
            self.error(
                ptr,
                format!("{what} must lie between 0 and 1 (0 % to 100 %), got {written}"),
                "out of range",
                Some("give a fraction such as 0.3 or a percentage such as \"30 %\"".into()),
            );
            return None;
        }
        Some(v)
    }

    /// A tolerance: absolute in `dim` or relative ("10 %") of `nominal`.
    pub(super) fn tolerance(
        &mut self,
        ptr: &str,
        dim: Dimension,
        nominal: f64,
        what: &str,
    ) -> Option<f64> {
        let node = self.node(ptr)?;
        let text = match &node.value {
            Value::String(s) => s.clone(),
            Value::Number(n) => format!("{n}"),
            _ => return None,
        };
        let tol = if text.trim_end().ends_with('%') {
            units::parse_quantity(&text, Dimension::Fraction).map(|f| f * nominal)
        } else {
            units::parse_quantity(&text, dim)
        };
        match tol {
            Ok(t) if t > 0.0 => Some(t),
            Ok(t) => {
                self.error(
                    ptr,
                    format!("{what} must be positive, got {t}"),
                    "not positive",
                    None,
                );
                None
            }
            Err(e) => {
                self.error(
                    ptr,
                    format!("{what}: {e}"),
                    "cannot read this tolerance",
                    Some(format!(
                        "write it as a percentage (\"10 %\") or as {}",
                        dim.describe()
                    )),
                );
                None
            }
        }
    }
}

pub(super) fn fmt_len(v: f64) -> String {
    units::fmt_length(v)
}
pub(super) fn fmt_freq(v: f64) -> String {
    units::fmt_frequency(v)
}
pub(super) fn fmt_time(v: f64) -> String {
    format!("{:.1} ps", v * 1e12)
}
