//! The reference engine: the full nonlinear circuit integrated numerically.
//!
//! This engine exists to check the exact engine ([`crate::exact::engine`])
//! independently. It models the same circuit as [`crate::model::circuit`] (ideal
//! supply behind a source resistance, optional input capacitor with ESR,
//! switch resistance, freewheel diode, inductor with DCR, optional output
//! capacitor with ESR, LED string) but keeps the exponential LED and
//! Shockley diode curves exact ([`crate::devices::ExpDevice`]) instead of fitting straight
//! chords, and it shares no propagation code with the exact engine: each
//! interval between events is integrated with the Dormand–Prince 5(4)
//! method of `ode_solvers` ([`Dopri5`]).
//!
//! The state integrated is `[i_L, v_Co, v_Cin]` plus one accumulator per
//! time integral that [`Totals`] needs (∫i, ∫i², ∫v, ∫v·i for the LED and
//! the diode), so every average, RMS value and energy also comes from the
//! integrator. All components are scaled to order one (currents by the
//! controller's target current, voltages by the supply voltage, time by
//! L·I/V) so that one absolute tolerance fits them all.
//!
//! Events are bracketed in `solout` (the integration stops after the
//! accepted step in which an event function changed sign from ≤ 0 to > 0)
//! and then located on Dopri5's continuous output model with the Illinois
//! method to the resolution of f64 time (far below 1e-12 s). Controller
//! deadlines are integrated to exactly. Interval semantics (cycle boundaries at turn-on, DCM idle and
//! blocked states, reverse current cut off at turn-off, the max-interval
//! guard, what goes into [`Totals`] and the [`Recorder`]) mirror the exact
//! engine so the two can be compared figure by figure.
//!
//! This is not the hot path: each interval allocates the integrator's
//! output vectors.

use crate::error::SimError;
use crate::metrics::Totals;
use crate::model::circuit::N_STATES;
use crate::model::controller::{self, Cause, Command, Controller};
use crate::model::seam::{state_scales, ChatterGuard, CycleEngine, RunStats};
use crate::model::DIODE_FLOOR_REL;
use crate::record::{Recorder, Sample};
use crate::scenario::Scenario;
use nalgebra::SVector;
use ode_solvers::continuous_output_model::ContinuousOutputModel;
use ode_solvers::dop_shared::IntegrationError;
use ode_solvers::{Dopri5, OutputType, System};

/// Relative tolerance of the integrator.
pub(crate) const RTOL: f64 = 1e-10;

/// Absolute tolerance of the integrator, on the scaled state: 1e-12 of the
/// current scale for the inductor current, of the supply voltage for the
/// capacitor voltages, and of (scale × time scale) for the accumulators.
/// Every scaled component is of order one over an interval, so this is
/// two decades below [`RTOL`] and only matters where a component passes
/// through zero.
pub(crate) const ATOL: f64 = 1e-12;

/// Interior extremes are refined to within this time, s.
pub(crate) const EXTREME_TIME_TOL_S: f64 = 1e-17;

/// Most accepted integrator steps in one interval between events.
const MAX_STEPS_PER_INTERVAL: u32 = 2_000_000;

/// Tolerance on a scaled event function for "already due at the start".
const DUE_TOL: f64 = 1e-12;

/// Most event functions watched in one interval.
const MAX_EVENTS: usize = 4;

mod interval;
mod locate;
mod model;
mod ode;
#[cfg(test)]
mod tests;

use model::*;
use ode::*;

/// The reference engine's state for one run.
pub struct ReferenceEngine {
    ctx: Ctx,
    controller: Box<dyn Controller>,
    /// Simulated time, s.
    t: f64,
    /// Circuit state `[i_L (A), v_Co (V), v_Cin (V)]`.
    x: [f64; N_STATES],
    cmd: Command,
    mode: Mode,
    switch_changed_t: f64,
    max_interval_s: f64,
    floor_a: f64,
    cycles: u64,
    intervals: u64,
    steps: u64,
    chatter: ChatterGuard,
    clamped_energy_j: f64,
}

impl ReferenceEngine {
    /// An engine at power-on for a validated scenario.
    pub fn new(s: &Scenario) -> ReferenceEngine {
        let sc = state_scales(s);
        let model = Model::from_scenario(s, DIODE_FLOOR_REL * sc[0]);
        let ctx = Ctx::new(model, sc[0], sc[1]);
        let mut controller = controller::build(&s.controller);
        let cmd = controller.start(0.0);
        let mut e = ReferenceEngine {
            ctx,
            controller,
            t: 0.0,
            x: [0.0; N_STATES],
            cmd,
            mode: Mode {
                switch_on: cmd.switch_on,
                conducting: false,
            },
            switch_changed_t: 0.0,
            max_interval_s: s.simulation.max_interval_s,
            floor_a: DIODE_FLOOR_REL * sc[0],
            cycles: 0,
            intervals: 0,
            steps: 0,
            chatter: ChatterGuard::default(),
            clamped_energy_j: 0.0,
        };
        e.mode.conducting = e.conducting_for(cmd.switch_on);
        e
    }

    /// The element values this engine integrates (read from the scenario
    /// once, by [`crate::model::elements::Elements::new`]).
    pub fn elements(&self) -> &crate::model::elements::Elements {
        &self.ctx.model
    }

    /// Whether the inductor conducts in the present state for a switch
    /// state (same rule as the exact engine's region choice).
    fn conducting_for(&self, switch_on: bool) -> bool {
        let m = &self.ctx.model;
        let il = self.x[0];
        if switch_on {
            let drive = || m.drive_at_zero(true, self.x[1], self.x[2]) > 0.0;
            if m.output_cap.is_some() {
                il != 0.0 || drive()
            } else {
                il > 0.0 || drive()
            }
        } else {
            il > 0.0
        }
    }

    /// Runs one switching cycle: from this turn-on to the next. Integrals,
    /// energies and extremes go into `totals` and samples into `rec` when
    /// given.
    pub fn run_cycle(
        &mut self,
        mut totals: Option<&mut Totals>,
        mut rec: Option<&mut Recorder>,
    ) -> Result<(), SimError> {
        if let Some(r) = rec.as_deref_mut() {
            r.cycle_start(self.t);
        }
        loop {
            if self.interval(totals.as_deref_mut(), rec.as_deref_mut())? {
                self.cycles += 1;
                return Ok(());
            }
        }
    }
}

impl CycleEngine for ReferenceEngine {
    fn run_cycle(
        &mut self,
        totals: Option<&mut Totals>,
        rec: Option<&mut Recorder>,
    ) -> Result<(), SimError> {
        ReferenceEngine::run_cycle(self, totals, rec)
    }
    fn state(&self) -> [f64; N_STATES] {
        self.x
    }
    fn set_state(&mut self, x: [f64; N_STATES]) {
        self.x = x;
        self.mode.switch_on = self.cmd.switch_on;
        self.mode.conducting = self.conducting_for(self.cmd.switch_on);
    }
    fn time_s(&self) -> f64 {
        self.t
    }
    fn stored_energy_j(&self) -> f64 {
        self.ctx.model.stored_energy_j(&self.x)
    }
    fn clamped_energy_j(&self) -> f64 {
        self.clamped_energy_j
    }
    fn freeze_fits(&mut self) {
        // No curve fits: the exact curves are used throughout.
    }
    fn stats(&self) -> RunStats {
        RunStats {
            cycles: self.cycles,
            intervals: self.intervals,
            exponentials: 0,
            gramians: 0,
            integrator_steps: self.steps,
        }
    }
}
