//! # sim-core: exact time-domain simulation of buck LED drivers
//!
//! A scenario ([`scenario::Scenario`]) describes a proposed buck LED driver
//! — supply, input capacitor, switch, freewheel diode, inductor, output
//! capacitor, LED string and controller. [`run::simulate`] runs it
//! switching cycle by switching cycle from power-on to periodic steady
//! state and measures what is needed to choose parts ([`metrics::Metrics`]).
//!
//! The exact engine ([`exact`]) treats the circuit as piecewise linear and
//! propagates each piece in closed form with the matrix exponential,
//! locating every switching event by root finding on the closed-form
//! trajectory; the reference engine ([`mod@reference`]) integrates the full
//! exponential device curves with `ode_solvers`' Dopri5 as an independent
//! check.
//!
//! ```
//! use sim_core::scenario::template;
//! use sim_core::run::{simulate, RunOptions};
//!
//! let scenario = template();
//! let result = simulate(&scenario, &RunOptions::default()).unwrap();
//! let m = &result.metrics;
//! assert!(m.led_current_avg_a > 0.5 && m.led_current_avg_a < 0.8);
//! assert!(m.energy_balance_residual.abs() < 1e-6);
//! ```
//!
//! **Invariant:** this crate does no I/O, never prints and never panics on
//! user input: loading returns [`error::ScenarioError`] naming the field,
//! the value and the reason; running returns [`error::SimError`].
#![deny(missing_docs)]

pub mod devices;
pub mod error;
pub mod exact;
pub mod metrics;
pub mod model;
pub mod parts;
pub mod record;
pub mod reference;
pub mod report;
pub mod run;
pub mod scenario;
pub mod study;
pub mod units;

pub use error::{FieldProblem, ScenarioError, SimError};
pub use run::{simulate, EngineKind, RunOptions, SimResult};
pub use scenario::Scenario;
