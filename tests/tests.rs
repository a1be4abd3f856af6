//! Cross-crate tests: the engine against published closed forms, the
//! reference integrator, and bad input.

mod bad_input;
mod fit_accuracy;
mod parts;
mod properties;
mod reference;
mod shooting;
mod study;
mod textbook;
