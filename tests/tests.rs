//! Cross-crate tests: the engine against published closed forms, the
//! reference integrator, and bad input.

mod bad_input;
mod parts;
mod point_verdicts;
mod properties;
mod reference;
mod shooting;
mod study;
mod textbook;
