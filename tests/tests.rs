//! Cross-crate tests.
