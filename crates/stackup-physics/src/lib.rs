//! Physics of stackup-lint: pure functions in SI units.
//!
//! Nothing here knows about YAML, rules or diagnostics. Every model names its
//! published source in its doc comment and is tested against an outside value.

pub mod consts;

// Transmission-line engine.
pub mod coupled;
pub mod cpw;
pub mod crosstalk;
pub mod elliptic;
pub mod fieldsolver;
pub mod microstrip;
pub mod modes;
pub mod stripline;
pub mod twoport;
pub mod validity;
pub mod vias;

// Extraction from measured test coupons.
pub mod coupon;

// Materials and copper.
pub mod copper;
pub mod dispersion;
pub mod fab;
pub mod loss;
pub mod roughness;
pub mod weave;
