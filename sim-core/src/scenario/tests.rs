//! Unit tests of the scenario module.

use super::template::field_unit_symbol;
use super::*;
use crate::error::ScenarioError;
use crate::units::Unit;

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
