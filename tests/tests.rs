//! Cross-crate tests: the engine against published closed forms, the
//! reference integrator, and bad input.

mod bad_input;
mod check_edges;
mod controller_edges;
mod figures;
mod fit_accuracy;
mod junction_temperature;
mod layering;
mod part_checks;
mod part_heat;
mod parts;
mod pinned;
mod point_verdicts;
mod properties;
mod readme;
mod reference;
mod reference_problems;
mod sense_resistor;
mod shooting;
mod study;
mod textbook;
mod toolchain;
