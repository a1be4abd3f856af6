//! The real-part run: DC-bias capacitance and LED temperature iterated to
//! convergence around [`crate::run::simulate`], then temperatures,
//! the design checks and the alternatives.
//!
//! Iteration: the effective scenario starts with each ceramic capacitor at
//! its capacitance at the expected bias (the supply for the input, the LED
//! voltage at the target current for the output) and the LEDs at their
//! model temperature; each run's measured average capacitor voltages and
//! LED power give new capacitances and a new junction temperature, and the
//! run repeats (warm-started from the last steady state) until the
//! capacitances move by under 0.1 % and the junction by under 0.05 K, at
//! most [`MAX_ITERATIONS`] runs. A scenario with neither gets one run.
//!
//! With a declared input range the same assessment runs at both ends of
//! the range, and the check table holds each check's worst case over the
//! nominal supply and the ends (see [`assess_with_progress`]).

use super::drive::simulate_with_progress;
use super::result::{Progress, RunOptions, SimResult};
use crate::error::SimError;
use crate::metrics::Metrics;
use crate::parts::advice::{SupplyEnd, Warning};
use crate::parts::alternatives::{self, Comparison, OperatingPoint};
use crate::parts::bias;
use crate::parts::checks::{self, CapacitorState, Check};
use crate::parts::thermal::{self, PartTemperature};
use crate::record::{Waveform, COL_IL};
use crate::scenario::Scenario;
use serde::Serialize;

/// Most runs of the bias/temperature iteration.
pub const MAX_ITERATIONS: u32 = 8;

/// Everything the real-part run produces.
#[derive(Debug, Clone)]
pub struct Assessment {
    /// The final run.
    pub result: SimResult,
    /// The scenario as finally simulated (effective capacitances, shifted
    /// LED forward voltage).
    pub effective: Scenario,
    /// Runs of the bias/temperature iteration.
    pub iterations: u32,
    /// Whether the iteration settled.
    pub converged: bool,
    /// What each capacitor saw.
    pub capacitors: Vec<CapacitorState>,
    /// Estimated part temperatures.
    pub temperatures: Vec<PartTemperature>,
    /// The design-check table.
    pub checks: Vec<Check>,
    /// Highest inductor current from power-on to steady state, A (None
    /// when the start-up was neither recorded nor needed for a check).
    pub startup_peak_a: Option<f64>,
    /// The resistor and linear alternatives beside the switching design.
    pub comparison: Option<Comparison>,
}

/// The iteration's summary, for the JSON report.
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
pub struct IterationInfo {
    /// Runs made.
    pub runs: u32,
    /// Whether it settled.
    pub converged: bool,
    /// LED junction temperature used in the last run, °C.
    pub led_junction_c: Option<f64>,
}

/// What to compute besides the run.
#[derive(Debug, Clone, Copy, PartialEq, Default)]
pub struct AssessOptions {
    /// The run options (engine, start state).
    pub run: RunOptions,
    /// Also compare with the resistor and linear alternatives (two more
    /// runs of the switching design, at the ends of the supply range).
    pub alternatives: bool,
}

/// Average voltages across the input and output capacitors in a run, V.
fn capacitor_averages(s: &Scenario, m: &Metrics) -> (f64, f64) {
    let vin = s.supply.voltage_v - s.supply.source_resistance_ohm * (m.input_current_avg_a);
    (vin, m.led_voltage_avg_v)
}

/// The scenario with capacitances at biases `(v_in, v_out)` and LEDs at
/// junction temperature `t_j`.
fn effective_scenario(s: &Scenario, v_in: f64, v_out: f64, t_j: Option<f64>) -> Scenario {
    let mut e = s.clone();
    if let Some(c) = e.input_capacitor.as_mut() {
        c.capacitance_f = bias::effective_capacitance_f(c, &s.parts.input_capacitor, v_in);
    }
    if let Some(c) = e.output_capacitor.as_mut() {
        c.capacitance_f = bias::effective_capacitance_f(c, &s.parts.output_capacitor, v_out);
    }
    e.load = match (s.parts.led, t_j) {
        (Some(_), Some(tj)) => thermal::load_at_junction(s, tj),
        _ => thermal::load_with_led_tempco(s),
    };
    e
}

fn capacitances(s: &Scenario) -> [f64; 2] {
    [
        s.input_capacitor.as_ref().map_or(0.0, |c| c.capacitance_f),
        s.output_capacitor.as_ref().map_or(0.0, |c| c.capacitance_f),
    ]
}

/// Runs a validated scenario with its real-part data.
pub fn assess(s: &Scenario, opts: &AssessOptions) -> Result<Assessment, SimError> {
    assess_with_progress(s, opts, &mut |_| {})
}

/// As [`assess`], calling `progress` during each run.
///
/// With a declared input range (`supply.input_range_v`) the design is
/// also assessed the same way at each end of the range (bias and
/// temperature loop, start-up peak, temperatures, checks), and the check
/// table keeps, for each check, the worst of the nominal supply and the
/// ends, with the supply it occurred at; [`checks::range_checks`] adds
/// whether the LED current stays in regulation there, and a failing row
/// for an end where the design does not run (the error, with what was
/// reached, in its source) instead of failing the whole run.
pub fn assess_with_progress(
    s: &Scenario,
    opts: &AssessOptions,
    progress: &mut dyn FnMut(Progress),
) -> Result<Assessment, SimError> {
    let mut a = assess_at(s, opts, progress)?;
    if let Some(range) = s.supply.input_range_v {
        let v_nom = s.supply.voltage_v;
        // The nominal rows at the nominal supply itself (the ends bring
        // their own); the rows held at the range's highest supply are
        // kept only as a fallback when an end does not run.
        let mut own = s.clone();
        own.supply.input_range_v = None;
        let caps: Vec<CapacitorState> = a
            .capacitors
            .iter()
            .cloned()
            .map(|mut c| {
                if c.part == "input_capacitor" {
                    c.peak_v = v_nom;
                }
                c
            })
            .collect();
        let mut tables = vec![checks::design_checks(
            &own,
            &a.result.metrics,
            &a.temperatures,
            &caps,
            a.startup_peak_a,
        )];
        let mut ends = Vec::new();
        for (end, v) in [
            (SupplyEnd::Low, range.min_v),
            (SupplyEnd::High, range.max_v),
        ] {
            if (v - v_nom).abs() <= 1e-9 * v_nom.abs() {
                continue;
            }
            let mut e = s.clone();
            e.supply.voltage_v = v;
            e.supply.input_range_v = None;
            e.simulation.record_startup = false;
            let run = AssessOptions {
                run: RunOptions {
                    initial_state: None,
                    ..opts.run
                },
                alternatives: false,
            };
            let got = match e.validate() {
                Err(err) => Err(err.to_string()),
                Ok(()) => assess_at(&e, &run, progress).map_err(|err| err.to_string()),
            };
            match got {
                Ok(at_end) => {
                    ends.push(checks::RangeEnd::Ran {
                        supply_v: v,
                        led_current_avg_a: at_end.result.metrics.led_current_avg_a,
                    });
                    tables.push(at_end.checks);
                }
                Err(reason) => {
                    a.result.warnings.push(Warning::RangeEndFails {
                        supply_v: v,
                        end,
                        reason: reason.clone(),
                    });
                    ends.push(checks::RangeEnd::Failed {
                        supply_v: v,
                        end: end.name(),
                        reason,
                    });
                }
            }
        }
        if ends
            .iter()
            .any(|e| matches!(e, checks::RangeEnd::Failed { .. }))
        {
            tables.push(a.checks.clone());
        }
        let mut merged = checks::worst_over_supplies(&tables);
        merged.extend(checks::range_checks(
            s,
            a.result.metrics.led_current_avg_a,
            &ends,
        ));
        a.checks = merged;
    }
    if opts.alternatives {
        a.comparison = Some(compare(&a.effective, &a.result, opts, progress)?);
    }
    Ok(a)
}

/// The highest inductor current of a recorded waveform, A.
fn peak_inductor_current_a(w: &Waveform) -> Option<f64> {
    (!w.is_empty()).then(|| {
        w.column(COL_IL)
            .iter()
            .copied()
            .fold(f64::NEG_INFINITY, f64::max)
    })
}

/// The assessment at the scenario's own supply (no range, no
/// alternatives).
fn assess_at(
    s: &Scenario,
    opts: &AssessOptions,
    progress: &mut dyn FnMut(Progress),
) -> Result<Assessment, SimError> {
    assess_once(s, opts, true, progress)
}

/// The assessment at the scenario's own supply; `startup_peak`: run a
/// start-up of its own for the saturation check when none is recorded
/// (a study point, whose row has no start-up peak, skips it: the
/// steady-state figures are the same either way).
pub(crate) fn assess_once(
    s: &Scenario,
    opts: &AssessOptions,
    startup_peak: bool,
    progress: &mut dyn FnMut(Progress),
) -> Result<Assessment, SimError> {
    let p = &s.parts;
    let iterate = bias::bias_dependent(&p.input_capacitor) && s.input_capacitor.is_some()
        || bias::bias_dependent(&p.output_capacitor) && s.output_capacitor.is_some()
        || thermal::led_depends_on_temperature(s);
    let target = s.target_current_a();
    let (mut v_in, mut v_out) = (
        s.supply.voltage_v,
        target.map_or(0.0, |i| s.load_voltage_v(i)),
    );
    let mut t_j: Option<f64> = None;
    let mut eff = effective_scenario(s, v_in, v_out, t_j);
    let mut run = opts.run;
    let mut iterations = 0;
    let mut converged = !iterate;
    // The start-up is recorded once, for the final effective circuit,
    // not by every run of the iteration.
    let want_startup = iterate && eff.simulation.record_startup;
    let result = loop {
        let mut this = eff.clone();
        if want_startup {
            this.simulation.record_startup = false;
        }
        let r = simulate_with_progress(&this, &run, progress)?;
        iterations += 1;
        if !iterate {
            break r;
        }
        (v_in, v_out) = capacitor_averages(&eff, &r.metrics);
        let tj_new = thermal::led_junction_c(s, &r.metrics);
        let next = effective_scenario(s, v_in, v_out, tj_new);
        let (c0, c1) = (capacitances(&eff), capacitances(&next));
        let cap_settled = c0
            .iter()
            .zip(c1)
            .all(|(a, b)| (a - b).abs() <= 1e-3 * a.abs().max(1e-30));
        let t_settled = match (t_j, tj_new) {
            (Some(a), Some(b)) => (a - b).abs() < 0.05,
            (None, None) => true,
            _ => false,
        };
        t_j = tj_new;
        if (cap_settled && t_settled) || iterations >= MAX_ITERATIONS {
            converged = cap_settled && t_settled;
            break r;
        }
        eff = next;
        run.initial_state = Some(r.steady.state_at_turn_on);
    };
    let mut result = result;
    if want_startup {
        let startup = super::startup::startup_transient(&eff, run.engine, &result, progress)?;
        result.startup = Some(startup);
    }
    if !converged {
        result
            .warnings
            .push(Warning::IterationUnsettled { runs: iterations });
    }
    // The start-up peak for its check against the saturation rating: from
    // the recorded start-up, else from a start-up run made for it alone.
    let startup_peak = match (&result.startup, s.inductor.saturation_current_a) {
        (Some(w), _) => peak_inductor_current_a(w),
        (None, Some(_)) if startup_peak => peak_inductor_current_a(
            &super::startup::startup_transient(&eff, run.engine, &result, progress)?,
        ),
        (None, _) => None,
    };
    let m = result.metrics;
    let (vin_avg, vout_avg) = capacitor_averages(&eff, &m);
    // An ideal source (no resistance) holds the input node: the simulated
    // input capacitor carries no ripple, so its check uses the textbook
    // worst case instead.
    let ideal_source = s.supply.source_resistance_ohm <= 0.0;
    let mut capacitors = Vec::new();
    if let (Some(nom), Some(effc)) = (&s.input_capacitor, &eff.input_capacitor) {
        capacitors.push(CapacitorState {
            part: "input_capacitor",
            nominal_f: nom.capacitance_f,
            effective_f: effc.capacitance_f,
            effective_min_f: effc.capacitance_f * (1.0 - p.input_capacitor.tolerance_pct / 100.0),
            average_v: vin_avg,
            peak_v: checks::max_supply_v(s),
            ripple_rms_a: if ideal_source {
                checks::buck_input_ripple_rms_a(m.inductor_current_avg_a, m.duty)
            } else {
                m.input_capacitor_ripple_rms_a
            },
            ripple_estimated: ideal_source,
            esr_loss_w: m.losses_w.input_capacitor_esr,
        });
    }
    if let (Some(nom), Some(effc)) = (&s.output_capacitor, &eff.output_capacitor) {
        capacitors.push(CapacitorState {
            part: "output_capacitor",
            nominal_f: nom.capacitance_f,
            effective_f: effc.capacitance_f,
            effective_min_f: effc.capacitance_f * (1.0 - p.output_capacitor.tolerance_pct / 100.0),
            average_v: vout_avg,
            peak_v: m.led_voltage_max_v,
            ripple_rms_a: m.output_capacitor_ripple_rms_a,
            ripple_estimated: false,
            esr_loss_w: m.losses_w.output_capacitor_esr,
        });
    }
    let temperatures = thermal::temperatures(s, &m);
    let checks = checks::design_checks(s, &m, &temperatures, &capacitors, startup_peak);
    for t in &temperatures {
        if t.part != "led" && t.temperature_c > thermal::TOUCH_HOT_C {
            result.warnings.push(Warning::HotPart {
                part: t.part,
                temperature_c: t.temperature_c,
            });
        }
    }
    Ok(Assessment {
        result,
        effective: eff,
        iterations,
        converged,
        capacitors,
        temperatures,
        checks,
        startup_peak_a: startup_peak,
        comparison: None,
    })
}

fn switching_point(m: &Metrics, v: f64) -> OperatingPoint {
    OperatingPoint {
        supply_v: v,
        led_current_a: m.led_current_avg_a,
        led_voltage_v: m.led_voltage_avg_v,
        efficiency: m.efficiency,
        dissipation_w: m.input_power_w - m.led_power_w,
    }
}

/// The comparison: the switching design at the ends of the supply range
/// (the effective scenario with only the supply changed; a supply where
/// the design is invalid or fails to run gives no point).
fn compare(
    eff: &Scenario,
    nominal_run: &SimResult,
    opts: &AssessOptions,
    progress: &mut dyn FnMut(Progress),
) -> Result<Comparison, SimError> {
    let v_nom = eff.supply.voltage_v;
    let mut supply = vec![v_nom];
    let mut nominal = 0;
    // Without a declared range, the same ±span the plot shows.
    let (min_v, max_v) = match eff.supply.input_range_v {
        Some(r) => (r.min_v, r.max_v),
        None => (
            v_nom * (1.0 - alternatives::ASSUMED_SPAN),
            v_nom * (1.0 + alternatives::ASSUMED_SPAN),
        ),
    };
    if min_v < v_nom {
        supply.insert(0, min_v);
        nominal = 1;
    }
    if max_v > v_nom {
        supply.push(max_v);
    }
    let run = RunOptions {
        initial_state: None,
        ..opts.run
    };
    let mut points = Vec::new();
    for &v in &supply {
        if (v - v_nom).abs() < 1e-12 {
            points.push(Some(switching_point(&nominal_run.metrics, v)));
            continue;
        }
        let mut sv = eff.clone();
        sv.supply.voltage_v = v;
        // Only the figures are compared: no start-up transient.
        sv.simulation.record_startup = false;
        let point = match sv.validate() {
            Ok(()) => simulate_with_progress(&sv, &run, progress)
                .ok()
                .map(|r| switching_point(&r.metrics, v)),
            Err(_) => None,
        };
        points.push(point);
    }
    // Sized for the LED current the switching design delivers at the
    // nominal supply, so all three drive the LEDs equally there.
    let target = nominal_run.metrics.led_current_avg_a;
    let mut c = alternatives::compare(eff, target, &supply, nominal, points);
    c.assumed_span = eff
        .supply
        .input_range_v
        .is_none()
        .then_some(alternatives::ASSUMED_SPAN);
    Ok(c)
}
