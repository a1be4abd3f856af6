//! The run: one scenario brought to periodic steady state and measured,
//! and the full assessment around it.
//!
//! - [`entry`]: [`run_design`], the one entry point `chopwave run` and
//!   every study point call (the full assessment), and [`run_point`].
//! - [`drive`]: [`simulate`] — shooting (exact engine) or cycling to
//!   steady state, then the measured cycles, the curve-fit report and the
//!   part losses.
//! - [`shooting`]: Newton on the cycle map, over any engine that offers
//!   the map and its Jacobian ([`shooting::CycleMap`]).
//! - [`steady`]: the cycling steady-state detector.
//! - [`startup`]: the start-up transient from power-on.
//! - [`mod@assess`]: the full run — DC-bias capacitance and LED temperature
//!   iterated to convergence around [`simulate`], temperatures, design
//!   checks, the ends of a declared supply range, the alternatives.
//! - [`result`]: what a run produces ([`SimResult`], [`SteadyInfo`], …).
//! - [`warnings`]: the warnings of a measured run.

pub mod assess;
pub mod drive;
pub mod entry;
pub mod result;
pub mod shooting;
pub mod startup;
pub mod steady;
pub mod warnings;

pub use assess::{assess, assess_with_progress, AssessOptions, Assessment};
pub use drive::{simulate, simulate_with_progress};
pub use entry::{run_design, run_point, Purpose};
pub use result::{EngineKind, FitReport, Progress, RunOptions, SimResult, SteadyInfo};
