//! The exact engine against published closed forms.

use approx::assert_relative_eq;
use chopwave_suite::*;
use sim_core::exact::propagate::{gramian, transition, WorkCounts};
use sim_core::metrics::ConductionMode;
use sim_core::model::circuit::{Aug, Circuit, Signal};
use sim_core::scenario::{Capacitor, ControllerSpec, Load};
use sim_core::{run::drive::simulate, run::RunOptions};

fn cot(peak_current_a: f64, off_time_s: f64) -> ControllerSpec {
    ControllerSpec::ConstantOffTime {
        peak_current_a,
        off_time_s,
        delay_s: 0.0,
        min_on_time_s: 0.0,
    }
}

#[test]
fn ideal_constant_off_time_in_ccm() {
    // Volt-second balance on the inductor: Erickson & Maksimovic,
    // Fundamentals of Power Electronics, 3rd ed., ch. 2.
    // Off: ΔI = V_out·t_off/L. On: ΔI = (V_in − V_out)·t_on/L, so
    // f = 1/(t_on + t_off) = (1 − V_out/V_in)/t_off; average = I_pk − ΔI/2.
    for &(v_in, v_out, l, i_pk, t_off) in &[
        (24.0, 12.0, 100e-6, 1.0, 2e-6),
        (48.0, 9.3, 47e-6, 0.7, 1.2e-6),
        (14.4, 3.1, 22e-6, 2.5, 3.3e-6),
    ] {
        let s = ideal_buck(v_in, v_out, l, cot(i_pk, t_off));
        let r = simulate(&s, &RunOptions::default()).unwrap();
        let m = &r.metrics;
        let ripple = v_out * t_off / l;
        assert_relative_eq!(m.led_current_ripple_pp_a, ripple, max_relative = 1e-6);
        assert_relative_eq!(
            m.switching_frequency_hz,
            (1.0 - v_out / v_in) / t_off,
            max_relative = 1e-6
        );
        assert_relative_eq!(
            m.led_current_avg_a,
            i_pk - ripple / 2.0,
            max_relative = 1e-6
        );
        assert_relative_eq!(m.duty, v_out / v_in, max_relative = 1e-6);
        assert_eq!(m.conduction_mode, ConductionMode::Ccm);
        assert_relative_eq!(m.efficiency, 1.0, max_relative = 1e-9);
    }
}

#[test]
fn ideal_hysteretic() {
    // Same volt-second balance with the ripple set by the thresholds:
    // f = V_out·(V_in − V_out)/(V_in·L·ΔI).
    // Erickson & Maksimovic, Fundamentals of Power Electronics, 3rd ed., ch. 2.
    for &(v_in, v_out, l, hi, lo) in &[
        (24.0, 12.0, 100e-6, 1.1, 0.9),
        (36.0, 6.2, 33e-6, 0.35, 0.25),
    ] {
        let s = ideal_buck(
            v_in,
            v_out,
            l,
            ControllerSpec::Hysteretic {
                upper_current_a: hi,
                lower_current_a: lo,
                turn_off_delay_s: 0.0,
                turn_on_delay_s: 0.0,
            },
        );
        let m = simulate(&s, &RunOptions::default()).unwrap().metrics;
        let di = hi - lo;
        assert_relative_eq!(
            m.switching_frequency_hz,
            v_out * (v_in - v_out) / (v_in * l * di),
            max_relative = 1e-6
        );
        assert_relative_eq!(m.led_current_avg_a, 0.5 * (hi + lo), max_relative = 1e-6);
        assert_relative_eq!(m.led_current_ripple_pp_a, di, max_relative = 1e-6);
    }
}

#[test]
fn hysteretic_delay_widens_the_ripple() {
    // With delays t_d the current overshoots each threshold by slope·t_d:
    // ripple = ΔI + t_d·(V_in − V_out)/L + t_d·V_out/L (same volt-second argument).
    let (v_in, v_out, l, hi, lo, td) = (24.0, 12.0, 100e-6, 1.1, 0.9, 100e-9);
    let s = ideal_buck(
        v_in,
        v_out,
        l,
        ControllerSpec::Hysteretic {
            upper_current_a: hi,
            lower_current_a: lo,
            turn_off_delay_s: td,
            turn_on_delay_s: td,
        },
    );
    let m = simulate(&s, &RunOptions::default()).unwrap().metrics;
    let ripple = (hi - lo) + td * (v_in - v_out) / l + td * v_out / l;
    assert_relative_eq!(m.led_current_ripple_pp_a, ripple, max_relative = 1e-6);
    assert_relative_eq!(
        m.inductor_current_peak_a,
        hi + td * (v_in - v_out) / l,
        max_relative = 1e-6
    );
}

#[test]
fn ideal_constant_off_time_in_dcm() {
    // When V_out·t_off/L exceeds I_pk the current reaches zero after
    // t_fall = I_pk·L/V_out and rests there; on-time t_on = I_pk·L/(V_in − V_out);
    // average = I_pk·(t_on + t_fall)/2 / (t_on + t_off).
    let (v_in, v_out, l, i_pk, t_off) = (24.0, 12.0, 10e-6, 1.0, 2e-6);
    let s = ideal_buck(v_in, v_out, l, cot(i_pk, t_off));
    let m = simulate(&s, &RunOptions::default()).unwrap().metrics;
    let t_on = i_pk * l / (v_in - v_out);
    let t_fall = i_pk * l / v_out;
    assert_eq!(m.conduction_mode, ConductionMode::Dcm);
    assert_relative_eq!(m.period_s, t_on + t_off, max_relative = 1e-9);
    assert_relative_eq!(m.idle_time_s, t_off - t_fall, max_relative = 1e-6);
    assert_relative_eq!(
        m.led_current_avg_a,
        0.5 * i_pk * (t_on + t_fall) / (t_on + t_off),
        max_relative = 1e-6
    );
}

/// Conversion ratio of an ideal buck in DCM with a resistive load:
/// M = 2 / (1 + sqrt(1 + 4K/D²)), K = 2L/(R·T_s).
/// Erickson & Maksimovic, Fundamentals of Power Electronics, 3rd ed., ch. 5.
fn dcm_ratio(k: f64, d: f64) -> f64 {
    2.0 / (1.0 + (1.0 + 4.0 * k / (d * d)).sqrt())
}

#[test]
fn fixed_duty_dcm_conversion_ratio() {
    // The formula assumes negligible output ripple: the capacitor keeps it
    // under 0.1 % (checked below). Start near the expected output so the
    // 5 ms R·C settles in fewer cycles; steady state is still found exactly.
    let (v_in, r, f, c) = (10.0, 10.0, 100e3, 2000e-6);
    for &(l, d) in &[(10e-6, 0.4), (5e-6, 0.25), (20e-6, 0.5)] {
        let ts = 1.0 / f;
        let k = 2.0 * l / (r * ts);
        assert!(k < 1.0 - d, "case must be DCM");
        let m_expected = dcm_ratio(k, d);
        let s = fixed_duty_resistive(v_in, l, r, c, f, d);
        let opts = RunOptions {
            initial_state: Some([0.0, m_expected * v_in, 0.0]),
            ..RunOptions::default()
        };
        let res = simulate(&s, &opts).unwrap();
        let m = &res.metrics;
        assert_eq!(m.conduction_mode, ConductionMode::Dcm);
        let ratio = m.led_voltage_avg_v / v_in;
        assert_relative_eq!(ratio, m_expected, max_relative = 1e-3);
        let ripple = (m.led_voltage_max_v - m.led_voltage_avg_v) / m.led_voltage_avg_v;
        assert!(
            ripple < 1e-3,
            "output ripple {ripple} too large for the formula"
        );
    }
}

#[test]
fn fixed_duty_ccm_dcm_boundary() {
    // DCM exactly when K = 2L/(R·T_s) < K_crit = 1 − D; in CCM, M = D.
    // Erickson & Maksimovic, Fundamentals of Power Electronics, 3rd ed., ch. 5.
    let (v_in, r, f, c, d) = (10.0, 10.0, 100e3, 2000e-6, 0.4);
    let l_crit = (1.0 - d) * r / (2.0 * f);
    for &(factor, mode) in &[(0.95, ConductionMode::Dcm), (1.05, ConductionMode::Ccm)] {
        let l = l_crit * factor;
        let k = 2.0 * l * f / r;
        let m_expected = if mode == ConductionMode::Dcm {
            dcm_ratio(k, d)
        } else {
            d
        };
        let s = fixed_duty_resistive(v_in, l, r, c, f, d);
        let opts = RunOptions {
            initial_state: Some([0.0, m_expected * v_in, 0.0]),
            ..RunOptions::default()
        };
        let m = simulate(&s, &opts).unwrap().metrics;
        assert_eq!(m.conduction_mode, mode, "L = {factor}·L_crit");
        assert_relative_eq!(m.led_voltage_avg_v / v_in, m_expected, max_relative = 1e-3);
    }
}

#[test]
fn series_rlc_step_response() {
    // Switch held on, LED string never reaching its knee: a series R-L-C
    // driven by a step. Closed-form underdamped response, e.g. Nilsson &
    // Riedel, Electric Circuits, ch. 8:
    // i(t) = V/(L·ωd)·e^{−αt}·sin(ωd t),
    // v_C(t) = V·[1 − e^{−αt}(cos ωd t + (α/ωd) sin ωd t)],
    // with α = R/2L, ωd = sqrt(1/LC − α²). Energy in R:
    // E_R = V·C·v_C − ½L i² − ½C v_C².
    let (v, r, l, c) = (10.0, 1.0, 10e-6, 1e-6);
    let mut s = ideal_buck(
        v,
        0.0,
        l,
        ControllerSpec::FixedDuty {
            frequency_hz: 1e3,
            duty: 0.5,
        },
    );
    s.switch.on_resistance_ohm = r;
    s.output_capacitor = Some(Capacitor {
        capacitance_f: c,
        esr_ohm: 0.0,
    });
    s.load = Load::LedKnee {
        count: 1,
        knee_voltage_v: 1000.0,
        dynamic_resistance_ohm: 1.0,
    };
    // Not validated on purpose: the LEDs never light (that is the point).
    let circuit = Circuit::new(&s);
    let x0 = circuit.power_on_state();
    let region = circuit.region_for(true, &x0);
    assert!(region.conducting && region.led_segment.is_none());
    let lin = circuit.linearize(region);
    let z0 = Aug::new(0.0, 0.0, 0.0, 1.0);
    let alpha = r / (2.0 * l);
    let wd = (1.0 / (l * c) - alpha * alpha).sqrt();
    let mut work = WorkCounts::default();
    for k in 1..=40 {
        let t = k as f64 * 1.7e-6;
        let z = transition(&lin.m, t, &mut work) * z0;
        let e = (-alpha * t).exp();
        let i = v / (l * wd) * e * (wd * t).sin();
        let vc = v * (1.0 - e * ((wd * t).cos() + alpha / wd * (wd * t).sin()));
        let i_peak = v / (l * wd);
        assert!(
            (z[0] - i).abs() <= 1e-9 * i_peak,
            "i at {t}: {} vs {i}",
            z[0]
        );
        assert!((z[1] - vc).abs() <= 1e-9 * v, "v at {t}: {} vs {vc}", z[1]);
        // Energy dissipated in R from the Gramian.
        let (g, _) = gramian(&lin.m, &z0, t, &mut work);
        let irow = lin.row(Signal::SwitchCurrent);
        let e_r = r * (irow * g * irow.transpose())[0];
        let e_expected = v * c * vc - 0.5 * l * i * i - 0.5 * c * vc * vc;
        assert!(
            (e_r - e_expected).abs() <= 1e-9 * 0.5 * c * v * v,
            "E_R at {t}: {e_r} vs {e_expected}"
        );
    }
}

#[test]
fn energy_balance_closes() {
    // Conservation of energy over whole steady-state cycles:
    // input − LED − losses − change in stored energy = 0 to round-off.
    for s in realistic_set() {
        let m = simulate(&s, &RunOptions::default()).unwrap().metrics;
        assert!(
            m.energy_balance_residual.abs() < 1e-6,
            "{}: residual {}",
            s.name,
            m.energy_balance_residual
        );
        assert!(
            m.efficiency > 0.5 && m.efficiency < 1.0,
            "{}: {}",
            s.name,
            m.efficiency
        );
    }
}

#[test]
fn led_current_and_voltage_follow_the_exponential_curve() {
    // With no output capacitor the LED current is the inductor current, and
    // the string voltage must lie on v = N·(n·Vt·ln(1 + i/Is) + Rs·i)
    // (Shockley diode equation, Vt = kT/q from CODATA 2018) within the
    // reported fit error.
    let s = lamp_12v();
    let r = simulate(&s, &RunOptions::default()).unwrap();
    let err = r.fit.led_max_error_v.unwrap();
    assert!(err < 5e-3, "fit error {err} V");
    let w = &r.waveform;
    // Down to the bottom of the range the bound holds over (1 % of the
    // fitted top; below it the tail segment is fitted by its mean).
    let (from_a, _) = r.fit.led_fit_range_a.unwrap();
    let mut worst: f64 = 0.0;
    for row in w.data.rows() {
        let i = row[sim_core::record::COL_ILED];
        if i >= from_a {
            let v_exact = s.load_voltage_v(i);
            worst = worst.max((row[sim_core::record::COL_VLED] - v_exact).abs());
        }
    }
    assert!(
        worst <= err * 1.0001 + 1e-12,
        "sampled error {worst} V above reported {err} V"
    );
}

#[test]
fn event_times_of_a_lossy_buck_to_a_picosecond() {
    // A buck with resistive parts and a knee-plus-resistance LED string, no
    // capacitors: each interval is a first-order R-L circuit, so the
    // current is exponential, i(t) = a + (i0 − a)·e^{−t/τ} with τ = L/R
    // (e.g. Nilsson & Riedel, Electric Circuits, ch. 7). With switch on:
    // a_on = (V_in − V_knee)/R_on-path; off: a_off = −(V_f + V_knee)/R_off-path.
    // Constant off-time from the peak I_pk gives the valley
    // i_v = a_off + (I_pk − a_off)·e^{−t_off/τ_off}, and the on-time is
    // t_on = τ_on·ln((a_on − i_v)/(a_on − I_pk)).
    let (v_in, l, i_pk, t_off) = (24.0, 47e-6, 1.2, 2.5e-6);
    let (r_sw, r_dcr, v_f, r_d, v_knee, r_led) = (0.15, 0.12, 0.45, 0.05, 9.0, 1.1);
    let mut s = ideal_buck(v_in, 0.0, l, cot(i_pk, t_off));
    s.switch.on_resistance_ohm = r_sw;
    s.inductor.dcr_ohm = r_dcr;
    s.diode = sim_core::scenario::Diode::FixedDrop {
        forward_voltage_v: v_f,
        series_resistance_ohm: r_d,
    };
    s.load = Load::LedKnee {
        count: 3,
        knee_voltage_v: v_knee / 3.0,
        dynamic_resistance_ohm: r_led / 3.0,
    };
    let m = simulate(&s, &RunOptions::default()).unwrap().metrics;
    let r_on = r_sw + r_dcr + r_led;
    let r_off = r_d + r_dcr + r_led;
    let (a_on, tau_on) = ((v_in - v_knee) / r_on, l / r_on);
    let (a_off, tau_off) = (-(v_f + v_knee) / r_off, l / r_off);
    let i_v = a_off + (i_pk - a_off) * (-t_off / tau_off).exp();
    let t_on = tau_on * ((a_on - i_v) / (a_on - i_pk)).ln();
    assert!(
        (m.on_time_s - t_on).abs() < 1e-12,
        "on-time {} vs {t_on}",
        m.on_time_s
    );
    assert!(
        (m.period_s - (t_on + t_off)).abs() < 1e-12,
        "period {}",
        m.period_s
    );
    assert_relative_eq!(m.inductor_current_valley_a, i_v, max_relative = 1e-10);
    assert_relative_eq!(m.inductor_current_peak_a, i_pk, max_relative = 1e-12);
}
