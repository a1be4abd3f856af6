//! The engine seam as the run driver sees it: the [`CycleEngine`] trait
//! (with its exact-engine implementation), the zero-interval
//! [`ChatterGuard`], the work counters [`RunStats`] and the per-state
//! [`state_scales`] of the steady-state test. The run itself (simulate,
//! shooting, steady state, the assessment) lives in [`crate::run`].

use crate::circuit::N_STATES;
use crate::engine::ExactEngine;
use crate::error::SimError;
use crate::metrics::Totals;
use crate::record::Recorder;
use crate::scenario::{Load, Scenario};
use serde::Serialize;

// reshape shim: the run moved to `crate::run`.
pub use crate::run::drive::{drive, simulate, simulate_with_progress}; // reshape shim
pub use crate::run::result::{EngineKind, FitReport, Progress, RunOptions, SimResult, SteadyInfo}; // reshape shim
pub use crate::run::startup::{startup_transient, STARTUP_SETTLED}; // reshape shim
pub use crate::run::warnings::{DEEP_DCM_IDLE, SELV_LIMIT_V}; // reshape shim

/// One cycle-by-cycle engine, as the steady-state driver sees it.
pub trait CycleEngine {
    /// Runs one cycle from a turn-on to the next.
    fn run_cycle(
        &mut self,
        totals: Option<&mut Totals>,
        rec: Option<&mut Recorder>,
    ) -> Result<(), SimError>;
    /// State at the present turn-on.
    fn state(&self) -> [f64; N_STATES];
    /// Sets the state (at a turn-on).
    fn set_state(&mut self, x: [f64; N_STATES]);
    /// Simulated time, s.
    fn time_s(&self) -> f64;
    /// Energy in the inductor and capacitors, J.
    fn stored_energy_j(&self) -> f64;
    /// Energy dropped when reverse current was cut off, J (running total).
    fn clamped_energy_j(&self) -> f64;
    /// Stops re-fitting curves (for the measured cycles).
    fn freeze_fits(&mut self);
    /// Work counters.
    fn stats(&self) -> RunStats;
}

impl CycleEngine for ExactEngine {
    fn run_cycle(
        &mut self,
        totals: Option<&mut Totals>,
        rec: Option<&mut Recorder>,
    ) -> Result<(), SimError> {
        ExactEngine::run_cycle(self, totals, rec)
    }
    fn state(&self) -> [f64; N_STATES] {
        [self.x[0], self.x[1], self.x[2]]
    }
    fn set_state(&mut self, x: [f64; N_STATES]) {
        ExactEngine::set_state(self, x);
    }
    fn time_s(&self) -> f64 {
        self.t
    }
    fn stored_energy_j(&self) -> f64 {
        ExactEngine::stored_energy_j(self)
    }
    fn clamped_energy_j(&self) -> f64 {
        self.clamped_energy_j
    }
    fn freeze_fits(&mut self) {
        self.freeze_fits = true;
    }
    fn stats(&self) -> RunStats {
        RunStats {
            cycles: self.cycles,
            intervals: self.intervals,
            exponentials: self.work.exponentials,
            gramians: self.work.gramians,
            integrator_steps: 0,
        }
    }
}

/// Zero-length intervals in a row before a run is stopped as chattering.
pub const MAX_ZERO_INTERVALS: u32 = 64;

/// Counts zero-length intervals in a row (events with no time between
/// them) and stops a run that chatters; shared by both engines.
#[derive(Debug, Clone, Copy, Default, PartialEq, Eq)]
pub struct ChatterGuard {
    zero_run: u32,
}

impl ChatterGuard {
    /// Notes an interval of length `dt` ending at `time_s` in the named
    /// topology; errors after [`MAX_ZERO_INTERVALS`] zero-length ones in a row.
    pub fn note(
        &mut self,
        dt: f64,
        time_s: f64,
        topology: impl FnOnce() -> String,
    ) -> Result<(), SimError> {
        if dt != 0.0 {
            self.zero_run = 0;
            return Ok(());
        }
        self.zero_run += 1;
        if self.zero_run > MAX_ZERO_INTERVALS {
            return Err(SimError::Chattering {
                count: self.zero_run,
                time_s,
                topology: topology(),
            });
        }
        Ok(())
    }
}

/// Work done by a run.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default, Serialize)]
pub struct RunStats {
    /// Switching cycles simulated in all.
    pub cycles: u64,
    /// Intervals between events.
    pub intervals: u64,
    /// 4x4 matrix exponentials (exact engine).
    pub exponentials: u64,
    /// Gramians (exact engine).
    pub gramians: u64,
    /// Accepted integrator steps (reference engine).
    pub integrator_steps: u64,
}

/// Per-state scales for the steady-state test: the target current and the
/// supply voltage.
pub fn state_scales(s: &Scenario) -> [f64; N_STATES] {
    let i = s.target_current_a().unwrap_or(match s.load {
        Load::Resistor { resistance_ohm } => s.supply.voltage_v / resistance_ohm,
        _ => 1.0,
    });
    [i.max(1e-6), s.supply.voltage_v, s.supply.voltage_v]
}
