//! The scenario: a proposed buck LED driver, as read from a JSON file.
//!
//! A scenario names every part of the driver (supply, input capacitor,
//! switch, freewheel diode, inductor, output capacitor, load, controller)
//! and the simulation settings. Field names carry their SI unit
//! (`inductance_h`, `off_time_s`); values are JSON numbers in SI units or
//! strings in engineering notation (see [`crate::units`]).
//!
//! Loading is two steps: [`Scenario::from_json_str`] reads the structure
//! (stopping at the first syntax or structure error, with its line, column
//! and field path), then [`Scenario::validate`] checks every value and
//! reports **every** problem at once.

use crate::devices::ExpDevice;
use crate::error::{FieldProblem, ScenarioError};
use crate::units::{parse_quantity, Unit};
use serde::de::{self, Deserializer, Visitor};
use serde::{Deserialize, Serialize};
use std::fmt;

/// A complete driver design plus simulation settings.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct Scenario {
    /// Short name, used in titles and file names.
    pub name: String,
    /// Free text: what the design is for, where the values come from.
    #[serde(default)]
    pub description: String,
    /// The DC supply.
    pub supply: Supply,
    /// Capacitor across the supply at the switch (optional).
    #[serde(default)]
    pub input_capacitor: Option<Capacitor>,
    /// The high-side switch.
    pub switch: Switch,
    /// The freewheel diode.
    pub diode: Diode,
    /// The power inductor.
    pub inductor: Inductor,
    /// Capacitor directly across the LED string (optional).
    #[serde(default)]
    pub output_capacitor: Option<Capacitor>,
    /// What the driver feeds.
    pub load: Load,
    /// How the switch is driven.
    pub controller: ControllerSpec,
    /// Engine settings.
    #[serde(default)]
    pub simulation: SimSettings,
    /// Part tolerances for spread studies (optional; see
    /// [`crate::study::spread`]).
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub tolerances: Option<crate::study::spread::Tolerances>,
    /// Acceptance limits for spread studies (optional).
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub spec: Option<crate::study::spread::SpecLimits>,
}

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
    },
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

/// Engine settings.
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
#[serde(default, deny_unknown_fields)]
pub struct SimSettings {
    /// Steady state is declared when the projected remaining change of the
    /// cycle-start state, scaled per state, is below this.
    #[serde(deserialize_with = "de_ratio")]
    pub steady_state_tolerance: f64,
    /// Give up after this many switching cycles.
    pub max_cycles: u64,
    /// Give up after this much simulated time, s.
    #[serde(deserialize_with = "de_s")]
    pub max_time_s: f64,
    /// Steady-state cycles recorded and measured.
    pub record_cycles: u32,
    /// Also record the start-up transient from power-on.
    pub record_startup: bool,
    /// Most straight segments used for an exponential LED or diode curve.
    pub curve_segments: u32,
    /// Largest voltage error allowed between the straight-segment fit and
    /// the exponential curve over the currents visited, V.
    #[serde(deserialize_with = "de_v")]
    pub curve_tolerance_v: f64,
    /// Waveform samples recorded inside each interval between events.
    pub samples_per_interval: u32,
    /// Longest time one switch state may last before the run stops, s.
    #[serde(deserialize_with = "de_s")]
    pub max_interval_s: f64,
}

impl Default for SimSettings {
    fn default() -> Self {
        SimSettings {
            steady_state_tolerance: 1e-9,
            max_cycles: 200_000,
            max_time_s: 10.0,
            record_cycles: 4,
            record_startup: false,
            curve_segments: 24,
            curve_tolerance_v: 1e-3,
            samples_per_interval: 24,
            max_interval_s: 10e-3,
        }
    }
}

fn default_temp_c() -> f64 {
    25.0
}

// ---------------------------------------------------------------------------
// Numbers in engineering notation.

struct QuantityVisitor(Unit);

impl<'de> Visitor<'de> for QuantityVisitor {
    type Value = f64;
    fn expecting(&self, f: &mut fmt::Formatter) -> fmt::Result {
        write!(
            f,
            "a number in {} or engineering-notation text such as \"4.7u\"",
            self.0.symbol()
        )
    }
    fn visit_f64<E: de::Error>(self, v: f64) -> Result<f64, E> {
        Ok(v)
    }
    fn visit_i64<E: de::Error>(self, v: i64) -> Result<f64, E> {
        Ok(v as f64)
    }
    fn visit_u64<E: de::Error>(self, v: u64) -> Result<f64, E> {
        Ok(v as f64)
    }
    fn visit_str<E: de::Error>(self, v: &str) -> Result<f64, E> {
        parse_quantity(v, self.0).map_err(E::custom)
    }
}

fn de_quantity<'de, D: Deserializer<'de>>(d: D, unit: Unit) -> Result<f64, D::Error> {
    d.deserialize_any(QuantityVisitor(unit))
}

macro_rules! unit_de {
    ($name:ident, $opt:ident, $unit:expr) => {
        fn $name<'de, D: Deserializer<'de>>(d: D) -> Result<f64, D::Error> {
            de_quantity(d, $unit)
        }
        #[allow(dead_code)] // Not every unit has an optional field.
        fn $opt<'de, D: Deserializer<'de>>(d: D) -> Result<Option<f64>, D::Error> {
            de_quantity(d, $unit).map(Some)
        }
    };
}
unit_de!(de_v, de_opt_v, Unit::Volt);
unit_de!(de_a, de_opt_a, Unit::Ampere);
unit_de!(de_ohm, de_opt_ohm, Unit::Ohm);
unit_de!(de_h, de_opt_h, Unit::Henry);
unit_de!(de_f, de_opt_f, Unit::Farad);
unit_de!(de_s, de_opt_s, Unit::Second);
unit_de!(de_hz, de_opt_hz, Unit::Hertz);
unit_de!(de_c, de_opt_c, Unit::Celsius);
unit_de!(de_ratio, de_opt_ratio, Unit::Ratio);

// ---------------------------------------------------------------------------
// Loading.

impl Scenario {
    /// Reads and validates a scenario from JSON text.
    pub fn from_json_str(text: &str) -> Result<Scenario, ScenarioError> {
        Scenario::from_text(text)
    }

    /// Reads and validates a scenario from JSON text after applying
    /// `PATH=VALUE` overrides (see [`apply_override`]).
    pub fn from_json_str_with_overrides(
        text: &str,
        overrides: &[(String, String)],
    ) -> Result<Scenario, ScenarioError> {
        let mut value: serde_json::Value = serde_json::from_str(text).map_err(|e| syntax(e, ""))?;
        for (path, v) in overrides {
            apply_override(&mut value, path, v)?;
        }
        if overrides.is_empty() {
            return Scenario::from_text(text);
        }
        // Lines and columns then refer to the overridden scenario.
        Scenario::from_text(&serde_json::to_string_pretty(&value).unwrap_or_default())
    }

    fn from_text(text: &str) -> Result<Scenario, ScenarioError> {
        // serde_path_to_error adds the field path to line and column.
        let de = &mut serde_json::Deserializer::from_str(text);
        let scenario: Scenario = serde_path_to_error::deserialize(de).map_err(|e| {
            let mut path = e.path().to_string();
            let inner = e.into_inner();
            // Tagged parts (diode, load, controller) are read as a whole, so
            // the path stops at the part: find the field inside it.
            if let Ok(root) = serde_json::from_str::<serde_json::Value>(text) {
                if let Some(field) = root
                    .get(&path)
                    .and_then(|v| field_in(v, &inner.to_string()))
                {
                    path = format!("{path}.{field}");
                }
            }
            syntax(inner, &path)
        })?;
        scenario.validate()?;
        Ok(scenario)
    }

    /// Checks every value and every relation between values; returns all
    /// problems found, each with its field path, value and reason.
    pub fn validate(&self) -> Result<(), ScenarioError> {
        let mut c = Checker::default();
        let s = self;
        if s.name.trim().is_empty() {
            c.push("name", "\"\"", "must not be empty");
        }
        c.range("supply.voltage_v", s.supply.voltage_v, 1e-3, 2000.0, "V");
        c.range(
            "supply.source_resistance_ohm",
            s.supply.source_resistance_ohm,
            0.0,
            1e4,
            "Ω",
        );
        if let Some(r) = s.supply.input_range_v {
            c.range("supply.input_range_v.min_v", r.min_v, 1e-3, 2000.0, "V");
            c.range("supply.input_range_v.max_v", r.max_v, 1e-3, 2000.0, "V");
            if r.min_v > r.max_v {
                c.push(
                    "supply.input_range_v",
                    &format!("{} .. {}", r.min_v, r.max_v),
                    "min_v is above max_v",
                );
            }
        }
        if let Some(cap) = s.input_capacitor {
            c.capacitor("input_capacitor", cap);
        }
        c.range(
            "switch.on_resistance_ohm",
            s.switch.on_resistance_ohm,
            0.0,
            1e3,
            "Ω",
        );
        match s.diode {
            Diode::FixedDrop {
                forward_voltage_v,
                series_resistance_ohm,
            } => {
                c.range("diode.forward_voltage_v", forward_voltage_v, 0.0, 50.0, "V");
                c.range(
                    "diode.series_resistance_ohm",
                    series_resistance_ohm,
                    0.0,
                    1e3,
                    "Ω",
                );
            }
            Diode::Shockley {
                saturation_current_a,
                emission_coefficient,
                series_resistance_ohm,
                temperature_c,
            } => {
                c.range(
                    "diode.saturation_current_a",
                    saturation_current_a,
                    1e-30,
                    1.0,
                    "A",
                );
                c.range(
                    "diode.emission_coefficient",
                    emission_coefficient,
                    0.5,
                    10.0,
                    "",
                );
                c.range(
                    "diode.series_resistance_ohm",
                    series_resistance_ohm,
                    0.0,
                    1e3,
                    "Ω",
                );
                c.range("diode.temperature_c", temperature_c, -60.0, 250.0, "°C");
            }
        }
        c.range(
            "inductor.inductance_h",
            s.inductor.inductance_h,
            1e-9,
            10.0,
            "H",
        );
        c.range("inductor.dcr_ohm", s.inductor.dcr_ohm, 0.0, 1e3, "Ω");
        if let Some(isat) = s.inductor.saturation_current_a {
            c.range("inductor.saturation_current_a", isat, 1e-6, 1e4, "A");
        }
        if let Some(cap) = s.output_capacitor {
            c.capacitor("output_capacitor", cap);
        }
        match s.load {
            Load::LedExponential {
                count,
                saturation_current_a,
                emission_coefficient,
                series_resistance_ohm,
                junction_temperature_c,
            } => {
                c.count("load.count", count);
                c.range(
                    "load.saturation_current_a",
                    saturation_current_a,
                    1e-45,
                    1e-3,
                    "A",
                );
                c.range(
                    "load.emission_coefficient",
                    emission_coefficient,
                    0.5,
                    20.0,
                    "",
                );
                c.range(
                    "load.series_resistance_ohm",
                    series_resistance_ohm,
                    0.0,
                    1e3,
                    "Ω",
                );
                c.range(
                    "load.junction_temperature_c",
                    junction_temperature_c,
                    -60.0,
                    250.0,
                    "°C",
                );
            }
            Load::LedKnee {
                count,
                knee_voltage_v,
                dynamic_resistance_ohm,
            } => {
                c.count("load.count", count);
                c.range("load.knee_voltage_v", knee_voltage_v, 0.0, 1000.0, "V");
                c.range(
                    "load.dynamic_resistance_ohm",
                    dynamic_resistance_ohm,
                    0.0,
                    1e4,
                    "Ω",
                );
                if let Some(cap) = s.output_capacitor {
                    if dynamic_resistance_ohm == 0.0 && cap.esr_ohm == 0.0 {
                        c.push(
                            "output_capacitor.esr_ohm",
                            "0",
                            "an output capacitor with zero ESR across a zero-resistance LED string \
                             would carry unbounded current; give the capacitor an ESR or the LEDs \
                             a dynamic resistance",
                        );
                    }
                }
            }
            Load::Resistor { resistance_ohm } => {
                c.range("load.resistance_ohm", resistance_ohm, 1e-3, 1e7, "Ω");
            }
        }
        match s.controller {
            ControllerSpec::ConstantOffTime {
                peak_current_a,
                off_time_s,
                delay_s,
                min_on_time_s,
            } => {
                c.range("controller.peak_current_a", peak_current_a, 1e-6, 1e3, "A");
                c.range("controller.off_time_s", off_time_s, 1e-9, 1.0, "s");
                c.range("controller.delay_s", delay_s, 0.0, 1e-3, "s");
                c.range("controller.min_on_time_s", min_on_time_s, 0.0, 1e-3, "s");
            }
            ControllerSpec::Hysteretic {
                upper_current_a,
                lower_current_a,
                turn_off_delay_s,
                turn_on_delay_s,
            } => {
                c.range(
                    "controller.upper_current_a",
                    upper_current_a,
                    1e-6,
                    1e3,
                    "A",
                );
                c.range(
                    "controller.lower_current_a",
                    lower_current_a,
                    1e-7,
                    1e3,
                    "A",
                );
                if lower_current_a >= upper_current_a {
                    c.push(
                        "controller.lower_current_a",
                        &fmt_num(lower_current_a),
                        &format!(
                            "the lower threshold must be below the upper threshold ({} A)",
                            fmt_num(upper_current_a)
                        ),
                    );
                }
                c.range(
                    "controller.turn_off_delay_s",
                    turn_off_delay_s,
                    0.0,
                    1e-3,
                    "s",
                );
                c.range(
                    "controller.turn_on_delay_s",
                    turn_on_delay_s,
                    0.0,
                    1e-3,
                    "s",
                );
            }
            ControllerSpec::FixedDuty { frequency_hz, duty } => {
                c.range("controller.frequency_hz", frequency_hz, 1.0, 1e8, "Hz");
                if !(duty > 0.0 && duty < 1.0) {
                    c.push(
                        "controller.duty",
                        &fmt_num(duty),
                        "duty cycle must be strictly between 0 and 1",
                    );
                }
            }
        }
        let sim = &s.simulation;
        c.range(
            "simulation.steady_state_tolerance",
            sim.steady_state_tolerance,
            1e-14,
            1e-2,
            "",
        );
        c.int_range("simulation.max_cycles", sim.max_cycles, 1, 100_000_000);
        c.range("simulation.max_time_s", sim.max_time_s, 1e-9, 1e4, "s");
        c.int_range(
            "simulation.record_cycles",
            u64::from(sim.record_cycles),
            1,
            10_000,
        );
        c.int_range(
            "simulation.curve_segments",
            u64::from(sim.curve_segments),
            1,
            crate::devices::MAX_SEGMENTS as u64,
        );
        c.range(
            "simulation.curve_tolerance_v",
            sim.curve_tolerance_v,
            1e-6,
            1.0,
            "V",
        );
        c.int_range(
            "simulation.samples_per_interval",
            u64::from(sim.samples_per_interval),
            1,
            10_000,
        );
        c.range(
            "simulation.max_interval_s",
            sim.max_interval_s,
            1e-9,
            100.0,
            "s",
        );

        // The study objects (tolerances, spec).
        c.problems.extend(crate::study::spread::check(s));
        // Relations that need the individual values to be sound.
        if c.problems.is_empty() {
            s.check_operating_point(&mut c);
        }
        if c.problems.is_empty() {
            Ok(())
        } else {
            Err(ScenarioError::Invalid(c.problems))
        }
    }

    /// The current the controller aims the LEDs at, if it has one, A.
    pub fn target_current_a(&self) -> Option<f64> {
        match self.controller {
            ControllerSpec::ConstantOffTime { peak_current_a, .. } => Some(peak_current_a),
            ControllerSpec::Hysteretic {
                upper_current_a,
                lower_current_a,
                ..
            } => Some(0.5 * (upper_current_a + lower_current_a)),
            ControllerSpec::FixedDuty { .. } => None,
        }
    }

    /// LED string (or load) voltage at a current, V, on the exact curve.
    pub fn load_voltage_v(&self, current_a: f64) -> f64 {
        match self.load {
            Load::LedExponential { .. } => {
                ExpDevice::from_load(&self.load).map_or(0.0, |d| d.voltage_v(current_a))
            }
            Load::LedKnee {
                count,
                knee_voltage_v,
                dynamic_resistance_ohm,
            } => f64::from(count) * (knee_voltage_v + dynamic_resistance_ohm * current_a),
            Load::Resistor { resistance_ohm } => resistance_ohm * current_a,
        }
    }

    fn check_operating_point(&self, c: &mut Checker) {
        let vs = self.supply.voltage_v;
        let Some(target) = self.target_current_a() else {
            return;
        };
        let lit = self.load_voltage_v(0.01 * target);
        if !matches!(self.load, Load::Resistor { .. }) && vs <= lit {
            c.push(
                "supply.voltage_v",
                &fmt_num(vs),
                &format!(
                    "the supply is below the LED string's forward voltage ({} V at 1 % of the \
                     target current): the LEDs never light, and a buck converter cannot raise \
                     the voltage",
                    fmt_num(lit)
                ),
            );
            return;
        }
        // With the switch held on, the current settles where the supply
        // equals the load voltage plus the drop across the series path.
        let r_series = self.supply.source_resistance_ohm
            + self.switch.on_resistance_ohm
            + self.inductor.dcr_ohm;
        let (mut lo, mut hi) = (0.0_f64, 1e6_f64);
        for _ in 0..200 {
            let mid = 0.5 * (lo + hi);
            if self.load_voltage_v(mid) + r_series * mid < vs {
                lo = mid;
            } else {
                hi = mid;
            }
        }
        let i_on = lo;
        let (path, threshold) = match self.controller {
            ControllerSpec::ConstantOffTime { peak_current_a, .. } => {
                ("controller.peak_current_a", peak_current_a)
            }
            ControllerSpec::Hysteretic {
                upper_current_a, ..
            } => ("controller.upper_current_a", upper_current_a),
            ControllerSpec::FixedDuty { .. } => return,
        };
        if i_on <= threshold {
            c.push(
                path,
                &fmt_num(threshold),
                &format!(
                    "the inductor current never reaches this threshold, so the switch never turns \
                     off: with the switch held on it settles at {} A, where the {} V supply equals \
                     the load voltage ({} V) plus the drop across the {} Ω series resistance",
                    fmt_num(i_on),
                    fmt_num(vs),
                    fmt_num(self.load_voltage_v(i_on)),
                    fmt_num(r_series)
                ),
            );
        }
    }
}

/// The field of a tagged part that an error message is about.
fn field_in(part: &serde_json::Value, message: &str) -> Option<String> {
    let obj = part.as_object()?;
    for marker in ["missing field `", "unknown field `"] {
        if let Some(i) = message.find(marker) {
            let rest = &message[i + marker.len()..];
            return rest.find('`').map(|j| rest[..j].to_string());
        }
    }
    if message.contains("unknown variant") {
        return ["kind", "model"]
            .into_iter()
            .find(|k| obj.contains_key(*k))
            .map(str::to_string);
    }
    // The message quotes the offending value in backticks: find the key
    // holding it.
    let quoted: Vec<&str> = message.split('`').skip(1).step_by(2).collect();
    obj.iter().find_map(|(k, v)| {
        let shown = match v {
            serde_json::Value::String(s) => s.clone(),
            other => other.to_string(),
        };
        quoted.contains(&shown.as_str()).then(|| k.clone())
    })
}

fn syntax(e: serde_json::Error, path: &str) -> ScenarioError {
    let message = e.to_string();
    // serde_json appends " at line L column C"; keep the message clean.
    let message = match message.rfind(" at line ") {
        Some(i) => message[..i].to_string(),
        None => message,
    };
    ScenarioError::Syntax {
        path: if path == "." {
            String::new()
        } else {
            path.to_string()
        },
        message,
        line: e.line(),
        column: e.column(),
    }
}

fn fmt_num(v: f64) -> String {
    if v == 0.0 || (1e-3..1e5).contains(&v.abs()) {
        let s = format!("{v:.6}");
        let s = s.trim_end_matches('0').trim_end_matches('.');
        s.to_string()
    } else {
        format!("{v:e}")
    }
}

#[derive(Default)]
struct Checker {
    problems: Vec<FieldProblem>,
}

impl Checker {
    fn push(&mut self, path: &str, value: &str, reason: &str) {
        self.problems.push(FieldProblem {
            path: path.to_string(),
            value: value.to_string(),
            reason: reason.to_string(),
        });
    }

    fn range(&mut self, path: &str, v: f64, lo: f64, hi: f64, unit: &str) {
        let u = if unit.is_empty() {
            String::new()
        } else {
            format!(" {unit}")
        };
        if !v.is_finite() {
            self.push(path, &fmt_num(v), "must be a finite number");
        } else if v < lo || v > hi {
            let why = if lo > 0.0 && v <= 0.0 {
                format!(
                    "must be positive (allowed {}{u} to {}{u})",
                    fmt_num(lo),
                    fmt_num(hi)
                )
            } else if lo == 0.0 && v < 0.0 {
                format!("must not be negative (allowed 0 to {}{u})", fmt_num(hi))
            } else {
                format!(
                    "outside the physical range {}{u} to {}{u}",
                    fmt_num(lo),
                    fmt_num(hi)
                )
            };
            self.push(path, &fmt_num(v), &why);
        }
    }

    fn int_range(&mut self, path: &str, v: u64, lo: u64, hi: u64) {
        if v < lo || v > hi {
            self.push(path, &v.to_string(), &format!("allowed {lo} to {hi}"));
        }
    }

    fn count(&mut self, path: &str, n: u32) {
        self.int_range(path, u64::from(n), 1, 1000);
    }

    fn capacitor(&mut self, prefix: &str, cap: Capacitor) {
        self.range(
            &format!("{prefix}.capacitance_f"),
            cap.capacitance_f,
            1e-12,
            10.0,
            "F",
        );
        self.range(&format!("{prefix}.esr_ohm"), cap.esr_ohm, 0.0, 1e3, "Ω");
    }
}

/// Sets one field of a scenario held as JSON, by dotted path
/// (`supply.voltage_v`, `controller.off_time_s`), to `value`.
///
/// The value is stored as a JSON number when it reads as one, as `true` /
/// `false` / `null` for those words, and as text otherwise (so engineering
/// notation such as `4.7u` is checked by the normal loader). Intermediate
/// objects are created when missing.
pub fn apply_override(
    root: &mut serde_json::Value,
    path: &str,
    value: &str,
) -> Result<(), ScenarioError> {
    let err = |reason: &str| ScenarioError::Override {
        path: path.to_string(),
        reason: reason.to_string(),
    };
    if path.is_empty() || path.split('.').any(str::is_empty) {
        return Err(err(
            "the path must be dotted field names, e.g. supply.voltage_v",
        ));
    }
    let parsed: serde_json::Value = match value.trim() {
        "true" => true.into(),
        "false" => false.into(),
        "null" => serde_json::Value::Null,
        v => match v.parse::<f64>() {
            Ok(x) if x.is_finite() => {
                if x.fract() == 0.0 && x.abs() < 9e15 {
                    serde_json::Value::from(x as i64)
                } else {
                    serde_json::Value::from(x)
                }
            }
            _ => serde_json::Value::String(v.to_string()),
        },
    };
    let mut node = root;
    let parts: Vec<&str> = path.split('.').collect();
    for (k, part) in parts.iter().enumerate() {
        let obj = node
            .as_object_mut()
            .ok_or_else(|| err(&format!("`{}` is not an object", parts[..k].join("."))))?;
        if k + 1 == parts.len() {
            obj.insert((*part).to_string(), parsed);
            return Ok(());
        }
        node = obj
            .entry((*part).to_string())
            .or_insert_with(|| serde_json::Value::Object(Default::default()));
    }
    Ok(())
}

/// A complete, valid example scenario with every field present, for users
/// to copy and edit.
pub fn template() -> Scenario {
    Scenario {
        name: "bench-lamp".into(),
        description:
            "Starter scenario: a 12 V bench lamp driving three white LEDs at about 700 mA. \
                      Values are illustrative; replace them with your parts' data."
                .into(),
        supply: Supply {
            voltage_v: 12.0,
            source_resistance_ohm: 0.05,
            input_range_v: Some(VoltageRange {
                min_v: 10.5,
                max_v: 14.0,
            }),
        },
        input_capacitor: Some(Capacitor {
            capacitance_f: 10e-6,
            esr_ohm: 0.01,
        }),
        switch: Switch {
            on_resistance_ohm: 0.12,
        },
        diode: Diode::FixedDrop {
            forward_voltage_v: 0.4,
            series_resistance_ohm: 0.03,
        },
        inductor: Inductor {
            inductance_h: 68e-6,
            dcr_ohm: 0.08,
            saturation_current_a: Some(1.5),
        },
        output_capacitor: None,
        load: Load::LedExponential {
            count: 3,
            saturation_current_a: 1e-18,
            emission_coefficient: 2.2,
            series_resistance_ohm: 0.35,
            junction_temperature_c: 70.0,
        },
        controller: ControllerSpec::ConstantOffTime {
            peak_current_a: 0.8,
            off_time_s: 2e-6,
            delay_s: 80e-9,
            min_on_time_s: 150e-9,
        },
        simulation: SimSettings::default(),
        tolerances: None,
        spec: None,
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    fn template_json() -> serde_json::Value {
        serde_json::to_value(template()).unwrap()
    }

    #[test]
    fn template_round_trips_and_validates() {
        let text = serde_json::to_string_pretty(&template()).unwrap();
        let s = Scenario::from_json_str(&text).unwrap();
        assert_eq!(s, template());
    }

    #[test]
    fn engineering_notation_in_files() {
        let mut v = template_json();
        v["inductor"]["inductance_h"] = "47uH".into();
        v["controller"]["off_time_s"] = "1.5u".into();
        let s = Scenario::from_json_str(&v.to_string()).unwrap();
        assert!((s.inductor.inductance_h - 47e-6).abs() < 1e-18);
    }

    #[test]
    fn reports_every_problem_with_its_path() {
        let mut v = template_json();
        v["inductor"]["inductance_h"] = (-1e-6).into();
        v["switch"]["on_resistance_ohm"] = (-0.1).into();
        v["simulation"]["record_cycles"] = 0.into();
        let err = Scenario::from_json_str(&v.to_string()).unwrap_err();
        let paths: Vec<String> = err.problems().into_iter().map(|p| p.path).collect();
        assert_eq!(
            paths,
            [
                "switch.on_resistance_ohm",
                "inductor.inductance_h",
                "simulation.record_cycles"
            ]
        );
    }

    #[test]
    fn syntax_errors_name_the_field() {
        let mut v = template_json();
        v["inductor"]["inductance_h"] = "4.7uu".into();
        let err = Scenario::from_json_str(&serde_json::to_string_pretty(&v).unwrap()).unwrap_err();
        match err {
            ScenarioError::Syntax { path, line, .. } => {
                assert_eq!(path, "inductor.inductance_h");
                assert!(line > 1);
            }
            e => panic!("unexpected {e:?}"),
        }
        let mut v = template_json();
        v["inductor"]["inductanse_h"] = 1.0.into();
        let err = Scenario::from_json_str(&v.to_string()).unwrap_err();
        assert!(err.to_string().contains("inductanse_h"), "{err}");
    }

    #[test]
    fn supply_below_led_string_is_explained() {
        let mut v = template_json();
        v["supply"]["voltage_v"] = 5.0.into();
        v["supply"]["input_range_v"] = serde_json::Value::Null;
        let err = Scenario::from_json_str(&v.to_string()).unwrap_err();
        let p = &err.problems()[0];
        assert_eq!(p.path, "supply.voltage_v");
        assert!(p.reason.contains("never light"), "{}", p.reason);
    }

    #[test]
    fn unreachable_peak_is_explained() {
        let mut v = template_json();
        v["controller"]["peak_current_a"] = 50.0.into();
        let err = Scenario::from_json_str(&v.to_string()).unwrap_err();
        let p = &err.problems()[0];
        assert_eq!(p.path, "controller.peak_current_a");
        assert!(p.reason.contains("never turns off"), "{}", p.reason);
    }

    #[test]
    fn hysteretic_thresholds_in_order() {
        let mut v = template_json();
        v["controller"] = serde_json::json!({
            "kind": "hysteretic", "upper_current_a": 0.5, "lower_current_a": 0.7
        });
        let err = Scenario::from_json_str(&v.to_string()).unwrap_err();
        assert_eq!(err.problems()[0].path, "controller.lower_current_a");
    }

    #[test]
    fn overrides_set_nested_fields() {
        let text = serde_json::to_string(&template()).unwrap();
        let s = Scenario::from_json_str_with_overrides(
            &text,
            &[
                ("supply.voltage_v".into(), "13".into()),
                ("inductor.inductance_h".into(), "47u".into()),
            ],
        )
        .unwrap();
        assert!((s.supply.voltage_v - 13.0).abs() < 1e-12);
        assert!((s.inductor.inductance_h - 47e-6).abs() < 1e-18);
    }
}
