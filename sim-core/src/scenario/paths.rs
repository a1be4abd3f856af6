//! Setting fields by dotted path: `--set PATH=VALUE` overrides on a
//! scenario held as JSON, and the table of numeric fields by path that
//! sets a study point's value on a [`Scenario`] directly
//! ([`Scenario::with_value`]), falling back to the override route for
//! anything outside it.

use super::{Capacitor, ControllerSpec, Diode, Load, PartData, Scenario, Thermal};
use crate::error::ScenarioError;

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

/// The numeric value at a dotted path of a scenario held as JSON, or why
/// there is none (the paths a tolerance may name).
pub(super) fn numeric_field(base: &serde_json::Value, path: &str) -> Result<f64, String> {
    let mut node = base;
    for part in path.split('.') {
        node = match node.get(part) {
            Some(n) => n,
            None => {
                return Err(format!(
                    "the scenario has no field `{part}` here; a path names a numeric field \
                     that the scenario sets, e.g. supply.voltage_v or inductor.inductance_h"
                ))
            }
        };
    }
    node.as_f64()
        .ok_or_else(|| format!("`{path}` is not a number in the scenario ({node})"))
}

// ---------------------------------------------------------------------------
// The numeric fields by path, typed: a study point's value set on a
// `Scenario` directly.

/// Where a numeric field lives in a [`Scenario`].
enum Slot<'a> {
    /// A real number.
    Real(&'a mut f64),
    /// An optional real number (set: `Some`).
    Opt(&'a mut Option<f64>),
    /// A count.
    U32(&'a mut u32),
    /// A large count.
    U64(&'a mut u64),
}

/// The path table: every numeric field a dotted path can name in `s` as
/// it stands (the variant of the diode, load and controller chosen, the
/// optional sections present). `None`: the path names no such field here.
fn slot<'a>(s: &'a mut Scenario, path: &str) -> Option<Slot<'a>> {
    use Slot::{Opt, Real, U32, U64};
    let (head, rest) = path.split_once('.')?;
    Some(match head {
        "supply" => match rest {
            "voltage_v" => Real(&mut s.supply.voltage_v),
            "source_resistance_ohm" => Real(&mut s.supply.source_resistance_ohm),
            "input_range_v.min_v" => Real(&mut s.supply.input_range_v.as_mut()?.min_v),
            "input_range_v.max_v" => Real(&mut s.supply.input_range_v.as_mut()?.max_v),
            _ => return None,
        },
        "input_capacitor" => capacitor(s.input_capacitor.as_mut()?, rest)?,
        "output_capacitor" => capacitor(s.output_capacitor.as_mut()?, rest)?,
        "switch" if rest == "on_resistance_ohm" => Real(&mut s.switch.on_resistance_ohm),
        "diode" => match (&mut s.diode, rest) {
            (
                Diode::FixedDrop {
                    forward_voltage_v, ..
                },
                "forward_voltage_v",
            ) => Real(forward_voltage_v),
            (
                Diode::FixedDrop {
                    series_resistance_ohm,
                    ..
                },
                "series_resistance_ohm",
            ) => Real(series_resistance_ohm),
            (
                Diode::Shockley {
                    saturation_current_a,
                    emission_coefficient,
                    series_resistance_ohm,
                    temperature_c,
                    reference_temperature_c,
                    bandgap_ev,
                    is_temp_exponent,
                    forward_voltage_tempco_v_per_k,
                    tempco_current_a,
                },
                field,
            ) => match field {
                "saturation_current_a" => Real(saturation_current_a),
                "emission_coefficient" => Real(emission_coefficient),
                "series_resistance_ohm" => Real(series_resistance_ohm),
                "temperature_c" => Real(temperature_c),
                "reference_temperature_c" => Opt(reference_temperature_c),
                "bandgap_ev" => Opt(bandgap_ev),
                "is_temp_exponent" => Opt(is_temp_exponent),
                "forward_voltage_tempco_v_per_k" => Opt(forward_voltage_tempco_v_per_k),
                "tempco_current_a" => Opt(tempco_current_a),
                _ => return None,
            },
            _ => return None,
        },
        "inductor" => match rest {
            "inductance_h" => Real(&mut s.inductor.inductance_h),
            "dcr_ohm" => Real(&mut s.inductor.dcr_ohm),
            "saturation_current_a" => Opt(&mut s.inductor.saturation_current_a),
            _ => return None,
        },
        "load" => match (&mut s.load, rest) {
            (
                Load::LedExponential {
                    count,
                    saturation_current_a,
                    emission_coefficient,
                    series_resistance_ohm,
                    junction_temperature_c,
                    reference_temperature_c,
                    bandgap_ev,
                    is_temp_exponent,
                    forward_voltage_tempco_v_per_k,
                    tempco_current_a,
                },
                field,
            ) => match field {
                "count" => U32(count),
                "saturation_current_a" => Real(saturation_current_a),
                "emission_coefficient" => Real(emission_coefficient),
                "series_resistance_ohm" => Real(series_resistance_ohm),
                "junction_temperature_c" => Real(junction_temperature_c),
                "reference_temperature_c" => Opt(reference_temperature_c),
                "bandgap_ev" => Opt(bandgap_ev),
                "is_temp_exponent" => Opt(is_temp_exponent),
                "forward_voltage_tempco_v_per_k" => Opt(forward_voltage_tempco_v_per_k),
                "tempco_current_a" => Opt(tempco_current_a),
                _ => return None,
            },
            (
                Load::LedKnee {
                    count,
                    knee_voltage_v,
                    dynamic_resistance_ohm,
                },
                field,
            ) => match field {
                "count" => U32(count),
                "knee_voltage_v" => Real(knee_voltage_v),
                "dynamic_resistance_ohm" => Real(dynamic_resistance_ohm),
                _ => return None,
            },
            (Load::Resistor { resistance_ohm }, "resistance_ohm") => Real(resistance_ohm),
            _ => return None,
        },
        "sense_resistor" if rest == "resistance_ohm" => {
            Real(&mut s.sense_resistor.as_mut()?.resistance_ohm)
        }
        "controller" => match (&mut s.controller, rest) {
            (
                ControllerSpec::ConstantOffTime {
                    peak_current_a,
                    off_time_s,
                    delay_s,
                    min_on_time_s,
                },
                field,
            ) => Real(match field {
                "peak_current_a" => peak_current_a,
                "off_time_s" => off_time_s,
                "delay_s" => delay_s,
                "min_on_time_s" => min_on_time_s,
                _ => return None,
            }),
            (
                ControllerSpec::Hysteretic {
                    upper_current_a,
                    lower_current_a,
                    turn_off_delay_s,
                    turn_on_delay_s,
                },
                field,
            ) => Real(match field {
                "upper_current_a" => upper_current_a,
                "lower_current_a" => lower_current_a,
                "turn_off_delay_s" => turn_off_delay_s,
                "turn_on_delay_s" => turn_on_delay_s,
                _ => return None,
            }),
            (ControllerSpec::FixedDuty { frequency_hz, duty }, field) => Real(match field {
                "frequency_hz" => frequency_hz,
                "duty" => duty,
                _ => return None,
            }),
        },
        "simulation" => {
            let m = &mut s.simulation;
            match rest {
                "steady_state_tolerance" => Real(&mut m.steady_state_tolerance),
                "max_cycles" => U64(&mut m.max_cycles),
                "max_time_s" => Real(&mut m.max_time_s),
                "record_cycles" => U32(&mut m.record_cycles),
                "curve_segments" => U32(&mut m.curve_segments),
                "curve_tolerance_v" => Real(&mut m.curve_tolerance_v),
                "curve_slope_tolerance" => Real(&mut m.curve_slope_tolerance),
                "samples_per_interval" => U32(&mut m.samples_per_interval),
                "max_interval_s" => Real(&mut m.max_interval_s),
                _ => return None,
            }
        }
        "parts" => part_slot(&mut s.parts, rest)?,
        "tolerances" => {
            let vf = s.tolerances.as_mut()?.led_forward_voltage.as_mut()?;
            match rest {
                "led_forward_voltage.tolerance_pct" => Real(&mut vf.tolerance_pct),
                "led_forward_voltage.at_current_a" => Opt(&mut vf.at_current_a),
                _ => return None,
            }
        }
        "spec" => {
            let l = s.spec.as_mut()?;
            Opt(match rest {
                "target_current_a" => &mut l.target_current_a,
                "current_within_pct" => &mut l.current_within_pct,
                "max_ripple_pct" => &mut l.max_ripple_pct,
                "min_efficiency" => &mut l.min_efficiency,
                _ => return None,
            })
        }
        _ => return None,
    })
}

fn capacitor<'a>(c: &'a mut Capacitor, field: &str) -> Option<Slot<'a>> {
    Some(Slot::Real(match field {
        "capacitance_f" => &mut c.capacitance_f,
        "esr_ohm" => &mut c.esr_ohm,
        _ => return None,
    }))
}

fn thermal<'a>(t: &'a mut Option<Thermal>, field: &str) -> Option<Slot<'a>> {
    let t = t.as_mut()?;
    Some(Slot::Real(match field {
        "resistance_c_per_w" => &mut t.resistance_c_per_w,
        "max_temperature_c" => &mut t.max_temperature_c,
        _ => return None,
    }))
}

/// The `parts.` paths of the table.
fn part_slot<'a>(p: &'a mut PartData, path: &str) -> Option<Slot<'a>> {
    use Slot::{Opt, Real, U32};
    let (head, rest) = path.split_once('.').unwrap_or((path, ""));
    Some(match (head, rest) {
        ("ambient_temperature_c", "") => Real(&mut p.ambient_temperature_c),
        ("current_accuracy_pct", "") => Opt(&mut p.current_accuracy_pct),
        ("led_current_target_a", "") => Opt(&mut p.led_current_target_a),
        ("switch", field) => {
            let w = &mut p.switch;
            match field {
                "rise_time_s" => Real(&mut w.rise_time_s),
                "fall_time_s" => Real(&mut w.fall_time_s),
                "gate_charge_c" => Real(&mut w.gate_charge_c),
                "gate_drive_v" => Real(&mut w.gate_drive_v),
                "output_capacitance_f" => Real(&mut w.output_capacitance_f),
                "voltage_rating_v" => Opt(&mut w.voltage_rating_v),
                "peak_current_rating_a" => Opt(&mut w.peak_current_rating_a),
                "rms_current_rating_a" => Opt(&mut w.rms_current_rating_a),
                _ => thermal(&mut w.thermal, field.strip_prefix("thermal.")?)?,
            }
        }
        ("diode", field) => {
            let d = &mut p.diode;
            match field {
                "reverse_recovery_charge_c" => Real(&mut d.reverse_recovery_charge_c),
                "voltage_rating_v" => Opt(&mut d.voltage_rating_v),
                "peak_current_rating_a" => Opt(&mut d.peak_current_rating_a),
                "rms_current_rating_a" => Opt(&mut d.rms_current_rating_a),
                "average_current_rating_a" => Opt(&mut d.average_current_rating_a),
                "junction_capacitance_f" => Real(&mut d.junction_capacitance_f),
                _ => thermal(&mut d.thermal, field.strip_prefix("thermal.")?)?,
            }
        }
        ("inductor", field) => {
            let l = &mut p.inductor;
            if let Some(f) = field.strip_prefix("core.") {
                let c = l.core.as_mut()?;
                match f {
                    "turns" => U32(&mut c.turns),
                    "area_m2" => Real(&mut c.area_m2),
                    "volume_m3" => Real(&mut c.volume_m3),
                    "steinmetz_k" => Real(&mut c.steinmetz_k),
                    "steinmetz_alpha" => Real(&mut c.steinmetz_alpha),
                    "steinmetz_beta" => Real(&mut c.steinmetz_beta),
                    _ => return None,
                }
            } else if field == "rms_current_rating_a" {
                Opt(&mut l.rms_current_rating_a)
            } else {
                thermal(&mut l.thermal, field.strip_prefix("thermal.")?)?
            }
        }
        ("input_capacitor" | "output_capacitor", field) => {
            let c = if head == "input_capacitor" {
                &mut p.input_capacitor
            } else {
                &mut p.output_capacitor
            };
            match field {
                "tolerance_pct" => Real(&mut c.tolerance_pct),
                "voltage_rating_v" => Opt(&mut c.voltage_rating_v),
                "ripple_current_rating_a" => Opt(&mut c.ripple_current_rating_a),
                _ => thermal(&mut c.thermal, field.strip_prefix("thermal.")?)?,
            }
        }
        ("led", field) => {
            let led = p.led.as_mut()?;
            Real(match field {
                "resistance_c_per_w" => &mut led.resistance_c_per_w,
                "max_junction_temperature_c" => &mut led.max_junction_temperature_c,
                "forward_voltage_tempco_v_per_k" => &mut led.forward_voltage_tempco_v_per_k,
                "heat_fraction" => &mut led.heat_fraction,
                _ => return None,
            })
        }
        ("controller", field) => {
            let ic = &mut p.controller;
            match field {
                "quiescent_current_a" => Real(&mut ic.quiescent_current_a),
                "min_frequency_hz" => Opt(&mut ic.min_frequency_hz),
                "max_frequency_hz" => Opt(&mut ic.max_frequency_hz),
                "min_on_time_s" => Opt(&mut ic.min_on_time_s),
                _ => return None,
            }
        }
        _ => return None,
    })
}

/// Largest whole number a value is stored as an integer for (as
/// [`apply_override`] does), beyond which a count cannot take it.
const WHOLE_LIMIT: f64 = 9e15;

impl Scenario {
    /// This scenario with the numeric field at `path` set to `value_si`
    /// (in the unit the field's name carries), validated once: what the
    /// same value written into the file would load as, bit for bit. See
    /// [`Scenario::with_values`].
    pub fn with_value(&self, path: &str, value_si: f64) -> Result<Scenario, ScenarioError> {
        self.with_values(&[(path.to_string(), value_si)])
    }

    /// This scenario with each `(path, value)` set in turn, validated
    /// once. A path of the numeric field table (every numeric field the
    /// scenario holds as it stands — what a study varies) is set in place;
    /// anything else (a path naming no field here, an optional section
    /// that is absent, a count given a fraction, a value that is not a
    /// finite number) goes the way of a `PATH=VALUE` override on the
    /// scenario as JSON, so the result or the error is the same either way.
    pub fn with_values(&self, sets: &[(String, f64)]) -> Result<Scenario, ScenarioError> {
        match self.with_values_unvalidated(sets) {
            Some(s) => {
                s.validate()?;
                Ok(s)
            }
            None => self.with_values_as_json(sets),
        }
    }

    /// This scenario with each `(path, value)` set in place, not yet
    /// validated: what [`Scenario::with_values`] validates. None when a
    /// set needs the JSON route (then use `with_values`).
    pub(crate) fn with_values_unvalidated(&self, sets: &[(String, f64)]) -> Option<Scenario> {
        let mut s = self.clone();
        for (path, x) in sets {
            if !s.set_in_place(path, *x) {
                return None;
            }
        }
        // What the JSON route's round trip does to the fields it leaves
        // out when they are zero: a negative zero comes back positive.
        if s.parts.diode.junction_capacitance_f == 0.0 {
            s.parts.diode.junction_capacitance_f = 0.0;
        }
        if s.parts.is_empty() {
            s.parts = PartData::default();
        }
        Some(s)
    }

    /// The numeric field at `path` as a study reads its nominal value: the
    /// table's value, or (for a path the table does not hold here) what
    /// the scenario as JSON has there, or why there is no number.
    pub(crate) fn numeric_field(&self, path: &str) -> Result<f64, String> {
        match self.numeric_value(path) {
            Some(v) => Ok(v),
            None => numeric_field(
                &serde_json::to_value(self).unwrap_or(serde_json::Value::Null),
                path,
            ),
        }
    }

    /// Sets the field at `path` when the table has it and the value fits
    /// it as the JSON reader would store it; false otherwise (nothing set).
    fn set_in_place(&mut self, path: &str, x: f64) -> bool {
        if !x.is_finite() {
            return false;
        }
        // A whole number travels as a JSON integer (so −0 becomes 0).
        let whole = x.fract() == 0.0 && x.abs() < WHOLE_LIMIT;
        let x = if whole && x == 0.0 { 0.0 } else { x };
        match slot(self, path) {
            Some(Slot::Real(v)) => *v = x,
            Some(Slot::Opt(v)) => *v = Some(x),
            Some(Slot::U32(v)) if whole && (0.0..=f64::from(u32::MAX)).contains(&x) => {
                *v = x as u32;
            }
            Some(Slot::U64(v)) if whole && x >= 0.0 => *v = x as u64,
            _ => return false,
        }
        true
    }

    /// The JSON route: the scenario as JSON, each value written as exact
    /// text by [`apply_override`], read back and validated.
    fn with_values_as_json(&self, sets: &[(String, f64)]) -> Result<Scenario, ScenarioError> {
        let mut v = serde_json::to_value(self).unwrap_or(serde_json::Value::Null);
        for (path, x) in sets {
            apply_override(&mut v, path, &format!("{x:e}"))?;
        }
        Scenario::from_json_value(&v)
    }

    /// The numeric field at `path` as the table finds it (None: the path
    /// names no numeric field of this scenario as it stands, or an
    /// optional one that is not set).
    pub fn numeric_value(&self, path: &str) -> Option<f64> {
        match slot(&mut self.clone(), path)? {
            Slot::Real(v) => Some(*v),
            Slot::Opt(v) => *v,
            Slot::U32(v) => Some(f64::from(*v)),
            Slot::U64(v) => Some(*v as f64),
        }
    }
}
