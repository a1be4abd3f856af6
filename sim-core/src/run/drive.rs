//! Running a scenario to periodic steady state and measuring it.
//!
//! [`simulate`] brings either engine to steady state — the exact engine by
//! shooting from the averaged operating point (falling back to cycling),
//! the reference engine by cycling until the [`SteadyDetector`] is
//! satisfied — freezes the curve fits, then records and measures an
//! integer number of cycles.

use super::result::{EngineKind, FitReport, Progress, RunOptions, SimResult, SteadyInfo};
use super::shooting::{averaged_guess, find_orbit, CycleMap, Limits, NoOrbit, Orbit};
use super::startup::{startup_recorder, startup_transient};
use super::steady::{SteadyDetector, Verdict};
use super::warnings::warnings;
use crate::devices::ExpDevice;
use crate::error::SimError;
use crate::exact::engine::ExactEngine;
use crate::metrics::{Metrics, Totals};
use crate::model::circuit::N_STATES;
use crate::model::seam::{state_scales, CycleEngine};
use crate::parts::advice::{FittedCurve, Warning};
use crate::record::{Recorder, Waveform};
use crate::scenario::Scenario;
use crate::scenario::{JacobianSource, SteadyMethod};
use nalgebra::Matrix3;

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
    c: &crate::model::circuit::Circuit,
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
fn fit_warnings(s: &Scenario, fit: &FitReport, w: &mut Vec<Warning>) {
    let tol = s.simulation.curve_tolerance_v;
    for (curve, err, segments) in [
        (FittedCurve::Led, fit.led_max_error_v, fit.led_segments),
        (
            FittedCurve::Diode,
            fit.diode_max_error_v,
            fit.diode_segments,
        ),
    ] {
        if let Some(error_v) = err.filter(|&e| e > tol) {
            w.push(Warning::CurveFit {
                curve,
                error_v,
                tolerance_v: tol,
                segments,
            });
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
fn exact_device_voltages(c: &crate::model::circuit::Circuit, m: &mut Metrics) {
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

/// The exact engine's cycle map for shooting (the Jacobian carried
/// through each interval by `run_cycle_with_jacobian`).
impl CycleMap for ExactEngine {
    fn active_states(&self) -> [bool; N_STATES] {
        [
            true,
            self.circuit.el.output_cap.is_some(),
            self.circuit.el.input_cap.is_some(),
        ]
    }
    fn supply_v(&self) -> f64 {
        self.circuit.el.supply_v
    }
    fn restart_at_turn_on(&mut self, x: [f64; N_STATES]) {
        ExactEngine::restart_at_turn_on(self, x);
    }
    fn cycle(&mut self) -> Result<(), SimError> {
        ExactEngine::run_cycle(self, None, None)
    }
    fn cycle_with_jacobian(&mut self) -> Result<Option<Matrix3<f64>>, SimError> {
        ExactEngine::run_cycle_with_jacobian(self)
    }
    fn state_array(&self) -> [f64; N_STATES] {
        ExactEngine::state_array(self)
    }
    fn time_s(&self) -> f64 {
        self.t
    }
    fn topology(&self) -> String {
        self.region().name()
    }
    fn set_fits_frozen(&mut self, frozen: bool) {
        self.freeze_fits = frozen;
    }
    fn refits(&self) -> u64 {
        self.refits
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    /// A fit error above `simulation.curve_tolerance_v` gives the curve's
    /// warning with the error, the tolerance and the segments; one at or
    /// below it, or a linear curve (no error), gives none.
    #[test]
    fn a_fit_past_its_tolerance_is_warned_with_its_numbers() {
        let mut s = crate::scenario::template();
        s.simulation.curve_tolerance_v = 1e-3;
        let fit = FitReport {
            led_max_error_v: Some(1.5e-3),
            diode_max_error_v: Some(1e-3),
            led_segments: 32,
            diode_segments: 8,
            led_fit_range_a: None,
            diode_fit_range_a: None,
        };
        let mut w = Vec::new();
        fit_warnings(&s, &fit, &mut w);
        assert_eq!(
            w,
            vec![Warning::CurveFit {
                curve: FittedCurve::Led,
                error_v: 1.5e-3,
                tolerance_v: 1e-3,
                segments: 32,
            }]
        );
        let fit = FitReport {
            led_max_error_v: None,
            diode_max_error_v: Some(2e-3),
            ..fit
        };
        let mut w = Vec::new();
        fit_warnings(&s, &fit, &mut w);
        assert_eq!(
            w,
            vec![Warning::CurveFit {
                curve: FittedCurve::Diode,
                error_v: 2e-3,
                tolerance_v: 1e-3,
                segments: 8,
            }]
        );
    }
}
