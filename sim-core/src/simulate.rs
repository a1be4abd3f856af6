//! Running a scenario to periodic steady state and measuring it.
//!
//! [`simulate`] drives either engine cycle by cycle from power-on (or a
//! given state) until the [`SteadyDetector`] is satisfied, freezes the
//! curve fits, then records and measures an integer number of cycles.

use crate::circuit::N_STATES;
use crate::devices::ExpDevice;
use crate::engine::ExactEngine;
use crate::error::SimError;
use crate::metrics::{ConductionMode, Metrics, Totals};
use crate::record::{Recorder, Waveform};
use crate::scenario::{Load, Scenario};
use crate::steady::{SteadyDetector, Verdict};
use serde::Serialize;

/// Which engine runs the circuit.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default, Serialize)]
#[serde(rename_all = "lowercase")]
pub enum EngineKind {
    /// Piecewise-linear, closed-form between events (fast, default).
    #[default]
    Exact,
    /// Full exponential LED and diode curves integrated with Dopri5.
    Reference,
}

/// Options for one run.
#[derive(Debug, Clone, Copy, PartialEq, Default)]
pub struct RunOptions {
    /// The engine.
    pub engine: EngineKind,
    /// Start from this state `[i_L, v_Co, v_Cin]` at a turn-on instead of
    /// power-on (e.g. a known steady state).
    pub initial_state: Option<[f64; N_STATES]>,
}

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

/// How steady state was reached.
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
pub struct SteadyInfo {
    /// Cycles from the start until steady state was declared.
    pub cycles_to_settle: u64,
    /// Simulated time until then, s.
    pub time_to_settle_s: f64,
    /// Last scaled cycle-to-cycle change.
    pub last_change: f64,
    /// Estimated contraction per cycle.
    pub contraction: f64,
    /// Cycles per repetition of the orbit (1: ordinary; >1: subharmonic).
    pub orbit_period_cycles: usize,
    /// State `[i_L (A), v_Co (V), v_Cin (V)]` at the first measured turn-on.
    pub state_at_turn_on: [f64; N_STATES],
}

/// Worst-case error of the straight-segment curves against the exact
/// exponential curves over the currents visited (down to 1 % of the peak).
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
pub struct FitReport {
    /// LED string, V (None: the load is already linear).
    pub led_max_error_v: Option<f64>,
    /// Diode, V (None: the diode is already linear).
    pub diode_max_error_v: Option<f64>,
    /// Segments in the LED curve.
    pub led_segments: usize,
    /// Segments in the diode curve.
    pub diode_segments: usize,
}

/// Everything one run produces.
#[derive(Debug, Clone)]
pub struct SimResult {
    /// The scenario's name.
    pub scenario_name: String,
    /// The engine used.
    pub engine: EngineKind,
    /// Steady-state figures.
    pub metrics: Metrics,
    /// How steady state was reached.
    pub steady: SteadyInfo,
    /// Curve-fit errors (exact engine).
    pub fit: FitReport,
    /// The measured steady-state cycles.
    pub waveform: Waveform,
    /// The start-up transient, if asked for.
    pub startup: Option<Waveform>,
    /// Things the engineer should look at.
    pub warnings: Vec<String>,
    /// Work done.
    pub stats: RunStats,
}

/// Progress of a run, for a progress display.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Progress {
    /// Cycles so far.
    pub cycles: u64,
    /// The cycle limit.
    pub max_cycles: u64,
    /// Last scaled change.
    pub last_change: f64,
}

/// Simulates a validated scenario to steady state and measures it.
pub fn simulate(s: &Scenario, opts: &RunOptions) -> Result<SimResult, SimError> {
    simulate_with_progress(s, opts, &mut |_| {})
}

/// As [`simulate`], calling `progress` every few hundred cycles.
pub fn simulate_with_progress(
    s: &Scenario,
    opts: &RunOptions,
    progress: &mut dyn FnMut(Progress),
) -> Result<SimResult, SimError> {
    match opts.engine {
        EngineKind::Exact => {
            let mut e = ExactEngine::new(s);
            let mut r = drive(&mut e, s, opts, progress)?;
            r.fit = exact_fit_report(&e, s, &r.metrics);
            Ok(r)
        }
        EngineKind::Reference => {
            let mut e = crate::reference::ReferenceEngine::new(s);
            drive(&mut e, s, opts, progress)
        }
    }
}

fn exact_fit_report(e: &ExactEngine, _s: &Scenario, m: &Metrics) -> FitReport {
    let c = &e.circuit;
    let led_err = c.led_exact.map(|d: ExpDevice| {
        let hi = m.led_current_max_a;
        let lo = m.led_current_min_a.max(0.01 * hi);
        c.led.max_error_v(&d, lo, hi)
    });
    let diode_err = c.diode_exact.map(|d: ExpDevice| {
        let hi = m.inductor_current_peak_a;
        let lo = m.inductor_current_valley_a.max(0.01 * hi);
        c.diode.max_error_v(&d, lo, hi)
    });
    FitReport {
        led_max_error_v: led_err,
        diode_max_error_v: diode_err,
        led_segments: c.led.segments,
        diode_segments: c.diode.segments,
    }
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

/// Runs any engine to steady state and measures it.
pub fn drive<E: CycleEngine>(
    e: &mut E,
    s: &Scenario,
    opts: &RunOptions,
    progress: &mut dyn FnMut(Progress),
) -> Result<SimResult, SimError> {
    let sim = &s.simulation;
    if let Some(x) = opts.initial_state {
        e.set_state(x);
    }
    let mut det = SteadyDetector::new(sim.steady_state_tolerance, state_scales(s));
    let mut startup = sim.record_startup.then(|| Recorder::new(4, 400_000));
    det.push(e.state());
    let mut cycles = 0u64;
    let order = loop {
        e.run_cycle(None, startup.as_mut())?;
        cycles += 1;
        if let Verdict::Settled { order } = det.push(e.state()) {
            break order;
        }
        if cycles.is_multiple_of(256) {
            progress(Progress {
                cycles,
                max_cycles: sim.max_cycles,
                last_change: det.last_change,
            });
        }
        if cycles >= sim.max_cycles {
            return Err(SimError::NoSteadyState {
                cycles,
                time_s: e.time_s(),
                last_change: det.last_change,
                tolerance: sim.steady_state_tolerance,
                contraction: det.contraction,
            });
        }
        if e.time_s() >= sim.max_time_s {
            return Err(SimError::TimeLimit {
                cycles,
                limit_s: sim.max_time_s,
            });
        }
    };
    let steady = SteadyInfo {
        cycles_to_settle: cycles,
        time_to_settle_s: e.time_s(),
        last_change: det.last_change,
        contraction: det.contraction,
        orbit_period_cycles: order,
        state_at_turn_on: e.state(),
    };
    e.freeze_fits();
    let n_meas = (sim.record_cycles as usize).div_ceil(order) * order;
    let mut totals = Totals::new();
    totals.stored_start_j = e.stored_energy_j();
    let clamp0 = e.clamped_energy_j();
    let mut rec = Recorder::new(sim.samples_per_interval as usize, 0);
    for _ in 0..n_meas {
        e.run_cycle(Some(&mut totals), Some(&mut rec))?;
        totals.cycles += 1;
    }
    totals.stored_end_j = e.stored_energy_j();
    totals.loss.reverse_current_clamp = e.clamped_energy_j() - clamp0;
    crate::parts::losses::apply(s, &mut totals);
    let metrics = Metrics::from_totals(&totals);
    let warnings = warnings(s, &metrics, order);
    Ok(SimResult {
        scenario_name: s.name.clone(),
        engine: opts.engine,
        metrics,
        steady,
        fit: FitReport {
            led_max_error_v: None,
            diode_max_error_v: None,
            led_segments: 1,
            diode_segments: 1,
        },
        waveform: rec.finish(),
        startup: startup.map(Recorder::finish),
        warnings,
        stats: e.stats(),
    })
}

/// Supply voltage above which the usual safety-extra-low-voltage limit is
/// passed, V (60 V DC; from memory).
pub const SELV_LIMIT_V: f64 = 60.0;

fn warnings(s: &Scenario, m: &Metrics, order: usize) -> Vec<String> {
    let mut w = Vec::new();
    if s.supply.voltage_v > SELV_LIMIT_V {
        w.push(format!(
            "supply {:.1} V is above the usual 60 V DC extra-low-voltage limit: touch-safe \
             construction, insulation and creepage rules apply; follow local codes and licensed practice",
            s.supply.voltage_v
        ));
    }
    if let Some(isat) = s.inductor.saturation_current_a {
        if m.inductor_current_peak_a > isat {
            w.push(format!(
                "inductor peak current {:.3} A exceeds its rated saturation current {:.3} A",
                m.inductor_current_peak_a, isat
            ));
        }
    }
    if m.conduction_mode == ConductionMode::Dcm {
        w.push(format!(
            "discontinuous conduction: the inductor current rests at zero for {:.1} % of each period",
            100.0 * m.idle_time_s / m.period_s
        ));
    } else if m.conduction_mode == ConductionMode::Boundary {
        w.push("at the CCM/DCM boundary: the valley current touches zero".into());
    }
    if order > 1 {
        w.push(format!(
            "subharmonic operation: the waveform repeats every {order} switching cycles"
        ));
    }
    if m.switching_frequency_hz < 20e3 {
        w.push(format!(
            "switching frequency {:.1} kHz is in the audible band (below 20 kHz)",
            m.switching_frequency_hz / 1e3
        ));
    }
    if m.duty > 0.95 {
        w.push(format!(
            "duty cycle {:.1} % leaves little headroom: the supply is close to the LED string voltage",
            100.0 * m.duty
        ));
    }
    w
}
