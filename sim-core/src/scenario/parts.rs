//! Real-part data (the `parts` section). Kept in its own block: every field
//! is optional and defaults to "not given", so files without it keep their
//! meaning exactly.

use super::de::*;
use serde::{Deserialize, Serialize};

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
