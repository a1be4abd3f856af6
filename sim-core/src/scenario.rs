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
    /// Where it sits (default: [`Scenario::sense_position`] per controller).
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
    /// With an output capacitor: largest relative difference allowed
    /// between an LED chord's slope and the exponential curve's own slope
    /// (dynamic resistance) over the chord, where the LED current does not
    /// fall to zero; the LED ripple depends on it.
    #[serde(default = "default_curve_slope_tolerance")]
    pub curve_slope_tolerance: f64,
    /// Waveform samples recorded inside each interval between events.
    pub samples_per_interval: u32,
    /// Longest time one switch state may last before the run stops, s.
    #[serde(deserialize_with = "de_s")]
    pub max_interval_s: f64,
    /// How periodic steady state is found: `shooting` (Newton on the
    /// cycle map, falling back to cycling) or `cycling`.
    pub steady_state_method: crate::shooting::SteadyMethod,
    /// Where shooting's Jacobian comes from: `analytic` or
    /// `finite-difference`.
    pub shooting_jacobian: crate::shooting::JacobianSource,
}

/// Default `simulation.curve_slope_tolerance`: 0.5 %, which keeps an
/// output capacitor's LED ripple within 1e-4 of the exact exponential
/// curve's from 220 nF to 4.7 µF (tests/fit_accuracy.rs).
fn default_curve_slope_tolerance() -> f64 {
    5e-3
}

impl Default for SimSettings {
    fn default() -> Self {
        SimSettings {
            steady_state_tolerance: 1e-9,
            max_cycles: 200_000,
            max_time_s: 10.0,
            record_cycles: 4,
            record_startup: false,
            // Enough segments that the tolerance, not the cap, sets the
            // fit (a DCM string's range down to zero takes 20 to 50).
            curve_segments: crate::devices::MAX_SEGMENTS as u32,
            // 0.5 mV: every figure within 1e-4 of the exact exponential
            // curves on the DCM cross-checks (1 mV left a Schottky
            // diode's conduction loss 1.3e-4 off; see tests/reference.rs).
            curve_tolerance_v: 5e-4,
            curve_slope_tolerance: default_curve_slope_tolerance(),
            samples_per_interval: 24,
            max_interval_s: 10e-3,
            steady_state_method: crate::shooting::SteadyMethod::Shooting,
            shooting_jacobian: crate::shooting::JacobianSource::Analytic,
        }
    }
}

// ---------------------------------------------------------------------------
// Real-part data (the `parts` section). Kept in its own block: every field
// is optional and defaults to "not given", so files without it keep their
// meaning exactly.

/// Datasheet data of the real parts, the ambient and the design intent.
///
/// Everything defaults to "not given": no extra loss, no check. The
/// switching, recovery, core and quiescent losses are computed from the
/// simulated waveforms after each run (see `parts::losses`).
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(default, deny_unknown_fields)]
pub struct PartData {
    /// Ambient air temperature around the parts, °C.
    #[serde(default = "default_temp_c", deserialize_with = "de_c")]
    pub ambient_temperature_c: f64,
    /// The conduction mode the design is meant to run in.
    pub intended_mode: IntendedMode,
    /// Allowed deviation of the average LED current from its target, %
    /// (None: no accuracy check).
    #[serde(
        deserialize_with = "de_opt_ratio",
        skip_serializing_if = "Option::is_none"
    )]
    pub current_accuracy_pct: Option<f64>,
    /// The average LED current the design is meant to deliver, A, for the
    /// accuracy check (None: the controller's target).
    #[serde(deserialize_with = "de_opt_a", skip_serializing_if = "Option::is_none")]
    pub led_current_target_a: Option<f64>,
    /// Switch transition, gate and output-capacitance data, ratings.
    pub switch: SwitchData,
    /// Diode recovery data and ratings.
    pub diode: DiodeData,
    /// Inductor core and ratings.
    pub inductor: InductorData,
    /// Input capacitor dielectric and ratings.
    pub input_capacitor: CapacitorData,
    /// Output capacitor dielectric and ratings.
    pub output_capacitor: CapacitorData,
    /// LED string thermal data.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub led: Option<LedThermal>,
    /// Controller IC data: quiescent current and its allowed ranges.
    pub controller: ControllerIc,
}

impl Default for PartData {
    fn default() -> Self {
        PartData {
            ambient_temperature_c: default_temp_c(),
            intended_mode: IntendedMode::Either,
            current_accuracy_pct: None,
            led_current_target_a: None,
            switch: SwitchData::default(),
            diode: DiodeData::default(),
            inductor: InductorData::default(),
            input_capacitor: CapacitorData::default(),
            output_capacitor: CapacitorData::default(),
            led: None,
            controller: ControllerIc::default(),
        }
    }
}

impl PartData {
    /// True when nothing is given (the section is then left out of files).
    pub fn is_empty(&self) -> bool {
        *self == PartData::default()
    }
}

/// The conduction mode a design is meant to run in.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default, Serialize, Deserialize)]
#[serde(rename_all = "snake_case")]
pub enum IntendedMode {
    /// No intent stated: no conduction-mode check.
    #[default]
    Either,
    /// Continuous conduction intended: DCM or the boundary is flagged.
    Ccm,
    /// Discontinuous conduction intended: CCM is flagged.
    Dcm,
}

/// A part's thermal path: resistance to ambient and the highest allowed
/// temperature.
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct Thermal {
    /// Thermal resistance from the part (junction or hot spot) to
    /// ambient, °C/W (K/W).
    #[serde(deserialize_with = "de_ratio")]
    pub resistance_c_per_w: f64,
    /// Highest allowed temperature, °C.
    #[serde(deserialize_with = "de_c")]
    pub max_temperature_c: f64,
}

/// Switch data beyond its on-resistance.
#[derive(Debug, Clone, Copy, PartialEq, Default, Serialize, Deserialize)]
#[serde(default, deny_unknown_fields)]
pub struct SwitchData {
    /// Current rise time at turn-on, s.
    #[serde(deserialize_with = "de_s")]
    pub rise_time_s: f64,
    /// Current fall time at turn-off, s.
    #[serde(deserialize_with = "de_s")]
    pub fall_time_s: f64,
    /// Total gate charge at the drive voltage, C.
    #[serde(deserialize_with = "de_coulomb")]
    pub gate_charge_c: f64,
    /// Gate drive voltage, V.
    #[serde(deserialize_with = "de_v")]
    pub gate_drive_v: f64,
    /// Output capacitance (drain-source), F.
    #[serde(deserialize_with = "de_f")]
    pub output_capacitance_f: f64,
    /// Rated blocking voltage, V.
    #[serde(deserialize_with = "de_opt_v", skip_serializing_if = "Option::is_none")]
    pub voltage_rating_v: Option<f64>,
    /// Rated peak (pulsed) current, A.
    #[serde(deserialize_with = "de_opt_a", skip_serializing_if = "Option::is_none")]
    pub peak_current_rating_a: Option<f64>,
    /// Rated continuous (RMS) current, A.
    #[serde(deserialize_with = "de_opt_a", skip_serializing_if = "Option::is_none")]
    pub rms_current_rating_a: Option<f64>,
    /// Thermal path.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub thermal: Option<Thermal>,
}

/// Diode data beyond its forward curve.
#[derive(Debug, Clone, Copy, PartialEq, Default, Serialize, Deserialize)]
#[serde(default, deny_unknown_fields)]
pub struct DiodeData {
    /// Reverse-recovery charge, C (0 for a Schottky diode).
    #[serde(deserialize_with = "de_coulomb")]
    pub reverse_recovery_charge_c: f64,
    /// Rated repetitive reverse voltage, V.
    #[serde(deserialize_with = "de_opt_v", skip_serializing_if = "Option::is_none")]
    pub voltage_rating_v: Option<f64>,
    /// Rated repetitive peak forward current, A.
    #[serde(deserialize_with = "de_opt_a", skip_serializing_if = "Option::is_none")]
    pub peak_current_rating_a: Option<f64>,
    /// Rated RMS forward current, A (optional: diodes are rated by their
    /// average current, `average_current_rating_a`).
    #[serde(deserialize_with = "de_opt_a", skip_serializing_if = "Option::is_none")]
    pub rms_current_rating_a: Option<f64>,
    /// Thermal path.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub thermal: Option<Thermal>,
    /// Rated average forward current I_F(AV), A: the figure a diode
    /// datasheet rates its forward current by.
    #[serde(deserialize_with = "de_opt_a", skip_serializing_if = "Option::is_none")]
    pub average_current_rating_a: Option<f64>,
    /// Junction capacitance C_j (taken as constant), F: charged by each
    /// turn-on of the switch, ½·C_j·ΔV² lost per turn-on (0: not given).
    #[serde(deserialize_with = "de_f", skip_serializing_if = "capacitance_unset")]
    pub junction_capacitance_f: f64,
}

fn capacitance_unset(v: &f64) -> bool {
    *v == 0.0
}

/// Where the controller IC and its gate driver take their power from.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default, Serialize, Deserialize)]
#[serde(rename_all = "snake_case")]
pub enum ControllerFeed {
    /// From the converter's input through the controller's own regulator:
    /// gate charge and quiescent current are drawn at the supply voltage
    /// (Q_g·V_in·f and V_in·I_q).
    #[default]
    Input,
    /// From a separate rail at the gate-drive voltage
    /// (`parts.switch.gate_drive_v`): Q_g·V_drive·f and V_drive·I_q.
    SeparateRail,
}

impl ControllerFeed {
    fn is_input(&self) -> bool {
        *self == ControllerFeed::Input
    }
}

/// Inductor core, saturation curve and ratings.
#[derive(Debug, Clone, PartialEq, Default, Serialize, Deserialize)]
#[serde(default, deny_unknown_fields)]
pub struct InductorData {
    /// Incremental inductance versus current from the part's data (2 to 8
    /// points, currents rising from 0 or above): when given it replaces
    /// `inductor.inductance_h`, straight lines between the points, held
    /// beyond them. Both engines simulate it (see `devices::InductanceCurve`).
    #[serde(skip_serializing_if = "Vec::is_empty")]
    pub saturation_curve: Vec<InductancePoint>,
    /// The core, for the Steinmetz core loss.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub core: Option<Core>,
    /// Rated RMS (heating) current, A.
    #[serde(deserialize_with = "de_opt_a", skip_serializing_if = "Option::is_none")]
    pub rms_current_rating_a: Option<f64>,
    /// Thermal path.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub thermal: Option<Thermal>,
}

/// One point of an inductance-versus-current curve.
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct InductancePoint {
    /// Inductor current, A.
    #[serde(deserialize_with = "de_a")]
    pub current_a: f64,
    /// Incremental inductance there, H.
    #[serde(deserialize_with = "de_h")]
    pub inductance_h: f64,
}

/// An inductor core: geometry, turns and the material's Steinmetz
/// coefficients, P_v = k·f^α·B̂^β (W/m³ with f in Hz and B̂ in T).
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct Core {
    /// Number of turns.
    pub turns: u32,
    /// Effective core cross-section A_e, m².
    #[serde(deserialize_with = "de_ratio")]
    pub area_m2: f64,
    /// Effective core volume V_e, m³.
    #[serde(deserialize_with = "de_ratio")]
    pub volume_m3: f64,
    /// Steinmetz k, W/m³ at f = 1 Hz and B̂ = 1 T.
    #[serde(deserialize_with = "de_ratio")]
    pub steinmetz_k: f64,
    /// Steinmetz frequency exponent α.
    #[serde(deserialize_with = "de_ratio")]
    pub steinmetz_alpha: f64,
    /// Steinmetz flux exponent β.
    #[serde(deserialize_with = "de_ratio")]
    pub steinmetz_beta: f64,
}

/// Capacitor dielectric classes (EIA codes for ceramics).
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default, Serialize, Deserialize)]
#[serde(rename_all = "snake_case")]
pub enum Dielectric {
    /// Not stated: capacitance as given, no class-specific derating.
    #[default]
    Unspecified,
    /// Class 1 ceramic, C0G (NP0): no DC-bias loss.
    C0g,
    /// Class 2 ceramic, X7R.
    X7r,
    /// Class 2 ceramic, X5R.
    X5r,
    /// Class 2 ceramic, Y5V.
    Y5v,
    /// Aluminium electrolytic.
    AluminiumElectrolytic,
    /// Solid tantalum (MnO₂).
    Tantalum,
    /// Conductive-polymer (aluminium or tantalum).
    Polymer,
}

impl Dielectric {
    /// True for the ceramic classes.
    pub fn is_ceramic(self) -> bool {
        matches!(
            self,
            Dielectric::C0g | Dielectric::X7r | Dielectric::X5r | Dielectric::Y5v
        )
    }
}

/// One point of a capacitance-versus-DC-bias curve.
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct BiasPoint {
    /// DC bias as a fraction of the rated voltage (0..1.5).
    #[serde(deserialize_with = "de_ratio")]
    pub bias_fraction: f64,
    /// Remaining capacitance as a fraction of the nominal (0..1).
    #[serde(deserialize_with = "de_ratio")]
    pub capacitance_fraction: f64,
}

/// A capacitor's dielectric, tolerance and ratings.
#[derive(Debug, Clone, PartialEq, Default, Serialize, Deserialize)]
#[serde(default, deny_unknown_fields)]
pub struct CapacitorData {
    /// Dielectric class.
    pub dielectric: Dielectric,
    /// Capacitance tolerance, ± % (reported as the low end).
    #[serde(deserialize_with = "de_ratio")]
    pub tolerance_pct: f64,
    /// Rated DC voltage, V (needed for the DC-bias curve and the voltage check).
    #[serde(deserialize_with = "de_opt_v", skip_serializing_if = "Option::is_none")]
    pub voltage_rating_v: Option<f64>,
    /// Rated RMS ripple current, A.
    #[serde(deserialize_with = "de_opt_a", skip_serializing_if = "Option::is_none")]
    pub ripple_current_rating_a: Option<f64>,
    /// The part's own capacitance-versus-bias curve (replaces the class's
    /// typical curve), points in rising bias.
    #[serde(skip_serializing_if = "Vec::is_empty")]
    pub bias_curve: Vec<BiasPoint>,
    /// Thermal path.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub thermal: Option<Thermal>,
}

/// The LED string's thermal data.
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct LedThermal {
    /// Thermal resistance from one LED's junction to ambient, °C/W.
    #[serde(deserialize_with = "de_ratio")]
    pub resistance_c_per_w: f64,
    /// Highest allowed junction temperature, °C.
    #[serde(deserialize_with = "de_c")]
    pub max_junction_temperature_c: f64,
    /// Per-LED forward-voltage temperature coefficient, V/K (typically
    /// negative; 0: no feedback of temperature into the forward voltage).
    #[serde(default, deserialize_with = "de_v")]
    pub forward_voltage_tempco_v_per_k: f64,
    /// Fraction of the electrical power that heats the junction (the rest
    /// leaves as light); 1 is the conservative choice.
    #[serde(default = "default_one", deserialize_with = "de_ratio")]
    pub heat_fraction: f64,
}

/// The controller IC's data.
#[derive(Debug, Clone, Copy, PartialEq, Default, Serialize, Deserialize)]
#[serde(default, deny_unknown_fields)]
pub struct ControllerIc {
    /// Quiescent current drawn from the supply, A.
    #[serde(deserialize_with = "de_a")]
    pub quiescent_current_a: f64,
    /// Lowest switching frequency the controller allows, Hz.
    #[serde(
        deserialize_with = "de_opt_hz",
        skip_serializing_if = "Option::is_none"
    )]
    pub min_frequency_hz: Option<f64>,
    /// Highest switching frequency the controller allows, Hz.
    #[serde(
        deserialize_with = "de_opt_hz",
        skip_serializing_if = "Option::is_none"
    )]
    pub max_frequency_hz: Option<f64>,
    /// Shortest on-time the controller can make, s.
    #[serde(deserialize_with = "de_opt_s", skip_serializing_if = "Option::is_none")]
    pub min_on_time_s: Option<f64>,
    /// Where the controller and its gate driver are fed from: `input`
    /// (the default) or `separate_rail`; the gate-drive and quiescent
    /// losses are drawn at that voltage.
    #[serde(skip_serializing_if = "ControllerFeed::is_input")]
    pub fed_from: ControllerFeed,
}

fn default_one() -> f64 {
    1.0
}

impl PartData {
    fn validate_into(&self, c: &mut Checker) {
        let p = self;
        c.range(
            "parts.ambient_temperature_c",
            p.ambient_temperature_c,
            -60.0,
            150.0,
            "°C",
        );
        if let Some(a) = p.current_accuracy_pct {
            c.range("parts.current_accuracy_pct", a, 1e-3, 100.0, "%");
        }
        c.opt_positive(
            "parts.led_current_target_a",
            p.led_current_target_a,
            1e3,
            "A",
        );
        let sw = &p.switch;
        c.range("parts.switch.rise_time_s", sw.rise_time_s, 0.0, 1e-4, "s");
        c.range("parts.switch.fall_time_s", sw.fall_time_s, 0.0, 1e-4, "s");
        c.range(
            "parts.switch.gate_charge_c",
            sw.gate_charge_c,
            0.0,
            1e-5,
            "C",
        );
        c.range("parts.switch.gate_drive_v", sw.gate_drive_v, 0.0, 30.0, "V");
        c.range(
            "parts.switch.output_capacitance_f",
            sw.output_capacitance_f,
            0.0,
            1e-7,
            "F",
        );
        c.opt_positive(
            "parts.switch.voltage_rating_v",
            sw.voltage_rating_v,
            1e4,
            "V",
        );
        c.opt_positive(
            "parts.switch.peak_current_rating_a",
            sw.peak_current_rating_a,
            1e4,
            "A",
        );
        c.opt_positive(
            "parts.switch.rms_current_rating_a",
            sw.rms_current_rating_a,
            1e4,
            "A",
        );
        c.thermal("parts.switch.thermal", sw.thermal);
        let d = &p.diode;
        c.range(
            "parts.diode.reverse_recovery_charge_c",
            d.reverse_recovery_charge_c,
            0.0,
            1e-5,
            "C",
        );
        c.opt_positive("parts.diode.voltage_rating_v", d.voltage_rating_v, 1e4, "V");
        c.opt_positive(
            "parts.diode.peak_current_rating_a",
            d.peak_current_rating_a,
            1e4,
            "A",
        );
        c.opt_positive(
            "parts.diode.rms_current_rating_a",
            d.rms_current_rating_a,
            1e4,
            "A",
        );
        c.opt_positive(
            "parts.diode.average_current_rating_a",
            d.average_current_rating_a,
            1e4,
            "A",
        );
        c.range(
            "parts.diode.junction_capacitance_f",
            d.junction_capacitance_f,
            0.0,
            1e-7,
            "F",
        );
        c.thermal("parts.diode.thermal", d.thermal);
        let l = &p.inductor;
        if let Some(core) = l.core {
            c.int_range(
                "parts.inductor.core.turns",
                u64::from(core.turns),
                1,
                100_000,
            );
            c.range(
                "parts.inductor.core.area_m2",
                core.area_m2,
                1e-9,
                1e-1,
                "m²",
            );
            c.range(
                "parts.inductor.core.volume_m3",
                core.volume_m3,
                1e-12,
                1e-1,
                "m³",
            );
            c.range(
                "parts.inductor.core.steinmetz_k",
                core.steinmetz_k,
                0.0,
                1e6,
                "",
            );
            c.range(
                "parts.inductor.core.steinmetz_alpha",
                core.steinmetz_alpha,
                0.5,
                3.0,
                "",
            );
            c.range(
                "parts.inductor.core.steinmetz_beta",
                core.steinmetz_beta,
                1.0,
                4.0,
                "",
            );
        }
        c.opt_positive(
            "parts.inductor.rms_current_rating_a",
            l.rms_current_rating_a,
            1e4,
            "A",
        );
        c.thermal("parts.inductor.thermal", l.thermal);
        let curve = &l.saturation_curve;
        if !curve.is_empty() {
            if curve.len() < 2 || curve.len() > crate::devices::MAX_L_POINTS {
                c.push(
                    "parts.inductor.saturation_curve",
                    &format!("{} points", curve.len()),
                    &format!("give 2 to {} points", crate::devices::MAX_L_POINTS),
                );
            }
            let mut last = -1.0;
            for (k, pt) in curve.iter().enumerate() {
                let at = format!("parts.inductor.saturation_curve[{k}]");
                c.range(&format!("{at}.current_a"), pt.current_a, 0.0, 1e4, "A");
                c.range(
                    &format!("{at}.inductance_h"),
                    pt.inductance_h,
                    1e-9,
                    10.0,
                    "H",
                );
                if pt.current_a <= last {
                    c.push(
                        &format!("{at}.current_a"),
                        &fmt_num(pt.current_a),
                        "currents must be strictly rising",
                    );
                }
                last = pt.current_a;
            }
        }
        for (name, cap) in [
            ("input_capacitor", &p.input_capacitor),
            ("output_capacitor", &p.output_capacitor),
        ] {
            let pre = format!("parts.{name}");
            c.range(
                &format!("{pre}.tolerance_pct"),
                cap.tolerance_pct,
                0.0,
                90.0,
                "%",
            );
            c.opt_positive(
                &format!("{pre}.voltage_rating_v"),
                cap.voltage_rating_v,
                1e4,
                "V",
            );
            c.opt_positive(
                &format!("{pre}.ripple_current_rating_a"),
                cap.ripple_current_rating_a,
                1e3,
                "A",
            );
            c.thermal(&format!("{pre}.thermal"), cap.thermal);
            let mut last = -1.0;
            for (k, b) in cap.bias_curve.iter().enumerate() {
                let at = format!("{pre}.bias_curve[{k}]");
                c.range(
                    &format!("{at}.bias_fraction"),
                    b.bias_fraction,
                    0.0,
                    1.5,
                    "",
                );
                c.range(
                    &format!("{at}.capacitance_fraction"),
                    b.capacitance_fraction,
                    1e-3,
                    1.0,
                    "",
                );
                if b.bias_fraction <= last {
                    c.push(
                        &format!("{at}.bias_fraction"),
                        &fmt_num(b.bias_fraction),
                        "bias points must be in strictly rising order",
                    );
                }
                last = b.bias_fraction;
            }
            if !cap.bias_curve.is_empty() && cap.voltage_rating_v.is_none() {
                c.push(
                    &format!("{pre}.bias_curve"),
                    "",
                    "a bias curve is given as fractions of the rated voltage: give voltage_rating_v too",
                );
            }
        }
        if let Some(led) = p.led {
            c.range(
                "parts.led.resistance_c_per_w",
                led.resistance_c_per_w,
                0.0,
                1e4,
                "°C/W",
            );
            c.range(
                "parts.led.max_junction_temperature_c",
                led.max_junction_temperature_c,
                -60.0,
                300.0,
                "°C",
            );
            c.range(
                "parts.led.forward_voltage_tempco_v_per_k",
                led.forward_voltage_tempco_v_per_k,
                -0.05,
                0.05,
                "V/K",
            );
            c.range("parts.led.heat_fraction", led.heat_fraction, 0.0, 1.0, "");
        }
        let ic = &p.controller;
        c.range(
            "parts.controller.quiescent_current_a",
            ic.quiescent_current_a,
            0.0,
            1.0,
            "A",
        );
        c.opt_positive(
            "parts.controller.min_frequency_hz",
            ic.min_frequency_hz,
            1e9,
            "Hz",
        );
        c.opt_positive(
            "parts.controller.max_frequency_hz",
            ic.max_frequency_hz,
            1e9,
            "Hz",
        );
        c.opt_positive(
            "parts.controller.min_on_time_s",
            ic.min_on_time_s,
            1e-2,
            "s",
        );
        if ic.fed_from == ControllerFeed::SeparateRail
            && p.switch.gate_drive_v <= 0.0
            && (ic.quiescent_current_a > 0.0 || p.switch.gate_charge_c > 0.0)
        {
            c.push(
                "parts.controller.fed_from",
                "separate_rail",
                "the separate rail is at the gate-drive voltage: give parts.switch.gate_drive_v",
            );
        }
        if let (Some(lo), Some(hi)) = (ic.min_frequency_hz, ic.max_frequency_hz) {
            if lo >= hi {
                c.push(
                    "parts.controller.min_frequency_hz",
                    &fmt_num(lo),
                    &format!("must be below max_frequency_hz ({} Hz)", fmt_num(hi)),
                );
            }
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

/// Reads a number or engineering-notation text in `unit` (the one reader
/// behind every numeric field, here and in the study objects).
pub(crate) fn de_quantity<'de, D: Deserializer<'de>>(d: D, unit: Unit) -> Result<f64, D::Error> {
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
unit_de!(de_coulomb, de_opt_coulomb, Unit::Coulomb);

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
        // A key given twice is refused before the JSON value (which keeps
        // only the last) hides it.
        if let Some(e) = duplicate_keys(text).into_iter().next() {
            return Err(e);
        }
        for (path, v) in overrides {
            apply_override(&mut value, path, v)?;
        }
        if overrides.is_empty() {
            return Scenario::from_text(text);
        }
        // Read straight from the value: an error on a field an override
        // set names the override, any other the original file's line.
        match structure_error(&value) {
            None => {
                let s = Scenario::deserialize(&value).map_err(|e| ScenarioError::Syntax {
                    path: String::new(),
                    message: e.to_string(),
                    line: 0,
                    column: 0,
                })?;
                s.validate()?;
                Ok(s)
            }
            Some((path, message)) => {
                let by = overrides.iter().rev().find(|(p, _)| {
                    p == &path
                        || p.starts_with(&format!("{path}."))
                        || path.starts_with(&format!("{p}."))
                });
                if let Some((p, v)) = by {
                    return Err(ScenarioError::Override {
                        path: format!("{p}={v}"),
                        reason: format!("{path}: {message}"),
                    });
                }
                match Scenario::from_text(text) {
                    Err(e @ ScenarioError::Syntax { .. })
                        if e.problems().first().is_some_and(|f| f.path == path) =>
                    {
                        Err(e)
                    }
                    _ => Err(ScenarioError::Syntax {
                        path,
                        message,
                        line: 0,
                        column: 0,
                    }),
                }
            }
        }
    }

    /// Every problem of a scenario text with overrides, not only the
    /// first: each duplicate key, each unknown, missing or mistyped field
    /// (the reader continues past each by dropping the unknown field or
    /// putting the starter scenario's value in place of the bad one), then
    /// every value problem. Empty when the scenario loads.
    pub fn problems_in(text: &str, overrides: &[(String, String)]) -> Vec<FieldProblem> {
        let mut value: serde_json::Value = match serde_json::from_str(text) {
            Ok(v) => v,
            Err(e) => return syntax(e, "").problems(),
        };
        let mut out: Vec<FieldProblem> = duplicate_keys(text)
            .into_iter()
            .flat_map(|e| e.problems())
            .collect();
        for (path, v) in overrides {
            if let Err(e) = apply_override(&mut value, path, v) {
                out.extend(e.problems());
            }
        }
        let model = serde_json::to_value(template_with_parts()).unwrap_or_default();
        let mut seen = std::collections::HashSet::new();
        for _ in 0..MAX_LISTED_PROBLEMS {
            let Some((path, message)) = structure_error(&value) else {
                break;
            };
            if !seen.insert((path.clone(), message.clone())) {
                break;
            }
            out.push(FieldProblem {
                path: missing_field_path(&path, &message),
                value: String::new(),
                reason: message.clone(),
            });
            if !repair(&mut value, &model, &path, &message) {
                break;
            }
        }
        // The value problems too, once the structure reads (fields that
        // were put right above are not listed twice).
        if structure_error(&value).is_none() {
            if let Err(e) = Scenario::from_json_value(&value) {
                for p in e.problems() {
                    if !out.iter().any(|o| o.path == p.path) {
                        out.push(p);
                    }
                }
            }
        }
        out
    }

    /// Reads and validates a scenario already parsed as JSON (a study's
    /// point: the base scenario with values set). Goes straight from the
    /// value; only a value that fails is re-read as text, so its message
    /// is exactly the one the same file would give.
    pub fn from_json_value(value: &serde_json::Value) -> Result<Scenario, ScenarioError> {
        match Scenario::deserialize(value) {
            Ok(s) => {
                s.validate()?;
                Ok(s)
            }
            Err(_) => Scenario::from_text(&value.to_string()),
        }
    }

    fn from_text(text: &str) -> Result<Scenario, ScenarioError> {
        if let Some(e) = duplicate_keys(text).into_iter().next() {
            return Err(e);
        }
        // serde_path_to_error adds the field path to line and column.
        let de = &mut serde_json::Deserializer::from_str(text);
        let scenario: Scenario = serde_path_to_error::deserialize(de).map_err(|e| {
            let mut path = e.path().to_string();
            let inner = e.into_inner();
            // Tagged parts (diode, load, controller) are read as a whole, so
            // the path stops at the part: find the field inside it.
            if let Ok(root) = serde_json::from_str::<serde_json::Value>(text) {
                let tagged = ["diode", "load", "controller"].contains(&path.as_str());
                let message = inner.to_string();
                if let Some(field) = root
                    .get(&path)
                    .filter(|_| tagged)
                    .and_then(|v| culprit(&path, v, &message).or_else(|| field_in(v, &message)))
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
                ..
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
                if let Some(inputs) = crate::devices::diode_junction_inputs(&s.diode) {
                    c.junction(
                        "diode",
                        &inputs,
                        (saturation_current_a, emission_coefficient),
                        ("temperature_c", temperature_c),
                        crate::devices::diode_junction_law(&s.diode),
                    );
                }
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
        if let Some(r) = s.sense_resistor {
            c.range(
                "sense_resistor.resistance_ohm",
                r.resistance_ohm,
                0.0,
                1e3,
                "Ω",
            );
        }
        match s.load {
            Load::LedExponential {
                count,
                saturation_current_a,
                emission_coefficient,
                series_resistance_ohm,
                junction_temperature_c,
                ..
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
                if let Some(inputs) = crate::devices::load_junction_inputs(&s.load) {
                    c.junction(
                        "load",
                        &inputs,
                        (saturation_current_a, emission_coefficient),
                        ("junction_temperature_c", junction_temperature_c),
                        crate::devices::load_junction_law(&s.load),
                    );
                    c.led_part_tempco(s, &inputs, saturation_current_a, emission_coefficient);
                }
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
        c.range(
            "simulation.curve_slope_tolerance",
            sim.curve_slope_tolerance,
            1e-4,
            1.0,
            "",
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

        s.parts.validate_into(&mut c);

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

    fn check_operating_point(&self, c: &mut Checker) {
        let vs = self.supply.voltage_v;
        // Without a regulated current (fixed duty), "lit" means 1 mA.
        let (lit_current, what) = match self.target_current_a() {
            Some(t) => (0.01 * t, "1 % of the target current"),
            None => (1e-3, "1 mA"),
        };
        let lit = self.load_voltage_v(lit_current);
        if !matches!(self.load, Load::Resistor { .. }) && vs <= lit {
            c.push(
                "supply.voltage_v",
                &fmt_num(vs),
                &format!(
                    "the supply is below the LED string's forward voltage ({} V at {what}): \
                     the LEDs never light, and a buck converter cannot raise the voltage",
                    fmt_num(lit)
                ),
            );
            return;
        }
        let Some(_) = self.target_current_a() else {
            return;
        };
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

/// Most structural problems [`Scenario::problems_in`] lists.
const MAX_LISTED_PROBLEMS: usize = 200;

/// The first structural problem of a scenario held as JSON: the full
/// dotted path of the field (inside a tagged part too) and the message,
/// with a suggestion for an unknown name. `None`: it reads.
fn structure_error(value: &serde_json::Value) -> Option<(String, String)> {
    let e = serde_path_to_error::deserialize::<_, Scenario>(value).err()?;
    let mut path = e.path().to_string();
    if path == "." {
        path.clear();
    }
    let inner = e.into_inner().to_string();
    if let Some(field) = value
        .get(&path)
        .filter(|_| TAGGED_PARTS.contains(&path.as_str()))
        .and_then(|part| culprit(&path, part, &inner).or_else(|| field_in(part, &inner)))
    {
        path = format!("{path}.{field}");
    }
    Some((path, explain(&inner)))
}

/// The parts read as a whole by an internally tagged enum: serde's path
/// stops at the part.
const TAGGED_PARTS: [&str; 3] = ["diode", "load", "controller"];

/// The message reading one tagged part alone gives (None: it reads).
fn part_error(name: &str, part: &serde_json::Value) -> Option<String> {
    let e = match name {
        "diode" => Diode::deserialize(part).err(),
        "load" => Load::deserialize(part).err(),
        "controller" => ControllerSpec::deserialize(part).err(),
        _ => None,
    };
    e.map(|e| e.to_string())
}

/// The field of a tagged part an error is about, found by taking fields
/// out one at a time: the one whose absence changes the error is it
/// (a type error is raised while the fields are read, before any
/// "missing field" check, so taking out a good field leaves it).
fn culprit(name: &str, part: &serde_json::Value, message: &str) -> Option<String> {
    let obj = part.as_object()?;
    if message.contains("unknown field") || message.contains("missing field") {
        return None;
    }
    let original = part_error(name, part)?;
    obj.keys()
        .filter(|k| !["kind", "model"].contains(&k.as_str()))
        .find(|k| {
            let mut less = obj.clone();
            less.remove(*k);
            part_error(name, &serde_json::Value::Object(less)).as_deref() != Some(&original)
        })
        .cloned()
}

/// Changes `value` so that reading goes past the problem at `path`:
/// an unknown field is dropped, a missing or bad one takes the starter
/// scenario's value (or is dropped when it has none). False when nothing
/// could be done.
fn repair(
    value: &mut serde_json::Value,
    model: &serde_json::Value,
    path: &str,
    message: &str,
) -> bool {
    let quoted = |marker: &str| -> Option<String> {
        let i = message.find(marker)? + marker.len();
        let rest = &message[i..];
        rest.find('`').map(|j| rest[..j].to_string())
    };
    let parts: Vec<&str> = path.split('.').filter(|p| !p.is_empty()).collect();
    let lookup = |root: &serde_json::Value, parts: &[&str]| -> Option<serde_json::Value> {
        parts.iter().try_fold(root, |v, p| v.get(*p)).cloned()
    };
    // The object the field sits in, and the field's name.
    let (parent, field): (Vec<&str>, String) = if let Some(name) = quoted("missing field `") {
        // The path names the object missing it (or the field, for a
        // tagged part found by name).
        if parts.last() == Some(&name.as_str()) {
            (parts[..parts.len() - 1].to_vec(), name)
        } else {
            (parts.clone(), name)
        }
    } else if let Some(name) = quoted("unknown field `") {
        if parts.last() == Some(&name.as_str()) {
            (parts[..parts.len() - 1].to_vec(), name)
        } else {
            (parts.clone(), name)
        }
    } else if let Some((last, rest)) = parts.split_last() {
        (rest.to_vec(), (*last).to_string())
    } else {
        return false;
    };
    let mut full = parent.clone();
    full.push(&field);
    let replacement = if message.contains("unknown field") {
        None
    } else {
        lookup(model, &full)
    };
    let Some(obj) = parent
        .iter()
        .try_fold(&mut *value, |v, p| v.get_mut(*p))
        .and_then(|v| v.as_object_mut())
    else {
        return false;
    };
    match replacement {
        Some(r) => {
            obj.insert(field, r);
            true
        }
        None => obj.remove(&field).is_some(),
    }
}

/// Every key given twice in one object of a JSON text, each as a syntax
/// error with its path, line and column (a JSON value keeps only the
/// last, so the check reads the text itself).
fn duplicate_keys(text: &str) -> Vec<ScenarioError> {
    use serde::de::{DeserializeSeed, MapAccess, SeqAccess, Visitor};
    struct Walk<'a> {
        path: String,
        found: &'a std::cell::RefCell<Vec<(String, String)>>,
    }
    impl<'de> DeserializeSeed<'de> for Walk<'_> {
        type Value = ();
        fn deserialize<D: Deserializer<'de>>(self, d: D) -> Result<(), D::Error> {
            d.deserialize_any(self)
        }
    }
    impl<'de> Visitor<'de> for Walk<'_> {
        type Value = ();
        fn expecting(&self, f: &mut fmt::Formatter) -> fmt::Result {
            f.write_str("any JSON value")
        }
        fn visit_bool<E>(self, _: bool) -> Result<(), E> {
            Ok(())
        }
        fn visit_i64<E>(self, _: i64) -> Result<(), E> {
            Ok(())
        }
        fn visit_u64<E>(self, _: u64) -> Result<(), E> {
            Ok(())
        }
        fn visit_f64<E>(self, _: f64) -> Result<(), E> {
            Ok(())
        }
        fn visit_str<E>(self, _: &str) -> Result<(), E> {
            Ok(())
        }
        fn visit_unit<E>(self) -> Result<(), E> {
            Ok(())
        }
        fn visit_seq<A: SeqAccess<'de>>(self, mut a: A) -> Result<(), A::Error> {
            let mut k = 0;
            while a
                .next_element_seed(Walk {
                    path: format!("{}[{k}]", self.path),
                    found: self.found,
                })?
                .is_some()
            {
                k += 1;
            }
            Ok(())
        }
        fn visit_map<A: MapAccess<'de>>(self, mut a: A) -> Result<(), A::Error> {
            let mut keys = std::collections::HashSet::new();
            while let Some(key) = a.next_key::<String>()? {
                let path = if self.path.is_empty() {
                    key.clone()
                } else {
                    format!("{}.{key}", self.path)
                };
                if !keys.insert(key.clone()) {
                    self.found.borrow_mut().push((path.clone(), key));
                }
                a.next_value_seed(Walk {
                    path,
                    found: self.found,
                })?;
            }
            Ok(())
        }
    }
    let found = std::cell::RefCell::new(Vec::new());
    let mut de = serde_json::Deserializer::from_str(text);
    if (Walk {
        path: String::new(),
        found: &found,
    })
    .deserialize(&mut de)
    .is_err()
    {
        return Vec::new();
    }
    let found = found.into_inner();
    found
        .into_iter()
        .map(|(path, key)| {
            // Where the second one starts, for line and column (only when
            // the name occurs just twice in the text, so the place is sure).
            let (line, column) = if text.matches(&format!("\"{key}\"")).count() == 2 {
                locate_key(text, &key, 2)
            } else {
                (0, 0)
            };
            ScenarioError::Syntax {
                path,
                message: format!("duplicate key `{key}`: it is given twice in the same object"),
                line,
                column,
            }
        })
        .collect()
}

/// Line and column (1-based) of the `nth` occurrence of `"key"` in the
/// text (0, 0 when not found).
fn locate_key(text: &str, key: &str, nth: usize) -> (usize, usize) {
    let needle = format!("\"{key}\"");
    let Some((at, _)) = text.match_indices(&needle).nth(nth.saturating_sub(1)) else {
        return (0, 0);
    };
    let before = &text[..at];
    let line = before.matches('\n').count() + 1;
    let column = before.rfind('\n').map_or(at, |n| at - n - 1) + 1;
    (line, column)
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
    let message = explain(&message);
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

/// Adds what a reader needs to a serde message: the nearest known field
/// for an unknown one, the unit of a missing one.
fn explain(message: &str) -> String {
    let quoted = |after: &str| -> Option<String> {
        let i = message.find(after)? + after.len();
        let rest = &message[i..];
        rest.find('`').map(|j| rest[..j].to_string())
    };
    if let Some(name) = quoted("unknown field `").or_else(|| quoted("unknown variant `")) {
        let known: Vec<&str> = message
            .split("expected one of ")
            .nth(1)
            .or_else(|| message.split("expected ").nth(1))
            .map(|list| list.split(", ").map(|k| k.trim_matches('`')).collect())
            .unwrap_or_default();
        if let Some(best) = known
            .iter()
            .filter(|k| !k.is_empty())
            .min_by_key(|k| edit_distance(&name, k))
            .filter(|k| edit_distance(&name, k) <= name.len().max(3) / 2)
        {
            return format!("{message}; did you mean `{best}`?");
        }
        return message.to_string();
    }
    if let Some(name) = quoted("missing field `") {
        if let Some(unit) = unit_of(&name) {
            return format!("{message} (a value in {unit})");
        }
    }
    message.to_string()
}

/// The unit a field's name ends in, in words.
pub fn unit_of(field: &str) -> Option<&'static str> {
    let suffixes = [
        ("_v", "volts, e.g. 12 or \"12V\""),
        ("_a", "amperes, e.g. 0.7 or \"700m\""),
        ("_ohm", "ohms, e.g. 0.05 or \"50m\""),
        ("_h", "henries, e.g. 4.7e-5 or \"47u\""),
        ("_f", "farads, e.g. 1e-5 or \"10u\""),
        ("_s", "seconds, e.g. 2e-6 or \"2u\""),
        ("_hz", "hertz, e.g. 4e5 or \"400k\""),
        ("_c", "degrees Celsius"),
    ];
    suffixes
        .iter()
        .find(|(suffix, _)| field.ends_with(suffix))
        .map(|(_, unit)| *unit)
}

/// Levenshtein distance between two short names.
fn edit_distance(a: &str, b: &str) -> usize {
    let b: Vec<char> = b.chars().collect();
    let mut prev: Vec<usize> = (0..=b.len()).collect();
    for (i, ca) in a.chars().enumerate() {
        let mut cur = vec![i + 1; b.len() + 1];
        for (j, cb) in b.iter().enumerate() {
            let cost = usize::from(ca != *cb);
            cur[j + 1] = (prev[j] + cost).min(prev[j + 1] + 1).min(cur[j] + 1);
        }
        prev = cur;
    }
    prev[b.len()]
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
    /// `parts.led.forward_voltage_tempco_v_per_k` taken as the exponential
    /// load's datasheet coefficient at the target current (when the load
    /// gives no band gap or coefficient of its own) must imply a band gap
    /// the model can use.
    fn led_part_tempco(
        &mut self,
        s: &Scenario,
        j: &crate::devices::JunctionInputs,
        is0: f64,
        n: f64,
    ) {
        let (Some(led), Some(target)) = (s.parts.led, s.target_current_a()) else {
            return;
        };
        let tc = led.forward_voltage_tempco_v_per_k;
        let usable = |x: f64| x.is_finite() && x > 0.0;
        if j.bandgap_ev.is_some()
            || j.tempco_v_per_k.is_some()
            || tc == 0.0
            || !(-0.05..=0.05).contains(&tc)
            || !usable(target)
            || !usable(is0)
            || !usable(n)
        {
            return;
        }
        let t0 = j
            .reference_temperature_c
            .unwrap_or(crate::devices::DEFAULT_REFERENCE_C);
        let xti = j
            .is_temp_exponent
            .unwrap_or(crate::devices::LED_IS_TEMP_EXPONENT);
        let eg = crate::devices::bandgap_from_tempco_ev(is0, n, t0, xti, tc, target);
        if !(0.1..=10.0).contains(&eg) {
            self.push(
                "parts.led.forward_voltage_tempco_v_per_k",
                &fmt_num(tc),
                &format!(
                    "taken as the LEDs' coefficient at the target current {} A, it implies a \
                     band gap of {} eV, outside 0.1 to 10 eV: the coefficient does not fit the \
                     LED model",
                    fmt_num(target),
                    fmt_num(eg)
                ),
            );
        }
    }

    /// A junction's temperature data (reference temperature, band gap,
    /// exponent, datasheet coefficient) and the saturation current they
    /// give at the operating temperature.
    fn junction(
        &mut self,
        prefix: &str,
        j: &crate::devices::JunctionInputs,
        (is0, n): (f64, f64),
        (t_field, t_c): (&str, f64),
        law: Option<crate::devices::JunctionLaw>,
    ) {
        let before = self.problems.len();
        let p = |f: &str| format!("{prefix}.{f}");
        if let Some(t) = j.reference_temperature_c {
            self.range(&p("reference_temperature_c"), t, -60.0, 250.0, "°C");
        }
        if let Some(eg) = j.bandgap_ev {
            self.range(&p("bandgap_ev"), eg, 0.1, 10.0, "eV");
        }
        if let Some(x) = j.is_temp_exponent {
            self.range(&p("is_temp_exponent"), x, 0.0, 10.0, "");
        }
        if let Some(tc) = j.tempco_v_per_k {
            self.range(&p("forward_voltage_tempco_v_per_k"), tc, -0.05, 0.05, "V/K");
        }
        if let Some(i) = j.tempco_current_a {
            self.range(&p("tempco_current_a"), i, 1e-9, 1e4, "A");
        }
        match (j.tempco_v_per_k, j.tempco_current_a) {
            (Some(tc), None) => self.push(
                &p("tempco_current_a"),
                "(missing)",
                &format!(
                    "needed with forward_voltage_tempco_v_per_k = {}: the current the \
                     coefficient is stated at",
                    fmt_num(tc)
                ),
            ),
            (None, Some(i)) => self.push(
                &p("forward_voltage_tempco_v_per_k"),
                "(missing)",
                &format!(
                    "tempco_current_a = {} A is given without the coefficient it belongs to",
                    fmt_num(i)
                ),
            ),
            _ => {}
        }
        if let (Some(_), Some(tc)) = (j.bandgap_ev, j.tempco_v_per_k) {
            self.push(
                &p("forward_voltage_tempco_v_per_k"),
                &fmt_num(tc),
                "give either bandgap_ev or a forward-voltage coefficient, not both",
            );
        }
        if self.problems.len() > before || !(is0 > 0.0 && n > 0.0) {
            return;
        }
        let Some(law) = law else { return };
        if j.bandgap_ev.is_none() && j.tempco_v_per_k.is_some() {
            let eg = law.bandgap_ev;
            if !(0.1..=10.0).contains(&eg) {
                self.push(
                    &p("forward_voltage_tempco_v_per_k"),
                    &fmt_num(j.tempco_v_per_k.unwrap_or(0.0)),
                    &format!(
                        "implies a band gap of {} eV with this junction's Is and n, outside \
                         0.1 to 10 eV: the coefficient does not fit the model",
                        fmt_num(eg)
                    ),
                );
                return;
            }
        }
        let is_t = law.saturation_current_a(is0, n, t_c);
        if !(is_t.is_finite() && is_t > 1e-290 && is_t < 1e3) {
            self.push(
                &p(t_field),
                &fmt_num(t_c),
                &format!(
                    "moves the saturation current to {} A at this temperature (from its \
                     value at {} °C), outside what the model can use",
                    fmt_num(is_t),
                    fmt_num(law.reference_temperature_c)
                ),
            );
        }
    }

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
        // Quantities with an SI unit are quoted in engineering notation
        // with every digit (`−4.7 µH`, `allowed 1 nH to 10 H`).
        let eng_unit = match unit {
            "V" => Some(Unit::Volt),
            "A" => Some(Unit::Ampere),
            "Ω" => Some(Unit::Ohm),
            "H" => Some(Unit::Henry),
            "F" => Some(Unit::Farad),
            "s" => Some(Unit::Second),
            "Hz" => Some(Unit::Hertz),
            "C" => Some(Unit::Coulomb),
            _ => None,
        };
        let show = |x: f64| match eng_unit {
            Some(eu) if x.is_finite() => crate::units::eng_exact(x, eu),
            _ => format!("{}{u}", fmt_num(x)),
        };
        if !v.is_finite() {
            self.push(path, &fmt_num(v), "must be a finite number");
        } else if v < lo || v > hi {
            let why = if lo > 0.0 && v <= 0.0 {
                format!("must be positive (allowed {} to {})", show(lo), show(hi))
            } else if lo == 0.0 && v < 0.0 {
                format!("must not be negative (allowed 0 to {})", show(hi))
            } else {
                format!("outside the physical range {} to {}", show(lo), show(hi))
            };
            let value = if eng_unit.is_some() {
                show(v)
            } else {
                fmt_num(v)
            };
            self.push(path, &value, &why);
        }
    }

    fn opt_positive(&mut self, path: &str, v: Option<f64>, hi: f64, unit: &str) {
        if let Some(v) = v {
            self.range(path, v, 1e-12, hi, unit);
        }
    }

    fn thermal(&mut self, path: &str, t: Option<Thermal>) {
        if let Some(t) = t {
            self.range(
                &format!("{path}.resistance_c_per_w"),
                t.resistance_c_per_w,
                0.0,
                1e4,
                "°C/W",
            );
            self.range(
                &format!("{path}.max_temperature_c"),
                t.max_temperature_c,
                -60.0,
                300.0,
                "°C",
            );
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

/// Most dotted names an override path may have.
pub const MAX_OVERRIDE_DEPTH: usize = 8;

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
        // A path too long to be a field is shown cut short.
        path: if path.len() > 80 {
            format!("{}…", path.chars().take(60).collect::<String>())
        } else {
            path.to_string()
        },
        reason: reason.to_string(),
    };
    if path.is_empty() || path.split('.').any(str::is_empty) {
        return Err(err(
            "the path must be dotted field names, e.g. supply.voltage_v",
        ));
    }
    // The deepest field of a scenario is four names down; a longer path
    // names nothing (and must not build a nested value without bound).
    if path.split('.').count() > MAX_OVERRIDE_DEPTH || path.len() > 256 {
        return Err(err(&format!(
            "the path is deeper than any scenario field (at most {MAX_OVERRIDE_DEPTH} names, \
             256 characters)"
        )));
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
            reference_temperature_c: Some(70.0),
            bandgap_ev: None,
            is_temp_exponent: None,
            forward_voltage_tempco_v_per_k: None,
            tempco_current_a: None,
        },
        controller: ControllerSpec::ConstantOffTime {
            peak_current_a: 0.8,
            off_time_s: 2e-6,
            delay_s: 80e-9,
            min_on_time_s: 150e-9,
        },
        simulation: SimSettings::default(),
        parts: PartData::default(),
        sense_resistor: None,
        tolerances: None,
        spec: None,
    }
}

/// [`template`] with a complete `parts` section: every real-part field,
/// with illustrative values (not a particular part's data).
pub fn template_with_parts() -> Scenario {
    let mut s = template();
    s.description.push_str(
        " The parts section (switching times, charges, core, ratings, dielectrics, thermal \
         paths, controller limits) is illustrative as well.",
    );
    let thermal = |r: f64, t: f64| {
        Some(Thermal {
            resistance_c_per_w: r,
            max_temperature_c: t,
        })
    };
    let cap = |d: Dielectric, v: f64, ripple: f64| CapacitorData {
        dielectric: d,
        tolerance_pct: 10.0,
        voltage_rating_v: Some(v),
        ripple_current_rating_a: Some(ripple),
        bias_curve: Vec::new(),
        thermal: None,
    };
    s.parts = PartData {
        ambient_temperature_c: 25.0,
        intended_mode: IntendedMode::Ccm,
        current_accuracy_pct: Some(10.0),
        led_current_target_a: Some(0.7),
        switch: SwitchData {
            rise_time_s: 10e-9,
            fall_time_s: 15e-9,
            gate_charge_c: 5e-9,
            gate_drive_v: 5.0,
            output_capacitance_f: 50e-12,
            voltage_rating_v: Some(30.0),
            peak_current_rating_a: Some(3.0),
            rms_current_rating_a: Some(2.0),
            thermal: thermal(150.0, 150.0),
        },
        diode: DiodeData {
            reverse_recovery_charge_c: 0.0,
            voltage_rating_v: Some(30.0),
            peak_current_rating_a: Some(3.0),
            rms_current_rating_a: None,
            thermal: thermal(120.0, 150.0),
            average_current_rating_a: Some(1.0),
            junction_capacitance_f: 40e-12,
        },
        inductor: InductorData {
            saturation_curve: Vec::new(),
            core: Some(Core {
                turns: 30,
                area_m2: 1.2e-5,
                volume_m3: 4e-7,
                steinmetz_k: 1.5,
                steinmetz_alpha: 1.4,
                steinmetz_beta: 2.5,
            }),
            rms_current_rating_a: Some(1.2),
            thermal: thermal(60.0, 125.0),
        },
        input_capacitor: cap(Dielectric::X7r, 25.0, 2.0),
        output_capacitor: CapacitorData {
            // The part's own bias curve (illustrative), replacing the
            // class's typical one.
            bias_curve: vec![
                BiasPoint {
                    bias_fraction: 0.0,
                    capacitance_fraction: 1.0,
                },
                BiasPoint {
                    bias_fraction: 0.5,
                    capacitance_fraction: 0.7,
                },
                BiasPoint {
                    bias_fraction: 1.0,
                    capacitance_fraction: 0.45,
                },
            ],
            ..cap(Dielectric::X7r, 25.0, 1.0)
        },
        led: Some(LedThermal {
            resistance_c_per_w: 25.0,
            max_junction_temperature_c: 125.0,
            forward_voltage_tempco_v_per_k: -2e-3,
            heat_fraction: 0.7,
        }),
        controller: ControllerIc {
            quiescent_current_a: 1e-3,
            min_frequency_hz: Some(20e3),
            max_frequency_hz: Some(1e6),
            min_on_time_s: Some(100e-9),
            fed_from: ControllerFeed::Input,
        },
    };
    // Every optional section is shown, so a user sees what exists.
    s.output_capacitor = Some(Capacitor {
        capacitance_f: 4.7e-6,
        esr_ohm: 0.02,
    });
    // Inductance against current (illustrative), flat up to the rated
    // saturation current, then falling.
    s.parts.inductor.saturation_curve = vec![
        InductancePoint {
            current_a: 0.0,
            inductance_h: 68e-6,
        },
        InductancePoint {
            current_a: 1.5,
            inductance_h: 61e-6,
        },
        InductancePoint {
            current_a: 2.5,
            inductance_h: 34e-6,
        },
    ];
    use crate::study::spread::{
        Distribution, LedVoltageTolerance, PartTolerance, SpecLimits, Tolerances,
    };
    let tol = |path: &str, pct: f64, distribution: Distribution| PartTolerance {
        path: path.into(),
        tolerance_pct: pct,
        distribution,
    };
    s.tolerances = Some(Tolerances {
        parts: vec![
            tol("inductor.inductance_h", 20.0, Distribution::Uniform),
            tol(
                "output_capacitor.capacitance_f",
                10.0,
                Distribution::Uniform,
            ),
            tol("controller.peak_current_a", 5.0, Distribution::Normal),
            tol("controller.off_time_s", 5.0, Distribution::Normal),
        ],
        led_forward_voltage: Some(LedVoltageTolerance {
            tolerance_pct: 3.0,
            distribution: Distribution::Normal,
            at_current_a: Some(0.7),
        }),
        // Set true to draw the supply over `supply.input_range_v` too
        // (false here so the starter stays valid without its range).
        supply_over_range: false,
    });
    s.spec = Some(SpecLimits {
        target_current_a: Some(0.7),
        current_within_pct: Some(15.0),
        max_ripple_pct: Some(40.0),
        no_dcm: true,
        min_efficiency: Some(0.8),
    });
    s
}

/// The unit symbol a starter file writes for a field, from the ending of
/// its name (`inductance_h` → `H`), with the unit the loader checks it
/// against. `_c` is tried as a charge in coulombs: a temperature field,
/// which also ends in `_c`, does not read `C` back and stays a number.
fn field_unit_symbol(key: &str) -> Option<(Unit, &'static str)> {
    Some(match key.rsplit_once('_')?.1 {
        "v" => (Unit::Volt, "V"),
        "a" => (Unit::Ampere, "A"),
        "ohm" => (Unit::Ohm, "Ohm"),
        "h" => (Unit::Henry, "H"),
        "f" => (Unit::Farad, "F"),
        "s" => (Unit::Second, "s"),
        "hz" => (Unit::Hertz, "Hz"),
        "c" => (Unit::Coulomb, "C"),
        _ => return None,
    })
}

/// Every numeric leaf whose name carries a unit, as (JSON pointer, text in
/// engineering notation).
fn unit_fields(v: &serde_json::Value, at: &str, out: &mut Vec<(String, String)>) {
    match v {
        serde_json::Value::Object(map) => {
            for (key, child) in map {
                let here = format!("{at}/{}", key.replace('~', "~0").replace('/', "~1"));
                if let (Some(x), Some((unit, symbol))) = (child.as_f64(), field_unit_symbol(key)) {
                    if let Some(text) = crate::units::exact_engineering_text(x, symbol) {
                        // Only a text the unit's parser reads back exactly.
                        if parse_quantity(&text, unit).ok().map(f64::to_bits) == Some(x.to_bits()) {
                            out.push((here, text));
                        }
                    }
                } else {
                    unit_fields(child, &here, out);
                }
            }
        }
        serde_json::Value::Array(items) => {
            for (k, child) in items.iter().enumerate() {
                unit_fields(child, &format!("{at}/{k}"), out);
            }
        }
        _ => {}
    }
}

/// The unit fields of `s` that read back exactly when written in
/// engineering notation, as (JSON pointer, text).
fn engineering_fields(s: &Scenario) -> Vec<(String, String)> {
    let Ok(plain) = serde_json::to_value(s) else {
        return Vec::new();
    };
    let mut fields = Vec::new();
    unit_fields(&plain, "", &mut fields);
    let mut kept = Vec::new();
    for (pointer, text) in fields {
        let mut trial = plain.clone();
        if let Some(slot) = trial.pointer_mut(&pointer) {
            *slot = serde_json::Value::String(text.clone());
        }
        // Kept only where the field reads the text as the same value (a
        // temperature ending in `_c` does not read `C`).
        if Scenario::deserialize(&trial).ok().as_ref() == Some(s) {
            kept.push((pointer, text));
        }
    }
    kept
}

/// A scenario as JSON with every number whose field name carries a unit
/// written the way engineers write it (`"68uH"`, `"4.7uF"`, `"120mOhm"`,
/// `"400kHz"`), wherever the loader reads that text back as exactly the
/// same value; everything else (counts, ratios, temperatures, zeros,
/// values beyond femto to giga) stays a JSON number. Generic over the
/// fields: a new field with a unit ending is converted without listing it.
pub fn engineering_json(s: &Scenario) -> serde_json::Value {
    let Ok(mut out) = serde_json::to_value(s) else {
        return serde_json::Value::Null;
    };
    for (pointer, text) in engineering_fields(s) {
        if let Some(slot) = out.pointer_mut(&pointer) {
            *slot = serde_json::Value::String(text);
        }
    }
    out
}

/// [`engineering_json`] as pretty JSON text with the fields in the order
/// the scenario declares them (name first, then the parts in circuit
/// order), not sorted.
pub fn engineering_text(s: &Scenario) -> String {
    let Ok(text) = serde_json::to_string(s) else {
        return String::new();
    };
    let Ok(mut tree) = serde_json::from_str::<OrderedJson>(&text) else {
        return String::new();
    };
    for (pointer, value) in engineering_fields(s) {
        tree.set(&pointer, value);
    }
    serde_json::to_string_pretty(&tree).unwrap_or_default()
}

/// The text `chopwave template` prints: [`template_with_parts`] (every
/// section) with values in engineering notation (see [`engineering_json`]).
pub fn template_text() -> String {
    engineering_text(&template_with_parts())
}

/// JSON kept in document order (serde_json's own map sorts its keys).
enum OrderedJson {
    Map(Vec<(String, OrderedJson)>),
    List(Vec<OrderedJson>),
    Leaf(serde_json::Value),
}

impl OrderedJson {
    /// Replaces the leaf at a JSON pointer (`/a/0/b`) with a string.
    fn set(&mut self, pointer: &str, value: String) {
        let mut node = self;
        for raw in pointer.split('/').skip(1) {
            let key = raw.replace("~1", "/").replace("~0", "~");
            node = match node {
                OrderedJson::Map(entries) => match entries.iter_mut().find(|(k, _)| *k == key) {
                    Some((_, child)) => child,
                    None => return,
                },
                OrderedJson::List(items) => {
                    match key.parse::<usize>().ok().and_then(|i| items.get_mut(i)) {
                        Some(child) => child,
                        None => return,
                    }
                }
                OrderedJson::Leaf(_) => return,
            };
        }
        *node = OrderedJson::Leaf(serde_json::Value::String(value));
    }
}

impl Serialize for OrderedJson {
    fn serialize<S: serde::Serializer>(&self, ser: S) -> Result<S::Ok, S::Error> {
        use serde::ser::{SerializeMap, SerializeSeq};
        match self {
            OrderedJson::Map(entries) => {
                let mut m = ser.serialize_map(Some(entries.len()))?;
                for (k, v) in entries {
                    m.serialize_entry(k, v)?;
                }
                m.end()
            }
            OrderedJson::List(items) => {
                let mut q = ser.serialize_seq(Some(items.len()))?;
                for v in items {
                    q.serialize_element(v)?;
                }
                q.end()
            }
            OrderedJson::Leaf(v) => v.serialize(ser),
        }
    }
}

impl<'de> Deserialize<'de> for OrderedJson {
    fn deserialize<D: Deserializer<'de>>(d: D) -> Result<Self, D::Error> {
        struct V;
        impl<'de> Visitor<'de> for V {
            type Value = OrderedJson;
            fn expecting(&self, f: &mut fmt::Formatter) -> fmt::Result {
                f.write_str("JSON")
            }
            fn visit_bool<E: de::Error>(self, v: bool) -> Result<OrderedJson, E> {
                Ok(OrderedJson::Leaf(v.into()))
            }
            fn visit_i64<E: de::Error>(self, v: i64) -> Result<OrderedJson, E> {
                Ok(OrderedJson::Leaf(v.into()))
            }
            fn visit_u64<E: de::Error>(self, v: u64) -> Result<OrderedJson, E> {
                Ok(OrderedJson::Leaf(v.into()))
            }
            fn visit_f64<E: de::Error>(self, v: f64) -> Result<OrderedJson, E> {
                Ok(OrderedJson::Leaf(v.into()))
            }
            fn visit_str<E: de::Error>(self, v: &str) -> Result<OrderedJson, E> {
                Ok(OrderedJson::Leaf(v.into()))
            }
            fn visit_unit<E: de::Error>(self) -> Result<OrderedJson, E> {
                Ok(OrderedJson::Leaf(serde_json::Value::Null))
            }
            fn visit_seq<A: de::SeqAccess<'de>>(self, mut a: A) -> Result<OrderedJson, A::Error> {
                let mut items = Vec::new();
                while let Some(v) = a.next_element()? {
                    items.push(v);
                }
                Ok(OrderedJson::List(items))
            }
            fn visit_map<A: de::MapAccess<'de>>(self, mut a: A) -> Result<OrderedJson, A::Error> {
                let mut entries = Vec::new();
                while let Some((k, v)) = a.next_entry::<String, OrderedJson>()? {
                    entries.push((k, v));
                }
                Ok(OrderedJson::Map(entries))
            }
        }
        d.deserialize_any(V)
    }
}

/// The path a problem is listed under: a missing field's own path
/// (`supply.voltage_v`, `name`) rather than its section's (or the empty
/// top level).
fn missing_field_path(path: &str, message: &str) -> String {
    let name = message
        .split_once("missing field `")
        .and_then(|(_, rest)| rest.split_once('`'))
        .map(|(name, _)| name);
    match name {
        Some(name) if path.is_empty() => name.to_string(),
        Some(name) if path.rsplit('.').next() != Some(name) => format!("{path}.{name}"),
        _ => path.to_string(),
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    /// Reading from a parsed value gives the same scenario as reading the
    /// text, and the same message for a bad value or an unknown field.
    #[test]
    fn from_json_value_agrees_with_text() {
        let good = serde_json::to_value(template()).unwrap();
        assert_eq!(
            Scenario::from_json_value(&good).unwrap(),
            Scenario::from_json_str(&good.to_string()).unwrap()
        );
        let mut bad_value = good.clone();
        apply_override(&mut bad_value, "inductor.inductance_h", "-1u").unwrap();
        let mut unknown = good.clone();
        unknown["inductor"]["inductanse_h"] = serde_json::json!(1e-5);
        for v in [bad_value, unknown] {
            let a = Scenario::from_json_value(&v).unwrap_err().to_string();
            let b = Scenario::from_json_str(&v.to_string())
                .unwrap_err()
                .to_string();
            assert_eq!(a, b);
        }
    }

    #[test]
    fn template_with_parts_round_trips_and_validates() {
        let t = template_with_parts();
        let text = serde_json::to_string_pretty(&t).unwrap();
        assert!(text.contains("\"parts\""));
        let s = Scenario::from_json_str(&text).unwrap();
        assert_eq!(s, t);
    }

    /// The printed template shows every section, writes unit fields in
    /// engineering notation, loads, validates and reads back as the same
    /// values.
    #[test]
    fn template_text_shows_every_section_in_engineering_notation_and_round_trips() {
        let text = template_text();
        let v: serde_json::Value = serde_json::from_str(&text).unwrap();
        for key in [
            "supply",
            "input_capacitor",
            "switch",
            "diode",
            "inductor",
            "output_capacitor",
            "load",
            "controller",
            "simulation",
            "parts",
            "tolerances",
            "spec",
        ] {
            assert!(
                v.get(key).is_some_and(|x| !x.is_null()),
                "template lacks `{key}`"
            );
        }
        for (pointer, want) in [
            ("/inductor/inductance_h", "68uH"),
            ("/switch/on_resistance_ohm", "120mOhm"),
            ("/output_capacitor/capacitance_f", "4.7uF"),
            ("/supply/voltage_v", "12V"),
            ("/controller/off_time_s", "2us"),
            ("/parts/switch/gate_charge_c", "5nC"),
            ("/parts/controller/max_frequency_hz", "1MHz"),
            ("/parts/inductor/saturation_curve/1/current_a", "1.5A"),
            ("/spec/target_current_a", "700mA"),
        ] {
            assert_eq!(
                v.pointer(pointer),
                Some(&serde_json::json!(want)),
                "{pointer}"
            );
        }
        // Temperatures, counts and ratios stay numbers.
        assert!(v
            .pointer("/parts/ambient_temperature_c")
            .unwrap()
            .is_number());
        assert!(v.pointer("/load/count").unwrap().is_number());
        // Every unit-carrying number that has a prefix form got one.
        let mut left = Vec::new();
        fn walk(v: &serde_json::Value, at: &str, left: &mut Vec<String>) {
            match v {
                serde_json::Value::Object(m) => {
                    for (k, c) in m {
                        let here = format!("{at}.{k}");
                        if let (Some(x), Some((u, _))) = (c.as_f64(), field_unit_symbol(k)) {
                            let temperature = u == Unit::Coulomb && k.contains("temperature_c");
                            if x != 0.0 && x.abs() >= 1e-15 && !temperature {
                                left.push(here.clone());
                            }
                        }
                        walk(c, &here, left);
                    }
                }
                serde_json::Value::Array(a) => {
                    for (i, c) in a.iter().enumerate() {
                        walk(c, &format!("{at}[{i}]"), left);
                    }
                }
                _ => {}
            }
        }
        walk(&v, "", &mut left);
        assert!(left.is_empty(), "left as plain numbers: {left:?}");
        // Fields in declaration order: the name first, the parts in
        // circuit order, the study objects last.
        let at = |k: &str| text.find(&format!("\n  \"{k}\"")).unwrap();
        assert!(at("name") < at("supply") && at("supply") < at("switch"));
        assert!(at("inductor") < at("load") && at("parts") < at("spec"));
        // It loads, validates and holds exactly the template's values.
        let back = Scenario::from_json_str(&text).unwrap();
        assert_eq!(back, template_with_parts());
    }

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
        assert!(
            err.to_string().contains("did you mean `inductance_h`?"),
            "{err}"
        );
        let mut v = template_json();
        v["inductor"]
            .as_object_mut()
            .unwrap()
            .remove("inductance_h");
        let err = Scenario::from_json_str(&v.to_string()).unwrap_err();
        assert!(err.to_string().contains("henries"), "{err}");
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

    #[test]
    fn check_lists_a_missing_field_under_its_own_path() {
        let problems = Scenario::problems_in(r#"{"supply": {}}"#, &[]);
        let paths: Vec<&str> = problems.iter().map(|p| p.path.as_str()).collect();
        for want in ["name", "switch", "supply.voltage_v"] {
            assert!(paths.contains(&want), "{want} not in {paths:?}");
        }
        assert!(!paths.contains(&""), "{paths:?}");
    }
}
