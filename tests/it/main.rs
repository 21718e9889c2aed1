//! The integration tests of stackup-lint: one test binary (it links the
//! crate and the command line once), one module per subject. Most run the
//! `stackup-lint` binary (`common`); the pre-commit end-to-end test is
//! ignored by default and run by `.ci/run`, the browser test skips where no
//! Chromium is found.

mod common;

mod bad_input;
mod baseline;
mod cache;
mod cache_trust;
mod ci_formats;
mod command_line;
mod core_rules;
mod coupons;
mod determinism;
mod examples;
mod fix;
mod fuzz_regressions;
mod glass_weave;
mod hostile_input;
mod judgement;
mod lsp;
mod mask;
mod materials_wiring;
mod one_pass;
mod pre_commit;
mod provenance;
mod report;
mod report_browser;
mod rule_docs;
mod sarif;
mod suppressions;
mod sweep;
mod tolerance;
mod untrusted;
mod via_stubs;
mod width_for_target;
