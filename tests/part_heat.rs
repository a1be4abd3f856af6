//! Post-processed part losses and temperatures with every part datum
//! present: a design where every switching-edge term is non-zero
//! (transition, gate, output capacitance, junction capacitance, recovery
//! in CCM and none in DCM, core loss, quiescent), each loss against its
//! closed form computed here from the part data and the operating point
//! of the ideal circuit, the total as the sum of its parts, and each
//! part's temperature as T_ambient + R_th·P with P the heat the loss
//! module documents for that part.
//!
//! Sources: Erickson & Maksimovic, Fundamentals of Power Electronics,
//! 3rd ed., ch. 2 (volt-second balance: the operating point) and ch. 4
//! (switching loss: the linear-ramp ½·V·I·t per edge, the capacitance
//! energy ½·C·V² lost per turn-on, the recovery charge Q_rr·V per
//! turn-on of a conducting diode, gate charge Q_g·V per cycle); the iGSE
//! (Venkatachalam, Sullivan, Abdallah & Tacca, IEEE COMPEL 2002) on a
//! triangular flux, with α = 2 so its integral is elementary:
//! ∫₀^{2π} cos²θ dθ = π; and the one-resistance thermal estimate
//! T = T_a + R_th·P documented by `sim_core::parts::thermal`.

use approx::assert_relative_eq;
use chopwave_suite::*;
use sim_core::metrics::ConductionMode;
use sim_core::run::assess::{assess, AssessOptions, Assessment};
use sim_core::scenario::{ControllerSpec, Core, Diode, LedThermal, Load, Scenario, Thermal};

// Part data (illustrative values, not from any datasheet).
const T_R: f64 = 18e-9;
const T_F: f64 = 31e-9;
const Q_G: f64 = 9e-9;
const C_OSS: f64 = 140e-12;
const C_J: f64 = 55e-12;
const Q_RR: f64 = 14e-9;
const I_Q: f64 = 1.2e-3;
const TURNS: u32 = 25;
const AREA_M2: f64 = 18e-6;
const VOLUME_M3: f64 = 1.2e-6;
const K: f64 = 0.9;
const ALPHA: f64 = 2.0;
const BETA: f64 = 2.6;
const AMBIENT_C: f64 = 35.0;
// Different thermal resistances per part, so heat booked to the wrong
// part shows.
const R_SWITCH: f64 = 61.0;
const R_DIODE: f64 = 83.0;
const R_INDUCTOR: f64 = 47.0;
const R_LED: f64 = 23.0;
const HEAT_FRACTION: f64 = 0.7;
const LEDS: u32 = 3;

/// The ideal constant off-time buck (straight segments) with a
/// fixed-drop diode and a string of three knee LEDs, with every part
/// datum and a thermal path for the switch, diode, inductor and LEDs.
fn design(v_in: f64, v_out: f64, v_f: f64, l: f64, i_pk: f64, t_off: f64) -> Scenario {
    let mut s = ideal_buck(
        v_in,
        v_out,
        l,
        ControllerSpec::ConstantOffTime {
            peak_current_a: i_pk,
            off_time_s: t_off,
            delay_s: 0.0,
            min_on_time_s: 0.0,
        },
    );
    s.load = Load::LedKnee {
        count: LEDS,
        knee_voltage_v: v_out / f64::from(LEDS),
        dynamic_resistance_ohm: 0.0,
    };
    s.diode = Diode::FixedDrop {
        forward_voltage_v: v_f,
        series_resistance_ohm: 0.0,
    };
    let p = &mut s.parts;
    p.ambient_temperature_c = AMBIENT_C;
    p.switch.rise_time_s = T_R;
    p.switch.fall_time_s = T_F;
    p.switch.gate_charge_c = Q_G;
    p.switch.gate_drive_v = 10.0;
    p.switch.output_capacitance_f = C_OSS;
    p.diode.reverse_recovery_charge_c = Q_RR;
    p.diode.junction_capacitance_f = C_J;
    p.controller.quiescent_current_a = I_Q;
    p.inductor.core = Some(Core {
        turns: TURNS,
        area_m2: AREA_M2,
        volume_m3: VOLUME_M3,
        steinmetz_k: K,
        steinmetz_alpha: ALPHA,
        steinmetz_beta: BETA,
    });
    let path = |r: f64| {
        Some(Thermal {
            resistance_c_per_w: r,
            max_temperature_c: 150.0,
        })
    };
    p.switch.thermal = path(R_SWITCH);
    p.diode.thermal = path(R_DIODE);
    p.inductor.thermal = path(R_INDUCTOR);
    p.led = Some(LedThermal {
        resistance_c_per_w: R_LED,
        max_junction_temperature_c: 125.0,
        forward_voltage_tempco_v_per_k: 0.0,
        heat_fraction: HEAT_FRACTION,
    });
    s.validate().expect("design validates");
    s
}

/// The iGSE of a triangular flux density of peak-to-peak ΔB rising for a
/// fraction D of the period, W: P_v = k_i·ΔB^β·f^α·(D^(1−α) + (1−D)^(1−α))
/// (from P_v = (1/T)∫ k_i·|dB/dt|^α·ΔB^(β−α) dt with the two constant
/// slopes), k_i = k/((2π)^(α−1)·2^(β−α)·∫₀^{2π}|cos θ|^α dθ), at α = 2
/// the integral is π.
fn core_loss_w(db: f64, f: f64, d: f64) -> f64 {
    assert!((ALPHA - 2.0).abs() < 1e-15);
    let ki = K
        / (std::f64::consts::TAU.powf(ALPHA - 1.0)
            * 2f64.powf(BETA - ALPHA)
            * std::f64::consts::PI);
    ki * db.powf(BETA)
        * f.powf(ALPHA)
        * (d.powf(1.0 - ALPHA) + (1.0 - d).powf(1.0 - ALPHA))
        * VOLUME_M3
}

/// What the edges of one cycle see, from the ideal circuit, and its
/// core loss.
struct Edges {
    f: f64,
    /// Current and blocked voltage at turn-on.
    i_on: f64,
    v_on: f64,
    /// Current and blocked voltage at turn-off.
    i_off: f64,
    v_off: f64,
    /// The diode's reverse voltage after a turn-on that cut it off
    /// (None: it had stopped, DCM).
    v_recovery: Option<f64>,
    diode_avg: f64,
    core_w: f64,
}

fn check(a: &Assessment, e: &Edges, v_in: f64, v_f: f64) {
    let m = &a.result.metrics;
    let tol = 1e-6;
    assert_relative_eq!(m.switching_frequency_hz, e.f, max_relative = tol);
    let f = e.f;
    let transition = 0.5 * e.v_on * e.i_on * T_R * f + 0.5 * e.v_off * e.i_off * T_F * f;
    let gate = Q_G * v_in * f;
    let coss = 0.5 * C_OSS * e.v_on * e.v_on * f;
    let cj = 0.5 * C_J * e.v_on * e.v_on * f;
    let recovery = e.v_recovery.map_or(0.0, |v| Q_RR * v * f);
    let quiescent = v_in * I_Q;
    let core = e.core_w;
    let diode = v_f * e.diode_avg;
    let w = &m.losses_w;
    for (name, got, want) in [
        ("switch_transition", w.switch_transition, transition),
        ("switch_gate_drive", w.switch_gate_drive, gate),
        (
            "switch_output_capacitance",
            w.switch_output_capacitance,
            coss,
        ),
        (
            "diode_junction_capacitance",
            w.diode_junction_capacitance,
            cj,
        ),
        ("controller_quiescent", w.controller_quiescent, quiescent),
        ("inductor_core", w.inductor_core, core),
        ("diode_conduction", w.diode_conduction, diode),
    ] {
        assert!(want > 0.0, "{name}");
        assert_relative_eq!(got, want, max_relative = tol);
    }
    match e.v_recovery {
        Some(_) => assert_relative_eq!(w.diode_reverse_recovery, recovery, max_relative = tol),
        None => assert!(w.diode_reverse_recovery.abs() < 1e-15, "{w:?}"),
    }
    // Nothing else dissipates in this circuit: the total is the sum of
    // the closed forms, and every other entry (read by name from the
    // serialised losses, so a new entry is not missed) is zero.
    let parts = transition + gate + coss + cj + recovery + quiescent + core;
    assert_relative_eq!(m.total_loss_w, parts + diode, max_relative = tol);
    let known = [
        "switch_transition",
        "switch_gate_drive",
        "switch_output_capacitance",
        "diode_junction_capacitance",
        "diode_reverse_recovery",
        "controller_quiescent",
        "inductor_core",
        "diode_conduction",
    ];
    let entries = serde_json::to_value(m.losses_w).unwrap();
    for (name, v) in entries.as_object().unwrap() {
        if !known.contains(&name.as_str()) {
            assert!(v.as_f64().unwrap().abs() < 1e-12, "{name} = {v}");
        }
    }
    // The post-processed losses are drawn from the supply.
    assert_relative_eq!(
        m.input_power_w - m.led_power_w,
        parts + diode,
        max_relative = tol
    );
    // Temperatures: the switch heats with its transition, C_oss and the
    // diode's C_j it charges (not the gate drive: that heats the driver),
    // the diode with conduction and recovery, the inductor with its core.
    let heat = [
        ("switch", transition + coss + cj, R_SWITCH),
        ("diode", diode + recovery, R_DIODE),
        ("inductor", core, R_INDUCTOR),
    ];
    for (part, p, r) in heat {
        let t = a
            .temperatures
            .iter()
            .find(|t| t.part == part)
            .unwrap_or_else(|| panic!("no temperature for {part}"));
        assert_relative_eq!(t.dissipation_w, p, max_relative = tol);
        assert_relative_eq!(t.temperature_c, AMBIENT_C + r * p, max_relative = tol);
        let row = a
            .checks
            .iter()
            .find(|c| c.check == format!("{part} temperature vs maximum"))
            .unwrap();
        assert_relative_eq!(row.value, AMBIENT_C + r * p, max_relative = tol);
    }
    // The LED junction: T_a + R_th·h·P_LED/count, P_LED = V_out·I_avg.
    let led = a.temperatures.iter().find(|t| t.part == "led").unwrap();
    let p_led = m.led_voltage_avg_v * m.led_current_avg_a;
    assert_relative_eq!(
        led.temperature_c,
        AMBIENT_C + R_LED * HEAT_FRACTION * p_led / f64::from(LEDS),
        max_relative = tol
    );
    assert_eq!(a.temperatures.len(), 4);
}

/// ΔB of the flux density for an inductor current ripple, T:
/// L·ΔI/(N·A_e).
fn flux_swing_t(l: f64, ripple: f64) -> f64 {
    l * ripple / (f64::from(TURNS) * AREA_M2)
}

#[test]
fn every_edge_loss_and_temperature_in_ccm() {
    // CCM: ΔI = (V_out + V_F)·t_off/L, t_on = ΔI·L/(V_in − V_out). The
    // switch takes over the valley current from the diode against
    // V_in + V_F (it cuts off the diode, whose recovery then sees V_in)
    // and cuts the peak, after which it blocks V_in + V_F again.
    let (v_in, v_out, v_f, l, i_pk, t_off) = (48.0, 12.0, 0.45, 56e-6, 1.2, 1.8e-6);
    let s = design(v_in, v_out, v_f, l, i_pk, t_off);
    let a = assess(&s, &AssessOptions::default()).unwrap();
    assert_eq!(a.result.metrics.conduction_mode, ConductionMode::Ccm);
    let di = (v_out + v_f) * t_off / l;
    let t_on = di * l / (v_in - v_out);
    let period = t_on + t_off;
    let e = Edges {
        f: 1.0 / period,
        i_on: i_pk - di,
        v_on: v_in + v_f,
        i_off: i_pk,
        v_off: v_in + v_f,
        v_recovery: Some(v_in),
        diode_avg: (i_pk - di / 2.0) * t_off / period,
        core_w: core_loss_w(flux_swing_t(l, di), 1.0 / period, t_on / period),
    };
    check(&a, &e, v_in, v_f);
}

#[test]
fn every_edge_loss_and_temperature_in_dcm() {
    // DCM: the current rises from zero in t_on = I_pk·L/(V_in − V_out),
    // falls in t_fall = I_pk·L/(V_out + V_F) and rests for the rest of
    // t_off, the switch node at the string voltage: the switch turns on at
    // zero current against V_in − V_out and no diode is conducting (no
    // recovery). The flux rests too (dB/dt = 0 adds nothing to the iGSE
    // integral), so the core loss is that of a triangle of duty
    // t_on/(t_on + t_fall) at frequency 1/(t_on + t_fall), times the busy
    // fraction (t_on + t_fall)/T.
    let (v_in, v_out, v_f, l, i_pk, t_off) = (36.0, 9.0, 0.4, 12e-6, 0.6, 3e-6);
    let s = design(v_in, v_out, v_f, l, i_pk, t_off);
    let a = assess(&s, &AssessOptions::default()).unwrap();
    assert_eq!(a.result.metrics.conduction_mode, ConductionMode::Dcm);
    let t_on = i_pk * l / (v_in - v_out);
    let t_fall = i_pk * l / (v_out + v_f);
    assert!(t_fall < t_off);
    let period = t_on + t_off;
    let busy = t_on + t_fall;
    let e = Edges {
        f: 1.0 / period,
        i_on: 0.0,
        v_on: v_in - v_out,
        i_off: i_pk,
        v_off: v_in + v_f,
        v_recovery: None,
        diode_avg: i_pk / 2.0 * t_fall / period,
        core_w: core_loss_w(flux_swing_t(l, i_pk), 1.0 / busy, t_on / busy) * busy / period,
    };
    check(&a, &e, v_in, v_f);
}
