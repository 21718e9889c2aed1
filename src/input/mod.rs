//! Input: YAML with positions and JSON Schema validation (units are
//! [`crate::units`], file reading [`crate::files`]), and Touchstone files.

pub mod schema;
pub mod touchstone;
pub mod yaml;
