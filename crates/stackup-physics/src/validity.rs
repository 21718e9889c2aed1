//! Validity notes: a result computed outside the range its model was
//! published for is still returned, but carries a note saying so.

use std::fmt;

/// "This result is outside the stated validity range of model `model`:
/// parameter `parameter` = `value`, valid range [`min`, `max`]."
///
/// `min` or `max` may be infinite for a one-sided range.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct ValidityNote {
    /// Published model whose range was left, e.g. `"Hammerstad-Jensen 1980"`.
    pub model: &'static str,
    /// Parameter that is out of range, e.g. `"W/h"`.
    pub parameter: &'static str,
    /// The value that was given.
    pub value: f64,
    /// Lower end of the stated range (inclusive).
    pub min: f64,
    /// Upper end of the stated range (inclusive).
    pub max: f64,
}

impl ValidityNote {
    /// Returns a note when `value` lies outside `[min, max]` (or is NaN),
    /// `None` when it is inside.
    pub fn check(
        model: &'static str,
        parameter: &'static str,
        value: f64,
        min: f64,
        max: f64,
    ) -> Option<ValidityNote> {
        if value >= min && value <= max {
            None
        } else {
            Some(ValidityNote {
                model,
                parameter,
                value,
                min,
                max,
            })
        }
    }

    /// Pushes a note onto `notes` when `value` is outside `[min, max]`.
    pub fn push_if_outside(
        notes: &mut Vec<ValidityNote>,
        model: &'static str,
        parameter: &'static str,
        value: f64,
        min: f64,
        max: f64,
    ) {
        if let Some(n) = Self::check(model, parameter, value, min, max) {
            notes.push(n);
        }
    }
}

impl fmt::Display for ValidityNote {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        write!(
            f,
            "outside the stated validity range of {}: {} = {}, valid range [{}, {}]",
            self.model, self.parameter, self.value, self.min, self.max
        )
    }
}

/// Error for inputs no model can evaluate (non-finite, zero or negative
/// dimensions, eps_r < 1 ...).
#[derive(Debug, Clone, PartialEq)]
pub struct InputError {
    /// Human-readable reason, naming the offending parameter.
    pub message: String,
}

impl InputError {
    /// New error with the given message.
    pub fn new(message: impl Into<String>) -> Self {
        InputError {
            message: message.into(),
        }
    }
}

impl fmt::Display for InputError {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        f.write_str(&self.message)
    }
}

impl std::error::Error for InputError {}

/// Requires `value` to be finite and strictly positive.
pub fn require_positive(name: &str, value: f64) -> Result<(), InputError> {
    if value.is_finite() && value > 0.0 {
        Ok(())
    } else {
        Err(InputError::new(format!(
            "{name} must be finite and > 0, got {value}"
        )))
    }
}

/// Requires `value` to be finite and >= 0.
pub fn require_non_negative(name: &str, value: f64) -> Result<(), InputError> {
    if value.is_finite() && value >= 0.0 {
        Ok(())
    } else {
        Err(InputError::new(format!(
            "{name} must be finite and >= 0, got {value}"
        )))
    }
}

/// Requires a relative permittivity: finite and >= 1.
pub fn require_eps_r(name: &str, value: f64) -> Result<(), InputError> {
    if value.is_finite() && value >= 1.0 {
        Ok(())
    } else {
        Err(InputError::new(format!(
            "{name} must be finite and >= 1, got {value}"
        )))
    }
}

/// Returns `v` when finite, else an error (inputs whose result overflows).
pub fn finite(what: &str, v: f64) -> Result<f64, InputError> {
    if v.is_finite() {
        Ok(v)
    } else {
        Err(InputError::new(format!(
            "{what} overflows for these inputs (got {v})"
        )))
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn note_only_outside_range() {
        assert!(ValidityNote::check("m", "p", 1.0, 0.0, 2.0).is_none());
        assert!(ValidityNote::check("m", "p", 2.0, 0.0, 2.0).is_none());
        let n = ValidityNote::check("m", "p", 3.0, 0.0, 2.0).unwrap();
        assert_eq!(n.value, 3.0);
        assert!(ValidityNote::check("m", "p", f64::NAN, 0.0, 2.0).is_some());
        assert!(n.to_string().contains("p = 3"));
    }

    #[test]
    fn input_checks() {
        assert!(require_positive("w", 0.0).is_err());
        assert!(require_positive("w", f64::NAN).is_err());
        assert!(require_positive("w", f64::INFINITY).is_err());
        assert!(require_positive("w", 1e-9).is_ok());
        assert!(require_non_negative("t", 0.0).is_ok());
        assert!(require_non_negative("t", -1e-12).is_err());
        assert!(require_eps_r("er", 0.99).is_err());
        assert!(require_eps_r("er", 1.0).is_ok());
    }
}
