//! Cross-crate tests: the engine against published closed forms, the
//! reference integrator, and bad input.

mod bad_input;
mod part_checks;
mod junction_temperature;
mod fit_accuracy;
mod parts;
mod properties;
mod readme;
mod reference;
mod sense_resistor;
mod shooting;
mod study;
mod textbook;
mod toolchain;
