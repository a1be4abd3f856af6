//! Real parts: post-processed losses against hand computations, the
//! energy balance with every loss, DC-bias derating, temperatures, the
//! design checks, the alternatives and the LED fit.

use approx::assert_relative_eq;
use chopwave_suite::*;
use sim_core::parts::alternatives::{self, linear_point, resistor_point};
use sim_core::parts::checks::Status;
use sim_core::parts::fit::fit_led;
use sim_core::run::assess::{assess, AssessOptions};
use sim_core::scenario::{
    BiasPoint, Capacitor, ControllerSpec, Core, Dielectric, IntendedMode, LedThermal, Load,
    Scenario, Thermal,
};
use sim_core::units::thermal_voltage_v;
use sim_core::{
    run::drive::simulate,
    run::{EngineKind, RunOptions},
};

fn cot(peak_current_a: f64, off_time_s: f64) -> ControllerSpec {
    ControllerSpec::ConstantOffTime {
        peak_current_a,
        off_time_s,
        delay_s: 0.0,
        min_on_time_s: 0.0,
    }
}

/// The ideal CCM buck with every part-loss datum given.
fn ideal_with_part_losses() -> (Scenario, [f64; 5]) {
    let (v_in, v_out, l, i_pk, t_off) = (24.0, 12.0, 100e-6, 1.0, 2e-6);
    let mut s = ideal_buck(v_in, v_out, l, cot(i_pk, t_off));
    let p = &mut s.parts;
    p.switch.rise_time_s = 20e-9;
    p.switch.fall_time_s = 30e-9;
    p.switch.gate_charge_c = 12e-9;
    p.switch.gate_drive_v = 10.0;
    p.switch.output_capacitance_f = 150e-12;
    p.diode.reverse_recovery_charge_c = 25e-9;
    p.controller.quiescent_current_a = 2e-3;
    p.inductor.core = Some(Core {
        turns: 30,
        area_m2: 20e-6,
        volume_m3: 1.5e-6,
        // Illustrative coefficients for a power ferrite (from memory).
        steinmetz_k: 1.5,
        steinmetz_alpha: 1.4,
        steinmetz_beta: 2.5,
    });
    s.validate().unwrap();
    (s, [v_in, v_out, l, i_pk, t_off])
}

#[test]
fn part_losses_match_hand_computations_and_the_balance_closes() {
    // Volt-second balance (Erickson & Maksimovic, Fundamentals of Power
    // Electronics, 3rd ed., ch. 2): ΔI = V_out·t_off/L, f = (1 − D)/t_off
    // with D = V_out/V_in. With an ideal diode and switch the switch blocks
    // V_in at both edges, takes over the valley current at turn-on and
    // cuts the peak at turn-off. Switching loss by the linear-ramp
    // estimate (ibid., ch. 4): ½·V·I·t per edge.
    let (s, [v_in, v_out, l, i_pk, t_off]) = ideal_with_part_losses();
    let di = v_out * t_off / l;
    let f = (1.0 - v_out / v_in) / t_off;
    let i_valley = i_pk - di;
    let p = &s.parts;
    let transition =
        0.5 * v_in * (i_valley * p.switch.rise_time_s + i_pk * p.switch.fall_time_s) * f;
    // Gate drive fed from the input through the controller's regulator
    // (the default feed): Q_g·V_in·f.
    let gate = 12e-9 * v_in * f;
    let coss = 0.5 * 150e-12 * v_in * v_in * f;
    let recovery = 25e-9 * v_in * f;
    let quiescent = v_in * 2e-3;
    // iGSE (Venkatachalam, Sullivan, Abdallah & Tacca, IEEE COMPEL 2002)
    // on a triangle of ΔB = L·ΔI/(N·A_e) and duty D:
    // P_v = k_i·ΔB^β·f^α·(D^(1−α) + (1−D)^(1−α)),
    // k_i = k/((2π)^(α−1)·2^(β−α)·∫₀^{2π}|cos θ|^α dθ), the integral
    // 2√π·Γ(1.2)/Γ(1.7) at α = 1.4 (Γ values from Python's math.gamma).
    let (k, alpha, beta, d) = (1.5, 1.4, 2.5, v_out / v_in);
    let cos_int =
        2.0 * std::f64::consts::PI.sqrt() * 0.918_168_742_399_760_4 / 0.908_638_732_853_290_7;
    let ki = k / (std::f64::consts::TAU.powf(alpha - 1.0) * 2f64.powf(beta - alpha) * cos_int);
    let db = l * di / (30.0 * 20e-6);
    let core = ki
        * db.powf(beta)
        * f.powf(alpha)
        * (d.powf(1.0 - alpha) + (1.0 - d).powf(1.0 - alpha))
        * 1.5e-6;
    for engine in [EngineKind::Exact, EngineKind::Reference] {
        let r = simulate(
            &s,
            &RunOptions {
                engine,
                ..RunOptions::default()
            },
        )
        .unwrap();
        let w = &r.metrics.losses_w;
        let tol = if engine == EngineKind::Exact {
            1e-6
        } else {
            1e-4
        };
        assert_relative_eq!(w.switch_transition, transition, max_relative = tol);
        assert_relative_eq!(w.switch_gate_drive, gate, max_relative = tol);
        assert_relative_eq!(w.switch_output_capacitance, coss, max_relative = tol);
        assert_relative_eq!(w.diode_reverse_recovery, recovery, max_relative = tol);
        assert_relative_eq!(w.controller_quiescent, quiescent, max_relative = 1e-12);
        assert_relative_eq!(w.inductor_core, core, max_relative = tol);
        // The extra losses are drawn from the supply: input = LED + losses.
        let m = &r.metrics;
        let extra = transition + gate + coss + recovery + quiescent + core;
        assert_relative_eq!(m.input_power_w - m.led_power_w, extra, max_relative = tol);
        assert!(
            m.energy_balance_residual.abs() < 1e-9,
            "{engine:?}: {}",
            m.energy_balance_residual
        );
    }
}

#[test]
fn balance_closes_with_every_loss_on_a_lossy_circuit() {
    // Every conduction loss (source, ESRs, R_on, diode, DCR) plus every part
    // loss, with both capacitors: the energy balance must still close.
    let mut s = lamp_12v_with_output_cap();
    s.input_capacitor = Some(Capacitor {
        capacitance_f: 10e-6,
        esr_ohm: 0.02,
    });
    let (full, _) = ideal_with_part_losses();
    s.parts = full.parts;
    s.parts.input_capacitor.dielectric = Dielectric::X7r;
    s.parts.input_capacitor.voltage_rating_v = Some(25.0);
    s.validate().unwrap();
    let a = assess(&s, &AssessOptions::default()).unwrap();
    let m = &a.result.metrics;
    let l = &m.losses_w;
    for (name, v) in [
        ("transition", l.switch_transition),
        ("gate", l.switch_gate_drive),
        ("coss", l.switch_output_capacitance),
        ("recovery", l.diode_reverse_recovery),
        ("core", l.inductor_core),
        ("quiescent", l.controller_quiescent),
        ("dcr", l.inductor_dcr),
        ("esr in", l.input_capacitor_esr),
        ("esr out", l.output_capacitor_esr),
        ("source", l.source_resistance),
    ] {
        assert!(v > 0.0, "{name} loss missing");
    }
    assert!(
        m.energy_balance_residual.abs() < 1e-9,
        "{}",
        m.energy_balance_residual
    );
}

#[test]
fn dc_bias_derating_reduces_filtering_as_the_reduced_capacitor_would() {
    // A class-2 ceramic at a bias near its rating keeps a fraction of its
    // capacitance (bias curve given as points here, so the expected value
    // is known independently); the LED ripple must be that of a capacitor
    // of the reduced value, and larger than with the nominal one.
    let mut s = lamp_12v_with_output_cap();
    let nominal = s.output_capacitor.as_ref().unwrap().capacitance_f;
    s.parts.output_capacitor.dielectric = Dielectric::X5r;
    s.parts.output_capacitor.voltage_rating_v = Some(10.0);
    s.parts.output_capacitor.bias_curve = vec![
        BiasPoint {
            bias_fraction: 0.0,
            capacitance_fraction: 1.0,
        },
        BiasPoint {
            bias_fraction: 1.0,
            capacitance_fraction: 0.3,
        },
    ];
    s.validate().unwrap();
    let a = assess(&s, &AssessOptions::default()).unwrap();
    assert!(a.converged);
    let cap = a
        .capacitors
        .iter()
        .find(|c| c.part == "output_capacitor")
        .unwrap();
    let v = cap.average_v;
    let expected_fraction = 1.0 - 0.7 * v / 10.0;
    assert_relative_eq!(
        cap.effective_f,
        nominal * expected_fraction,
        max_relative = 2e-3
    );
    let mut reduced = s.clone();
    reduced.parts = Default::default();
    reduced.output_capacitor.as_mut().unwrap().capacitance_f = cap.effective_f;
    let r_reduced = simulate(&reduced, &RunOptions::default()).unwrap();
    let mut plain = s.clone();
    plain.parts = Default::default();
    let r_nominal = simulate(&plain, &RunOptions::default()).unwrap();
    let ripple = a.result.metrics.led_current_ripple_pp_a;
    // The iterated run starts warm, so its LED-curve fit differs within the
    // 1 mV fit tolerance from a cold run's: agreement to 0.5 %.
    assert_relative_eq!(
        ripple,
        r_reduced.metrics.led_current_ripple_pp_a,
        max_relative = 5e-3
    );
    assert!(
        ripple > 1.2 * r_nominal.metrics.led_current_ripple_pp_a,
        "{ripple} vs {}",
        r_nominal.metrics.led_current_ripple_pp_a
    );
}

#[test]
fn temperatures_follow_the_thermal_resistances_and_the_led_settles() {
    let mut s = lamp_12v();
    s.parts.ambient_temperature_c = 40.0;
    s.parts.switch.thermal = Some(Thermal {
        resistance_c_per_w: 120.0,
        max_temperature_c: 150.0,
    });
    s.parts.inductor.thermal = Some(Thermal {
        resistance_c_per_w: 60.0,
        max_temperature_c: 125.0,
    });
    s.parts.led = Some(LedThermal {
        resistance_c_per_w: 40.0,
        max_junction_temperature_c: 135.0,
        forward_voltage_tempco_v_per_k: -2e-3,
        heat_fraction: 0.7,
    });
    s.validate().unwrap();
    let a = assess(&s, &AssessOptions::default()).unwrap();
    assert!(a.converged && a.iterations >= 2, "{}", a.iterations);
    let m = &a.result.metrics;
    let t = |part: &str| a.temperatures.iter().find(|t| t.part == part).unwrap();
    assert_relative_eq!(
        t("switch").temperature_c,
        40.0 + 120.0 * m.losses_w.switch_conduction,
        max_relative = 1e-12
    );
    assert_relative_eq!(
        t("inductor").temperature_c,
        40.0 + 60.0 * m.losses_w.inductor_dcr,
        max_relative = 1e-12
    );
    let count = match s.load {
        Load::LedExponential { count, .. } => f64::from(count),
        _ => unreachable!(),
    };
    let tj = 40.0 + 40.0 * 0.7 * m.led_power_w / count;
    assert!((t("led").temperature_c - tj).abs() < 0.1);
    // The string voltage fell by count·2 mV/K × (T_j − model temperature)
    // against a run at the model temperature (same current: regulated).
    let t_model = match s.load {
        Load::LedExponential {
            junction_temperature_c,
            ..
        } => junction_temperature_c,
        _ => unreachable!(),
    };
    let cold = simulate(&s, &RunOptions::default()).unwrap();
    let expected_shift = count * -2e-3 * (tj - t_model);
    let shift = m.led_voltage_avg_v - cold.metrics.led_voltage_avg_v;
    assert!(
        (shift - expected_shift).abs() < 0.02 * expected_shift.abs() + 1e-3,
        "{shift} vs {expected_shift}"
    );
}

/// A healthy design with every check's data, generous ratings.
fn healthy() -> Scenario {
    let mut s = lamp_12v_with_output_cap();
    s.input_capacitor = Some(Capacitor {
        capacitance_f: 10e-6,
        esr_ohm: 0.02,
    });
    let p = &mut s.parts;
    p.intended_mode = IntendedMode::Ccm;
    p.current_accuracy_pct = Some(50.0);
    p.switch.voltage_rating_v = Some(60.0);
    p.switch.peak_current_rating_a = Some(10.0);
    p.switch.rms_current_rating_a = Some(5.0);
    p.switch.thermal = Some(Thermal {
        resistance_c_per_w: 20.0,
        max_temperature_c: 150.0,
    });
    p.diode.voltage_rating_v = Some(60.0);
    p.diode.peak_current_rating_a = Some(10.0);
    p.diode.rms_current_rating_a = Some(5.0);
    p.diode.average_current_rating_a = Some(5.0);
    p.inductor.rms_current_rating_a = Some(5.0);
    p.input_capacitor.dielectric = Dielectric::C0g;
    p.input_capacitor.voltage_rating_v = Some(100.0);
    p.input_capacitor.ripple_current_rating_a = Some(5.0);
    p.output_capacitor.dielectric = Dielectric::Polymer;
    p.output_capacitor.voltage_rating_v = Some(50.0);
    p.output_capacitor.ripple_current_rating_a = Some(5.0);
    p.controller.min_frequency_hz = Some(1e3);
    p.controller.max_frequency_hz = Some(5e6);
    p.controller.min_on_time_s = Some(10e-9);
    s.inductor.saturation_current_a = Some(5.0);
    s.validate().unwrap();
    s
}

fn status_of(s: &Scenario, check: &str) -> Status {
    let a = assess(s, &AssessOptions::default()).unwrap();
    a.checks
        .iter()
        .find(|c| c.check == check)
        .unwrap_or_else(|| panic!("no check `{check}` in {:#?}", a.checks))
        .status
}

#[test]
fn every_check_is_quiet_on_a_healthy_design() {
    let a = assess(&healthy(), &AssessOptions::default()).unwrap();
    assert!(a.checks.len() >= 18, "{}", a.checks.len());
    for c in &a.checks {
        assert_eq!(c.status, Status::Ok, "{c:?}");
    }
}

#[test]
fn every_check_fires_on_a_design_built_to_trip_it() {
    type Trip = fn(&mut Scenario);
    let cases: &[(&str, Trip, Status)] = &[
        (
            "inductor peak current vs saturation current",
            |s| s.inductor.saturation_current_a = Some(0.5),
            Status::Fail,
        ),
        (
            "inductor start-up peak vs saturation current",
            |s| s.inductor.saturation_current_a = Some(0.805),
            Status::Fail,
        ),
        (
            "diode average current vs rating",
            |s| s.parts.diode.average_current_rating_a = Some(0.1),
            Status::Fail,
        ),
        (
            "LED current regulation over the input range",
            |s| s.parts.current_accuracy_pct = Some(1e-3),
            Status::Fail,
        ),
        (
            "design runs at the low end of the input range",
            |s| {
                if let Some(r) = s.supply.input_range_v.as_mut() {
                    r.min_v = 8.0;
                }
            },
            Status::Fail,
        ),
        (
            "inductor RMS current vs rating",
            |s| s.parts.inductor.rms_current_rating_a = Some(0.3),
            Status::Fail,
        ),
        (
            "switch blocking voltage vs rating",
            |s| s.parts.switch.voltage_rating_v = Some(12.0),
            Status::Fail,
        ),
        (
            "switch peak current vs rating",
            |s| s.parts.switch.peak_current_rating_a = Some(0.5),
            Status::Fail,
        ),
        (
            "switch RMS current vs rating",
            |s| s.parts.switch.rms_current_rating_a = Some(0.1),
            Status::Fail,
        ),
        (
            "diode reverse voltage vs rating",
            |s| s.parts.diode.voltage_rating_v = Some(11.0),
            Status::Fail,
        ),
        (
            "diode peak current vs rating",
            |s| s.parts.diode.peak_current_rating_a = Some(0.5),
            Status::Fail,
        ),
        (
            "diode RMS current vs rating",
            |s| s.parts.diode.rms_current_rating_a = Some(0.1),
            Status::Fail,
        ),
        (
            "input capacitor peak voltage vs rating",
            |s| s.parts.input_capacitor.voltage_rating_v = Some(10.0),
            Status::Fail,
        ),
        (
            // 12 V on a 20 V tantalum: within the rating, above the 50 % rule.
            "input capacitor peak voltage vs rating",
            |s| {
                s.parts.input_capacitor.dielectric = Dielectric::Tantalum;
                s.parts.input_capacitor.voltage_rating_v = Some(20.0);
            },
            Status::Warn,
        ),
        (
            "output capacitor RMS ripple current vs rating",
            |s| s.parts.output_capacitor.ripple_current_rating_a = Some(1e-3),
            Status::Fail,
        ),
        (
            "output capacitor capacitance left under DC bias",
            |s| {
                s.parts.output_capacitor.dielectric = Dielectric::Y5v;
                s.parts.output_capacitor.voltage_rating_v = Some(16.0);
            },
            Status::Warn,
        ),
        (
            "switch temperature vs maximum",
            |s| {
                s.parts.switch.thermal = Some(Thermal {
                    resistance_c_per_w: 2000.0,
                    max_temperature_c: 100.0,
                })
            },
            Status::Fail,
        ),
        (
            "switch too hot to touch",
            |s| {
                s.parts.switch.thermal = Some(Thermal {
                    resistance_c_per_w: 1000.0,
                    max_temperature_c: 175.0,
                })
            },
            Status::Warn,
        ),
        (
            "CCM intended: inductor valley over average",
            |s| {
                s.controller = ControllerSpec::ConstantOffTime {
                    peak_current_a: 0.8,
                    off_time_s: 20e-6,
                    delay_s: 0.0,
                    min_on_time_s: 0.0,
                };
                s.output_capacitor = None;
            },
            Status::Fail,
        ),
        (
            "switching frequency vs controller minimum",
            |s| s.parts.controller.min_frequency_hz = Some(2e6),
            Status::Fail,
        ),
        (
            "switching frequency vs controller maximum",
            |s| s.parts.controller.max_frequency_hz = Some(1e4),
            Status::Fail,
        ),
        (
            "switching frequency above the audible band",
            |s| {
                s.controller = ControllerSpec::ConstantOffTime {
                    peak_current_a: 0.8,
                    off_time_s: 60e-6,
                    delay_s: 0.0,
                    min_on_time_s: 0.0,
                };
                s.inductor.inductance_h = 2e-3;
            },
            Status::Warn,
        ),
        (
            "on-time vs controller minimum",
            |s| s.parts.controller.min_on_time_s = Some(50e-6),
            Status::Fail,
        ),
        (
            "LED current deviation from target",
            |s| {
                s.parts.led_current_target_a = Some(0.35);
                s.parts.current_accuracy_pct = Some(5.0);
            },
            Status::Fail,
        ),
    ];
    for (check, trip, want) in cases {
        let mut s = healthy();
        trip(&mut s);
        s.validate().unwrap();
        assert_eq!(status_of(&s, check), *want, "{check}");
    }
}

#[test]
fn linear_regulator_efficiency_is_the_voltage_ratio() {
    // Common practice: a linear regulator passes the LED current from the
    // supply, so η = V_LED/V_in and the pass element drops the rest.
    let s = lamp_12v();
    for v in [10.0, 12.0, 16.0] {
        let p = linear_point(&s, 0.35, 1.0, v);
        let v_led = s.load_voltage_v(0.35);
        assert_relative_eq!(p.led_current_a, 0.35, max_relative = 1e-15);
        assert_relative_eq!(p.efficiency, v_led / v, max_relative = 1e-12);
        assert_relative_eq!(p.dissipation_w, (v - v_led) * 0.35, max_relative = 1e-12);
    }
    // In dropout the current falls: the LEDs get V_in − headroom.
    let v_led = s.load_voltage_v(0.35);
    let p = linear_point(&s, 0.35, 1.0, v_led + 0.5);
    assert!(p.led_current_a < 0.35);
    assert!((s.load_voltage_v(p.led_current_a) - (v_led - 0.5)).abs() < 1e-9);
}

#[test]
fn resistor_ballast_sensitivity_follows_the_dynamic_resistance() {
    // Small-signal: the ballast and the string's dynamic resistance divide
    // a supply change, ΔI = ΔV/(R + r_d). Check against a finite
    // difference of the exact operating point, and that R is sized for the
    // target at the nominal supply.
    let s = lamp_12v();
    let target = 0.35;
    let cmp = alternatives::compare(&s, target, &[10.0, 12.0, 14.0], 1, vec![None, None, None]);
    let r = cmp.resistor_ohm.unwrap();
    let at = |v: f64| resistor_point(&s, r, v).led_current_a;
    assert_relative_eq!(at(12.0), target, max_relative = 1e-9);
    let h = 1e-3;
    let numeric = (at(12.0 + h) - at(12.0 - h)) / (2.0 * h);
    assert_relative_eq!(
        cmp.resistor_sensitivity_a_per_v.unwrap(),
        numeric,
        max_relative = 1e-4
    );
    // And the variation over the range is what the points say.
    let (lo, hi) = (at(10.0), at(14.0));
    let var = cmp.drivers[1].current_variation_pct.unwrap();
    assert_relative_eq!(var, 100.0 * (hi - lo) / target, max_relative = 1e-9);
}

/// Deterministic pseudo-random numbers in [-1, 1) (a 64-bit LCG, seed 0).
struct Lcg(u64);
impl Lcg {
    fn next(&mut self) -> f64 {
        self.0 = self
            .0
            .wrapping_mul(6364136223846793005)
            .wrapping_add(1442695040888963407);
        ((self.0 >> 11) as f64 / (1u64 << 53) as f64) * 2.0 - 1.0
    }
}

fn led_v(is: f64, n: f64, rs: f64, t: f64, i: f64) -> f64 {
    n * thermal_voltage_v(t) * (i / is).ln_1p() + rs * i
}

#[test]
fn led_fit_recovers_known_parameters_and_tempco() {
    // Shockley's equation with a series resistance, Vt = kT/q (CODATA 2018).
    let (is, n, rs, tc) = (5e-19, 2.6, 0.8, -1.8e-3);
    let cur = [0.02, 0.1, 0.35, 0.7, 1.0];
    let pts: Vec<(f64, f64)> = cur
        .iter()
        .map(|&i| (i, led_v(is, n, rs, 25.0, i)))
        .collect();
    let hot: Vec<(f64, f64)> = cur[1..3]
        .iter()
        .map(|&i| (i, led_v(is, n, rs, 25.0, i) + tc * 60.0))
        .collect();
    let f = fit_led(&pts, 25.0, None, &hot, Some(85.0)).unwrap();
    assert_relative_eq!(f.saturation_current_a, is, max_relative = 1e-6);
    assert_relative_eq!(f.emission_coefficient, n, max_relative = 1e-6);
    assert_relative_eq!(f.series_resistance_ohm, rs, max_relative = 1e-6);
    assert_relative_eq!(f.tempco_v_per_k.unwrap(), tc, max_relative = 1e-6);
}

#[test]
fn led_fit_is_well_behaved_with_noisy_points() {
    let (is, n, rs) = (5e-19, 2.6, 0.8);
    let mut rng = Lcg(0);
    let noise = 5e-3;
    let pts: Vec<(f64, f64)> = [0.01, 0.05, 0.1, 0.2, 0.35, 0.5, 0.7, 1.0]
        .iter()
        .map(|&i| (i, led_v(is, n, rs, 25.0, i) + noise * rng.next()))
        .collect();
    let f = fit_led(&pts, 25.0, None, &[], None).unwrap();
    assert!(f.series_resistance_ohm >= 0.0);
    assert!((f.emission_coefficient / n - 1.0).abs() < 0.2, "{f:?}");
    // The fitted curve stays within the noise of the true curve.
    for &(i, _) in &pts {
        let err = f.voltage_v(i) - led_v(is, n, rs, 25.0, i);
        assert!(err.abs() < 2.0 * noise, "{i}: {err}");
    }
    let rms = (f.residuals_v.iter().map(|r| r * r).sum::<f64>() / pts.len() as f64).sqrt();
    assert!(rms <= noise, "{rms}");
    // Points that make a negative Rs fall back to Rs = 0, still a fit.
    let bent: Vec<(f64, f64)> = [0.1_f64, 0.3, 1.0]
        .iter()
        .map(|&i| (i, 2.6 + 0.05 * i.ln() - 0.05 * i))
        .collect();
    let g = fit_led(&bent, 25.0, None, &[], None).unwrap();
    assert!(g.series_resistance_ohm.abs() < 1e-15, "{g:?}");
    assert!(g.residuals_v.iter().all(|r| r.is_finite()));
}

#[test]
fn saturation_grows_the_ripple_and_peak_and_keeps_the_balance() {
    // A soft-saturating inductor (see `lamp_12v_saturating`): with less
    // inductance near the peak the current rises faster, so the comparator
    // delay carries it further past the threshold and the ripple widens;
    // the stored energy ∫ i dψ keeps the balance closed.
    let plain = simulate(&lamp_12v(), &RunOptions::default()).unwrap();
    let mut s = lamp_12v_saturating();
    s.inductor.saturation_current_a = Some(0.8);
    let sat = simulate(&s, &RunOptions::default()).unwrap();
    let (p, m) = (&plain.metrics, &sat.metrics);
    assert!(m.inductor_ripple_pp_a > 1.15 * p.inductor_ripple_pp_a);
    assert!(m.inductor_current_peak_a > p.inductor_current_peak_a);
    assert!(
        m.energy_balance_residual.abs() < 1e-9,
        "{}",
        m.energy_balance_residual
    );
    // The steady-state peak passes the 0.8 A rating: the warning carries
    // the measured peak and the rating.
    assert!(m.inductor_current_peak_a > 0.8);
    assert!(
        sat.warnings.iter().any(|w| matches!(
            w,
            sim_core::parts::advice::Warning::InductorSaturation {
                inductor_peak_a,
                saturation_a,
            } if (inductor_peak_a - m.inductor_current_peak_a).abs() < 1e-12
                && (saturation_a - 0.8).abs() < 1e-12
        )),
        "{:?}",
        sat.warnings
    );
    // The plain lamp peaks below its 1.5 A rating: no such warning.
    assert!(p.inductor_current_peak_a < 1.5);
    assert!(!plain.warnings.iter().any(|w| matches!(
        w,
        sim_core::parts::advice::Warning::InductorSaturation { .. }
    )));
    // The off-state slope by hand at the valley: di/dt = −v/L(i) with the
    // segment's chord L, so the ripple over the fixed off-time is
    // ∫ v dt = Δψ: ψ(peak) − ψ(valley) ≈ V_off·t_off within the LED
    // voltage's variation over the ripple (volt-second balance, Erickson &
    // Maksimovic, 3rd ed., ch. 2, with flux in place of L·i).
    let curve =
        sim_core::devices::InductanceCurve::new(&[(0.0, 68e-6), (0.3, 66e-6), (1.2, 30e-6)]);
    let dpsi =
        curve.flux_wb(m.inductor_current_peak_a) - curve.flux_wb(m.inductor_current_valley_a);
    let v_off = m.led_voltage_avg_v
        + 0.4
        + 0.03 * m.inductor_current_avg_a
        + 0.08 * m.inductor_current_avg_a;
    let t_off = 2e-6;
    assert!(
        (dpsi / (v_off * t_off) - 1.0).abs() < 0.03,
        "{dpsi} vs {}",
        v_off * t_off
    );
}

/// A part estimated above the touch limit (60 °C, common practice) is
/// warned about with its temperature T = T_a + R_th·P, computed here from
/// the run's own loss; a cool part and the LEDs (however hot) are not.
#[test]
fn a_part_too_hot_to_touch_is_warned_with_its_temperature() {
    use sim_core::parts::advice::Warning;
    let mut s = lamp_12v();
    s.parts.ambient_temperature_c = 40.0;
    s.parts.switch.thermal = Some(Thermal {
        resistance_c_per_w: 1000.0,
        max_temperature_c: 175.0,
    });
    s.parts.inductor.thermal = Some(Thermal {
        resistance_c_per_w: 1.0,
        max_temperature_c: 125.0,
    });
    s.parts.led = Some(LedThermal {
        resistance_c_per_w: 200.0,
        max_junction_temperature_c: 150.0,
        forward_voltage_tempco_v_per_k: -2e-3,
        heat_fraction: 0.7,
    });
    s.validate().unwrap();
    let a = assess(&s, &AssessOptions::default()).unwrap();
    let m = &a.result.metrics;
    let t_switch = 40.0 + 1000.0 * m.losses_w.switch_conduction;
    assert!(t_switch > 60.0, "{t_switch}");
    let hot: Vec<_> = a
        .result
        .warnings
        .iter()
        .filter_map(|w| match w {
            Warning::HotPart {
                part,
                temperature_c,
            } => Some((*part, *temperature_c)),
            _ => None,
        })
        .collect();
    assert_eq!(hot.len(), 1, "{:?}", a.result.warnings);
    assert_eq!(hot[0].0, "switch");
    assert_relative_eq!(hot[0].1, t_switch, max_relative = 1e-12);
    // The LEDs run hot too, but they have their own check, not this one.
    let led = a.temperatures.iter().find(|t| t.part == "led").unwrap();
    assert!(led.temperature_c > 60.0, "{}", led.temperature_c);
}
