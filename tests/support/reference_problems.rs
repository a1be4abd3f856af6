//! Reference problems: scenarios that come with their answers.
//!
//! Each problem is an ideal circuit whose steady state is known in closed
//! form, returned together with the figures it must produce, a tolerance
//! for each and the source of the formula. The answers are computed here
//! from the problem's own parameters, never from a run, so the same
//! problem can check the engine in a test and time it in a benchmark
//! (`benches/reference_problems.rs`) with the assurance that what is timed
//! is right.
//!
//! Sources: Erickson & Maksimovic, Fundamentals of Power Electronics,
//! 3rd ed., ch. 2 (inductor volt-second balance and the straight-segment
//! ripple), ch. 5 (the DCM conversion ratio of a buck into a resistor,
//! M = 2/(1 + √(1 + 4K/D²)), K = 2L/(R·T_s)) and Appendix A (mean square
//! of a straight segment from a to b: (a² + a·b + b²)/3).

use crate::{fixed_duty_resistive, ideal_buck};
use sim_core::metrics::Metrics;
use sim_core::scenario::{ControllerSpec, Scenario};
use sim_core::{run::drive::simulate, run::RunOptions};

/// One expected figure.
#[derive(Debug, Clone)]
pub struct Answer {
    /// The figure's name in the run's metrics (its JSON field name).
    pub figure: &'static str,
    /// The expected value, in the figure's unit.
    pub value: f64,
    /// Allowed relative error.
    pub max_relative: f64,
    /// Allowed absolute error (for answers at or near zero).
    pub epsilon: f64,
    /// Where the formula comes from.
    pub source: &'static str,
}

/// A scenario with its analytic answers.
#[derive(Debug, Clone)]
pub struct ReferenceProblem {
    /// Short name.
    pub name: &'static str,
    /// The circuit.
    pub scenario: Scenario,
    /// How to run it (a start state near the answer where the circuit
    /// settles slowly).
    pub options: RunOptions,
    /// What the run must report.
    pub answers: Vec<Answer>,
}

const CH2: &str = "Erickson & Maksimovic, 3rd ed., ch. 2, volt-second balance";
const APPA: &str = "Erickson & Maksimovic, 3rd ed., Appendix A, RMS of straight segments";
const CH5: &str = "Erickson & Maksimovic, 3rd ed., ch. 5, DCM conversion ratio";

fn answer(figure: &'static str, value: f64, max_relative: f64, source: &'static str) -> Answer {
    Answer {
        figure,
        value,
        max_relative,
        epsilon: 0.0,
        source,
    }
}

fn cot(peak_current_a: f64, off_time_s: f64) -> ControllerSpec {
    ControllerSpec::ConstantOffTime {
        peak_current_a,
        off_time_s,
        delay_s: 0.0,
        min_on_time_s: 0.0,
    }
}

/// RMS over `period` of a current rising from `a` to `b` and back over
/// `busy` of it (zero the rest).
fn triangle_rms(a: f64, b: f64, busy: f64, period: f64) -> f64 {
    ((a * a + a * b + b * b) / 3.0 * busy / period).sqrt()
}

/// Ideal constant off-time buck in CCM (24 V to a 12 V sink, 100 µH,
/// 1 A peak, 2 µs off): D = V_out/V_in, ΔI = V_out·t_off/L,
/// f = (1 − D)/t_off, I_avg = I_pk − ΔI/2.
pub fn constant_off_time_ccm() -> ReferenceProblem {
    let (v_in, v_out, l, i_pk, t_off) = (24.0, 12.0, 100e-6, 1.0, 2e-6);
    let d = v_out / v_in;
    let di = v_out * t_off / l;
    let avg = i_pk - di / 2.0;
    let tol = 1e-6;
    ReferenceProblem {
        name: "constant off-time, CCM",
        scenario: ideal_buck(v_in, v_out, l, cot(i_pk, t_off)),
        options: RunOptions::default(),
        answers: vec![
            answer("switching_frequency_hz", (1.0 - d) / t_off, tol, CH2),
            answer("duty", d, tol, CH2),
            answer("led_current_ripple_pp_a", di, tol, CH2),
            answer("led_current_avg_a", avg, tol, CH2),
            answer(
                "led_current_rms_a",
                (avg * avg + di * di / 12.0).sqrt(),
                tol,
                APPA,
            ),
            answer(
                "switch_current_rms_a",
                triangle_rms(i_pk - di, i_pk, 1.0, 1.0) * d.sqrt(),
                tol,
                APPA,
            ),
            answer("efficiency", 1.0, tol, CH2),
        ],
    }
}

/// Ideal constant off-time buck in DCM (24 V to 12 V, 10 µH, 1 A, 2 µs):
/// t_on = I_pk·L/(V_in − V_out), t_fall = I_pk·L/V_out < t_off, idle
/// t_off − t_fall, I_avg = I_pk·(t_on + t_fall)/(2·(t_on + t_off)).
pub fn constant_off_time_dcm() -> ReferenceProblem {
    let (v_in, v_out, l, i_pk, t_off) = (24.0, 12.0, 10e-6, 1.0, 2e-6);
    let t_on = i_pk * l / (v_in - v_out);
    let t_fall = i_pk * l / v_out;
    let period = t_on + t_off;
    let tol = 1e-6;
    ReferenceProblem {
        name: "constant off-time, DCM",
        scenario: ideal_buck(v_in, v_out, l, cot(i_pk, t_off)),
        options: RunOptions::default(),
        answers: vec![
            answer("period_s", period, tol, CH2),
            answer("idle_time_s", t_off - t_fall, tol, CH2),
            answer(
                "led_current_avg_a",
                i_pk * (t_on + t_fall) / (2.0 * period),
                tol,
                CH2,
            ),
            answer(
                "led_current_rms_a",
                triangle_rms(0.0, i_pk, t_on + t_fall, period),
                tol,
                APPA,
            ),
        ],
    }
}

/// Ideal hysteretic buck (36 V to 6.2 V, 33 µH, 0.25–0.35 A, no delays):
/// f = V_out·(V_in − V_out)/(V_in·L·ΔI), I_avg at the thresholds' midpoint.
pub fn hysteretic() -> ReferenceProblem {
    let (v_in, v_out, l, hi, lo) = (36.0, 6.2, 33e-6, 0.35, 0.25);
    let di = hi - lo;
    let tol = 1e-6;
    ReferenceProblem {
        name: "hysteretic",
        scenario: ideal_buck(
            v_in,
            v_out,
            l,
            ControllerSpec::Hysteretic {
                upper_current_a: hi,
                lower_current_a: lo,
                turn_off_delay_s: 0.0,
                turn_on_delay_s: 0.0,
            },
        ),
        options: RunOptions::default(),
        answers: vec![
            answer(
                "switching_frequency_hz",
                v_out * (v_in - v_out) / (v_in * l * di),
                tol,
                CH2,
            ),
            answer("led_current_avg_a", 0.5 * (hi + lo), tol, CH2),
            answer("led_current_ripple_pp_a", di, tol, CH2),
            answer("duty", v_out / v_in, tol, CH2),
        ],
    }
}

/// Ideal fixed-duty buck in DCM into a constant-voltage sink (24 V to
/// 12 V, 10 µH, 100 kHz, D = 0.3): the current rises from zero to
/// I_p = (V_in − V_out)·D·T/L, falls in t_fall = I_p·L/V_out and rests
/// for (1 − D)·T − t_fall.
pub fn fixed_duty_dcm_into_a_sink() -> ReferenceProblem {
    let (v_in, v_out, l, f, d) = (24.0, 12.0, 10e-6, 100e3, 0.3);
    let period = 1.0 / f;
    let peak = (v_in - v_out) * d * period / l;
    let t_fall = peak * l / v_out;
    let busy = d * period + t_fall;
    let tol = 1e-6;
    ReferenceProblem {
        name: "fixed duty, DCM, constant-voltage sink",
        scenario: ideal_buck(
            v_in,
            v_out,
            l,
            ControllerSpec::FixedDuty {
                frequency_hz: f,
                duty: d,
            },
        ),
        options: RunOptions::default(),
        answers: vec![
            answer("switching_frequency_hz", f, tol, CH2),
            answer("on_time_s", d * period, tol, CH2),
            answer("inductor_current_peak_a", peak, tol, CH2),
            answer("idle_time_s", (1.0 - d) * period - t_fall, tol, CH2),
            answer("led_current_avg_a", peak * busy / (2.0 * period), tol, CH2),
            answer(
                "led_current_rms_a",
                triangle_rms(0.0, peak, busy, period),
                tol,
                APPA,
            ),
        ],
    }
}

/// Ideal fixed-duty buck in DCM into a resistor with a large output
/// capacitor (10 V, 10 µH, 10 Ω, 2000 µF, 100 kHz, D = 0.4):
/// V_out/V_in = M(D, K) = 2/(1 + √(1 + 4K/D²)), K = 2L/(R·T_s) = 0.2
/// (< K_crit = 1 − D: DCM). The formula neglects the output ripple (here
/// under 0.1 %), hence the 1e-3 tolerance. Started at the answer's output
/// voltage so the 20 ms R·C settles in few cycles.
pub fn fixed_duty_dcm_into_a_resistor() -> ReferenceProblem {
    let (v_in, l, r, c, f, d): (f64, f64, f64, f64, f64, f64) =
        (10.0, 10e-6, 10.0, 2000e-6, 100e3, 0.4);
    let k = 2.0 * l * f / r;
    let m = 2.0 / (1.0 + (1.0 + 4.0 * k / (d * d)).sqrt());
    ReferenceProblem {
        name: "fixed duty, DCM, resistor (conversion ratio)",
        scenario: fixed_duty_resistive(v_in, l, r, c, f, d),
        options: RunOptions {
            initial_state: Some([0.0, m * v_in, 0.0]),
            ..RunOptions::default()
        },
        answers: vec![
            answer("led_voltage_avg_v", m * v_in, 1e-3, CH5),
            answer("led_current_avg_a", m * v_in / r, 1e-3, CH5),
        ],
    }
}

/// Every reference problem.
pub fn all() -> Vec<ReferenceProblem> {
    vec![
        constant_off_time_ccm(),
        constant_off_time_dcm(),
        hysteretic(),
        fixed_duty_dcm_into_a_sink(),
        fixed_duty_dcm_into_a_resistor(),
    ]
}

impl ReferenceProblem {
    /// The answers `m` misses, one line each (empty: all within
    /// tolerance). Figures are read by their JSON name, so a figure that
    /// is missing or not a number is reported too.
    pub fn mismatches(&self, m: &Metrics) -> Vec<String> {
        let json = serde_json::to_value(m).expect("metrics serialise");
        let mut out = Vec::new();
        for a in &self.answers {
            let Some(got) = json.get(a.figure).and_then(|v| v.as_f64()) else {
                out.push(format!("{}: no figure `{}`", self.name, a.figure));
                continue;
            };
            let allowed = a.epsilon.max(a.max_relative * a.value.abs());
            // Written so that NaN fails too.
            let within = (got - a.value).abs() <= allowed;
            if !within {
                out.push(format!(
                    "{}: {} = {got}, expected {} ± {allowed} ({})",
                    self.name, a.figure, a.value, a.source
                ));
            }
        }
        out
    }

    /// Runs the problem and returns its metrics.
    pub fn run(&self) -> Result<Metrics, String> {
        self.scenario
            .validate()
            .map_err(|e| format!("{}: {e}", self.name))?;
        simulate(&self.scenario, &self.options)
            .map(|r| r.metrics)
            .map_err(|e| format!("{}: {e}", self.name))
    }
}
