//! The current-sense resistor as a circuit element: it drops voltage,
//! dissipates I_rms²·R, and its loss enters the total and the efficiency.
//!
//! Closed forms (Erickson & Maksimovic, *Fundamentals of Power
//! Electronics*, 3rd ed.): the RMS of a triangular ripple on a DC level,
//! I_rms² = I_avg² + ΔI²/12 (ch. 2 / appendix on RMS values; the switch
//! carries it for the fraction D of the period, I_rms² = D·(I_avg² +
//! ΔI²/12)); the averaged inductor-voltage balance with resistive drops
//! (ch. 3): a buck at duty D into a resistor R with a resistance R_x in
//! the inductor path has I = D·V_in/(R + R_x), with R_x in series with the
//! switch I = D·V_in/(R + D·R_x).

use chopwave_suite::*;
use sim_core::scenario::{ControllerSpec, Scenario, SensePosition, SenseResistor};
use sim_core::{run::drive::simulate, run::RunOptions};

fn sense(mut s: Scenario, r: f64, position: Option<SensePosition>) -> Scenario {
    s.sense_resistor = Some(SenseResistor {
        resistance_ohm: r,
        position,
    });
    s.validate().expect("valid");
    s
}

fn metrics(s: &Scenario) -> sim_core::metrics::Metrics {
    simulate(s, &RunOptions::default()).unwrap().metrics
}

/// The ideal CCM buck (24 V into a 12 V sink, 100 µH, 1 A peak, 2 µs
/// off-time): every loss is the sense resistor's.
fn ideal() -> Scenario {
    ideal_buck(
        24.0,
        12.0,
        100e-6,
        ControllerSpec::ConstantOffTime {
            peak_current_a: 1.0,
            off_time_s: 2e-6,
            delay_s: 0.0,
            min_on_time_s: 0.0,
        },
    )
}

#[test]
fn sense_loss_is_the_triangle_rms_squared_times_r() {
    let r = 0.1;
    for pos in [SensePosition::LedString, SensePosition::Switch] {
        let m = metrics(&sense(ideal(), r, Some(pos)));
        let (i, di) = (m.inductor_current_avg_a, m.inductor_ripple_pp_a);
        let triangle = i * i + di * di / 12.0;
        let expect = match pos {
            SensePosition::LedString => r * triangle,
            SensePosition::Switch => r * m.duty * triangle,
        };
        let got = m.losses_w.current_sense;
        println!("{pos:?}: {got} W vs {expect} W, D {}", m.duty);
        // The current is a triangle to within the curvature of the R-L
        // arcs (τ = L/R = 1 ms against a period of a few µs).
        assert!(
            (got - expect).abs() < 1e-4 * expect,
            "{pos:?}: {got} W vs {expect} W"
        );
        // It is the only loss, it is in the total, and the efficiency
        // and the energy balance account for it.
        assert!((m.total_loss_w - got).abs() < 1e-12 * got.max(1.0));
        assert!((m.input_power_w - m.led_power_w - got).abs() < 1e-8 * m.input_power_w);
        assert!((m.efficiency - m.led_power_w / m.input_power_w).abs() < 1e-12);
        assert!(m.efficiency < 1.0 - 0.5 * got / m.input_power_w);
        assert!(m.energy_balance_residual.abs() < 1e-9);
    }
}

#[test]
fn sense_resistor_drops_voltage_as_the_averaged_balance_says() {
    // Fixed duty 0.4 at 200 kHz from 24 V into 10 Ω with 1 mH (CCM, tiny
    // ripple) and a large output capacitor.
    let (v_in, d, r_load, r_s) = (24.0, 0.4, 10.0, 1.0);
    let base = fixed_duty_resistive(v_in, 1e-3, r_load, 100e-6, 200e3, d);
    let plain = metrics(&base);
    assert!((plain.led_current_avg_a - d * v_in / r_load).abs() < 1e-4);
    let string = metrics(&sense(base.clone(), r_s, Some(SensePosition::LedString)));
    let expect = d * v_in / (r_load + r_s);
    assert!(
        (string.led_current_avg_a - expect).abs() < 2e-4 * expect,
        "{} vs {expect}",
        string.led_current_avg_a
    );
    let switch = metrics(&sense(base, r_s, Some(SensePosition::Switch)));
    let expect = d * v_in / (r_load + d * r_s);
    assert!(
        (switch.led_current_avg_a - expect).abs() < 2e-4 * expect,
        "{} vs {expect}",
        switch.led_current_avg_a
    );
}

#[test]
fn default_position_follows_the_controller_and_absence_changes_nothing() {
    let cot = sense(lamp_12v(), 0.2, None);
    assert_eq!(cot.sense_position(), Some((SensePosition::Switch, 0.2)));
    let hyst = sense(lamp_12v_hysteretic(), 0.2, None);
    assert_eq!(hyst.sense_position(), Some((SensePosition::LedString, 0.2)));
    // A zero-ohm resistor is the same circuit as none.
    let a = metrics(&lamp_12v());
    let b = metrics(&sense(lamp_12v(), 0.0, None));
    assert!((a.led_current_avg_a - b.led_current_avg_a).abs() < 1e-12);
    assert!(b.losses_w.current_sense.abs() < 1e-15);
    // A sense resistor at the switch of the regulating lamp: the peak
    // current still sets the LED current, so it mostly costs efficiency.
    let c = metrics(&cot);
    assert!(c.losses_w.current_sense > 0.0);
    assert!(c.efficiency < a.efficiency);
}

#[test]
fn a_negative_sense_resistance_is_refused() {
    let mut s = lamp_12v();
    s.sense_resistor = Some(SenseResistor {
        resistance_ohm: -0.1,
        position: None,
    });
    let err = s.validate().unwrap_err();
    assert!(err
        .problems()
        .iter()
        .any(|p| p.path == "sense_resistor.resistance_ohm"));
}
