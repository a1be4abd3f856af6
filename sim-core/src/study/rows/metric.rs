//! The metric columns of a study row, typed: [`Metric`] names every
//! figure a point's steady state gives (one per field of
//! [`Metrics`], the losses one per loss), with its column name, unit and
//! the accessor that reads it. Rows hold their cells along a list of
//! these ([`Columns`]); the name lookup ([`Metric::from_name`]) is for
//! names people type or files hold.

use super::Cell;
use crate::metrics::{ConductionMode, Metrics};
use serde::{Deserialize, Deserializer, Serialize, Serializer};
use serde_json::{Map, Value};
use std::fmt;
use std::sync::Arc;

/// The metric columns a table's rows are laid out along, shared by every
/// row of the table.
pub type Columns = Arc<[Metric]>;

/// A finite number as a cell; anything else (NaN, ±∞) is empty, as the
/// table files write it (`null`).
fn real(x: f64) -> Cell {
    if x.is_finite() {
        Cell::Real(x)
    } else {
        Cell::Empty
    }
}

/// The conduction mode as the table files write it.
fn mode_word(m: ConductionMode) -> &'static str {
    match m {
        ConductionMode::Ccm => "ccm",
        ConductionMode::Dcm => "dcm",
        ConductionMode::Boundary => "boundary",
    }
}

macro_rules! metrics {
    ($($(#[$doc:meta])* $variant:ident, $name:literal, $unit:literal, |$m:ident| $cell:expr;)*) => {
        /// One metric column of a study row.
        #[derive(Debug, Clone, Copy, PartialEq, Eq, Hash, PartialOrd, Ord)]
        #[non_exhaustive]
        pub enum Metric {
            $($(#[$doc])* $variant,)*
        }

        impl Metric {
            /// Every metric, in the order rows hold them (their names'
            /// byte order, as the table files have always listed them).
            pub const ALL: &'static [Metric] = &[$(Metric::$variant,)*];

            /// The column name (`led_current_avg_a`,
            /// `losses_w.inductor_dcr`).
            pub fn name(self) -> &'static str {
                match self {
                    $(Metric::$variant => $name,)*
                }
            }

            /// The SI unit symbol of the value (`A`, `V`, `W`, `s`, `Hz`,
            /// `%`); empty for a ratio, a count or a word.
            pub fn unit(self) -> &'static str {
                match self {
                    $(Metric::$variant => $unit,)*
                }
            }

            /// This metric's cell of a steady state's figures.
            pub fn cell(self, m: &Metrics) -> Cell {
                match self {
                    $(Metric::$variant => {
                        let $m = m;
                        $cell
                    })*
                }
            }
        }
    };
}

metrics! {
    /// Inductor valley over its average current (0 in DCM): how far from DCM.
    CcmMargin, "ccm_margin", "", |m| real(m.ccm_margin);
    /// CCM, DCM or boundary.
    ConductionMode, "conduction_mode", "", |m| Cell::Text(mode_word(m.conduction_mode).into());
    /// Cycles measured.
    CyclesMeasured, "cycles_measured", "", |m| Cell::Count(m.cycles_measured);
    /// Average diode current, A.
    DiodeCurrentAvgA, "diode_current_avg_a", "A", |m| real(m.diode_current_avg_a);
    /// RMS diode current, A.
    DiodeCurrentRmsA, "diode_current_rms_a", "A", |m| real(m.diode_current_rms_a);
    /// Duty cycle: on-time over period.
    Duty, "duty", "", |m| real(m.duty);
    /// LED power over input power.
    Efficiency, "efficiency", "", |m| real(m.efficiency);
    /// (input − LED − losses − change in stored energy) / input, over the measured cycles.
    EnergyBalanceResidual, "energy_balance_residual", "", |m| real(m.energy_balance_residual);
    /// DCM idle time per cycle, s.
    IdleTimeS, "idle_time_s", "s", |m| real(m.idle_time_s);
    /// Inductor average current, A.
    InductorCurrentAvgA, "inductor_current_avg_a", "A", |m| real(m.inductor_current_avg_a);
    /// Inductor peak current, A.
    InductorCurrentPeakA, "inductor_current_peak_a", "A", |m| real(m.inductor_current_peak_a);
    /// Inductor RMS current, A.
    InductorCurrentRmsA, "inductor_current_rms_a", "A", |m| real(m.inductor_current_rms_a);
    /// Inductor valley current, A.
    InductorCurrentValleyA, "inductor_current_valley_a", "A", |m| real(m.inductor_current_valley_a);
    /// Peak-to-peak inductor ripple, A.
    InductorRipplePpA, "inductor_ripple_pp_a", "A", |m| real(m.inductor_ripple_pp_a);
    /// RMS ripple current in the input capacitor, A.
    InputCapacitorRippleRmsA, "input_capacitor_ripple_rms_a", "A", |m| real(m.input_capacitor_ripple_rms_a);
    /// Average current from the supply, A.
    InputCurrentAvgA, "input_current_avg_a", "A", |m| real(m.input_current_avg_a);
    /// RMS current from the supply, A.
    InputCurrentRmsA, "input_current_rms_a", "A", |m| real(m.input_current_rms_a);
    /// Average power from the supply, W.
    InputPowerW, "input_power_w", "W", |m| real(m.input_power_w);
    /// Average LED current, A.
    LedCurrentAvgA, "led_current_avg_a", "A", |m| real(m.led_current_avg_a);
    /// Highest LED current, A.
    LedCurrentMaxA, "led_current_max_a", "A", |m| real(m.led_current_max_a);
    /// Lowest LED current, A.
    LedCurrentMinA, "led_current_min_a", "A", |m| real(m.led_current_min_a);
    /// Peak-to-peak LED current ripple, % of the average.
    LedCurrentRipplePct, "led_current_ripple_pct", "%", |m| real(m.led_current_ripple_pct);
    /// Peak-to-peak LED current ripple, A.
    LedCurrentRipplePpA, "led_current_ripple_pp_a", "A", |m| real(m.led_current_ripple_pp_a);
    /// RMS LED current, A.
    LedCurrentRmsA, "led_current_rms_a", "A", |m| real(m.led_current_rms_a);
    /// Average power into the LED string, W.
    LedPowerW, "led_power_w", "W", |m| real(m.led_power_w);
    /// Average LED string voltage, V.
    LedVoltageAvgV, "led_voltage_avg_v", "V", |m| real(m.led_voltage_avg_v);
    /// Highest LED string voltage, V.
    LedVoltageMaxV, "led_voltage_max_v", "V", |m| real(m.led_voltage_max_v);
    /// Loss, W: controller quiescent current from the supply.
    LossControllerQuiescent, "losses_w.controller_quiescent", "W", |m| real(m.losses_w.controller_quiescent);
    /// Loss, W: current-sense resistor.
    LossCurrentSense, "losses_w.current_sense", "W", |m| real(m.losses_w.current_sense);
    /// Loss, W: freewheel diode conduction.
    LossDiodeConduction, "losses_w.diode_conduction", "W", |m| real(m.losses_w.diode_conduction);
    /// Loss, W: diode junction capacitance charged at each turn-on, ½·C_j·ΔV² (dissipated in the switch channel).
    LossDiodeJunctionCapacitance, "losses_w.diode_junction_capacitance", "W", |m| real(m.losses_w.diode_junction_capacitance);
    /// Loss, W: diode reverse recovery, Q_rr·V per turn-on.
    LossDiodeReverseRecovery, "losses_w.diode_reverse_recovery", "W", |m| real(m.losses_w.diode_reverse_recovery);
    /// Loss, W: inductor core (improved generalized Steinmetz equation on the simulated flux).
    LossInductorCore, "losses_w.inductor_core", "W", |m| real(m.losses_w.inductor_core);
    /// Loss, W: inductor winding resistance.
    LossInductorDcr, "losses_w.inductor_dcr", "W", |m| real(m.losses_w.inductor_dcr);
    /// Loss, W: input capacitor ESR.
    LossInputCapacitorEsr, "losses_w.input_capacitor_esr", "W", |m| real(m.losses_w.input_capacitor_esr);
    /// Loss, W: output capacitor ESR.
    LossOutputCapacitorEsr, "losses_w.output_capacitor_esr", "W", |m| real(m.losses_w.output_capacitor_esr);
    /// Loss, W: energy dropped when a reverse inductor current was cut off at turn-off (only with an output capacitor charged above the input).
    LossReverseCurrentClamp, "losses_w.reverse_current_clamp", "W", |m| real(m.losses_w.reverse_current_clamp);
    /// Loss, W: supply source resistance.
    LossSourceResistance, "losses_w.source_resistance", "W", |m| real(m.losses_w.source_resistance);
    /// Loss, W: switch on-resistance (conduction).
    LossSwitchConduction, "losses_w.switch_conduction", "W", |m| real(m.losses_w.switch_conduction);
    /// Loss, W: gate drive, Q_g·V_drive per cycle.
    LossSwitchGateDrive, "losses_w.switch_gate_drive", "W", |m| real(m.losses_w.switch_gate_drive);
    /// Loss, W: switch output capacitance discharged at each turn-on, ½·C_oss·V².
    LossSwitchOutputCapacitance, "losses_w.switch_output_capacitance", "W", |m| real(m.losses_w.switch_output_capacitance);
    /// Loss, W: switch turn-on and turn-off transitions (linear-ramp estimate).
    LossSwitchTransition, "losses_w.switch_transition", "W", |m| real(m.losses_w.switch_transition);
    /// Switch off-time per cycle (including DCM idle), s.
    OffTimeS, "off_time_s", "s", |m| real(m.off_time_s);
    /// Switch on-time per cycle, s.
    OnTimeS, "on_time_s", "s", |m| real(m.on_time_s);
    /// RMS ripple current in the output capacitor, A.
    OutputCapacitorRippleRmsA, "output_capacitor_ripple_rms_a", "A", |m| real(m.output_capacitor_ripple_rms_a);
    /// Switching period, s.
    PeriodS, "period_s", "s", |m| real(m.period_s);
    /// RMS switch current, A.
    SwitchCurrentRmsA, "switch_current_rms_a", "A", |m| real(m.switch_current_rms_a);
    /// Highest switch-node voltage, V.
    SwitchNodeMaxV, "switch_node_max_v", "V", |m| real(m.switch_node_max_v);
    /// Lowest switch-node voltage, V.
    SwitchNodeMinV, "switch_node_min_v", "V", |m| real(m.switch_node_min_v);
    /// Switching frequency, Hz.
    SwitchingFrequencyHz, "switching_frequency_hz", "Hz", |m| real(m.switching_frequency_hz);
    /// Sum of the losses, W.
    TotalLossW, "total_loss_w", "W", |m| real(m.total_loss_w);
}

impl Metric {
    /// The metric named `name` (a column name as [`Metric::name`] gives
    /// it), if there is one.
    pub fn from_name(name: &str) -> Option<Metric> {
        Metric::ALL.iter().copied().find(|m| m.name() == name)
    }

    /// The value as a number, for metrics that are numbers.
    pub fn value(self, m: &Metrics) -> Option<f64> {
        self.cell(m).as_f64()
    }
}

impl fmt::Display for Metric {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        f.write_str(self.name())
    }
}

/// A metric equals its column name.
impl PartialEq<str> for Metric {
    fn eq(&self, other: &str) -> bool {
        self.name() == other
    }
}

/// A metric equals its column name.
impl PartialEq<&str> for Metric {
    fn eq(&self, other: &&str) -> bool {
        self.name() == *other
    }
}

/// A name that is not a metric column.
#[derive(Debug, Clone, PartialEq, Eq, thiserror::Error)]
#[error("`{0}` is not a metric column (e.g. led_current_avg_a, efficiency, losses_w.inductor_dcr)")]
pub struct UnknownMetric(pub String);

impl std::str::FromStr for Metric {
    type Err = UnknownMetric;
    fn from_str(s: &str) -> Result<Metric, UnknownMetric> {
        Metric::from_name(s).ok_or_else(|| UnknownMetric(s.to_string()))
    }
}

impl Serialize for Metric {
    fn serialize<S: Serializer>(&self, s: S) -> Result<S::Ok, S::Error> {
        s.serialize_str(self.name())
    }
}

impl<'de> Deserialize<'de> for Metric {
    fn deserialize<D: Deserializer<'de>>(d: D) -> Result<Metric, D::Error> {
        let name = String::deserialize(d)?;
        name.parse().map_err(serde::de::Error::custom)
    }
}

/// Every metric column, in the order rows hold them.
pub fn metric_columns() -> Vec<Metric> {
    Metric::ALL.to_vec()
}

fn flatten_into(prefix: &str, v: Value, out: &mut Map<String, Value>) {
    match v {
        Value::Object(m) => {
            for (k, x) in m {
                let key = if prefix.is_empty() {
                    k
                } else {
                    format!("{prefix}.{k}")
                };
                flatten_into(&key, x, out);
            }
        }
        other => {
            out.insert(prefix.to_string(), other);
        }
    }
}

/// Every metric as `name → value`, nested objects flattened to dotted
/// names (`losses_w.inductor_dcr`), made by serialising [`Metrics`]
/// itself (independent of [`Metric`]'s accessors).
pub fn flat_metrics(m: &Metrics) -> Map<String, Value> {
    let mut out = Map::new();
    flatten_into("", serde_json::to_value(m).unwrap_or(Value::Null), &mut out);
    out
}
