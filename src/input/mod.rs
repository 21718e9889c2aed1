//! Input: YAML with positions and JSON Schema validation (units are
//! [`crate::units`], file reading [`crate::files`]).

pub mod schema;
pub mod yaml;
