//! The exact engine: the piecewise-linear circuit propagated in closed
//! form between events.
//!
//! [`engine`] holds [`ExactEngine`] (the cycle flow, and under it the
//! region cache, event sets, one-interval stepping, measured totals and
//! the cycle map's sensitivities); [`propagate`] the matrix exponentials,
//! Gramians and event location; [`spectral`] the eigen-decompositions
//! used for `e^{Mt}z`. [`ExactEngine::step`] lets a library user drive
//! the engine one event at a time and see why each step stopped
//! ([`StopReason`]). It imports only the model, the scenario and the
//! ground modules.

pub mod engine;
pub mod propagate;
pub mod spectral;

pub use engine::{DeviceBoundary, ExactEngine, Step, StopReason};
