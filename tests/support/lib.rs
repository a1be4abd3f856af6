//! Reference circuits shared by the cross-crate tests and the benchmarks.
//!
//! Each builder returns a validated-shape [`Scenario`] whose part values are
//! illustrative (chosen to exercise one behaviour), not a real product.
#![allow(missing_docs)] // Builders are self-describing test fixtures.

use sim_core::scenario::{
    Capacitor, ControllerSpec, Diode, Inductor, Load, Scenario, SimSettings, Supply, Switch,
};

/// A lossless buck: no source, switch, diode, winding or capacitor
/// resistance, no capacitors, a constant-voltage LED sink of `v_out_v`.
pub fn ideal_buck(
    v_in_v: f64,
    v_out_v: f64,
    inductance_h: f64,
    controller: ControllerSpec,
) -> Scenario {
    Scenario {
        name: "ideal-buck".into(),
        description: "Lossless buck into a constant-voltage sink (textbook check).".into(),
        supply: Supply {
            voltage_v: v_in_v,
            source_resistance_ohm: 0.0,
            input_range_v: None,
        },
        input_capacitor: None,
        switch: Switch {
            on_resistance_ohm: 0.0,
        },
        diode: Diode::FixedDrop {
            forward_voltage_v: 0.0,
            series_resistance_ohm: 0.0,
        },
        inductor: Inductor {
            inductance_h,
            dcr_ohm: 0.0,
            saturation_current_a: None,
        },
        output_capacitor: None,
        load: Load::LedKnee {
            count: 1,
            knee_voltage_v: v_out_v,
            dynamic_resistance_ohm: 0.0,
        },
        controller,
        simulation: SimSettings::default(),
    }
}

/// A lossless fixed-duty buck into a resistor with an output capacitor.
pub fn fixed_duty_resistive(
    v_in_v: f64,
    inductance_h: f64,
    resistance_ohm: f64,
    capacitance_f: f64,
    frequency_hz: f64,
    duty: f64,
) -> Scenario {
    let mut s = ideal_buck(
        v_in_v,
        0.0,
        inductance_h,
        ControllerSpec::FixedDuty { frequency_hz, duty },
    );
    s.name = "fixed-duty-resistive".into();
    s.load = Load::Resistor { resistance_ohm };
    s.output_capacitor = Some(Capacitor {
        capacitance_f,
        esr_ohm: 0.0,
    });
    s
}

/// A realistic 12 V driver for three white LEDs (exponential model), with
/// resistive parts throughout; the base for the cross-checks.
pub fn lamp_12v() -> Scenario {
    let mut s = sim_core::scenario::template();
    s.name = "lamp-12v".into();
    s.inductor.inductance_h = 68e-6;
    s
}

/// [`lamp_12v`] with a ceramic output capacitor across the LEDs.
pub fn lamp_12v_with_output_cap() -> Scenario {
    let mut s = lamp_12v();
    s.name = "lamp-12v-cout".into();
    s.output_capacitor = Some(Capacitor {
        capacitance_f: 2.2e-6,
        esr_ohm: 0.01,
    });
    s
}

/// [`lamp_12v`] with an inductor small enough to fall into DCM.
pub fn lamp_12v_dcm() -> Scenario {
    let mut s = lamp_12v();
    s.name = "lamp-12v-dcm".into();
    s.inductor.inductance_h = 6.8e-6;
    s.controller = ControllerSpec::ConstantOffTime {
        peak_current_a: 0.8,
        off_time_s: 3e-6,
        delay_s: 0.0,
        min_on_time_s: 0.0,
    };
    s
}

/// [`lamp_12v`] under hysteretic control with delays.
pub fn lamp_12v_hysteretic() -> Scenario {
    let mut s = lamp_12v();
    s.name = "lamp-12v-hyst".into();
    s.controller = ControllerSpec::Hysteretic {
        upper_current_a: 0.8,
        lower_current_a: 0.6,
        turn_off_delay_s: 60e-9,
        turn_on_delay_s: 60e-9,
    };
    s
}

/// [`lamp_12v`] with a Shockley freewheel diode.
pub fn lamp_12v_shockley() -> Scenario {
    let mut s = lamp_12v();
    s.name = "lamp-12v-shockley".into();
    s.diode = Diode::Shockley {
        saturation_current_a: 2e-6,
        emission_coefficient: 1.05,
        series_resistance_ohm: 0.04,
        temperature_c: 60.0,
    };
    s
}

/// Every realistic fixture, for sweeping checks.
pub fn realistic_set() -> Vec<Scenario> {
    vec![
        lamp_12v(),
        lamp_12v_with_output_cap(),
        lamp_12v_dcm(),
        lamp_12v_hysteretic(),
        lamp_12v_shockley(),
    ]
}
