//! Reference circuits shared by the cross-crate tests and the benchmarks.
//!
//! Every part value here is **illustrative**: plausible for small LED
//! drivers, chosen to exercise one behaviour each, not taken from any
//! particular product or datasheet.
#![allow(missing_docs)] // Builders are self-describing test fixtures.

pub mod reference_problems;

use std::alloc::{GlobalAlloc, Layout, System};
use std::sync::atomic::{AtomicU64, Ordering};

use sim_core::scenario::{
    template, Capacitor, ControllerSpec, Diode, Inductor, Load, Scenario, SimSettings, Supply,
    Switch,
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
        parts: Default::default(),
        sense_resistor: None,
        tolerances: None,
        spec: None,
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

/// [`lamp_12v_hysteretic`] with the output capacitor of
/// [`lamp_12v_with_output_cap`].
pub fn lamp_12v_hysteretic_with_output_cap() -> Scenario {
    let mut s = lamp_12v_hysteretic();
    s.name = "lamp-12v-hyst-cout".into();
    s.output_capacitor = lamp_12v_with_output_cap().output_capacitor;
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
        reference_temperature_c: None,
        bandgap_ev: None,
        is_temp_exponent: None,
        forward_voltage_tempco_v_per_k: None,
        tempco_current_a: None,
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

// ---------------------------------------------------------------------------
// Fixtures of the exact-vs-reference cross-check.

/// A string of `count` white LEDs on the exponential model (illustrative
/// junction values: Is 1e-18 A, n 2.2, Rs 0.3 Ω, 70 °C junction).
pub fn white_leds(count: u32) -> Load {
    Load::LedExponential {
        count,
        saturation_current_a: 1e-18,
        emission_coefficient: 2.2,
        series_resistance_ohm: 0.3,
        junction_temperature_c: 70.0,
        reference_temperature_c: None,
        bandgap_ev: None,
        is_temp_exponent: None,
        forward_voltage_tempco_v_per_k: None,
        tempco_current_a: None,
    }
}

/// An illustrative small Schottky diode on the Shockley model
/// (Is 5 µA, n 1.05, Rs 30 mΩ, 70 °C).
pub fn schottky() -> Diode {
    Diode::Shockley {
        saturation_current_a: 5e-6,
        emission_coefficient: 1.05,
        series_resistance_ohm: 0.03,
        temperature_c: 70.0,
        reference_temperature_c: None,
        bandgap_ev: None,
        is_temp_exponent: None,
        forward_voltage_tempco_v_per_k: None,
        tempco_current_a: None,
    }
}

/// Checks a built scenario the way a loaded one is checked.
fn validated(s: Scenario) -> Scenario {
    if let Err(e) = s.validate() {
        panic!("reference circuit {} does not validate: {e}", s.name);
    }
    s
}

/// CCM constant off-time with five exponential LEDs from 24 V, no output
/// capacitor, no delays.
pub fn ccm_constant_off_time() -> Scenario {
    let mut s = template();
    s.name = "ccm-cot".into();
    s.supply = Supply {
        voltage_v: 24.0,
        source_resistance_ohm: 0.05,
        input_range_v: None,
    };
    s.switch = Switch {
        on_resistance_ohm: 0.1,
    };
    s.diode = Diode::FixedDrop {
        forward_voltage_v: 0.45,
        series_resistance_ohm: 0.05,
    };
    s.inductor = Inductor {
        inductance_h: 47e-6,
        dcr_ohm: 0.12,
        saturation_current_a: None,
    };
    s.load = white_leds(5);
    s.controller = ControllerSpec::ConstantOffTime {
        peak_current_a: 1.0,
        off_time_s: 1.5e-6,
        delay_s: 0.0,
        min_on_time_s: 0.0,
    };
    validated(s)
}

/// DCM: a small inductor and a long off-time, three exponential LEDs from
/// 12 V; the current rests at zero for most of the off-time.
pub fn dcm_long_off_time() -> Scenario {
    let mut s = template();
    s.name = "dcm-cot".into();
    s.inductor = Inductor {
        inductance_h: 10e-6,
        dcr_ohm: 0.05,
        saturation_current_a: None,
    };
    s.controller = ControllerSpec::ConstantOffTime {
        peak_current_a: 0.9,
        off_time_s: 6e-6,
        delay_s: 0.0,
        min_on_time_s: 0.0,
    };
    validated(s)
}

/// The starter design with a 4.7 µF, 20 mΩ capacitor across the LEDs
/// (constant off-time with the template's delay and minimum on-time).
pub fn with_output_capacitor() -> Scenario {
    let mut s = template();
    s.name = "cot-output-cap".into();
    s.output_capacitor = Some(Capacitor {
        capacitance_f: 4.7e-6,
        esr_ohm: 0.02,
    });
    validated(s)
}

/// Hysteretic control between 0.6 A and 0.8 A with a 100 ns turn-off
/// delay, five exponential LEDs from 24 V.
pub fn hysteretic() -> Scenario {
    let mut s = ccm_constant_off_time();
    s.name = "hysteretic".into();
    s.inductor = Inductor {
        inductance_h: 100e-6,
        dcr_ohm: 0.2,
        saturation_current_a: None,
    };
    s.controller = ControllerSpec::Hysteretic {
        upper_current_a: 0.8,
        lower_current_a: 0.6,
        turn_off_delay_s: 100e-9,
        turn_on_delay_s: 0.0,
    };
    validated(s)
}

/// Constant off-time where the minimum on-time (700 ns) outlasts the
/// natural on-time (about 0.5 µs), plus a 100 ns turn-off delay: the
/// comparator trips at the end of blanking.
pub fn delay_and_min_on_time() -> Scenario {
    let mut s = ccm_constant_off_time();
    s.name = "delay-min-on".into();
    s.inductor = Inductor {
        inductance_h: 22e-6,
        dcr_ohm: 0.06,
        saturation_current_a: None,
    };
    s.load = white_leds(3);
    s.controller = ControllerSpec::ConstantOffTime {
        peak_current_a: 0.8,
        off_time_s: 1e-6,
        delay_s: 100e-9,
        min_on_time_s: 700e-9,
    };
    validated(s)
}

/// The starter design with a Shockley (Schottky) freewheel diode.
pub fn shockley_diode() -> Scenario {
    let mut s = template();
    s.name = "shockley-ccm".into();
    s.diode = schottky();
    validated(s)
}

/// The DCM design with a Shockley diode: with an exponential LED string
/// and no output capacitor the diode current only tends to zero
/// asymptotically in the reference engine (its current floor ends it).
pub fn shockley_diode_dcm() -> Scenario {
    let mut s = dcm_long_off_time();
    s.name = "shockley-dcm".into();
    s.diode = schottky();
    validated(s)
}

/// A linear (knee) LED string with an output capacitor: the piecewise
/// LED current behind the ESR, and at start-up the output node rising
/// through the knee (in steady state the string conducts throughout).
pub fn knee_string_with_output_capacitor() -> Scenario {
    let mut s = ccm_constant_off_time();
    s.name = "knee-output-cap".into();
    s.load = Load::LedKnee {
        count: 5,
        knee_voltage_v: 2.7,
        dynamic_resistance_ohm: 0.4,
    };
    s.output_capacitor = Some(Capacitor {
        capacitance_f: 1e-6,
        esr_ohm: 0.05,
    });
    validated(s)
}

/// An ideal constant off-time buck: ideal source, no input capacitor,
/// lossless switch, diode and inductor, a constant-voltage LED string
/// (`count` × `knee_v`, zero dynamic resistance), no output capacitor.
pub fn ideal_constant_off_time(
    supply_v: f64,
    count: u32,
    knee_v: f64,
    inductance_h: f64,
    peak_a: f64,
    off_time_s: f64,
) -> Scenario {
    let mut s = template();
    s.name = "ideal-cot".into();
    s.supply = Supply {
        voltage_v: supply_v,
        source_resistance_ohm: 0.0,
        input_range_v: None,
    };
    s.input_capacitor = None;
    s.switch = Switch {
        on_resistance_ohm: 0.0,
    };
    s.diode = Diode::FixedDrop {
        forward_voltage_v: 0.0,
        series_resistance_ohm: 0.0,
    };
    s.inductor = Inductor {
        inductance_h,
        dcr_ohm: 0.0,
        saturation_current_a: None,
    };
    s.output_capacitor = None;
    s.load = Load::LedKnee {
        count,
        knee_voltage_v: knee_v,
        dynamic_resistance_ohm: 0.0,
    };
    s.controller = ControllerSpec::ConstantOffTime {
        peak_current_a: peak_a,
        off_time_s,
        delay_s: 0.0,
        min_on_time_s: 0.0,
    };
    validated(s)
}

/// Open-loop fixed duty (200 kHz, 45 %) into a 12 Ω resistor from 24 V
/// with a 2.2 µF output capacitor: the linear-load path of both engines.
pub fn fixed_duty_resistor() -> Scenario {
    let mut s = ccm_constant_off_time();
    s.name = "fixed-duty-resistor".into();
    s.load = Load::Resistor {
        resistance_ohm: 12.0,
    };
    s.output_capacitor = Some(Capacitor {
        capacitance_f: 2.2e-6,
        esr_ohm: 0.03,
    });
    s.controller = ControllerSpec::FixedDuty {
        frequency_hz: 200e3,
        duty: 0.45,
    };
    validated(s)
}

// ---------------------------------------------------------------------------
// Counting allocator for allocation checks (install it with
// `#[global_allocator]` in a binary of its own).

/// Heap allocations (and reallocations) made through [`CountingAlloc`],
/// all threads.
pub static ALLOCATIONS: AtomicU64 = AtomicU64::new(0);

thread_local! {
    /// The same, counted per thread, so a check is not disturbed by the
    /// test harness allocating on its own threads meanwhile.
    static THREAD_ALLOCATIONS: std::cell::Cell<u64> = const { std::cell::Cell::new(0) };
}

fn count_one() {
    ALLOCATIONS.fetch_add(1, Ordering::Relaxed);
    // `try_with`: the slot may already be gone while a thread shuts down.
    let _ = THREAD_ALLOCATIONS.try_with(|c| c.set(c.get() + 1));
}

/// The system allocator, counting every allocation in [`ALLOCATIONS`] and
/// per thread.
pub struct CountingAlloc;

// SAFETY: forwards every call to the system allocator unchanged.
unsafe impl GlobalAlloc for CountingAlloc {
    unsafe fn alloc(&self, layout: Layout) -> *mut u8 {
        count_one();
        unsafe { System.alloc(layout) }
    }
    unsafe fn dealloc(&self, ptr: *mut u8, layout: Layout) {
        unsafe { System.dealloc(ptr, layout) }
    }
    unsafe fn realloc(&self, ptr: *mut u8, layout: Layout, new_size: usize) -> *mut u8 {
        count_one();
        unsafe { System.realloc(ptr, layout, new_size) }
    }
}

/// Allocations made so far by the calling thread.
pub fn allocations() -> u64 {
    THREAD_ALLOCATIONS.with(|c| c.get())
}

/// [`lamp_12v`] with a soft-saturating inductor: 68 µH at zero current,
/// 66 µH at 0.3 A, 30 µH at 1.2 A (an illustrative powder-core-like
/// curve), so the ripple (about 0.5 to 0.85 A) runs on one straight,
/// falling piece of the curve: the reference engine's L(i) is smooth along
/// the steady orbit (a kink inside it makes Dopri5's step control jitter
/// above the steady-state tolerance).
pub fn lamp_12v_saturating() -> Scenario {
    let mut s = lamp_12v();
    s.name = "lamp-12v-saturating".into();
    s.parts.inductor.saturation_curve = [(0.0, 68e-6), (0.3, 66e-6), (1.2, 30e-6)]
        .iter()
        .map(
            |&(current_a, inductance_h)| sim_core::scenario::InductancePoint {
                current_a,
                inductance_h,
            },
        )
        .collect();
    validated(s)
}

/// A slowly settling design for the steady-state solvers: a 24 V constant
/// off-time driver into six knee-model LEDs (0.8 Ω dynamic resistance
/// each) with a 470 µF output capacitor across the string and a 10 µF
/// input capacitor behind 0.1 Ω of supply resistance. The output filter's
/// time constant, C·r_string ≈ 2.3 ms, is over a hundred switching
/// periods (about 17 µs), so cycling from power-on takes thousands of
/// cycles to settle.
pub fn slow_output_filter() -> Scenario {
    let mut s = ccm_constant_off_time();
    s.name = "slow-output-filter".into();
    s.supply = Supply {
        voltage_v: 24.0,
        source_resistance_ohm: 0.1,
        input_range_v: None,
    };
    s.input_capacitor = Some(Capacitor {
        capacitance_f: 10e-6,
        esr_ohm: 0.02,
    });
    s.inductor = Inductor {
        inductance_h: 220e-6,
        dcr_ohm: 0.15,
        saturation_current_a: None,
    };
    s.load = Load::LedKnee {
        count: 6,
        knee_voltage_v: 2.7,
        dynamic_resistance_ohm: 0.8,
    };
    s.output_capacitor = Some(Capacitor {
        capacitance_f: 470e-6,
        esr_ohm: 0.05,
    });
    s.controller = ControllerSpec::ConstantOffTime {
        peak_current_a: 0.75,
        off_time_s: 3e-6,
        delay_s: 0.0,
        min_on_time_s: 0.0,
    };
    validated(s)
}
