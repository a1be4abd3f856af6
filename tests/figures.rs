//! Every figure of the summary against a value computed here, never by
//! `sim_core::metrics`: closed forms on ideal circuits (straight-line
//! current segments), and dense quadrature of the recorded waveform where
//! no closed form exists.
//!
//! Sources: Erickson & Maksimovic, Fundamentals of Power Electronics, 3rd
//! ed., ch. 2 (sec. 2.2, inductor volt-second balance; sec. 2.3, the
//! current ripple of a straight-segment inductor current,
//! Δi = (V_g − V)·D·T_s/L peak to peak), and its Appendix A (RMS values of
//! commonly observed converter waveforms: a segment rising linearly from
//! a to b has mean (a + b)/2 and mean square (a² + a·b + b²)/3, so a DC
//! level with peak-to-peak ripple ΔI has I²rms = I² + ΔI²/12, and a switch
//! carrying it for a fraction D of the period D·(I_p² + I_p·I_v + I_v²)/3).

use approx::assert_relative_eq;
use chopwave_suite::*;
use sim_core::metrics::{ConductionMode, Metrics};
use sim_core::record::{COL_IL, COL_ILED, COL_SWITCH, COL_TIME, COL_VLED, COL_VSW};
use sim_core::scenario::{ControllerSpec, Diode, Scenario};
use sim_core::{
    run::drive::simulate,
    run::{RunOptions, SimResult},
};

fn cot(peak_current_a: f64, off_time_s: f64, delay_s: f64, min_on_time_s: f64) -> ControllerSpec {
    ControllerSpec::ConstantOffTime {
        peak_current_a,
        off_time_s,
        delay_s,
        min_on_time_s,
    }
}

/// The lossless buck of `ideal_buck` with a diode of fixed forward drop
/// `v_f` (no resistance): every current segment is a straight line.
fn ideal(v_in: f64, v_out: f64, v_f: f64, l: f64, c: ControllerSpec) -> Scenario {
    let mut s = ideal_buck(v_in, v_out, l, c);
    s.diode = Diode::FixedDrop {
        forward_voltage_v: v_f,
        series_resistance_ohm: 0.0,
    };
    s.validate().expect("ideal circuit validates");
    s
}

fn run(s: &Scenario) -> SimResult {
    simulate(s, &RunOptions::default()).expect("ideal circuit runs")
}

/// One switching cycle of straight segments: the current rises from
/// `i_start` to `i_peak` in `t_on` (switch on), falls to `i_end` in `t_fall`
/// (diode on) and rests at zero for `t_idle`.
struct Cycle {
    i_start: f64,
    i_peak: f64,
    i_end: f64,
    t_on: f64,
    t_fall: f64,
    t_idle: f64,
}

/// ∫ of a straight segment from a to b over dt, and ∫ of its square
/// (Erickson & Maksimovic, 3rd ed., Appendix A).
fn seg(a: f64, b: f64, dt: f64) -> (f64, f64) {
    ((a + b) / 2.0 * dt, (a * a + a * b + b * b) / 3.0 * dt)
}

impl Cycle {
    fn period(&self) -> f64 {
        self.t_on + self.t_fall + self.t_idle
    }
    /// (average, RMS) of the switch current over the period.
    fn switch(&self) -> (f64, f64) {
        let (i, i2) = seg(self.i_start, self.i_peak, self.t_on);
        (i / self.period(), (i2 / self.period()).sqrt())
    }
    /// (average, RMS) of the diode current over the period.
    fn diode(&self) -> (f64, f64) {
        let (i, i2) = seg(self.i_peak, self.i_end, self.t_fall);
        (i / self.period(), (i2 / self.period()).sqrt())
    }
    /// (average, RMS) of the inductor current (= LED current, no capacitor).
    fn inductor(&self) -> (f64, f64) {
        let (a, a2) = seg(self.i_start, self.i_peak, self.t_on);
        let (b, b2) = seg(self.i_peak, self.i_end, self.t_fall);
        ((a + b) / self.period(), ((a2 + b2) / self.period()).sqrt())
    }
}

/// Checks every current, time and power figure of an ideal run against the
/// straight-segment cycle `c` (supply `v_in`, LED string `v_out`, diode
/// drop `v_f`).
fn check_against_cycle(m: &Metrics, c: &Cycle, v_in: f64, v_out: f64, v_f: f64) {
    let tol = 1e-6;
    let t = c.period();
    let (il_avg, il_rms) = c.inductor();
    let (sw_avg, sw_rms) = c.switch();
    let (d_avg, d_rms) = c.diode();
    assert_relative_eq!(m.period_s, t, max_relative = tol);
    assert_relative_eq!(m.switching_frequency_hz, 1.0 / t, max_relative = tol);
    assert_relative_eq!(m.on_time_s, c.t_on, max_relative = tol);
    assert_relative_eq!(m.off_time_s, c.t_fall + c.t_idle, max_relative = tol);
    assert_relative_eq!(m.duty, c.t_on / t, max_relative = tol);
    assert_relative_eq!(m.idle_time_s, c.t_idle, epsilon = tol * t);
    // The inductor current is the LED current (no output capacitor).
    for (avg, rms) in [
        (m.led_current_avg_a, m.led_current_rms_a),
        (m.inductor_current_avg_a, m.inductor_current_rms_a),
    ] {
        assert_relative_eq!(avg, il_avg, max_relative = tol);
        assert_relative_eq!(rms, il_rms, max_relative = tol);
    }
    let valley = c.i_start.min(c.i_end);
    assert_relative_eq!(m.inductor_current_peak_a, c.i_peak, max_relative = tol);
    assert_relative_eq!(m.led_current_max_a, c.i_peak, max_relative = tol);
    assert_relative_eq!(
        m.inductor_current_valley_a,
        valley,
        epsilon = tol * c.i_peak
    );
    assert_relative_eq!(m.led_current_min_a, valley, epsilon = tol * c.i_peak);
    assert_relative_eq!(
        m.inductor_ripple_pp_a,
        c.i_peak - valley,
        max_relative = tol
    );
    assert_relative_eq!(
        m.led_current_ripple_pp_a,
        c.i_peak - valley,
        max_relative = tol
    );
    assert_relative_eq!(
        m.led_current_ripple_pct,
        100.0 * (c.i_peak - valley) / il_avg,
        max_relative = tol
    );
    // The switch and the supply carry the inductor current while on, the
    // diode while off (Appendix A: D·(I_p² + I_p·I_v + I_v²)/3).
    assert_relative_eq!(m.switch_current_rms_a, sw_rms, max_relative = tol);
    assert_relative_eq!(m.input_current_avg_a, sw_avg, max_relative = tol);
    assert_relative_eq!(m.input_current_rms_a, sw_rms, max_relative = tol);
    assert_relative_eq!(m.diode_current_avg_a, d_avg, max_relative = tol);
    assert_relative_eq!(m.diode_current_rms_a, d_rms, max_relative = tol);
    // No capacitors: no capacitor ripple current.
    assert!(m.input_capacitor_ripple_rms_a.abs() < tol * il_rms);
    assert!(m.output_capacitor_ripple_rms_a.abs() < tol * il_rms);
    // Stresses: the switch node sits at the supply while on, one diode drop
    // below ground while the diode conducts.
    assert_relative_eq!(m.switch_node_max_v, v_in, max_relative = tol);
    assert_relative_eq!(m.switch_node_min_v, -v_f, epsilon = tol * v_in);
    // Powers: the string takes V_out whenever current flows; the only loss
    // is the diode drop, V_f·I_D,avg; the total is the sum of its parts.
    let p_in = v_in * sw_avg;
    let p_led = v_out * il_avg;
    let p_diode = v_f * d_avg;
    assert_relative_eq!(m.input_power_w, p_in, max_relative = tol);
    assert_relative_eq!(m.led_power_w, p_led, max_relative = tol);
    assert_relative_eq!(m.losses_w.diode_conduction, p_diode, epsilon = tol * p_in);
    assert_relative_eq!(m.total_loss_w, p_diode, epsilon = tol * p_in);
    assert_relative_eq!(m.efficiency, p_led / p_in, max_relative = tol);
    assert!(m.energy_balance_residual.abs() < 1e-6);
    assert!(m.cycles_measured >= 1);
}

#[test]
fn ideal_ccm_every_figure_from_volt_second_balance() {
    // Inductor volt-second balance (Erickson & Maksimovic, 3rd ed., sec. 2.2)
    // with a diode drop: (V_in − V_out)·t_on = (V_out + V_f)·t_off; the off
    // slope sets the ripple ΔI = (V_out + V_f)·t_off/L (sec. 2.3), the
    // valley I_pk − ΔI, the duty (V_out + V_f)/(V_in + V_f).
    for &(v_in, v_out, v_f, l, i_pk, t_off) in &[
        (24.0, 12.0, 0.0, 100e-6, 1.0, 2e-6),
        (48.0, 9.3, 0.45, 47e-6, 0.7, 1.2e-6),
        (14.4, 3.1, 0.3, 22e-6, 2.5, 3.3e-6),
    ] {
        let m = run(&ideal(v_in, v_out, v_f, l, cot(i_pk, t_off, 0.0, 0.0))).metrics;
        let di = (v_out + v_f) * t_off / l;
        let t_on = di * l / (v_in - v_out);
        let c = Cycle {
            i_start: i_pk - di,
            i_peak: i_pk,
            i_end: i_pk - di,
            t_on,
            t_fall: t_off,
            t_idle: 0.0,
        };
        check_against_cycle(&m, &c, v_in, v_out, v_f);
        assert_relative_eq!(m.duty, (v_out + v_f) / (v_in + v_f), max_relative = 1e-6);
        // I²rms = I_avg² + ΔI²/12 (Appendix A, DC plus triangular ripple).
        let avg = i_pk - di / 2.0;
        assert_relative_eq!(
            m.led_current_rms_a,
            (avg * avg + di * di / 12.0).sqrt(),
            max_relative = 1e-6
        );
        assert_eq!(m.conduction_mode, ConductionMode::Ccm);
        assert_relative_eq!(m.ccm_margin, (i_pk - di) / avg, max_relative = 1e-6);
        // The string sits at its knee whenever it conducts.
        assert_relative_eq!(m.led_voltage_avg_v, v_out, max_relative = 1e-6);
        assert_relative_eq!(m.led_voltage_max_v, v_out, max_relative = 1e-6);
    }
}

#[test]
fn ideal_dcm_idle_time_in_closed_form() {
    // With (V_out + V_f)·t_off/L above I_pk the current rises from zero in
    // t_on = I_pk·L/(V_in − V_out), falls in t_fall = I_pk·L/(V_out + V_f)
    // and rests for t_idle = t_off − t_fall (sec. 2.2 volt-second argument
    // per segment; DCM as in Erickson & Maksimovic, 3rd ed., ch. 5).
    for &(v_in, v_out, v_f, l, i_pk, t_off) in &[
        (24.0, 12.0, 0.0, 10e-6, 1.0, 2e-6),
        (36.0, 9.0, 0.4, 15e-6, 0.5, 3e-6),
    ] {
        let m = run(&ideal(v_in, v_out, v_f, l, cot(i_pk, t_off, 0.0, 0.0))).metrics;
        let t_fall = i_pk * l / (v_out + v_f);
        assert!(t_fall < t_off);
        let c = Cycle {
            i_start: 0.0,
            i_peak: i_pk,
            i_end: 0.0,
            t_on: i_pk * l / (v_in - v_out),
            t_fall,
            t_idle: t_off - t_fall,
        };
        check_against_cycle(&m, &c, v_in, v_out, v_f);
        assert_eq!(m.conduction_mode, ConductionMode::Dcm);
        assert!(m.ccm_margin.abs() < 1e-12, "DCM margin {}", m.ccm_margin);
    }
}

// ---------------------------------------------------------------------------
// Conduction-mode classification at its edges. `sim_core::metrics`
// documents the rule: DCM when the current rests at zero for more than
// 0.1 % of the period; boundary when it rests for less, or when the valley
// is under 1 % of the average; CCM otherwise.

/// t_off for an ideal COT cycle whose valley is `m` × its average:
/// I_v = I_pk − ΔI and I_avg = I_pk − ΔI/2, so ΔI = I_pk·(1 − m)/(1 − m/2).
fn off_time_for_margin(v_out: f64, l: f64, i_pk: f64, m: f64) -> f64 {
    let di = i_pk * (1.0 - m) / (1.0 - m / 2.0);
    di * l / v_out
}

#[test]
fn ccm_margin_edge_at_one_percent() {
    let (v_in, v_out, l, i_pk) = (24.0, 12.0, 100e-6, 1.0);
    for &(margin, mode) in &[
        (0.0105, ConductionMode::Ccm),
        (0.0095, ConductionMode::Boundary),
        (0.2, ConductionMode::Ccm),
    ] {
        let t_off = off_time_for_margin(v_out, l, i_pk, margin);
        let m = run(&ideal(v_in, v_out, 0.0, l, cot(i_pk, t_off, 0.0, 0.0))).metrics;
        assert_relative_eq!(m.ccm_margin, margin, max_relative = 1e-5);
        assert_eq!(m.conduction_mode, mode, "valley/average {margin}");
        assert!(m.idle_time_s.abs() < 1e-15);
    }
}

#[test]
fn dcm_idle_edge_at_a_thousandth_of_the_period() {
    // Idle fraction q of the period: t_off − t_fall = q·(t_on + t_off), so
    // t_off = (t_fall + q·t_on)/(1 − q).
    let (v_in, v_out, l, i_pk) = (24.0, 12.0, 10e-6, 1.0);
    let t_on = i_pk * l / (v_in - v_out);
    let t_fall = i_pk * l / v_out;
    for &(q, mode) in &[
        (1.1e-3, ConductionMode::Dcm),
        (0.9e-3, ConductionMode::Boundary),
        (0.05, ConductionMode::Dcm),
    ] {
        let t_off = (t_fall + q * t_on) / (1.0 - q);
        let m = run(&ideal(v_in, v_out, 0.0, l, cot(i_pk, t_off, 0.0, 0.0))).metrics;
        assert_relative_eq!(m.idle_time_s / m.period_s, q, max_relative = 1e-4);
        assert_eq!(m.conduction_mode, mode, "idle fraction {q}");
        // At the boundary the margin is the valley over the average: 0.
        assert!(m.ccm_margin.abs() < 1e-9);
    }
}

// ---------------------------------------------------------------------------
// Controller parameters, each exercised on its own and asymmetrically.

#[test]
fn hysteretic_turn_on_and_turn_off_delays_act_on_their_own_edges() {
    // A turn-off delay t_a lets the current overshoot the upper threshold by
    // (V_in − V_out)·t_a/L; a turn-on delay t_b lets it undershoot the lower
    // one by V_out·t_b/L (straight segments, sec. 2.3). Different delays,
    // so swapping them moves the peak and the valley.
    let (v_in, v_out, l, hi, lo) = (24.0, 8.0, 47e-6, 1.1, 0.9);
    for &(t_a, t_b) in &[(150e-9, 40e-9), (30e-9, 220e-9)] {
        let s = ideal(
            v_in,
            v_out,
            0.0,
            l,
            ControllerSpec::Hysteretic {
                upper_current_a: hi,
                lower_current_a: lo,
                turn_off_delay_s: t_a,
                turn_on_delay_s: t_b,
            },
        );
        let m = run(&s).metrics;
        let peak = hi + (v_in - v_out) * t_a / l;
        let valley = lo - v_out * t_b / l;
        let di = peak - valley;
        let c = Cycle {
            i_start: valley,
            i_peak: peak,
            i_end: valley,
            t_on: di * l / (v_in - v_out),
            t_fall: di * l / v_out,
            t_idle: 0.0,
        };
        check_against_cycle(&m, &c, v_in, v_out, 0.0);
    }
}

#[test]
fn constant_off_time_delay_raises_the_peak_by_the_on_slope() {
    // The switch turns off one delay t_d after the trip: peak
    // I_pk + (V_in − V_out)·t_d/L, then the fixed off-time sets the ripple.
    let (v_in, v_out, l, i_pk, t_off, t_d) = (24.0, 12.0, 68e-6, 0.8, 1.5e-6, 120e-9);
    let m = run(&ideal(v_in, v_out, 0.0, l, cot(i_pk, t_off, t_d, 0.0))).metrics;
    let peak = i_pk + (v_in - v_out) * t_d / l;
    let di = v_out * t_off / l;
    let c = Cycle {
        i_start: peak - di,
        i_peak: peak,
        i_end: peak - di,
        t_on: di * l / (v_in - v_out),
        t_fall: t_off,
        t_idle: 0.0,
    };
    check_against_cycle(&m, &c, v_in, v_out, 0.0);
}

#[test]
fn minimum_on_time_binding_and_not() {
    let (v_in, v_out, l, i_pk, t_off, t_d) = (24.0, 12.0, 10e-6, 0.5, 3e-6, 50e-9);
    // Natural on-time from zero to the trip: I_pk·L/(V_in − V_out) ≈ 417 ns.
    let natural = i_pk * l / (v_in - v_out);
    // Not binding (shorter than the natural on-time): the same cycle as
    // with no minimum at all: trip at I_pk, off one delay later.
    let peak = i_pk + (v_in - v_out) * t_d / l;
    let expect_free = Cycle {
        i_start: 0.0,
        i_peak: peak,
        i_end: 0.0,
        t_on: natural + t_d,
        t_fall: peak * l / v_out,
        t_idle: t_off - peak * l / v_out,
    };
    let m = run(&ideal(
        v_in,
        v_out,
        0.0,
        l,
        cot(i_pk, t_off, t_d, 0.8 * natural),
    ))
    .metrics;
    check_against_cycle(&m, &expect_free, v_in, v_out, 0.0);
    // Binding (longer): the comparator trips at the end of the minimum
    // on-time, the switch opens one delay later, the peak is
    // (V_in − V_out)·(t_min + t_d)/L (DCM, so every cycle starts at zero).
    let t_min = 1.5 * natural;
    let peak = (v_in - v_out) * (t_min + t_d) / l;
    let t_fall = peak * l / v_out;
    assert!(t_fall < t_off);
    let expect_bound = Cycle {
        i_start: 0.0,
        i_peak: peak,
        i_end: 0.0,
        t_on: t_min + t_d,
        t_fall,
        t_idle: t_off - t_fall,
    };
    let m = run(&ideal(v_in, v_out, 0.0, l, cot(i_pk, t_off, t_d, t_min))).metrics;
    check_against_cycle(&m, &expect_bound, v_in, v_out, 0.0);
}

#[test]
fn fixed_duty_into_a_resistor_without_capacitor() {
    // A lossless buck at fixed duty D into R with no output capacitor: the
    // current is a sum of exponentials with τ = L/R. With τ ≫ T the segments
    // are nearly straight; the exact periodic solution of the first-order
    // circuit is i(t) = V_in/R·(1 − e^{−t/τ}) + i_v·e^{−t/τ} while on and
    // i_p·e^{−t/τ} while off, so i_v = i_p·e^{−(1−D)T/τ} and
    // i_p = V_in/R·(1 − e^{−DT/τ}) + i_v·e^{−DT/τ} (first-order RL step
    // response; volt-second balance gives the average D·V_in/R exactly).
    let (v_in, l, r, f, d) = (24.0, 220e-6, 12.0, 100e3, 0.35);
    let mut s = fixed_duty_resistive(v_in, l, r, 1e-6, f, d);
    s.output_capacitor = None;
    s.validate().unwrap();
    let m = run(&s).metrics;
    let (t, tau) = (1.0 / f, l / r);
    let a_on = (-d * t / tau).exp();
    let a_off = (-(1.0 - d) * t / tau).exp();
    let i_p = v_in / r * (1.0 - a_on) / (1.0 - a_on * a_off);
    let i_v = i_p * a_off;
    assert_relative_eq!(m.inductor_current_peak_a, i_p, max_relative = 1e-6);
    assert_relative_eq!(m.inductor_current_valley_a, i_v, max_relative = 1e-6);
    assert_relative_eq!(m.led_current_avg_a, d * v_in / r, max_relative = 1e-6);
    assert_relative_eq!(m.led_voltage_avg_v, d * v_in, max_relative = 1e-6);
    assert_relative_eq!(m.duty, d, max_relative = 1e-9);
    assert_relative_eq!(m.switching_frequency_hz, f, max_relative = 1e-9);
    // Lossless: all of the input reaches the resistor.
    assert_relative_eq!(m.efficiency, 1.0, max_relative = 1e-6);
}

// ---------------------------------------------------------------------------
// Dense quadrature of the recorded waveform, for a lossy circuit with no
// closed form: every figure the recording carries, computed here by the
// trapezoid rule over the samples of the measured cycles.

struct Quadrature {
    time: f64,
    il: f64,
    il2: f64,
    iled: f64,
    iled2: f64,
    vled: f64,
    pled: f64,
    on_time: f64,
    sw_i2: f64,
    diode_i: f64,
    diode_i2: f64,
    diode_vi: f64,
    ico2: f64,
}

fn quadrature(r: &SimResult) -> Quadrature {
    let w = &r.waveform;
    let (t, il, iled, vled, vsw, sw) = (
        w.column(COL_TIME),
        w.column(COL_IL),
        w.column(COL_ILED),
        w.column(COL_VLED),
        w.column(COL_VSW),
        w.column(COL_SWITCH),
    );
    let mut q = Quadrature {
        time: t[w.len() - 1] - t[0],
        il: 0.0,
        il2: 0.0,
        iled: 0.0,
        iled2: 0.0,
        vled: 0.0,
        pled: 0.0,
        on_time: 0.0,
        sw_i2: 0.0,
        diode_i: 0.0,
        diode_i2: 0.0,
        diode_vi: 0.0,
        ico2: 0.0,
    };
    let trap = |f: &dyn Fn(usize) -> f64, k: usize, dt: f64| 0.5 * (f(k) + f(k + 1)) * dt;
    for k in 0..w.len() - 1 {
        let dt = t[k + 1] - t[k];
        if dt <= 0.0 {
            continue;
        }
        q.il += trap(&|j| il[j], k, dt);
        q.il2 += trap(&|j| il[j] * il[j], k, dt);
        q.iled += trap(&|j| iled[j], k, dt);
        q.iled2 += trap(&|j| iled[j] * iled[j], k, dt);
        q.vled += trap(&|j| vled[j], k, dt);
        q.pled += trap(&|j| vled[j] * iled[j], k, dt);
        q.ico2 += trap(&|j| (il[j] - iled[j]).powi(2), k, dt);
        // A segment between samples has one switch state (a switching
        // event is recorded twice, at the same time, before and after).
        if sw[k + 1] > 0.5 && sw[k] > 0.5 {
            q.on_time += dt;
            q.sw_i2 += trap(&|j| il[j] * il[j], k, dt);
        } else {
            let id = |j: usize| il[j].max(0.0);
            q.diode_i += trap(&id, k, dt);
            q.diode_i2 += trap(&|j| id(j) * id(j), k, dt);
            q.diode_vi += trap(&|j| (-vsw[j]) * id(j), k, dt);
        }
    }
    q
}

#[test]
fn lossy_driver_figures_match_quadrature_of_the_waveform() {
    // The starter design (exponential LEDs, Shockley-free fixed-drop diode
    // with resistance, resistive switch and winding) with an output
    // capacitor, and no input capacitor so the supply current is the switch
    // current. Trapezoid error with 24 samples per interval on curves whose
    // time constants exceed the interval: well under 1e-3.
    let mut s = lamp_12v_with_output_cap();
    s.input_capacitor = None;
    s.supply.source_resistance_ohm = 0.0;
    s.validate().unwrap();
    let r = run(&s);
    let m = &r.metrics;
    let q = quadrature(&r);
    let tol = 1e-3;
    let per = |x: f64| x / q.time;
    assert_relative_eq!(
        q.time,
        m.period_s * m.cycles_measured as f64,
        max_relative = 1e-9
    );
    assert_relative_eq!(m.inductor_current_avg_a, per(q.il), max_relative = tol);
    assert_relative_eq!(
        m.inductor_current_rms_a,
        per(q.il2).sqrt(),
        max_relative = tol
    );
    assert_relative_eq!(m.led_current_avg_a, per(q.iled), max_relative = tol);
    assert_relative_eq!(m.led_current_rms_a, per(q.iled2).sqrt(), max_relative = tol);
    assert_relative_eq!(m.led_voltage_avg_v, per(q.vled), max_relative = tol);
    assert_relative_eq!(m.led_power_w, per(q.pled), max_relative = tol);
    assert_relative_eq!(m.duty, per(q.on_time), max_relative = tol);
    assert_relative_eq!(
        m.switch_current_rms_a,
        per(q.sw_i2).sqrt(),
        max_relative = tol
    );
    assert_relative_eq!(
        m.input_current_rms_a,
        per(q.sw_i2).sqrt(),
        max_relative = tol
    );
    assert_relative_eq!(m.diode_current_avg_a, per(q.diode_i), max_relative = tol);
    assert_relative_eq!(
        m.diode_current_rms_a,
        per(q.diode_i2).sqrt(),
        max_relative = tol
    );
    // The output capacitor carries i_L − i_LED, whose average is zero in
    // steady state: its ripple RMS is the RMS of that difference.
    assert_relative_eq!(
        m.output_capacitor_ripple_rms_a,
        per(q.ico2).sqrt(),
        max_relative = 1e-2
    );
    // Each conduction loss: R·∫i² over the element's conduction, or ∫v·i
    // for the diode (its voltage is minus the switch node while it conducts).
    let r_on = s.switch.on_resistance_ohm;
    let dcr = s.inductor.dcr_ohm;
    let esr = s.output_capacitor.unwrap().esr_ohm;
    assert_relative_eq!(
        m.losses_w.switch_conduction,
        r_on * per(q.sw_i2),
        max_relative = tol
    );
    assert_relative_eq!(
        m.losses_w.inductor_dcr,
        dcr * per(q.il2),
        max_relative = tol
    );
    assert_relative_eq!(
        m.losses_w.diode_conduction,
        per(q.diode_vi),
        max_relative = 1e-2
    );
    assert_relative_eq!(
        m.losses_w.output_capacitor_esr,
        esr * per(q.ico2),
        max_relative = 1e-2
    );
    // Extremes: the recorded samples cannot exceed the reported extremes,
    // and the inductor's come at switching events, which are sampled.
    let max = |c: usize| {
        r.waveform
            .column(c)
            .fold(f64::NEG_INFINITY, |a, &b| a.max(b))
    };
    let min = |c: usize| r.waveform.column(c).fold(f64::INFINITY, |a, &b| a.min(b));
    assert_relative_eq!(m.inductor_current_peak_a, max(COL_IL), max_relative = 1e-9);
    assert_relative_eq!(
        m.inductor_current_valley_a,
        min(COL_IL),
        max_relative = 1e-9
    );
    assert_relative_eq!(m.switch_node_max_v, max(COL_VSW), max_relative = 1e-9);
    assert_relative_eq!(m.switch_node_min_v, min(COL_VSW), max_relative = 1e-9);
    assert!(m.led_current_max_a >= max(COL_ILED) - 1e-12);
    assert!(m.led_current_min_a <= min(COL_ILED) + 1e-12);
    assert!(m.led_voltage_max_v >= max(COL_VLED) - 1e-12);
    assert_relative_eq!(m.led_current_max_a, max(COL_ILED), max_relative = 1e-3);
    assert_relative_eq!(m.led_current_min_a, min(COL_ILED), max_relative = 1e-3);
    // The supply is ideal: input power = V_in·I_in,avg, and the total is the
    // sum of every loss entry (read from the serialised form, so an entry
    // left out of the total is caught whatever its name).
    assert_relative_eq!(
        m.input_power_w,
        s.supply.voltage_v * m.input_current_avg_a,
        max_relative = 1e-9
    );
    let entries = serde_json::to_value(m.losses_w).unwrap();
    let sum: f64 = entries
        .as_object()
        .unwrap()
        .values()
        .map(|v| v.as_f64().unwrap())
        .sum();
    assert_relative_eq!(m.total_loss_w, sum, max_relative = 1e-12);
    assert_relative_eq!(
        m.input_power_w,
        m.led_power_w + m.total_loss_w,
        max_relative = 1e-6
    );
    assert_relative_eq!(
        m.efficiency,
        m.led_power_w / m.input_power_w,
        max_relative = 1e-12
    );
}

// ---------------------------------------------------------------------------
// Post-processed part losses with part data present, each against its
// closed form per edge: linear-ramp transition ½·V·I·t, gate Q_g·V_feed·f,
// output and junction capacitance ½·C·V²·f, recovery Q_rr·V_R·f,
// quiescent V_feed·I_q (Erickson & Maksimovic, 3rd ed., ch. 4, switching
// loss; the capacitance energy ½·C·V² of a charged capacitor).

fn with_part_data(mut s: Scenario) -> Scenario {
    let sw = &mut s.parts.switch;
    sw.rise_time_s = 20e-9;
    sw.fall_time_s = 35e-9;
    sw.gate_charge_c = 8e-9;
    sw.gate_drive_v = 10.0;
    sw.output_capacitance_f = 150e-12;
    s.parts.diode.reverse_recovery_charge_c = 12e-9;
    s.parts.diode.junction_capacitance_f = 60e-12;
    s.parts.controller.quiescent_current_a = 1.5e-3;
    s.validate().expect("part data validate");
    s
}

#[test]
fn part_losses_in_ccm_edge_by_edge() {
    // CCM: the switch turns on at the valley I_v against V_in + V_f (the
    // diode was conducting, so its recovery sees V_in once it blocks) and
    // off at the peak I_p against V_in + V_f.
    let (v_in, v_out, v_f, l, i_pk, t_off) = (48.0, 12.0, 0.5, 47e-6, 1.0, 2e-6);
    let base = ideal(v_in, v_out, v_f, l, cot(i_pk, t_off, 0.0, 0.0));
    let lossless = run(&base).metrics;
    let m = run(&with_part_data(base)).metrics;
    let di = (v_out + v_f) * t_off / l;
    let (i_p, i_v) = (i_pk, i_pk - di);
    let f = (v_in - v_out) / ((v_in - v_out) * t_off + di * l);
    assert_relative_eq!(m.switching_frequency_hz, f, max_relative = 1e-6);
    let vb = v_in + v_f;
    let l_w = &m.losses_w;
    let tol = 1e-6;
    let want = [
        (
            "transition",
            l_w.switch_transition,
            0.5 * vb * i_v * 20e-9 * f + 0.5 * vb * i_p * 35e-9 * f,
        ),
        ("gate", l_w.switch_gate_drive, 8e-9 * v_in * f),
        (
            "C_oss",
            l_w.switch_output_capacitance,
            0.5 * 150e-12 * vb * vb * f,
        ),
        (
            "C_j",
            l_w.diode_junction_capacitance,
            0.5 * 60e-12 * vb * vb * f,
        ),
        ("recovery", l_w.diode_reverse_recovery, 12e-9 * v_in * f),
        ("quiescent", l_w.controller_quiescent, v_in * 1.5e-3),
    ];
    let mut parts = 0.0;
    for (name, got, want) in want {
        assert_relative_eq!(got, want, max_relative = tol);
        assert!(want > 0.0, "{name}");
        parts += want;
    }
    // The circuit itself is unchanged (the part losses are booked after
    // the run): its figures are the lossless run's.
    assert_relative_eq!(
        m.led_current_avg_a,
        lossless.led_current_avg_a,
        max_relative = 1e-12
    );
    // Total = diode conduction + the part losses; the supply provides them.
    let p_diode = v_f * m.diode_current_avg_a;
    assert_relative_eq!(m.total_loss_w, p_diode + parts, max_relative = tol);
    assert_relative_eq!(
        m.input_power_w,
        v_in * m.input_current_avg_a + parts,
        max_relative = tol
    );
    assert_relative_eq!(
        m.efficiency,
        m.led_power_w / (m.led_power_w + p_diode + parts),
        max_relative = tol
    );
}

#[test]
fn part_losses_in_dcm_have_no_recovery_and_no_turn_on_current() {
    // DCM: the current rests at zero before each turn-on, with the switch
    // node at the string voltage; the switch turns on at zero current
    // against V_in − V_out and no diode is conducting, so there is no
    // recovery charge and no turn-on overlap loss.
    let (v_in, v_out, l, i_pk, t_off) = (36.0, 9.0, 15e-6, 0.5, 3e-6);
    let s = with_part_data(ideal(v_in, v_out, 0.0, l, cot(i_pk, t_off, 0.0, 0.0)));
    let m = run(&s).metrics;
    assert_eq!(m.conduction_mode, ConductionMode::Dcm);
    let t = i_pk * l / (v_in - v_out) + t_off;
    let f = 1.0 / t;
    let vb_on = v_in - v_out;
    let l_w = &m.losses_w;
    assert!(l_w.diode_reverse_recovery.abs() < 1e-12, "{l_w:?}");
    assert_relative_eq!(
        l_w.switch_transition,
        0.5 * v_in * i_pk * 35e-9 * f,
        max_relative = 1e-6
    );
    assert_relative_eq!(
        l_w.switch_output_capacitance,
        0.5 * 150e-12 * vb_on * vb_on * f,
        max_relative = 1e-6
    );
    assert_relative_eq!(
        l_w.diode_junction_capacitance,
        0.5 * 60e-12 * vb_on * vb_on * f,
        max_relative = 1e-6
    );
    assert_relative_eq!(l_w.switch_gate_drive, 8e-9 * v_in * f, max_relative = 1e-6);
}
