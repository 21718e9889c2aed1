//! stackup-lint: lint PCB layer stackups and impedance-controlled net classes.
//!
//! Data flow, one direction: file text → [`input`] (YAML with spans, units,
//! schema) → [`model`] (typed, SI) → [`rules`] (findings) → [`output`]
//! (terminal, JSON, SARIF). Physics lives in the `stackup-physics` crate.

pub mod analysis;
pub mod baseline;
pub mod edit;
pub mod engine;
pub mod files;
pub mod finding;
pub mod fix;
pub mod input;
pub mod load;
pub mod lsp;
pub mod model;
pub mod output;
pub mod pool;
pub mod rules;
pub mod source;
pub mod suggest;
pub mod units;
pub mod walk;

pub use finding::{Finding, Severity};
