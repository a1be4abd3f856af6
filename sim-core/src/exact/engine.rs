//! The exact piecewise-linear engine.
//!
//! Between events the circuit is linear ([`crate::model::circuit`]), so the state
//! is propagated in closed form with the matrix exponential and every
//! energy comes from the interval's Gramian ([`crate::exact::propagate`]). Events
//! are the controller's threshold and timer, the diode current reaching
//! zero (DCM), the inductor unblocking, and the LED or diode current
//! crossing from one straight segment of its fitted curve to the next.
//!
//! **Invariant:** [`ExactEngine::run_cycle`] without a recorder allocates
//! nothing: all matrices are fixed-size and live on the stack.

use crate::devices::PwlCurve;
use crate::error::SimError;
use crate::exact::propagate::{
    first_event, gramian, EventFn, Flow, ScanStart, WorkCounts, MAX_EVENTS,
};
use crate::exact::spectral::Spectral;
use crate::metrics::Totals;
use crate::model::circuit::{
    Aug, AugMatrix, Circuit, Linear, Region, Row, Signal, N_STATES, X_IL, X_ONE, X_VCIN, X_VCO,
};
use crate::model::controller::{self, Cause, Command, Controller};
use crate::model::seam::{ChatterGuard, CycleEngine, RunStats};
use crate::record::{Recorder, Sample};
use crate::scenario::Scenario;
use nalgebra::{Matrix3, RowVector3, SVector, Vector3};

mod cache;
mod events;
mod sensitivity;
mod step;
#[cfg(test)]
mod tests;
mod totals;

use cache::*;
use events::*;
use sensitivity::*;

/// Why [`ExactEngine::step`] stopped.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum StopReason {
    /// The controller acted on the inductor-current threshold it watched.
    ControllerThreshold,
    /// The controller's timer ran out (an off-time, delay, blanking time
    /// or period).
    ControllerTimer,
    /// A device reached a boundary of its piecewise-linear model.
    Device(DeviceBoundary),
    /// The caller's end time came before any event.
    EndTime,
}

/// Which device boundary ended a step.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum DeviceBoundary {
    /// The diode's current fell to zero (the inductor stops: DCM idle).
    DiodeCurrentZero,
    /// The diode's current crossed from one chord of its fitted curve to
    /// the next.
    DiodeSegment,
    /// The inductor current fell to zero with the switch on (no output
    /// capacitor): the string blocks.
    InductorBlocked,
    /// The inductor starts to conduct again.
    InductorUnblocked,
    /// The LED current crossed from one chord of its fitted curve to the
    /// next.
    LedSegment,
    /// The LED string stopped conducting (its current reached zero).
    LedOff,
    /// The LED string started to conduct (its voltage reached the knee).
    LedOn,
    /// The inductor current crossed from one inductance segment of a
    /// saturating part to the next.
    InductanceSegment,
}

/// What one [`ExactEngine::step`] did.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Step {
    /// Why it stopped.
    pub reason: StopReason,
    /// Simulated time at the stop, s.
    pub time_s: f64,
    /// The switch state after the stop.
    pub switch_on: bool,
    /// The switch turned on at this stop: a switching cycle ended.
    pub turned_on: bool,
}

/// The exact engine's state for one run.
pub struct ExactEngine {
    /// The circuit, with the fitted curves currently in use.
    pub circuit: Circuit,
    controller: Box<dyn Controller>,
    /// Simulated time, s.
    pub t: f64,
    /// Circuit state `[i_L, v_Co, v_Cin]`.
    pub x: SVector<f64, N_STATES>,
    cmd: Command,
    region: Region,
    /// `region_key(region)`, kept in step by [`Self::set_region`].
    region_key: u32,
    switch_changed_t: f64,
    /// The controller set its deadline at the end of the last interval,
    /// so the coming interval starts with the timer.
    timer_just_set: bool,
    max_interval_s: f64,
    max_step_s: f64,
    curve_segments: usize,
    curve_tolerance_v: f64,
    /// Relative slope tolerance of the LED fit (with an output capacitor;
    /// infinite without one).
    curve_slope_tolerance: f64,
    /// Work done so far.
    pub work: WorkCounts,
    /// Intervals (between events) simulated.
    pub intervals: u64,
    /// Cycles completed.
    pub cycles: u64,
    chatter: ChatterGuard,
    led_range: (f64, f64),
    diode_range: (f64, f64),
    /// Currents every LED and diode fit must cover besides those the last
    /// cycle visited (set by [`Self::cover_currents`]).
    cover: [(f64, f64); 2],
    /// Freeze the curve fits (no refit at cycle starts).
    pub freeze_fits: bool,
    /// Start each state-ended scan at the time its event fired last time
    /// in that region (default): once the orbit is periodic the first
    /// step lands on the event, within 1e-12 of the step. Off, every
    /// cycle is a function of its start state alone to the last bit.
    pub remember_event_times: bool,
    /// Energy dropped by cutting off reverse inductor current at turn-off, J.
    pub clamped_energy_j: f64,
    /// Times the curve fits were renewed.
    pub refits: u64,
    /// Region cache (allocated once, at construction).
    cache: Vec<Option<CacheEntry>>,
    /// Which region each cache slot holds ([`region_key`]; [`NO_KEY`] when
    /// empty), kept apart from the bulky entries so the lookup scans one
    /// small array. Emptied whenever the curve fits change.
    cache_keys: [u32; CACHE_SIZE],
    cache_next: usize,
    /// The slot the previous interval used.
    cache_last: usize,
    /// For each slot, the slot used after it last time.
    cache_successor: [usize; CACHE_SIZE],
    sens: Option<Sensitivity>,
}

fn aug(x: &SVector<f64, N_STATES>) -> Aug {
    Aug::new(x[0], x[1], x[2], 1.0)
}

impl ExactEngine {
    /// An engine at power-on for a validated scenario.
    pub fn new(s: &Scenario) -> ExactEngine {
        let circuit = Circuit::new(s);
        let mut controller = controller::build(&s.controller);
        let cmd = controller.start(0.0);
        let x = circuit.power_on_state();
        let region = circuit.region_for(cmd.switch_on, &x);
        let w = circuit.max_angular_frequency();
        let max_step_s = if w > 0.0 {
            std::f64::consts::FRAC_PI_4 / w
        } else {
            f64::INFINITY
        };
        ExactEngine {
            circuit,
            controller,
            t: 0.0,
            x,
            cmd,
            region,
            region_key: region_key(region),
            switch_changed_t: 0.0,
            timer_just_set: true,
            max_interval_s: s.simulation.max_interval_s,
            max_step_s,
            curve_segments: s.simulation.curve_segments as usize,
            curve_tolerance_v: s.simulation.curve_tolerance_v,
            curve_slope_tolerance: if s.output_capacitor.is_some() {
                s.simulation.curve_slope_tolerance
            } else {
                f64::INFINITY
            },
            work: WorkCounts::default(),
            intervals: 0,
            cycles: 0,
            chatter: ChatterGuard::default(),
            led_range: (f64::INFINITY, f64::NEG_INFINITY),
            diode_range: (f64::INFINITY, f64::NEG_INFINITY),
            cover: [(f64::INFINITY, f64::NEG_INFINITY); 2],
            freeze_fits: false,
            remember_event_times: true,
            clamped_energy_j: 0.0,
            refits: 0,
            cache: vec![None; CACHE_SIZE],
            cache_keys: [NO_KEY; CACHE_SIZE],
            cache_next: 0,
            cache_last: 0,
            cache_successor: [0; CACHE_SIZE],
            sens: None,
        }
    }

    /// Sets the circuit state (e.g. to warm-start from a known orbit); the
    /// region is re-derived from it.
    ///
    /// The remembered event times (see [`ScanStart::last_fired`]) are
    /// forgotten, so a cycle from here is a function of `x` alone, as
    /// shooting's Newton steps and difference quotients need; the next
    /// cycles remember afresh.
    pub fn set_state(&mut self, x: [f64; N_STATES]) {
        for entry in self.cache.iter_mut().flatten() {
            entry.events.last_fired = [f64::NAN; MAX_EVENTS];
        }
        self.x = SVector::from(x);
        self.set_region(self.circuit.region_for(self.cmd.switch_on, &self.x));
    }

    /// Puts the engine at a turn-on with state `x`, whatever it was doing
    /// (e.g. after a cycle from a trial state failed part-way): the
    /// controller starts afresh at the present time.
    pub fn restart_at_turn_on(&mut self, x: [f64; N_STATES]) {
        self.cmd = self.controller.start(self.t);
        self.switch_changed_t = self.t;
        self.timer_just_set = true;
        self.chatter = ChatterGuard::default();
        self.led_range = (f64::INFINITY, f64::NEG_INFINITY);
        self.diode_range = (f64::INFINITY, f64::NEG_INFINITY);
        self.set_state(x);
    }

    /// Runs one cycle, as [`Self::run_cycle`] without totals or recording,
    /// and returns the Jacobian of the cycle map `∂x₁/∂x₀` (turn-on to
    /// turn-on). It is exact for the piecewise-linear circuit: each
    /// interval contributes its state-transition matrix, and each
    /// state-ended interval the shift of its end time,
    /// `∂τ/∂x = −∇h·Φ·J / (∇h·f)`, carried by the vector field `f` there
    /// (the saltation term); a timer-ended interval inherits the time
    /// sensitivity of the event that started the timer. `None` when an
    /// event was met at a grazing angle, where the map has no derivative.
    pub fn run_cycle_with_jacobian(&mut self) -> Result<Option<Matrix3<f64>>, SimError> {
        self.sens = Some(Sensitivity::start());
        let r = self.run_cycle(None, None);
        let sens = self.sens.take();
        r?;
        Ok(sens.filter(|s| s.valid).map(|s| s.j))
    }

    /// The state `[i_L, v_Co, v_Cin]` as an array.
    pub fn state_array(&self) -> [f64; N_STATES] {
        [self.x[0], self.x[1], self.x[2]]
    }

    /// The region in use.
    pub fn region(&self) -> Region {
        self.region
    }

    /// Sets the region and its cache key. The key is computed from the
    /// value at hand, not read back from the region's bytes just written
    /// one by one: a wide load of narrow stores in flight stalls store
    /// forwarding, and the cache lookup comes right after.
    fn set_region(&mut self, r: Region) {
        self.region = r;
        self.region_key = region_key(r);
    }

    /// Runs one switching cycle: from this turn-on to the next. Energies,
    /// integrals and extremes go into `totals` and samples into `rec` when
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
            let step =
                self.interval::<false>(totals.as_deref_mut(), rec.as_deref_mut(), f64::INFINITY)?;
            if step.turned_on {
                self.cycles += 1;
                self.refit();
                return Ok(());
            }
        }
    }

    /// Advances to the next event, or to `until_s` (s, simulated time)
    /// if that comes first, and says why it stopped: the stepping call a
    /// library user drives, one event at a time, beside the whole-cycle
    /// [`Self::run_cycle`] the run driver uses.
    ///
    /// Stepping with `until_s = f64::INFINITY` until a step reports
    /// [`Step::turned_on`] runs exactly the intervals [`Self::run_cycle`]
    /// runs, to the bit (it is the same code, with re-fits of the curves
    /// at each turn-on). A finite `until_s` stops between events with
    /// [`StopReason::EndTime`]: the state is then advanced to `until_s`,
    /// nothing fires, and the next step continues the same interval (its
    /// rest is advanced in one more piece, which agrees with an uncut
    /// interval to rounding). When `until_s` is not after the present time
    /// (or is NaN) nothing moves and the step reports `EndTime` at once.
    /// Allocation-free.
    ///
    /// Errors as [`Self::run_cycle`] (an interval longer than the
    /// scenario's limit, a non-finite state, chattering).
    ///
    /// ```
    /// use sim_core::exact::{ExactEngine, StopReason};
    /// use sim_core::scenario::template;
    ///
    /// let s = template();
    /// let mut stepped = ExactEngine::new(&s);
    /// let mut whole = ExactEngine::new(&s);
    /// // Five switching cycles, event by event.
    /// let (mut cycles, mut events) = (0, 0);
    /// while cycles < 5 {
    ///     let step = stepped.step(f64::INFINITY).unwrap();
    ///     assert_ne!(step.reason, StopReason::EndTime);
    ///     events += 1;
    ///     if step.turned_on {
    ///         cycles += 1;
    ///     }
    /// }
    /// for _ in 0..5 {
    ///     whole.run_cycle(None, None).unwrap();
    /// }
    /// assert!(events >= 10); // at least a turn-off and a turn-on per cycle
    /// assert_eq!(stepped.state_array(), whole.state_array());
    ///
    /// // Stop at a given time between events.
    /// let t_stop = stepped.t + 1e-7;
    /// let step = stepped.step(t_stop).unwrap();
    /// if step.reason == StopReason::EndTime {
    ///     assert_eq!(step.time_s, t_stop);
    /// }
    /// ```
    pub fn step(&mut self, until_s: f64) -> Result<Step, SimError> {
        // A NaN end time stops at once too.
        if until_s <= self.t || until_s.is_nan() {
            return Ok(Step {
                reason: StopReason::EndTime,
                time_s: self.t,
                switch_on: self.cmd.switch_on,
                turned_on: false,
            });
        }
        let step = self.interval::<true>(None, None, until_s)?;
        if step.turned_on {
            self.cycles += 1;
            self.refit();
        }
        Ok(step)
    }

    /// Stored energy now, J.
    pub fn stored_energy_j(&self) -> f64 {
        self.circuit.stored_energy_j(&self.x)
    }
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
