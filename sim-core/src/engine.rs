//! The exact piecewise-linear engine.
//!
//! Between events the circuit is linear ([`crate::circuit`]), so the state
//! is propagated in closed form with the matrix exponential and every
//! energy comes from the interval's Gramian ([`crate::propagate`]). Events
//! are the controller's threshold and timer, the diode current reaching
//! zero (DCM), the inductor unblocking, and the LED or diode current
//! crossing from one straight segment of its fitted curve to the next.
//!
//! **Invariant:** [`ExactEngine::run_cycle`] without a recorder allocates
//! nothing: all matrices are fixed-size and live on the stack.

use crate::model::circuit::{
    Aug, AugMatrix, Circuit, Linear, Region, Row, Signal, N_STATES, X_IL, X_ONE, X_VCIN, X_VCO,
};
use crate::model::controller::{self, Cause, Command, Controller};
use crate::devices::PwlCurve;
use crate::error::SimError;
use crate::metrics::Totals;
use crate::propagate::{first_event, gramian, EventFn, Flow, ScanStart, WorkCounts, MAX_EVENTS};
use crate::record::{Recorder, Sample};
use crate::scenario::Scenario;
use crate::model::seam::{ChatterGuard, CycleEngine, RunStats};
use crate::spectral::Spectral;
use nalgebra::{Matrix3, RowVector3, SVector, Vector3};

/// What an event does when it fires.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
enum Action {
    Controller,
    DiodeOff,
    DiodeDown,
    DiodeUp,
    Block,
    Unblock,
    LedDown,
    LedUp,
    LedOff,
    LedOn,
    SatDown,
    SatUp,
}

/// Regions remembered with their matrices and eigen-decompositions.
const CACHE_SIZE: usize = 64;

/// A cache key no region packs to.
const NO_KEY: u32 = u32::MAX;

/// A region packed into one word for the cache lookup: the two switches
/// in the low bits, then the diode, LED (one more than the segment, 0 for
/// none) and inductance segments a byte each. The LED byte stays below
/// 0xFF (there are at most [`crate::devices::MAX_SEGMENTS`] segments), so
/// no region packs to [`NO_KEY`].
fn region_key(r: Region) -> u32 {
    let led = r.led_segment.map_or(0, |k| u32::from(k) + 1) & 0xFF;
    u32::from(r.switch_on)
        | (u32::from(r.conducting) << 1)
        | (u32::from(r.diode_segment) * KEY_DIODE_STEP)
        | (led * KEY_LED_STEP)
        | (u32::from(r.l_segment) * KEY_L_STEP)
}

/// One diode segment up in [`region_key`].
const KEY_DIODE_STEP: u32 = 1 << 8;
/// One LED segment up in [`region_key`].
const KEY_LED_STEP: u32 = 1 << 16;
/// One inductance segment up in [`region_key`].
const KEY_L_STEP: u32 = 1 << 24;

/// One remembered region.
#[derive(Debug, Clone, Copy)]
struct CacheEntry {
    lin: Linear,
    spectral: Option<Spectral>,
    events: EventSet,
}

/// Sensitivities carried through one cycle for the cycle map's Jacobian:
/// `j = ∂x/∂x₀` and `tau = ∂t/∂x₀` (time since the cycle's turn-on), with
/// `deadline_tau` the time sensitivity of the controller's pending
/// deadline (that of the event that set it).
#[derive(Debug, Clone, Copy)]
struct Sensitivity {
    j: Matrix3<f64>,
    tau: RowVector3<f64>,
    deadline_tau: RowVector3<f64>,
    /// False once an event was met at a grazing angle (the map is not
    /// differentiable there).
    valid: bool,
}

impl Sensitivity {
    fn start() -> Sensitivity {
        Sensitivity {
            j: Matrix3::identity(),
            tau: RowVector3::zeros(),
            deadline_tau: RowVector3::zeros(),
            valid: true,
        }
    }
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

    /// Re-fits the exponential curves when the currents the last cycle
    /// visited left the fitted range or use under half of it, so the fit
    /// follows the exponential curve cycle by cycle and settles with the
    /// circuit.
    fn refit(&mut self) {
        if self.freeze_fits {
            self.led_range = (f64::INFINITY, f64::NEG_INFINITY);
            self.diode_range = (f64::INFINITY, f64::NEG_INFINITY);
            return;
        }
        let (segs, tol) = (self.curve_segments, self.curve_tolerance_v);
        let mut changed = false;
        let merge = |a: (f64, f64), b: (f64, f64)| {
            if a.0.is_finite() {
                (a.0.min(b.0), a.1.max(b.1))
            } else {
                a
            }
        };
        self.led_range = merge(self.led_range, self.cover[0]);
        self.diode_range = merge(self.diode_range, self.cover[1]);
        if let Some(dev) = self.circuit.led_exact {
            let (lo, hi) = self.led_range;
            // A current a hair below zero where it reached zero is zero.
            if lo.is_finite() && self.circuit.led.needs_refit(lo.max(0.0), hi) {
                self.circuit.led = PwlCurve::fit_with_slope(
                    &dev,
                    lo.max(0.0),
                    hi,
                    segs,
                    tol,
                    self.curve_slope_tolerance,
                );
                changed = true;
            }
        }
        if let Some(dev) = self.circuit.diode_exact {
            let (lo, hi) = self.diode_range;
            if lo.is_finite() && self.circuit.diode.needs_refit(lo.max(0.0), hi) {
                self.circuit.diode = PwlCurve::fit(&dev, lo.max(0.0), hi, segs, tol);
                changed = true;
            }
        }
        self.led_range = (f64::INFINITY, f64::NEG_INFINITY);
        self.diode_range = (f64::INFINITY, f64::NEG_INFINITY);
        if changed {
            self.refits += 1;
            // Every cached model was built from the old fits.
            self.cache_keys = [NO_KEY; CACHE_SIZE];
            // Segment indices refer to the new fits.
            self.set_region(self.circuit.region_for(self.cmd.switch_on, &self.x));
        }
    }

    /// Makes every later LED and diode fit cover these currents (A, low
    /// and high) as well as those each cycle visits, and re-fits now if
    /// the present fits miss them: for currents found by measuring (an
    /// extreme inside an interval that the per-interval estimate missed),
    /// so the next fit's error bound holds there.
    pub fn cover_currents(&mut self, led_a: (f64, f64), diode_a: (f64, f64)) {
        let merge = |a: (f64, f64), b: (f64, f64)| (a.0.min(b.0), a.1.max(b.1));
        self.cover = [merge(self.cover[0], led_a), merge(self.cover[1], diode_a)];
        let frozen = std::mem::replace(&mut self.freeze_fits, false);
        self.led_range = self.cover[0];
        self.diode_range = self.cover[1];
        self.refit();
        self.freeze_fits = frozen;
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
            let turned_on = self.interval(totals.as_deref_mut(), rec.as_deref_mut())?;
            if turned_on {
                self.cycles += 1;
                self.refit();
                return Ok(());
            }
        }
    }

    fn push_event(
        evs: &mut [EventFn; MAX_EVENTS],
        acts: &mut [Action; MAX_EVENTS],
        n: &mut usize,
        row: Row,
        lin: &Linear,
        act: Action,
    ) {
        if *n < MAX_EVENTS {
            evs[*n] = EventFn::new(row, &lin.m);
            acts[*n] = act;
            *n += 1;
        }
    }

    /// The cache slot holding a region's linear model and decomposition,
    /// filling it if needed.
    fn model_slot(&mut self, region: Region) -> usize {
        let key = self.region_key;
        debug_assert_eq!(key, region_key(region));
        // In a periodic orbit each region is followed by the same one: try
        // the slot that followed the last one used, then the last one
        // itself (a timer interval in the region a threshold ended), before
        // scanning.
        let next = self.cache_successor[self.cache_last];
        let k = if self.cache_keys[next] == key {
            next
        } else if self.cache_keys[self.cache_last] == key {
            self.cache_last
        } else if let Some(k) = self.cache_keys.iter().position(|k| *k == key) {
            k
        } else {
            let lin = self.circuit.linearize(region);
            let spectral = Spectral::new(&lin.m);
            let events = region_events(&self.circuit, region, &lin);
            let k = self.cache_next;
            self.cache[k] = Some(CacheEntry {
                lin,
                spectral,
                events,
            });
            self.cache_keys[k] = key;
            self.cache_next = (self.cache_next + 1) % CACHE_SIZE;
            k
        };
        self.cache_successor[self.cache_last] = k;
        self.cache_last = k;
        k
    }

    /// Simulates up to the next event; returns whether the switch turned on.
    fn interval(
        &mut self,
        totals: Option<&mut Totals>,
        rec: Option<&mut Recorder>,
    ) -> Result<bool, SimError> {
        let slot = self.model_slot(self.region);
        // Borrow the cached model without copying it: the cache is moved
        // out for the interval (an empty Vec allocates nothing) and back.
        let mut cache = std::mem::take(&mut self.cache);
        let result = match &mut cache[slot] {
            Some(CacheEntry {
                lin,
                spectral,
                events,
            }) => self.interval_with(lin, spectral.as_ref(), events, totals, rec),
            None => {
                let lin = self.circuit.linearize(self.region);
                let mut events = region_events(&self.circuit, self.region, &lin);
                self.interval_with(&lin, None, &mut events, totals, rec)
            }
        };
        self.cache = cache;
        result
    }

    /// [`Self::interval`] with the region's model at hand.
    fn interval_with(
        &mut self,
        lin: &Linear,
        spectral: Option<&Spectral>,
        set: &mut EventSet,
        mut totals: Option<&mut Totals>,
        rec: Option<&mut Recorder>,
    ) -> Result<bool, SimError> {
        let region = self.region;
        let to_deadline = self.cmd.deadline_s - self.t;
        // A timer-ended interval that starts where its timer was set lasts
        // the timer's length (to rounding of the absolute times): its
        // transition matrix is kept with the region and reused, so the
        // interval is one affine update when no event cuts it short.
        let mut timer = None;
        if to_deadline > 0.0 && to_deadline.is_finite() && self.timer_just_set {
            // Within the rounding of the absolute times themselves: the
            // reused matrix then errs by no more than that rounding does.
            let slack = 2.0 * f64::EPSILON * (self.t.abs() + self.cmd.deadline_s.abs());
            let known = set
                .timers
                .iter()
                .position(|k| matches!(k, Some((t, _)) if (t - to_deadline).abs() <= slack));
            let k = match known {
                Some(k) => k,
                None => {
                    let full = Flow {
                        m: &lin.m,
                        spectral,
                        timer: None,
                    };
                    let phi = full.transition_matrix(to_deadline, &mut self.work);
                    let k = set.timer_next;
                    set.timers[k] = Some((to_deadline, phi));
                    set.timer_next = (k + 1) % TIMERS_PER_REGION;
                    k
                }
            };
            timer = Some(k);
        }
        let flow = Flow {
            m: &lin.m,
            spectral,
            timer: timer
                .and_then(|k| set.timers[k].as_ref())
                .map(|(_, phi)| (to_deadline, phi)),
        };
        let z0 = aug(&self.x);
        // The region's own events (cached), behind the controller's
        // threshold in slot 0 (written in place) when it watches one.
        let n = set.n;
        let evs = &mut set.evs;
        let acts = &set.acts;
        let first = match self.cmd.watch {
            Some(w) => {
                // `±(i_L − level)`: the cached i_L event with the level in
                // the constant column (M's last row is zero, so the
                // derivative rows do not change).
                let mut ev = set.il_event;
                if w.rising {
                    ev.row[X_ONE] -= w.level_a;
                } else {
                    ev.row = -ev.row;
                    ev.drow = -ev.drow;
                    ev.d2row = -ev.d2row;
                    ev.row[X_ONE] += w.level_a;
                }
                evs[0] = ev;
                0
            }
            None => 1,
        };
        // The threshold and a region event on the same current in the same
        // direction differ by a constant: the one with the larger constant
        // comes first (the threshold on a tie) and the other is left out.
        // A threshold already reached stays, to fire at once.
        let mut first = first;
        let mut n = n;
        let p = set.watch_partner;
        if first == 0 && p != 0 && same_state_part(&evs[0], &evs[p]) {
            if evs[0].row[X_ONE] >= evs[p].row[X_ONE] {
                n = p;
            } else if evs[0].value(&z0) < 0.0 {
                first = 1;
            }
        }
        // The slice starts at the threshold when there is one.
        let evs = &evs[first..n];
        let threshold_slot = (first == 0).then_some(0);
        let has_co = self.circuit.output_cap.is_some();

        // The scan ends at once on an event already due at the start, and
        // at the start when the deadline has passed.
        let t_limit = if to_deadline <= 0.0 {
            0.0
        } else if self.cmd.deadline_s.is_finite() {
            to_deadline
        } else {
            (self.max_interval_s - (self.t - self.switch_changed_t)).max(0.0)
        };
        let start = ScanStart {
            due: true,
            threshold: threshold_slot,
            last_fired: if self.remember_event_times {
                &set.last_fired[first..n]
            } else {
                &[]
            },
        };
        let scan = first_event(
            &flow,
            &z0,
            evs,
            start,
            t_limit,
            self.max_step_s,
            &mut self.work,
        );
        if scan.event.is_none() && !self.cmd.deadline_s.is_finite() {
            return Err(SimError::IntervalTooLong {
                switch: if self.cmd.switch_on { "on" } else { "off" },
                what: self.controller.waiting_for(),
                limit_s: self.max_interval_s,
                current_a: scan.z[X_IL],
                led_voltage_v: (lin.row(Signal::LedVoltage) * scan.z)[0],
                time_s: self.t + scan.t,
            });
        }
        let (dt, fired) = (scan.t, scan.event);
        // Read in place: a copy of the state the scan just stored, in wider
        // words than it was stored in, would wait for those stores.
        let z1 = &scan.z;
        if let Some(j) = fired.filter(|_| dt > 0.0 && self.remember_event_times) {
            set.last_fired[j + first] = scan.t_zero;
        }
        if !z1.iter().all(|v| v.is_finite()) {
            return Err(SimError::NonFinite {
                time_s: self.t + dt,
                topology: region.name(),
                state: z1.iter().take(N_STATES).copied().collect(),
            });
        }
        self.intervals += 1;
        self.chatter.note(dt, self.t, || region.name())?;
        if let Some(sens) = self.sens.as_mut() {
            let ended = match fired {
                Some(j) => End::State(&evs[j].row),
                None if dt > 0.0 => End::Deadline,
                None => End::Immediate,
            };
            propagate_sensitivity(sens, &flow, z1, dt, ended, &mut self.work);
        }

        // Track the visited current ranges for the next refit, with the
        // turning points inside the interval (a capacitor's LED current
        // peaks between events), estimated from the ends' values and
        // slopes; the measured cycles find them exactly, and the driver
        // re-fits if this estimate fell short (`cover_currents`).
        if !self.freeze_fits {
            if region.led_segment.is_some() {
                // Without an output capacitor the LED carries the inductor
                // current, which turns only at events: its ends suffice.
                let (lo, hi) = if has_co {
                    span_estimate(&set.i_led, &z0, z1, dt)
                } else {
                    let (a, b) = (set.i_led.value(&z0), set.i_led.value(z1));
                    (a.min(b), a.max(b))
                };
                self.led_range.0 = self.led_range.0.min(lo);
                self.led_range.1 = self.led_range.1.max(hi);
            }
            if !region.switch_on && region.conducting {
                // Falling all through the diode's conduction (the output
                // side holds the switch node below the output): its ends.
                let (a, b) = (z0[X_IL], z1[X_IL]);
                self.diode_range.0 = self.diode_range.0.min(a.min(b));
                self.diode_range.1 = self.diode_range.1.max(a.max(b));
            }
        }

        if dt > 0.0 {
            if let Some(tot) = totals.as_deref_mut() {
                self.accumulate(&flow, tot, lin, region, &z0, z1, dt);
            }
            if let Some(r) = rec {
                if r.wants_interval() {
                    self.record(r, &flow, lin, &z0, z1, dt);
                }
            }
        }

        self.t += dt;
        self.x = SVector::from([z1[0], z1[1], z1[2]]);
        if let Some((c, _)) = self.circuit.output_cap {
            let _ = c;
        } else {
            self.x[X_VCO] = 0.0;
        }
        if self.circuit.input_cap.is_none() {
            self.x[X_VCIN] = 0.0;
        }
        if let Some(sens) = self.sens.as_mut() {
            if self.circuit.output_cap.is_none() {
                sens.j.row_mut(X_VCO).fill(0.0);
            }
            if self.circuit.input_cap.is_none() {
                sens.j.row_mut(X_VCIN).fill(0.0);
            }
        }

        self.timer_just_set = false;
        let act = fired.map(|j| acts[j + first]).unwrap_or(Action::Controller);
        let mut turned_on = false;
        // The next region is built in a local and stored once, with its
        // key (see `set_region`).
        let mut next = region;
        let mut key = None;
        match act {
            Action::Controller => {
                let cause = if fired.is_some() {
                    Cause::Threshold
                } else {
                    Cause::Deadline
                };
                let was_on = self.cmd.switch_on;
                self.controller
                    .on_event_into(self.t, cause, self.x[X_IL], &mut self.cmd);
                // Read back field by field: copying the whole command would
                // reload the callee's narrow stores in wide words, which
                // stalls store forwarding.
                let now_on = self.cmd.switch_on;
                if self.cmd.deadline_s.is_finite() {
                    // A timer set now: the next interval starts with it, and
                    // its end moves with this event.
                    self.timer_just_set = true;
                    if let Some(sens) = self.sens.as_mut() {
                        sens.deadline_tau = sens.tau;
                    }
                }
                turned_on = now_on && !was_on;
                if now_on != was_on {
                    self.switch_changed_t = self.t;
                    // The edge's figures for the switching losses, taken
                    // before the transition changes the state.
                    let edge = totals.is_some().then(|| {
                        let il = self.x[X_IL];
                        let diode_on = !region.switch_on && region.conducting && il > 0.0;
                        (lin.signals * aug(&self.x), il, diode_on)
                    });
                    self.switch_transition(&mut next, now_on);
                    if let (Some(tot), Some((pre, il, diode_on))) = (totals, edge) {
                        // The switch's blocked voltage on the open side of
                        // the edge, for the post-processed switching losses.
                        let post = self.circuit.linearize(next).signals * aug(&self.x);
                        let (vin, vsw) = (Signal::InputNode as usize, Signal::SwitchNode as usize);
                        let blocked = if now_on {
                            pre[vin] - pre[vsw]
                        } else {
                            post[vin] - post[vsw]
                        };
                        let recovery = (now_on && diode_on).then_some(post[vsw]);
                        tot.edges.note(now_on, il, blocked, recovery);
                    }
                }
            }
            Action::DiodeOff | Action::Block => {
                self.x[X_IL] = 0.0;
                if let Some(sens) = self.sens.as_mut() {
                    sens.j.row_mut(X_IL).fill(0.0);
                }
                next.conducting = false;
                next.l_segment = 0;
                if !has_co {
                    next.led_segment = None;
                }
            }
            Action::Unblock => {
                next.conducting = true;
                next.led_segment = Some(0);
            }
            // A step of one segment moves one byte of the key by one; the
            // key is stepped from the old one (see `region_key`) rather than
            // recomputed from the bytes of `next` just stored one by one.
            Action::DiodeDown => {
                next.diode_segment -= 1;
                key = Some(self.region_key - KEY_DIODE_STEP);
            }
            Action::DiodeUp => {
                next.diode_segment += 1;
                key = Some(self.region_key + KEY_DIODE_STEP);
            }
            // LED segments are keyed one up (0 for none): LedOff leaves
            // segment 0, LedOn enters it.
            Action::LedDown | Action::LedOff => {
                next.led_segment = next.led_segment.and_then(|k| k.checked_sub(1));
                key = Some(self.region_key - KEY_LED_STEP);
            }
            Action::LedUp | Action::LedOn => {
                next.led_segment = Some(next.led_segment.map_or(0, |k| k + 1));
                key = Some(self.region_key + KEY_LED_STEP);
            }
            Action::SatDown => {
                next.l_segment -= 1;
                key = Some(self.region_key - KEY_L_STEP);
            }
            Action::SatUp => {
                next.l_segment += 1;
                key = Some(self.region_key + KEY_L_STEP);
            }
        }
        match key {
            Some(k) => {
                debug_assert_eq!(k, region_key(next));
                self.region = next;
                self.region_key = k;
            }
            None => self.set_region(next),
        }
        Ok(turned_on)
    }

    /// Moves `region` across a switch edge to `on`.
    fn switch_transition(&mut self, region: &mut Region, on: bool) {
        let il = self.x[X_IL];
        region.switch_on = on;
        if on {
            if !region.conducting {
                // Leaving DCM idle: conducts if the drive pushes current forward
                // (always with an output capacitor: the switch conducts both ways).
                let r = self.circuit.region_for(true, &self.x);
                region.conducting = r.conducting;
                if self.circuit.output_cap.is_none() {
                    region.led_segment = r.led_segment;
                }
            }
        } else if il > 0.0 {
            region.conducting = true;
            region.diode_segment = self.circuit.diode.segment_for_current(il) as u8;
        } else {
            // A reverse current is cut off at turn-off (the switch's body
            // diode returns it to the input within nanoseconds); count its
            // energy as a loss of its own.
            self.clamped_energy_j += self.circuit.inductor_energy_j(il);
            self.x[X_IL] = 0.0;
            if let Some(sens) = self.sens.as_mut() {
                sens.j.row_mut(X_IL).fill(0.0);
            }
            region.conducting = false;
            region.l_segment = 0;
            if self.circuit.output_cap.is_none() {
                region.led_segment = None;
            }
        }
    }

    #[allow(clippy::too_many_arguments)] // One interval's full context.
    fn accumulate(
        &mut self,
        flow: &Flow,
        tot: &mut Totals,
        lin: &Linear,
        region: Region,
        z0: &Aug,
        z1: &Aug,
        dt: f64,
    ) {
        let (g, _) = gramian(&lin.m, z0, dt, &mut self.work);
        let row = |s: Signal| lin.row(s);
        let q = |a: &Row, b: &Row| (a * g * b.transpose())[0];
        let mut one = Row::zeros();
        one[X_ONE] = 1.0;
        let lin_int = |a: &Row| q(a, &one);
        let il = row(Signal::InductorCurrent);
        let iled = row(Signal::LedCurrent);
        let vled = row(Signal::LedVoltage);
        let isrc = row(Signal::SourceCurrent);
        let icin = row(Signal::InputCapCurrent);
        let ico = row(Signal::OutputCapCurrent);
        let isw = row(Signal::SwitchCurrent);
        let idi = row(Signal::DiodeCurrent);
        let vdi = row(Signal::DiodeVoltage);
        tot.time_s += dt;
        if region.switch_on {
            tot.on_time_s += dt;
        } else if !region.conducting {
            tot.idle_time_s += dt;
        }
        tot.il += lin_int(&il);
        tot.il2 += q(&il, &il);
        tot.iled += lin_int(&iled);
        tot.iled2 += q(&iled, &iled);
        tot.vled += lin_int(&vled);
        tot.isrc += lin_int(&isrc);
        tot.isrc2 += q(&isrc, &isrc);
        tot.icin += lin_int(&icin);
        tot.icin2 += q(&icin, &icin);
        tot.ico += lin_int(&ico);
        tot.ico2 += q(&ico, &ico);
        tot.isw2 += q(&isw, &isw);
        tot.idiode += lin_int(&idi);
        tot.idiode2 += q(&idi, &idi);
        let c = &self.circuit;
        tot.e_in += c.supply_v * lin_int(&isrc);
        tot.e_led += q(&vled, &iled);
        tot.loss.source_resistance += c.source_ohm * q(&isrc, &isrc);
        if let Some((_, esr)) = c.input_cap {
            tot.loss.input_capacitor_esr += esr * q(&icin, &icin);
        }
        if let Some((_, esr)) = c.output_cap {
            tot.loss.output_capacitor_esr += esr * q(&ico, &ico);
        }
        tot.loss.switch_conduction += c.switch_ohm * q(&isw, &isw);
        tot.loss.diode_conduction += q(&vdi, &idi);
        tot.loss.inductor_dcr += c.dcr_ohm * q(&il, &il);
        tot.loss.current_sense +=
            c.sense_string_ohm * q(&il, &il) + c.sense_switch_ohm * q(&isw, &isw);
        // Extremes: the ends, and any turning point inside.
        let extreme = |s: Signal, lo: Option<&mut f64>, hi: &mut f64, work: &mut WorkCounts| {
            let r = row(s);
            let (a, b) = ((r * z0)[0], (r * z1)[0]);
            let mut vmax = a.max(b);
            let mut vmin = a.min(b);
            let dr = r * lin.m;
            let (da, db) = ((dr * z0)[0], (dr * z1)[0]);
            if da * db < 0.0 {
                // A turning point: the derivative crosses zero.
                let drow = if da > 0.0 { -dr } else { dr };
                let ev = EventFn::new(drow, &lin.m);
                let sc = first_event(
                    flow,
                    z0,
                    &[ev],
                    ScanStart::default(),
                    dt,
                    f64::INFINITY,
                    work,
                );
                if sc.event.is_some() {
                    let v = (r * sc.z)[0];
                    vmax = vmax.max(v);
                    vmin = vmin.min(v);
                }
            }
            *hi = hi.max(vmax);
            if let Some(lo) = lo {
                *lo = lo.min(vmin);
            }
        };
        let mut work = self.work;
        extreme(
            Signal::InductorCurrent,
            Some(&mut tot.il_min),
            &mut tot.il_max,
            &mut work,
        );
        extreme(
            Signal::LedCurrent,
            Some(&mut tot.iled_min),
            &mut tot.iled_max,
            &mut work,
        );
        extreme(
            Signal::SwitchNode,
            Some(&mut tot.vsw_min),
            &mut tot.vsw_max,
            &mut work,
        );
        extreme(Signal::LedVoltage, None, &mut tot.vled_max, &mut work);
        self.work = work;
    }

    fn sample(&self, lin: &Linear, z: &Aug, t: f64) -> Sample {
        let s = lin.signals * z;
        [
            t,
            s[Signal::InductorCurrent as usize],
            s[Signal::LedCurrent as usize],
            s[Signal::LedVoltage as usize],
            s[Signal::SwitchNode as usize],
            s[Signal::InputNode as usize],
            if self.region.switch_on { 1.0 } else { 0.0 },
        ]
    }

    #[allow(clippy::too_many_arguments)] // One interval's ends and model.
    fn record(&mut self, r: &mut Recorder, flow: &Flow, lin: &Linear, z0: &Aug, z1: &Aug, dt: f64) {
        // The start repeats the last interval's end unless a signal jumped.
        r.push_unless_repeat(self.sample(lin, z0, self.t));
        let k = r.per_interval;
        for j in 1..=k {
            let tau = dt * j as f64 / (k + 1) as f64;
            let z = flow.advance(tau, z0, &mut self.work);
            r.push(self.sample(lin, &z, self.t + tau));
        }
        r.push(self.sample(lin, z1, self.t + dt));
    }

    /// Stored energy now, J.
    pub fn stored_energy_j(&self) -> f64 {
        self.circuit.stored_energy_j(&self.x)
    }
}

/// A region's own events (everything but the controller's threshold),
/// with slot 0 left for the threshold, and the inductor-current event the
/// threshold is made from. Built once per cached region.
#[derive(Debug, Clone, Copy)]
struct EventSet {
    evs: [EventFn; MAX_EVENTS],
    acts: [Action; MAX_EVENTS],
    /// Slots in use, counting the reserved slot 0.
    n: usize,
    /// The last slot when it holds an event on the inductor current in
    /// the direction a controller watches it in this region (rising while
    /// on, falling while off), else 0.
    watch_partner: usize,
    /// `i_L` rising through zero.
    il_event: EventFn,
    /// The LED current (its value and slope rows), for the visited range.
    i_led: EventFn,
    /// Per slot, how long after its interval's start the event last fired
    /// (NaN: not yet), the first guess of the next scan.
    last_fired: [f64; MAX_EVENTS],
    /// `(t, e^{M t})` for the last few timer lengths spent in this region
    /// (a fixed off-time, delay or blanking time: one region can see
    /// several), replaced oldest first.
    timers: [Option<(f64, AugMatrix)>; TIMERS_PER_REGION],
    timer_next: usize,
}

/// Timer lengths remembered per region.
const TIMERS_PER_REGION: usize = 3;

fn region_events(circuit: &Circuit, region: Region, lin: &Linear) -> EventSet {
    let one = {
        let mut r = Row::zeros();
        r[X_ONE] = 1.0;
        r
    };
    let il_row = lin.row(Signal::InductorCurrent);
    let i_led_row = lin.row(Signal::LedCurrent);
    let mut evs = [EventFn::new(Row::zeros(), &lin.m); MAX_EVENTS];
    let mut acts = [Action::Controller; MAX_EVENTS];
    let mut n = 1;
    let has_co = circuit.output_cap.is_some();
    let led = circuit.led;
    let diode = circuit.diode;
    if region.conducting {
        if !region.switch_on {
            ExactEngine::push_event(&mut evs, &mut acts, &mut n, -il_row, lin, Action::DiodeOff);
            let k = region.diode_segment as usize;
            if k > 0 {
                let row = one * diode.upper_a[k - 1] - il_row;
                ExactEngine::push_event(&mut evs, &mut acts, &mut n, row, lin, Action::DiodeDown);
            }
            if k + 1 < diode.segments {
                let row = il_row - one * diode.upper_a[k];
                ExactEngine::push_event(&mut evs, &mut acts, &mut n, row, lin, Action::DiodeUp);
            }
        } else if !has_co {
            ExactEngine::push_event(&mut evs, &mut acts, &mut n, -il_row, lin, Action::Block);
        }
    } else if region.switch_on && !has_co {
        let cond = Region {
            conducting: true,
            led_segment: Some(0),
            ..region
        };
        let lc = circuit.linearize(cond);
        let mut row = Row::zeros();
        for j in 0..4 {
            row[j] = lc.m[(X_IL, j)];
        }
        row[X_IL] = 0.0;
        ExactEngine::push_event(&mut evs, &mut acts, &mut n, row, lin, Action::Unblock);
    }
    // A saturating inductor: the current crossing a segment boundary.
    if let (Some(sat), true) = (circuit.saturation.as_ref(), region.conducting) {
        let k = region.l_segment as usize;
        if k > 0 {
            let row = one * sat.upper_a[k - 1] - il_row;
            ExactEngine::push_event(&mut evs, &mut acts, &mut n, row, lin, Action::SatDown);
        }
        if k + 1 < sat.segments {
            let row = il_row - one * sat.upper_a[k];
            ExactEngine::push_event(&mut evs, &mut acts, &mut n, row, lin, Action::SatUp);
        }
    }
    match (has_co, region.led_segment) {
        (false, Some(k)) if region.conducting => {
            let k = k as usize;
            if k > 0 {
                let row = one * led.upper_a[k - 1] - il_row;
                ExactEngine::push_event(&mut evs, &mut acts, &mut n, row, lin, Action::LedDown);
            }
            if k + 1 < led.segments {
                let row = il_row - one * led.upper_a[k];
                ExactEngine::push_event(&mut evs, &mut acts, &mut n, row, lin, Action::LedUp);
            }
        }
        (true, None) => {
            let row = lin.row(Signal::LedVoltage) - one * led.knee_v();
            ExactEngine::push_event(&mut evs, &mut acts, &mut n, row, lin, Action::LedOn);
        }
        (true, Some(k)) => {
            let k = k as usize;
            if k > 0 {
                let row = one * led.upper_a[k - 1] - i_led_row;
                ExactEngine::push_event(&mut evs, &mut acts, &mut n, row, lin, Action::LedDown);
            } else {
                ExactEngine::push_event(
                    &mut evs,
                    &mut acts,
                    &mut n,
                    -i_led_row,
                    lin,
                    Action::LedOff,
                );
            }
            if k + 1 < led.segments {
                let row = i_led_row - one * led.upper_a[k];
                ExactEngine::push_event(&mut evs, &mut acts, &mut n, row, lin, Action::LedUp);
            }
        }
        _ => {}
    }

    let n = drop_dominated(&mut evs, &mut acts, n);
    // The controller watches the inductor current rising while on and
    // falling while off: the region event on the same current in that
    // direction, if any, goes last, so the one of the two that cannot come
    // first can be left out of the scan by shortening it.
    let il_event = EventFn::new(il_row, &lin.m);
    let mut probe = il_event;
    if !region.switch_on {
        probe.row = -probe.row;
    }
    let mut watch_partner = 0;
    if let Some(p) = (1..n).find(|&k| same_state_part(&evs[k], &probe)) {
        evs[p..n].rotate_left(1);
        acts[p..n].rotate_left(1);
        watch_partner = n - 1;
    }
    EventSet {
        evs,
        acts,
        n,
        watch_partner,
        il_event,
        i_led: EventFn::new(i_led_row, &lin.m),
        last_fired: [f64::NAN; MAX_EVENTS],
        timers: [None; TIMERS_PER_REGION],
        timer_next: 0,
    }
}

/// The lowest and highest value of `f` over an interval of length `dt`
/// from `z0` to `z1`: the ends, and any turning point of the cubic
/// Hermite interpolant of the ends' values and slopes (exact to
/// O(dt⁴·f⁗), far inside the 5 % margin a fit adds to its range).
fn span_estimate(f: &EventFn, z0: &Aug, z1: &Aug, dt: f64) -> (f64, f64) {
    let (a, b) = (f.value(z0), f.value(z1));
    let (mut lo, mut hi) = (a.min(b), a.max(b));
    let (sa, sb) = (f.slope(z0) * dt, f.slope(z1) * dt);
    if sa * sb >= 0.0 && (sa == 0.0 || (b - a) * sa > 0.0) {
        // Moving the same way at both ends and net that way: monotone
        // to this order (the usual interval), the ends are the extremes.
        return (lo, hi);
    }
    // p(s) on [0, 1]; p'(s) = qa·s² + qb·s + sa.
    let qa = 6.0 * (a - b) + 3.0 * (sa + sb);
    let qb = 6.0 * (b - a) - 4.0 * sa - 2.0 * sb;
    let p = |u: f64| {
        let (u2, u3) = (u * u, u * u * u);
        (2.0 * u3 - 3.0 * u2 + 1.0) * a
            + (u3 - 2.0 * u2 + u) * sa
            + (3.0 * u2 - 2.0 * u3) * b
            + (u3 - u2) * sb
    };
    let mut note = |u: f64| {
        if u > 0.0 && u < 1.0 {
            let v = p(u);
            lo = lo.min(v);
            hi = hi.max(v);
        }
    };
    if qa.abs() > 1e-12 * (qb.abs() + sa.abs()) {
        let disc = qb * qb - 4.0 * qa * sa;
        if disc >= 0.0 {
            let r = disc.sqrt();
            // The numerically stable pair of roots.
            let q = -0.5 * (qb + r.copysign(qb));
            if q != 0.0 {
                note(q / qa);
                note(sa / q);
            }
        }
    } else if qb != 0.0 {
        note(-sa / qb);
    }
    (lo, hi)
}

/// Whether two events watch the same state function, `h_a − h_b`
/// constant: their rows agree on every state column.
fn same_state_part(a: &EventFn, b: &EventFn) -> bool {
    // `+ 0.0` makes a negative zero positive: `−0` and `0 − 0` agree.
    (0..N_STATES).all(|k| (a.row[k] + 0.0).to_bits() == (b.row[k] + 0.0).to_bits())
}

/// Drops the region events (slots `1..n`) that another one always
/// precedes, and returns the new count. Two events on the same state
/// function differ by a constant, `h_a = h_b + (c_a − c_b)`, so the one
/// with the larger constant reaches zero first (together, on a tie: the
/// earlier slot is kept, and the other is due at the start of the next
/// interval); e.g. below the top LED segment the inductor current falling
/// to the lower chord boundary always comes before it falling to zero.
fn drop_dominated(
    evs: &mut [EventFn; MAX_EVENTS],
    acts: &mut [Action; MAX_EVENTS],
    n: usize,
) -> usize {
    let mut keep = [true; MAX_EVENTS];
    for a in 1..n {
        for b in 1..n {
            if a != b && keep[a] && keep[b] && same_state_part(&evs[a], &evs[b]) {
                let (ca, cb) = (evs[a].row[X_ONE], evs[b].row[X_ONE]);
                // `a` precedes `b`, or ties it from an earlier slot.
                if ca > cb || (ca.to_bits() == cb.to_bits() && a < b) {
                    keep[b] = false;
                }
            }
        }
    }
    let mut m = 1;
    for k in 1..n {
        if keep[k] {
            evs[m] = evs[k];
            acts[m] = acts[k];
            m += 1;
        }
    }
    m
}

/// How an interval ended, for the sensitivities.
enum End<'a> {
    /// A state function `row · z` reached zero.
    State(&'a Row),
    /// The controller's timer ran out.
    Deadline,
    /// Nothing happened over a zero-length interval.
    Immediate,
}

/// Carries the cycle-map sensitivities across one interval of length `dt`
/// ending in state `z1` (see [`ExactEngine::run_cycle_with_jacobian`]).
fn propagate_sensitivity(
    sens: &mut Sensitivity,
    flow: &Flow,
    z1: &Aug,
    dt: f64,
    ended: End,
    work: &mut WorkCounts,
) {
    if dt > 0.0 {
        // Φ: the state block of the transition (the forcing column is not
        // needed for the sensitivities).
        let phi: Matrix3<f64> = flow
            .transition_matrix(dt, work)
            .fixed_view::<N_STATES, N_STATES>(0, 0)
            .into_owned();
        sens.j = phi * sens.j;
    }
    let fz = flow.m * z1;
    let f = Vector3::new(fz[0], fz[1], fz[2]);
    let shift = match ended {
        End::State(row) => {
            if dt == 0.0 {
                // Due at the start: fired by the previous event's state.
                return;
            }
            let g = RowVector3::new(row[0], row[1], row[2]);
            let rate = (g * f)[0];
            let size = g.abs().dot(&f.abs().transpose());
            if size == 0.0 || !rate.is_finite() || rate.abs() <= 1e-9 * size {
                sens.valid = false;
                return;
            }
            -(g * sens.j) / rate
        }
        End::Deadline => sens.deadline_tau - sens.tau,
        End::Immediate => return,
    };
    sens.j += f * shift;
    sens.tau += shift;
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

#[cfg(test)]
mod tests {
    use super::*;
    use crate::scenario::template;

    /// Builds an event `±i_L + c` on a toy region matrix.
    fn il_event(sign: f64, c: f64, m: &AugMatrix) -> EventFn {
        let mut row = Row::zeros();
        row[X_IL] = sign;
        row[X_ONE] = c;
        EventFn::new(row, m)
    }

    #[test]
    fn an_event_another_always_precedes_is_dropped() {
        let mut m = AugMatrix::zeros();
        m[(X_IL, X_IL)] = -1e3;
        m[(X_IL, X_ONE)] = 5e3;
        m[(X_VCIN, X_IL)] = 2.0;
        let mut evs = [EventFn::new(Row::zeros(), &m); MAX_EVENTS];
        let mut acts = [Action::Controller; MAX_EVENTS];
        // Falling to 0 A (Block), falling to 0.2 A (LedDown), rising to
        // 0.5 A (LedUp), a second falling one tying LedDown (DiodeDown), and
        // one on another state (kept whatever its constant).
        evs[1] = il_event(-1.0, 0.0, &m);
        evs[2] = il_event(-1.0, 0.2, &m);
        evs[3] = il_event(1.0, -0.5, &m);
        evs[4] = il_event(-1.0, 0.2, &m);
        let mut other = Row::zeros();
        other[X_VCIN] = 1.0;
        other[X_ONE] = -100.0;
        evs[5] = EventFn::new(other, &m);
        acts[1..6].copy_from_slice(&[
            Action::Block,
            Action::LedDown,
            Action::LedUp,
            Action::DiodeDown,
            Action::SatUp,
        ]);
        let n = drop_dominated(&mut evs, &mut acts, 6);
        assert_eq!(n, 4);
        assert!(matches!(
            acts[..n],
            [
                Action::Controller,
                Action::LedDown,
                Action::LedUp,
                Action::SatUp
            ]
        ));
        assert_eq!(evs[3].row, other);
    }

    /// Remembered event times change the cycles by no more than their
    /// acceptance window (1e-12 of a step in event time) and save
    /// exponentials: the same designs run side by side with and without.
    #[test]
    fn remembered_event_times_save_work_and_change_nothing() {
        let mut hyst = template();
        hyst.controller = crate::scenario::ControllerSpec::Hysteretic {
            upper_current_a: 0.8,
            lower_current_a: 0.6,
            turn_off_delay_s: 60e-9,
            turn_on_delay_s: 60e-9,
        };
        for mut s in [template(), hyst] {
            // The 1 mV fit: at the 0.5 mV default a chord boundary of the
            // hysteretic variant lies within round-off of a turning point
            // during the start-up, where a step landing 1e-12 late sees a
            // touch of it the other does not (4 intervals more in 400
            // cycles); that is the touch's own sensitivity, not the
            // remembered times'.
            s.simulation.curve_tolerance_v = 1e-3;
            let mut with = ExactEngine::new(&s);
            let mut without = ExactEngine::new(&s);
            without.remember_event_times = false;
            let scale = [1.0, 1.0, s.supply.voltage_v];
            let mut worst: f64 = 0.0;
            for k in 0..400 {
                if k == 200 {
                    with.work = WorkCounts::default();
                    without.work = WorkCounts::default();
                }
                with.run_cycle(None, None).expect("cycle");
                without.run_cycle(None, None).expect("cycle");
                let (a, b) = (with.state_array(), without.state_array());
                for i in 0..N_STATES {
                    worst = worst.max(((a[i] - b[i]) / scale[i]).abs());
                }
            }
            // Each event lands at most 1e-12 of its step late, which moves
            // the state by about 1e-13 of its scale.
            assert!(worst <= 1e-12, "{}: states differ by {worst:.1e}", s.name);
            // Each event at most 1e-12 of its step late: the clocks agree
            // to that share of the time run.
            let dt = (with.t - without.t).abs();
            assert!(
                dt <= 1e-12 * with.t,
                "{}: times differ by {dt:.1e} s",
                s.name
            );
            assert_eq!(with.intervals, without.intervals, "{}", s.name);
            let (a, b) = (with.work.exponentials, without.work.exponentials);
            assert!(
                2 * a < b,
                "{}: {a} exponentials remembering, {b} not",
                s.name
            );
        }
    }

    /// In every region the template's cycles visit, an event marked as the
    /// threshold's partner sits in the last slot (so the scan can be
    /// shortened past it) and watches the inductor current itself.
    #[test]
    fn the_watch_partner_sits_last_on_the_watched_current() {
        let s = template();
        let mut e = ExactEngine::new(&s);
        for _ in 0..50 {
            e.run_cycle(None, None).expect("cycle");
        }
        let mut checked = 0;
        for entry in e.cache.iter().flatten() {
            let set = &entry.events;
            if set.watch_partner != 0 {
                checked += 1;
                assert_eq!(set.watch_partner, set.n - 1);
                let mut probe = set.il_event;
                if !set.evs[set.n - 1].row[X_IL].is_sign_positive() {
                    probe.row = -probe.row;
                }
                assert!(same_state_part(&set.evs[set.n - 1], &probe));
            }
        }
        assert!(checked > 0, "no region had a partner event");
    }
}
