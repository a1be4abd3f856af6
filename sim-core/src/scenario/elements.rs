//! The circuit's elements as a scenario file names them: supply, capacitors,
//! switch, diode, sense resistor, inductor, load and controller.

use super::de::*;
use serde::{Deserialize, Serialize};

/// The DC supply: an ideal source behind a series resistance.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct Supply {
    /// Open-circuit voltage, V.
    #[serde(deserialize_with = "de_v")]
    pub voltage_v: f64,
    /// Source (wiring, battery, fuse) resistance, ohms; may be 0.
    #[serde(default, deserialize_with = "de_ohm")]
    pub source_resistance_ohm: f64,
    /// The range the supply may take in service, for sweeps.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub input_range_v: Option<VoltageRange>,
}

/// A closed voltage range.
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct VoltageRange {
    /// Lowest value, V.
    #[serde(deserialize_with = "de_v")]
    pub min_v: f64,
    /// Highest value, V.
    #[serde(deserialize_with = "de_v")]
    pub max_v: f64,
}

/// A capacitor with its equivalent series resistance.
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct Capacitor {
    /// Capacitance, F.
    #[serde(deserialize_with = "de_f")]
    pub capacitance_f: f64,
    /// Equivalent series resistance, ohms; may be 0.
    #[serde(default, deserialize_with = "de_ohm")]
    pub esr_ohm: f64,
}

/// The switch, modelled as a resistance while on and open while off.
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct Switch {
    /// On-state resistance, ohms; may be 0.
    #[serde(default, deserialize_with = "de_ohm")]
    pub on_resistance_ohm: f64,
}

/// The freewheel diode.
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
#[serde(tag = "model", rename_all = "snake_case", deny_unknown_fields)]
pub enum Diode {
    /// A fixed forward drop plus a series resistance.
    FixedDrop {
        /// Forward voltage at zero current, V; may be 0 (ideal).
        #[serde(default, deserialize_with = "de_v")]
        forward_voltage_v: f64,
        /// Series resistance, ohms; may be 0.
        #[serde(default, deserialize_with = "de_ohm")]
        series_resistance_ohm: f64,
    },
    /// The Shockley equation with a series resistance:
    /// v = n·Vt·ln(1 + i/Is) + Rs·i.
    Shockley {
        /// Saturation current Is, A.
        #[serde(deserialize_with = "de_a")]
        saturation_current_a: f64,
        /// Emission coefficient n (dimensionless).
        #[serde(deserialize_with = "de_ratio")]
        emission_coefficient: f64,
        /// Series resistance, ohms.
        #[serde(default, deserialize_with = "de_ohm")]
        series_resistance_ohm: f64,
        /// Junction temperature, °C.
        #[serde(default = "default_temp_c", deserialize_with = "de_c")]
        temperature_c: f64,
        /// Temperature at which `saturation_current_a` holds, °C
        /// (default 25 °C, the usual datasheet temperature).
        #[serde(
            default,
            deserialize_with = "de_opt_c",
            skip_serializing_if = "Option::is_none"
        )]
        reference_temperature_c: Option<f64>,
        /// Band-gap energy E_g of the saturation current's temperature law,
        /// eV (default: Schottky 0.69 eV; see [`crate::devices::JunctionLaw`]).
        #[serde(
            default,
            deserialize_with = "de_opt_ratio",
            skip_serializing_if = "Option::is_none"
        )]
        bandgap_ev: Option<f64>,
        /// Temperature exponent XTI of the saturation current (default: Schottky 2).
        #[serde(
            default,
            deserialize_with = "de_opt_ratio",
            skip_serializing_if = "Option::is_none"
        )]
        is_temp_exponent: Option<f64>,
        /// Datasheet forward-voltage temperature coefficient, V/K, at
        /// `tempco_current_a` and the reference temperature: the band gap
        /// is derived from it (instead of `bandgap_ev`).
        #[serde(
            default,
            deserialize_with = "de_opt_v",
            skip_serializing_if = "Option::is_none"
        )]
        forward_voltage_tempco_v_per_k: Option<f64>,
        /// Current at which `forward_voltage_tempco_v_per_k` is stated, A.
        #[serde(
            default,
            deserialize_with = "de_opt_a",
            skip_serializing_if = "Option::is_none"
        )]
        tempco_current_a: Option<f64>,
    },
}

/// A current-sense resistor: a resistance in the power path that drops
/// voltage and dissipates (the sensing itself is ideal: the controller
/// compares the current of its position exactly).
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct SenseResistor {
    /// Resistance, ohms.
    #[serde(deserialize_with = "de_ohm")]
    pub resistance_ohm: f64,
    /// Where it sits (default: [`crate::scenario::Scenario::sense_position`] per controller).
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub position: Option<SensePosition>,
}

/// Where the sense resistor sits.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize, Deserialize)]
#[serde(rename_all = "snake_case")]
pub enum SensePosition {
    /// In series with the LED string, between the inductor and the output
    /// node (ahead of any output capacitor): it carries the inductor
    /// current, the current a hysteretic controller watches; without an
    /// output capacitor that is the LED current.
    LedString,
    /// In series with the switch: it carries the switch current (peak
    /// current sensing of a constant off-time controller).
    Switch,
}

/// The power inductor.
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct Inductor {
    /// Inductance, H.
    #[serde(deserialize_with = "de_h")]
    pub inductance_h: f64,
    /// Winding (DC) resistance, ohms; may be 0.
    #[serde(default, deserialize_with = "de_ohm")]
    pub dcr_ohm: f64,
    /// Rated saturation current, A (for the stress checks).
    #[serde(
        default,
        deserialize_with = "de_opt_a",
        skip_serializing_if = "Option::is_none"
    )]
    pub saturation_current_a: Option<f64>,
}

/// The load the driver feeds.
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
#[serde(tag = "kind", rename_all = "snake_case", deny_unknown_fields)]
pub enum Load {
    /// A string of identical LEDs in series, each following
    /// v = n·Vt·ln(1 + i/Is) + Rs·i at its junction temperature.
    LedExponential {
        /// Number of LEDs in series.
        count: u32,
        /// Per-LED saturation current Is, A.
        #[serde(deserialize_with = "de_a")]
        saturation_current_a: f64,
        /// Per-LED emission coefficient n (dimensionless).
        #[serde(deserialize_with = "de_ratio")]
        emission_coefficient: f64,
        /// Per-LED series resistance, ohms.
        #[serde(default, deserialize_with = "de_ohm")]
        series_resistance_ohm: f64,
        /// Junction temperature, °C.
        #[serde(default = "default_temp_c", deserialize_with = "de_c")]
        junction_temperature_c: f64,
        /// Temperature at which `saturation_current_a` holds, °C
        /// (default 25 °C, the usual datasheet temperature).
        #[serde(
            default,
            deserialize_with = "de_opt_c",
            skip_serializing_if = "Option::is_none"
        )]
        reference_temperature_c: Option<f64>,
        /// Band-gap energy E_g of the saturation current's temperature law,
        /// eV (default: GaN 3.4 eV; see [`crate::devices::JunctionLaw`]).
        #[serde(
            default,
            deserialize_with = "de_opt_ratio",
            skip_serializing_if = "Option::is_none"
        )]
        bandgap_ev: Option<f64>,
        /// Temperature exponent XTI of the saturation current (default: 3).
        #[serde(
            default,
            deserialize_with = "de_opt_ratio",
            skip_serializing_if = "Option::is_none"
        )]
        is_temp_exponent: Option<f64>,
        /// Datasheet forward-voltage temperature coefficient per LED, V/K, at
        /// `tempco_current_a` and the reference temperature: the band gap
        /// is derived from it (instead of `bandgap_ev`).
        #[serde(
            default,
            deserialize_with = "de_opt_v",
            skip_serializing_if = "Option::is_none"
        )]
        forward_voltage_tempco_v_per_k: Option<f64>,
        /// Current at which `forward_voltage_tempco_v_per_k` is stated, A.
        #[serde(
            default,
            deserialize_with = "de_opt_a",
            skip_serializing_if = "Option::is_none"
        )]
        tempco_current_a: Option<f64>,
    },
    /// A string of identical LEDs described by a knee voltage and a
    /// dynamic resistance each: no current below the knee, then
    /// v = V_knee + r·i. A zero resistance is a constant-voltage sink.
    LedKnee {
        /// Number of LEDs in series.
        count: u32,
        /// Per-LED knee voltage, V.
        #[serde(deserialize_with = "de_v")]
        knee_voltage_v: f64,
        /// Per-LED dynamic resistance, ohms; may be 0.
        #[serde(default, deserialize_with = "de_ohm")]
        dynamic_resistance_ohm: f64,
    },
    /// A plain resistor.
    Resistor {
        /// Resistance, ohms.
        #[serde(deserialize_with = "de_ohm")]
        resistance_ohm: f64,
    },
}

/// How the switch is driven.
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
#[serde(tag = "kind", rename_all = "snake_case", deny_unknown_fields)]
pub enum ControllerSpec {
    /// On until the inductor current reaches the peak threshold, then off
    /// for a fixed time.
    ConstantOffTime {
        /// Peak current threshold, A.
        #[serde(deserialize_with = "de_a")]
        peak_current_a: f64,
        /// Off-time, s.
        #[serde(deserialize_with = "de_s")]
        off_time_s: f64,
        /// Comparator-to-switch propagation delay, s.
        #[serde(default, deserialize_with = "de_s")]
        delay_s: f64,
        /// Minimum on-time (blanking), s: the comparator is ignored for
        /// this long after turn-on.
        #[serde(default, deserialize_with = "de_s")]
        min_on_time_s: f64,
    },
    /// On until the upper threshold, off until the lower threshold.
    Hysteretic {
        /// Upper (turn-off) current threshold, A.
        #[serde(deserialize_with = "de_a")]
        upper_current_a: f64,
        /// Lower (turn-on) current threshold, A.
        #[serde(deserialize_with = "de_a")]
        lower_current_a: f64,
        /// Delay from reaching the upper threshold to turn-off, s.
        #[serde(default, deserialize_with = "de_s")]
        turn_off_delay_s: f64,
        /// Delay from reaching the lower threshold to turn-on, s.
        #[serde(default, deserialize_with = "de_s")]
        turn_on_delay_s: f64,
    },
    /// Open loop at a fixed frequency and duty cycle.
    FixedDuty {
        /// Switching frequency, Hz.
        #[serde(deserialize_with = "de_hz")]
        frequency_hz: f64,
        /// Duty cycle, fraction of the period the switch is on (0..1).
        #[serde(deserialize_with = "de_ratio")]
        duty: f64,
    },
}
