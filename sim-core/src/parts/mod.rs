//! Real parts: the losses, stresses and verdicts of the components an
//! engineer orders, beside the idealised circuit the engines simulate.
//!
//! - [`losses`]: switching-edge, gate, output-capacitance, reverse-recovery,
//!   core (Steinmetz) and quiescent losses, computed from the simulated
//!   edges and ripple after each run and booked as energy drawn from the
//!   supply, so the energy balance still closes.
//! - [`bias`]: capacitor dielectric classes, DC-bias capacitance curves
//!   and the effective capacitance the engine uses.
//! - [`thermal`]: part temperatures from thermal resistances, and the LED
//!   forward-voltage temperature feedback.
//! - the bias/temperature loop is part of the run: [`mod@crate::run::assess`].
//! - [`checks`]: the design-check table (ok / warn / fail).
//! - [`alternatives`]: series-resistor ballast and linear regulator for the
//!   same LED string and supply range.
//! - [`fit`]: the exponential LED model fitted to datasheet points.
//! - [`advice`]: [`advice::Warning`], the warnings of a run as typed
//!   values with their words.

pub mod advice;
pub mod alternatives;
pub mod bias;
pub mod checks;
pub mod fit;
pub mod losses;
pub mod thermal;
