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

mod checker;
mod de;
mod diagnose;
mod elements;
mod junctions;
mod load;
mod parts;
mod paths;
mod settings;
mod template;
mod tolerances;
mod validate;
mod validate_parts;

pub use diagnose::unit_of;
pub use elements::{
    Capacitor, ControllerSpec, Diode, Inductor, Load, SensePosition, SenseResistor, Supply, Switch,
    VoltageRange,
};
pub use parts::{
    BiasPoint, CapacitorData, ControllerFeed, ControllerIc, Core, Dielectric, DiodeData,
    InductancePoint, InductorData, IntendedMode, LedThermal, PartData, SwitchData, Thermal,
};
pub use paths::{apply_override, MAX_OVERRIDE_DEPTH};
pub use settings::{JacobianSource, SimSettings, SteadyMethod};
pub use template::{
    engineering_json, engineering_text, template, template_text, template_with_parts,
};
pub use tolerances::{Distribution, LedVoltageTolerance, PartTolerance, SpecLimits, Tolerances};

use crate::devices::ExpDevice;
use serde::{Deserialize, Serialize};

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
    /// The current-sense resistor (optional; absent: none).
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub sense_resistor: Option<SenseResistor>,
    /// How the switch is driven.
    pub controller: ControllerSpec,
    /// Engine settings.
    #[serde(default)]
    pub simulation: SimSettings,
    /// Datasheet data of the real parts: switching and core losses,
    /// ratings, capacitor dielectrics, thermal resistances, controller
    /// limits (all optional; see [`PartData`]).
    #[serde(default, skip_serializing_if = "PartData::is_empty")]
    pub parts: PartData,
    /// Part tolerances for spread studies (optional; see [`Tolerances`]).
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub tolerances: Option<Tolerances>,
    /// Acceptance limits for spread studies (optional).
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub spec: Option<SpecLimits>,
}

impl Scenario {
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

    /// The sense resistor's position and resistance, if there is one. A
    /// position not given follows the controller: in series with the
    /// switch for the constant off-time controller (it senses the peak
    /// switch current), in series with the LED string for the hysteretic
    /// controller (it watches the current continuously) and for fixed duty.
    pub fn sense_position(&self) -> Option<(SensePosition, f64)> {
        let r = self.sense_resistor?;
        let pos = r.position.unwrap_or(match self.controller {
            ControllerSpec::ConstantOffTime { .. } => SensePosition::Switch,
            ControllerSpec::Hysteretic { .. } | ControllerSpec::FixedDuty { .. } => {
                SensePosition::LedString
            }
        });
        Some((pos, r.resistance_ohm))
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
}

#[cfg(test)]
mod tests;

#[cfg(test)]
mod tests_reshape;
