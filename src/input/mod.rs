//! Input: YAML with positions, units, and JSON Schema validation.

pub mod files;
pub mod schema;
pub mod units;
pub mod yaml;
