//! What a request will cost before it runs: moved to
//! [`crate::study::budget`] (the study layer; it reads the scenario and a
//! study's columns).

// reshape shim
pub use crate::study::budget::*;
