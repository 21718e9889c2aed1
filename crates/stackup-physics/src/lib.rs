//! Physics of stackup-lint: pure functions in SI units.
//!
//! Nothing here knows about YAML, rules or diagnostics. Every model names its
//! published source in its doc comment and is tested against an outside value.

pub mod consts;
