//! The seam between the run driver and the engines: the [`CycleEngine`]
//! trait both engines implement, the work counters they report
//! ([`RunStats`]), the zero-length-interval guard they share
//! ([`ChatterGuard`]) and the per-state scales ([`state_scales`]) used for
//! steady-state tests and current floors.

use crate::error::SimError;
use crate::metrics::Totals;
use crate::model::circuit::N_STATES;
use crate::record::Recorder;
use crate::scenario::{Load, Scenario};
use serde::Serialize;

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
