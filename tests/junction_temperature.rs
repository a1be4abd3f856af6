//! Junction temperature: the saturation current follows the junction law,
//! so the forward voltage of the LEDs and the Shockley diode falls with
//! temperature, by the closed-form coefficient of that law; the engines
//! and the thermal loop use the same model.
//!
//! The closed form (Sze, *Physics of Semiconductor Devices*, the diode
//! saturation current's temperature dependence
//! I_s ∝ T^(XTI/n)·exp(−E_g/(n·k·T))): at a fixed current I ≫ I_s the
//! junction voltage V_j = n·(kT/q)·ln(I/I_s(T)) has
//! dV_j/dT = (V_j − E_g/q − XTI·kT/q)/T; the series resistance drop does
//! not depend on T. Constants: CODATA 2018 k and q, written out here.

use chopwave_suite::*;
use sim_core::devices::ExpDevice;
use sim_core::run::assess::{assess, AssessOptions};
use sim_core::scenario::{ControllerSpec, Diode, LedThermal, Load, Scenario};
use sim_core::{
    run::drive::simulate,
    run::{EngineKind, RunOptions},
};

/// kT/q at `t_k`, V (CODATA 2018: k = 1.380649e-23 J/K, q = 1.602176634e-19 C).
fn vt(t_k: f64) -> f64 {
    1.380_649e-23 * t_k / 1.602_176_634e-19
}

/// Sze's closed form for dV/dT of one junction at current `i`, V/K.
fn sze_tempco(v_junction: f64, eg_ev: f64, xti: f64, t_k: f64) -> f64 {
    (v_junction - eg_ev - xti * vt(t_k)) / t_k
}

fn diode(is0: f64, n: f64, rs: f64, t_c: f64) -> Diode {
    Diode::Shockley {
        saturation_current_a: is0,
        emission_coefficient: n,
        series_resistance_ohm: rs,
        temperature_c: t_c,
        reference_temperature_c: None,
        bandgap_ev: None,
        is_temp_exponent: None,
        forward_voltage_tempco_v_per_k: None,
        tempco_current_a: None,
    }
}

fn leds(count: u32, t_c: f64) -> Load {
    Load::LedExponential {
        count,
        saturation_current_a: 1e-18,
        emission_coefficient: 2.2,
        series_resistance_ohm: 0.3,
        junction_temperature_c: t_c,
        reference_temperature_c: None,
        bandgap_ev: None,
        is_temp_exponent: None,
        forward_voltage_tempco_v_per_k: None,
        tempco_current_a: None,
    }
}

fn diode_v(d: &Diode, i: f64) -> f64 {
    ExpDevice::from_diode(d).unwrap().voltage_v(i)
}

fn set_diode_t(d: &mut Diode, t: f64) {
    if let Diode::Shockley { temperature_c, .. } = d {
        *temperature_c = t;
    }
}

fn set_led_t(l: &mut Load, t: f64) {
    if let Load::LedExponential {
        junction_temperature_c,
        ..
    } = l
    {
        *junction_temperature_c = t;
    }
}

/// Central difference of `v(T)` at `t_c`, V/K.
fn slope(mut v: impl FnMut(f64) -> f64, t_c: f64) -> f64 {
    let h = 0.5;
    (v(t_c + h) - v(t_c - h)) / (2.0 * h)
}

#[test]
fn schottky_defaults_fall_by_sze_coefficient_at_rated_current() {
    // A 1 A Schottky (illustrative Is 5 µA at 25 °C, n 1.05, Rs 30 mΩ),
    // default law: E_g 0.69 eV, XTI 2 (from memory).
    let (is0, n, rs, i) = (5e-6, 1.05, 0.03, 1.0);
    for t_c in [25.0, 75.0, 125.0] {
        let mut d = diode(is0, n, rs, t_c);
        let dv = slope(
            |t| {
                set_diode_t(&mut d, t);
                diode_v(&d, i)
            },
            t_c,
        );
        set_diode_t(&mut d, t_c);
        let t_k = t_c + 273.15;
        let vj = diode_v(&d, i) - rs * i;
        let expect = sze_tempco(vj, 0.69, 2.0, t_k);
        // The closed form takes I ≫ I_s; at 125 °C I_s has grown to about
        // 5 mA (I/I_s ≈ 190), worth about 0.7 % of the coefficient.
        assert!(
            (dv - expect).abs() < 1e-2 * expect.abs(),
            "{t_c} °C: {dv} vs Sze {expect}"
        );
        // Sign and size: a Schottky falls by about 1 to 2 mV/K (from memory).
        assert!((-2.2e-3..-0.8e-3).contains(&dv), "{t_c} °C: {dv} V/K");
    }
    // The example: 25 → 125 °C must lower the forward voltage.
    let cold = diode_v(&diode(is0, n, rs, 25.0), i);
    let hot = diode_v(&diode(is0, n, rs, 125.0), i);
    assert!(hot < cold - 0.08, "{cold} → {hot}");
}

#[test]
fn silicon_law_given_per_device_matches_sze() {
    let mut d = Diode::Shockley {
        saturation_current_a: 1e-12,
        emission_coefficient: 1.0,
        series_resistance_ohm: 0.0,
        temperature_c: 25.0,
        reference_temperature_c: Some(25.0),
        bandgap_ev: Some(1.11),
        is_temp_exponent: Some(3.0),
        forward_voltage_tempco_v_per_k: None,
        tempco_current_a: None,
    };
    let i = 0.1;
    let dv = slope(
        |t| {
            set_diode_t(&mut d, t);
            diode_v(&d, i)
        },
        25.0,
    );
    set_diode_t(&mut d, 25.0);
    let expect = sze_tempco(diode_v(&d, i), 1.11, 3.0, 298.15);
    assert!(
        (dv - expect).abs() < 2e-3 * expect.abs(),
        "{dv} vs {expect}"
    );
    // Silicon near 0.6 V: about −2 mV/K (from memory).
    assert!((-2.5e-3..-1.5e-3).contains(&dv), "{dv}");
}

#[test]
fn led_string_falls_per_device_by_sze_coefficient() {
    // Default LED law: E_g 3.4 eV (GaN), XTI 3 (from memory).
    let i = 0.7;
    let count = 3;
    let mut l = leds(count, 60.0);
    let dv = slope(
        |t| {
            set_led_t(&mut l, t);
            ExpDevice::from_load(&l).unwrap().voltage_v(i)
        },
        60.0,
    );
    set_led_t(&mut l, 60.0);
    let per_led = ExpDevice::from_load(&l).unwrap().voltage_v(i) / f64::from(count);
    let expect = sze_tempco(per_led - 0.3 * i, 3.4, 3.0, 333.15);
    let per_led_dv = dv / f64::from(count);
    assert!(
        (per_led_dv - expect).abs() < 2e-3 * expect.abs(),
        "{per_led_dv} vs Sze {expect}"
    );
    // InGaN LEDs: about −1.5 to −4 mV/K per LED (from memory).
    assert!((-4.5e-3..-1.0e-3).contains(&per_led_dv), "{per_led_dv}");
}

#[test]
fn datasheet_tempco_sets_the_coefficient_at_its_current() {
    // A datasheet's −2.5 mV/K per LED at 350 mA, 25 °C (illustrative): the
    // model derives its band gap so that its own dV/dT there is that value.
    for (tc, i_tc, xti) in [(-2.5e-3, 0.35, None), (-1.6e-3, 1.0, Some(2.0))] {
        let mut l = leds(4, 25.0);
        if let Load::LedExponential {
            forward_voltage_tempco_v_per_k,
            tempco_current_a,
            is_temp_exponent,
            ..
        } = &mut l
        {
            *forward_voltage_tempco_v_per_k = Some(tc);
            *tempco_current_a = Some(i_tc);
            *is_temp_exponent = xti;
        }
        let dv = slope(
            |t| {
                set_led_t(&mut l, t);
                ExpDevice::from_load(&l).unwrap().voltage_v(i_tc)
            },
            25.0,
        ) / 4.0;
        assert!((dv - tc).abs() < 1e-3 * tc.abs(), "{dv} vs {tc}");
    }
}

#[test]
fn a_datasheet_tempco_the_model_cannot_meet_is_refused() {
    let mut s = lamp_12v();
    if let Load::LedExponential {
        forward_voltage_tempco_v_per_k,
        tempco_current_a,
        ..
    } = &mut s.load
    {
        // +40 mV/K: would need a negative band gap.
        *forward_voltage_tempco_v_per_k = Some(0.04);
        *tempco_current_a = Some(0.7);
    }
    let err = s.validate().unwrap_err();
    assert!(
        err.problems()
            .iter()
            .any(|p| p.path == "load.forward_voltage_tempco_v_per_k"),
        "{err}"
    );
}

fn at_junction(mut s: Scenario, t_c: f64) -> Scenario {
    set_led_t(&mut s.load, t_c);
    s
}

#[test]
fn hotter_junction_lowers_the_string_voltage_in_both_engines() {
    // The 12 V lamp (three white LEDs, constant off-time, 0.8 A peak),
    // parameters given at 25 °C.
    let mut base = lamp_12v();
    base.load = leds(3, 25.0);
    let run = |s: &Scenario, engine| {
        simulate(
            s,
            &RunOptions {
                engine,
                ..RunOptions::default()
            },
        )
        .unwrap()
        .metrics
    };
    for engine in [EngineKind::Exact, EngineKind::Reference] {
        let cold = run(&at_junction(base.clone(), 25.0), engine);
        let hot = run(&at_junction(base.clone(), 85.0), engine);
        // Regulated: the current moves little, the voltage falls by about
        // count · dV/dT · ΔT (Sze's coefficient at the average current,
        // between the two temperatures' values).
        let i = cold.led_current_avg_a;
        let l = leds(3, 55.0);
        let v_mid = ExpDevice::from_load(&l).unwrap().voltage_v(i) / 3.0 - 0.3 * i;
        let expect = 3.0 * sze_tempco(v_mid, 3.4, 3.0, 328.15) * 60.0;
        let dv = hot.led_voltage_avg_v - cold.led_voltage_avg_v;
        assert!(dv < 0.0, "{engine:?}: {dv}");
        assert!(
            (dv - expect).abs() < 0.05 * expect.abs(),
            "{engine:?}: {dv} vs {expect}"
        );
    }
    // Both engines agree on the hot string.
    let a = run(&at_junction(base.clone(), 85.0), EngineKind::Exact);
    let b = run(&at_junction(base, 85.0), EngineKind::Reference);
    assert!((a.led_voltage_avg_v - b.led_voltage_avg_v).abs() < 2e-3);
}

#[test]
fn hotter_schottky_lowers_the_diode_loss() {
    let mut s = lamp_12v();
    s.diode = diode(5e-6, 1.05, 0.03, 25.0);
    let loss = |t: f64| {
        let mut s = s.clone();
        set_diode_t(&mut s.diode, t);
        simulate(&s, &RunOptions::default())
            .unwrap()
            .metrics
            .losses_w
            .diode_conduction
    };
    assert!(loss(100.0) < loss(25.0));
}

#[test]
fn thermal_loop_converges_to_a_hotter_lower_voltage_string() {
    // The lamp with an LED thermal path and no coefficient in `parts.led`:
    // the loop runs the exponential model at each new junction
    // temperature and must settle to a self-consistent T_j.
    let mut s = lamp_12v();
    s.load = leds(3, 25.0);
    s.parts.ambient_temperature_c = 25.0;
    s.parts.led = Some(LedThermal {
        resistance_c_per_w: 40.0,
        max_junction_temperature_c: 150.0,
        forward_voltage_tempco_v_per_k: 0.0,
        heat_fraction: 0.7,
    });
    let a = assess(&s, &AssessOptions::default()).unwrap();
    assert!(a.converged, "{} runs", a.iterations);
    assert!(a.iterations >= 2);
    let m = &a.result.metrics;
    let tj = 25.0 + 40.0 * 0.7 * m.led_power_w / 3.0;
    let used = match a.effective.load {
        Load::LedExponential {
            junction_temperature_c,
            ..
        } => junction_temperature_c,
        _ => unreachable!(),
    };
    assert!((used - tj).abs() < 0.1, "{used} vs {tj}");
    assert!(tj > 40.0, "{tj}");
    let cold = simulate(&s, &RunOptions::default()).unwrap().metrics;
    assert!(m.led_voltage_avg_v < cold.led_voltage_avg_v - 0.05);
    // The hysteretic lamp too (a different regulation loop).
    let mut h = lamp_12v_hysteretic();
    h.load = s.load;
    h.parts = s.parts.clone();
    assert!(matches!(h.controller, ControllerSpec::Hysteretic { .. }));
    let a = assess(&h, &AssessOptions::default()).unwrap();
    assert!(a.converged);
}

#[test]
fn a_parts_led_coefficient_the_model_cannot_meet_is_refused() {
    let mut s = lamp_12v();
    s.parts.led = Some(LedThermal {
        resistance_c_per_w: 40.0,
        max_junction_temperature_c: 150.0,
        // +40 mV/K at the 0.7 A target: a negative band gap.
        forward_voltage_tempco_v_per_k: 0.04,
        heat_fraction: 0.7,
    });
    let err = s.validate().unwrap_err();
    assert!(
        err.problems()
            .iter()
            .any(|p| p.path == "parts.led.forward_voltage_tempco_v_per_k"),
        "{err}"
    );
    // A usual coefficient is accepted and sets the loop's law: the
    // effective load has exactly that slope at the target current.
    s.parts.led = Some(LedThermal {
        forward_voltage_tempco_v_per_k: -2e-3,
        ..s.parts.led.unwrap()
    });
    s.load = leds(3, 25.0);
    s.validate().unwrap();
    let target = s.target_current_a().unwrap();
    let mut l = sim_core::parts::thermal::load_with_led_tempco(&s);
    let dv = slope(
        |t| {
            set_led_t(&mut l, t);
            ExpDevice::from_load(&l).unwrap().voltage_v(target)
        },
        25.0,
    ) / 3.0;
    assert!((dv + 2e-3).abs() < 2e-6, "{dv}");
}
