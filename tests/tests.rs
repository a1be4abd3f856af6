//! Cross-crate tests.

mod reference;
