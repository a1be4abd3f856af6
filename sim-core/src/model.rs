//! The model of the driver both engines run: the circuit with its element
//! values read from the scenario once ([`elements`]) and built into the
//! exact engine's piecewise-linear circuit ([`circuit`]), the switch
//! controllers ([`controller`]) and the seam between the run driver and
//! the engines ([`seam`]: the cycle-engine trait, work counters, the
//! chatter guard, state scales).
//!
//! This layer imports only the ground modules (units, error, devices,
//! metrics, record) and the scenario; the engines (`exact`, `reference`)
//! and the run driver build on it.

pub mod circuit;
pub mod controller;
pub mod elements;
pub mod seam;

/// Current floor, relative to the current scale. In the off state the
/// inductor current is taken to have reached zero (DCM idle) when it falls
/// to this: with a Shockley diode and an exponential LED string and no
/// output capacitor both voltages vanish with the current, so it would
/// only approach zero asymptotically. The energy dropped, ½·L·(1e-9·I)²,
/// is negligible beside any loss. Without an output capacitor the
/// exponential string is also taken to block below this current (see
/// `Model::led_idle_v`).
pub const DIODE_FLOOR_REL: f64 = 1e-9;
