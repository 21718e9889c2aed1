//! stackup-lint library
