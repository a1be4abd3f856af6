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
use crate::scenario::{IntendedMode, Scenario};
use crate::shooting::{
    averaged_guess, find_orbit, JacobianSource, Limits, NoOrbit, Orbit, SteadyMethod,
};
use crate::steady::{scaled_change, SteadyDetector, Verdict};
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

// reshape shim
pub use crate::model::seam::{ChatterGuard, CycleEngine, RunStats, MAX_ZERO_INTERVALS};

/// How steady state was reached.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct SteadyInfo {
    /// The method that found it (after any fallback).
    pub method: SteadyMethod,
    /// Newton iterations (0 when cycling alone found it).
    pub newton_iterations: u32,
    /// The shooting Jacobian's source, when shooting found the orbit.
    pub jacobian: Option<JacobianSource>,
    /// Why shooting was not used or gave up, if it was asked for.
    pub note: Option<String>,
    /// Cycles run before the measured ones, all methods together (each
    /// shooting trial, difference and check cycle counts as one).
    pub cycles_to_settle: u64,
    /// Simulated time until then, s.
    pub time_to_settle_s: f64,
    /// Last scaled change of the turn-on state (cycling), or the final
    /// scaled residual `max |P(x) − x| / scale` (shooting).
    pub last_change: f64,
    /// Contraction per cycle: estimated from successive changes
    /// (cycling), or the largest Floquet multiplier (shooting).
    pub contraction: f64,
    /// Cycles per repetition of the orbit (1: ordinary; >1: subharmonic).
    pub orbit_period_cycles: usize,
    /// State `[i_L (A), v_Co (V), v_Cin (V)]` at the first measured turn-on.
    pub state_at_turn_on: [f64; N_STATES],
}

/// Worst-case error of the straight-segment curves against the exact
/// exponential curves over the currents visited, down to the bottom of
/// the range each fit bounds (1 % of its top when the current falls to
/// zero: the tail segment below is fitted by its mean, see
/// [`crate::devices::PwlCurve::fit`]).
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
    /// Currents over which the LED fit's error bound holds, A (None: the
    /// load is already linear).
    pub led_fit_range_a: Option<(f64, f64)>,
    /// Currents over which the diode fit's error bound holds, A (None:
    /// the diode is already linear).
    pub diode_fit_range_a: Option<(f64, f64)>,
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
    // The start-up is recorded in the same run when that run cycles from
    // power-on, and by a run of its own from power-on otherwise.
    let cycling = opts.engine == EngineKind::Reference
        || s.simulation.steady_state_method == SteadyMethod::Cycling;
    let inline_startup = cycling && opts.initial_state.is_none();
    let separate_startup = s.simulation.record_startup && !inline_startup;
    let mut r = match opts.engine {
        EngineKind::Exact => {
            let mut e = ExactEngine::new(s);
            let mut head = exact_head_start(&mut e, s, opts)?;
            head.record_startup = s.simulation.record_startup && inline_startup;
            let mut r = drive_with(&mut e, s, EngineKind::Exact, head, progress)?;
            // The measured cycles find every extreme exactly; a fit that
            // missed one (a turning point the settling cycles' estimate
            // fell short of) is re-made to cover it, and the steady state
            // found and measured again with it.
            for _ in 0..MAX_COVER_ROUNDS {
                let Some((led, diode)) = uncovered_currents(&e.circuit, &r.metrics) else {
                    break;
                };
                e.cover_currents(led, diode);
                let again = RunOptions {
                    initial_state: Some(e.state_array()),
                    ..*opts
                };
                let mut head = exact_head_start(&mut e, s, &again)?;
                head.record_startup = false;
                let startup = r.startup.take();
                r = drive_with(&mut e, s, EngineKind::Exact, head, progress)?;
                r.startup = startup;
            }
            r.fit = exact_fit_report(&e, s, &r.metrics);
            fit_warnings(s, &r.fit, &mut r.warnings);
            exact_device_voltages(&e.circuit, &mut r.metrics);
            r
        }
        EngineKind::Reference => {
            let mut e = crate::reference::ReferenceEngine::new(s);
            if let Some(x) = opts.initial_state {
                e.set_state(x);
            }
            let head = HeadStart {
                note: (s.simulation.steady_state_method == SteadyMethod::Shooting)
                    .then(|| "the reference engine settles by cycling".to_string()),
                record_startup: s.simulation.record_startup && inline_startup,
                ..HeadStart::default()
            };
            drive_with(&mut e, s, EngineKind::Reference, head, progress)?
        }
    };
    if separate_startup {
        r.startup = Some(startup_transient(s, opts.engine, &r, progress)?);
    }
    Ok(r)
}

/// The start-up transient from power-on, recorded by a fresh engine
/// until it has settled onto `steady`'s orbit (see [`record_startup`]) or
/// the scenario's caps.
pub fn startup_transient(
    s: &Scenario,
    engine: EngineKind,
    steady: &SimResult,
    progress: &mut dyn FnMut(Progress),
) -> Result<Waveform, SimError> {
    let target = StartupTarget {
        state: steady.steady.state_at_turn_on,
        turn_on: steady.waveform.turn_on_samples(),
        current_ref_a: steady.metrics.led_current_avg_a,
    };
    match engine {
        EngineKind::Exact => record_startup(&mut ExactEngine::new(s), s, &target, progress),
        EngineKind::Reference => record_startup(
            &mut crate::reference::ReferenceEngine::new(s),
            s,
            &target,
            progress,
        ),
    }
}

/// The steady orbit a recorded start-up runs towards.
struct StartupTarget {
    /// A turn-on state on the orbit.
    state: [f64; N_STATES],
    /// The orbit's recorded turn-on samples.
    turn_on: Vec<crate::record::Sample>,
    /// The current the currents' distance is relative to, A.
    current_ref_a: f64,
}

fn exact_fit_report(e: &ExactEngine, _s: &Scenario, m: &Metrics) -> FitReport {
    let c = &e.circuit;
    let led_err = c.led_exact.map(|d: ExpDevice| {
        let hi = m.led_current_max_a;
        let lo = bounded_from(&c.led, m.led_current_min_a);
        c.led.max_error_v(&d, lo, hi)
    });
    let diode_err = c.diode_exact.map(|d: ExpDevice| {
        let hi = m.inductor_current_peak_a;
        let lo = bounded_from(&c.diode, m.inductor_current_valley_a);
        c.diode.max_error_v(&d, lo, hi)
    });
    FitReport {
        led_max_error_v: led_err,
        diode_max_error_v: diode_err,
        led_segments: c.led.segments,
        diode_segments: c.diode.segments,
        led_fit_range_a: c.led_exact.map(|_| (c.led.bound_from_a, c.led.range_a.1)),
        diode_fit_range_a: c
            .diode_exact
            .map(|_| (c.diode.bound_from_a, c.diode.range_a.1)),
    }
}

/// The lowest current a fit's error is reported from: the lowest
/// visited, or the top of the tail segment when the fit has one (below
/// it the tail is fitted by its mean, not within the tolerance).
fn bounded_from(curve: &crate::devices::PwlCurve, lowest_a: f64) -> f64 {
    if curve.bound_from_a > curve.range_a.0 {
        lowest_a.max(curve.bound_from_a)
    } else {
        lowest_a.max(0.0)
    }
}

/// Times the exact engine re-fits its curves to currents the measured
/// cycles visited outside them (each round covers what the last missed;
/// one is the rule).
const MAX_COVER_ROUNDS: usize = 3;

/// The LED and diode current ranges (A) the measured cycles visited, when
/// one of them lies outside the range its fit was made for.
fn uncovered_currents(
    c: &crate::circuit::Circuit,
    m: &Metrics,
) -> Option<((f64, f64), (f64, f64))> {
    let led = (m.led_current_min_a.max(0.0), m.led_current_max_a);
    let diode = (
        m.inductor_current_valley_a.max(0.0),
        m.inductor_current_peak_a,
    );
    let outside = |r: (f64, f64), fit: (f64, f64)| r.1 > 0.0 && (r.0 < fit.0 || r.1 > fit.1);
    let miss = (c.led_exact.is_some() && outside(led, c.led.range_a))
        || (c.diode_exact.is_some() && outside(diode, c.diode.range_a));
    miss.then_some((led, diode))
}

/// A warning when a fit's worst error exceeds the tolerance asked for
/// (the segment limit was reached first).
fn fit_warnings(s: &Scenario, fit: &FitReport, w: &mut Vec<String>) {
    let tol = s.simulation.curve_tolerance_v;
    for (what, err, segs) in [
        ("LED", fit.led_max_error_v, fit.led_segments),
        ("diode", fit.diode_max_error_v, fit.diode_segments),
    ] {
        if let Some(err) = err.filter(|&e| e > tol) {
            w.push(format!(
                "the {what} curve's straight-segment fit errs by up to {:.3} mV, more than \
                 simulation.curve_tolerance_v = {:.3} mV, with all {segs} segments allowed: \
                 raise simulation.curve_segments (at most {}) or loosen the tolerance",
                err * 1e3,
                tol * 1e3,
                crate::devices::MAX_SEGMENTS
            ));
        }
    }
}

/// Reads the device voltages at the current extremes off the exact
/// exponential curves: the highest LED voltage (at the highest LED
/// current: the curve rises with the current) and, when the lowest
/// switch-node voltage is the diode's drop at the inductor peak, that
/// drop. The fitted chords err by up to the fit tolerance at any one
/// current (their error alternates ± with zero mean, so integrals are far
/// closer); these figures are single points, so they take the exact
/// curve's value at the point.
fn exact_device_voltages(c: &crate::circuit::Circuit, m: &mut Metrics) {
    if let Some(d) = c.led_exact {
        if m.led_current_max_a > 0.0 {
            m.led_voltage_max_v = d.voltage_v(m.led_current_max_a);
        }
    }
    if let Some(d) = c.diode_exact {
        let peak = m.inductor_current_peak_a;
        let fitted = -c.diode.voltage_v(peak);
        if peak > 0.0 && (m.switch_node_min_v - fitted).abs() <= 1e-9 * fitted.abs().max(1.0) {
            m.switch_node_min_v = -d.voltage_v(peak);
        }
    }
}

// reshape shim
pub use crate::model::seam::state_scales;

/// What happened before cycling starts: shooting's outcome, if it ran.
#[derive(Debug, Clone, Default)]
struct HeadStart {
    /// The orbit shooting found (the engine sits on it).
    orbit: Option<Orbit>,
    /// Why shooting was skipped or gave up (when it was asked for).
    note: Option<String>,
    /// Cycles run by shooting.
    cycles: u64,
    /// Newton iterations spent by shooting.
    iterations: u32,
    /// Record the start-up while cycling (the run starts at power-on).
    record_startup: bool,
}

/// Puts the exact engine at the scenario's start (the given state, else
/// the averaged operating point) and, unless cycling was asked for, finds
/// the orbit by shooting.
fn exact_head_start(
    e: &mut ExactEngine,
    s: &Scenario,
    opts: &RunOptions,
) -> Result<HeadStart, SimError> {
    if let Some(x) = opts.initial_state {
        e.set_state(x);
    }
    let sim = &s.simulation;
    if sim.steady_state_method == SteadyMethod::Cycling {
        return Ok(HeadStart::default());
    }
    if opts.initial_state.is_none() {
        if let Some(x) = averaged_guess(s, &e.circuit) {
            e.set_state(x);
        }
    }
    let limits = Limits {
        max_cycles: sim.max_cycles,
        max_time_s: sim.max_time_s,
    };
    Ok(
        match find_orbit(e, state_scales(s), sim.shooting_jacobian, limits) {
            Ok(orbit) => HeadStart {
                cycles: orbit.cycle_evaluations,
                iterations: orbit.iterations,
                orbit: Some(orbit),
                ..HeadStart::default()
            },
            Err(NoOrbit {
                limit: Some(err), ..
            }) => return Err(*err),
            Err(failed) => HeadStart {
                orbit: None,
                note: Some(format!(
                    "shooting gave up ({}); settled by cycling from its best state",
                    failed.reason
                )),
                cycles: failed.cycle_evaluations,
                iterations: failed.iterations,
                ..HeadStart::default()
            },
        },
    )
}

/// The start-up recorder: four samples inside each interval, thinned to
/// stay under 400 000 samples.
fn startup_recorder() -> Recorder {
    Recorder::new(4, 400_000)
}

/// Scaled distance from the steady state at which a recorded start-up
/// has settled to the eye (a thousandth of the scale).
pub const STARTUP_SETTLED: f64 = 1e-3;

/// Records the start-up transient from power-on by cycling a fresh
/// engine until, for two recorded cycles in a row, its turn-on state is
/// within [`STARTUP_SETTLED`] (scaled) of the steady state and its
/// recorded turn-on sample within a tenth of
/// [`crate::record::SETTLED_FRACTION`] of the orbit's (currents against
/// the LED average, voltages against their own values), or until the
/// cycle and time caps. The state test alone let a stiff LED string stop
/// several per cent short of its current (1e-3 of the supply voltage on
/// the output capacitor is tens of milliamperes through a few LEDs).
fn record_startup<E: CycleEngine>(
    e: &mut E,
    s: &Scenario,
    target: &StartupTarget,
    progress: &mut dyn FnMut(Progress),
) -> Result<Waveform, SimError> {
    let sim = &s.simulation;
    let scale = state_scales(s);
    let mut rec = startup_recorder();
    let mut near = 0;
    let mut cycles = 0u64;
    let mut samples_near = false;
    let close = 0.1 * crate::record::SETTLED_FRACTION;
    // A run that has settled onto its own orbit (its turn-on state moving
    // by under 1e-12 of the scales per cycle: round-off) stops too, should
    // its fitted curves leave it a hair off the measured orbit.
    let mut still = 0;
    let mut last = e.state();
    while near < 2 && still < 2 && cycles < sim.max_cycles && e.time_s() < sim.max_time_s {
        e.run_cycle(None, Some(&mut rec))?;
        cycles += 1;
        let now = e.state();
        still = if scaled_change(&now, &last, &scale) <= 1e-12 {
            still + 1
        } else {
            0
        };
        last = now;
        if let Some((0, on)) = rec.latest_turn_on() {
            samples_near = target.turn_on.is_empty()
                || crate::record::distance_from_steady(&on, &target.turn_on, target.current_ref_a)
                    <= close;
        }
        let d = scaled_change(&now, &target.state, &scale);
        near = if d <= STARTUP_SETTLED && samples_near {
            near + 1
        } else {
            0
        };
        if cycles.is_multiple_of(256) {
            progress(Progress {
                cycles,
                max_cycles: sim.max_cycles,
                last_change: d,
            });
        }
    }
    Ok(rec.finish())
}

/// Runs any engine to steady state by cycling and measures it.
pub fn drive<E: CycleEngine>(
    e: &mut E,
    s: &Scenario,
    opts: &RunOptions,
    progress: &mut dyn FnMut(Progress),
) -> Result<SimResult, SimError> {
    if let Some(x) = opts.initial_state {
        e.set_state(x);
    }
    drive_with(e, s, opts.engine, HeadStart::default(), progress)
}

/// Brings an engine to steady state — at once if `head` holds an orbit,
/// by cycling otherwise — and measures it.
fn drive_with<E: CycleEngine>(
    e: &mut E,
    s: &Scenario,
    engine: EngineKind,
    head: HeadStart,
    progress: &mut dyn FnMut(Progress),
) -> Result<SimResult, SimError> {
    let (steady, startup) = match &head.orbit {
        Some(orbit) => (
            SteadyInfo {
                method: SteadyMethod::Shooting,
                newton_iterations: orbit.iterations,
                jacobian: Some(if orbit.used_differences {
                    JacobianSource::FiniteDifference
                } else {
                    JacobianSource::Analytic
                }),
                note: None,
                cycles_to_settle: orbit.cycle_evaluations,
                time_to_settle_s: e.time_s(),
                last_change: orbit.residual,
                contraction: orbit.largest_multiplier,
                orbit_period_cycles: 1,
                state_at_turn_on: e.state(),
            },
            None,
        ),
        None => settle_by_cycling(e, s, &head, progress)?,
    };
    measure(e, s, engine, steady, startup)
}

/// Cycles until the steady-state detector is satisfied.
fn settle_by_cycling<E: CycleEngine>(
    e: &mut E,
    s: &Scenario,
    head: &HeadStart,
    progress: &mut dyn FnMut(Progress),
) -> Result<(SteadyInfo, Option<Waveform>), SimError> {
    let sim = &s.simulation;
    let mut det = SteadyDetector::new(sim.steady_state_tolerance, state_scales(s));
    let mut startup = head.record_startup.then(startup_recorder);
    det.push(e.state());
    let mut cycles = head.cycles;
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
        method: SteadyMethod::Cycling,
        newton_iterations: head.iterations,
        jacobian: None,
        note: head.note.clone(),
        cycles_to_settle: cycles,
        time_to_settle_s: e.time_s(),
        last_change: det.last_change,
        contraction: det.contraction,
        orbit_period_cycles: order,
        state_at_turn_on: e.state(),
    };
    Ok((steady, startup.map(Recorder::finish)))
}

/// Records and measures `record_cycles` (rounded up to whole orbits)
/// steady-state cycles with the fits frozen.
fn measure<E: CycleEngine>(
    e: &mut E,
    s: &Scenario,
    engine: EngineKind,
    steady: SteadyInfo,
    startup: Option<Waveform>,
) -> Result<SimResult, SimError> {
    let sim = &s.simulation;
    let order = steady.orbit_period_cycles;
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
    let waveform = rec.finish();
    crate::parts::losses::apply(s, &mut totals, &waveform);
    let metrics = Metrics::from_totals(&totals);
    let warnings = warnings(s, &metrics, order);
    Ok(SimResult {
        scenario_name: s.name.clone(),
        engine,
        metrics,
        steady,
        fit: FitReport {
            led_max_error_v: None,
            diode_max_error_v: None,
            led_segments: 1,
            diode_segments: 1,
            led_fit_range_a: None,
            diode_fit_range_a: None,
        },
        waveform,
        startup,
        warnings,
        stats: e.stats(),
    })
}

/// Idle share of the period above which DCM is called deep: the current
/// collapses early in every off-time and rests at zero most of the cycle.
pub const DEEP_DCM_IDLE: f64 = 0.5;

/// The DCM warning: how deep, whether it contradicts the stated intent,
/// and (constant off-time) the inductance that would just keep the
/// current flowing. In DCM the current falls from the peak to zero in
/// `t_off − t_idle`; the fall is linear in 1/L at the same peak and
/// voltages, so `L · t_off / (t_off − t_idle)` stretches it over the whole
/// off-time: the CCM/DCM boundary.
fn dcm_words(s: &Scenario, m: &Metrics) -> String {
    let idle = m.idle_time_s / m.period_s;
    let what = if idle >= DEEP_DCM_IDLE {
        format!(
            "deep discontinuous conduction (DCM): the inductor current collapses to zero every \
             cycle and rests there for {:.1} % of the period",
            100.0 * idle
        )
    } else {
        format!(
            "discontinuous conduction (DCM): the inductor current rests at zero for {:.1} % of \
             each period",
            100.0 * idle
        )
    };
    let hint = match s.controller {
        crate::scenario::ControllerSpec::ConstantOffTime { off_time_s, .. }
            if m.idle_time_s < off_time_s =>
        {
            let l_ccm = s.inductor.inductance_h * off_time_s / (off_time_s - m.idle_time_s);
            format!(
                "; roughly {:.3} µH or more (or a proportionally shorter off-time) keeps it \
                 continuous (`chopwave boundary` finds the exact value)",
                l_ccm * 1e6
            )
        }
        _ => String::new(),
    };
    if s.parts.intended_mode == IntendedMode::Ccm {
        format!(
            "{what}, but the design asks for CCM (parts.intended_mode = ccm): the LED average is \
             {:.1} % of the inductor peak{hint}",
            100.0 * m.led_current_avg_a / m.inductor_current_peak_a
        )
    } else {
        format!(
            "{what}. This is a valid way to run, not an error: the controller still regulates, \
             and the LED average is {:.1} % of the inductor peak{hint}",
            100.0 * m.led_current_avg_a / m.inductor_current_peak_a
        )
    }
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
        w.push(dcm_words(s, m));
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
