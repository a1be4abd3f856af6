//! The starter scenarios and their text in engineering notation (what
//! `chopwave template` prints).

use super::*;
use crate::units::{parse_quantity, Unit};
use serde::de::{self, Deserializer, Visitor};
use serde::{Deserialize, Serialize};
use std::fmt;

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
    use super::tolerances::{
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
pub(super) fn field_unit_symbol(key: &str) -> Option<(Unit, &'static str)> {
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
