//! Tests of the reshaped scenario module (its imports are checked with
//! every module's by `tests/layering.rs`): the held-on current of the
//! operating-point check, and study values set on a scenario directly.

use super::*;
use crate::error::ScenarioError;

/// The bundled example scenarios (the files `chopwave` ships).
pub(super) fn bundled() -> Vec<Scenario> {
    [
        include_str!("../../../scenarios/cabin-light-9-32v.json"),
        include_str!("../../../scenarios/cove-light-fixed-duty.json"),
        include_str!("../../../scenarios/grow-light-48v.json"),
        include_str!("../../../scenarios/headlamp-4cell.json"),
        include_str!("../../../scenarios/tube-325v-bus.json"),
        include_str!("../../../scenarios/undersized-inductor-dcm.json"),
    ]
    .iter()
    .map(|t| Scenario::from_json_str(t).expect("bundled scenario loads"))
    .collect()
}

/// The held-on current as the validation found it before: a 200-step
/// bisection on [0, 1 MA] (kept here as the reference).
fn bisection_i_on(s: &Scenario, r_series: f64) -> f64 {
    let (mut lo, mut hi) = (0.0_f64, 1e6_f64);
    for _ in 0..200 {
        let mid = 0.5 * (lo + hi);
        if s.load_voltage_v(mid) + r_series * mid < s.supply.voltage_v {
            lo = mid;
        } else {
            hi = mid;
        }
    }
    lo
}

fn r_series(s: &Scenario) -> f64 {
    s.supply.source_resistance_ohm + s.switch.on_resistance_ohm + s.inductor.dcr_ohm
}

fn set_threshold(s: &mut Scenario, x: f64) {
    match &mut s.controller {
        ControllerSpec::ConstantOffTime { peak_current_a, .. } => *peak_current_a = x,
        ControllerSpec::Hysteretic {
            upper_current_a,
            lower_current_a,
            ..
        } => {
            *lower_current_a = 0.5 * x;
            *upper_current_a = x;
        }
        ControllerSpec::FixedDuty { .. } => {}
    }
}

/// Designs whose held-on current falls in the thresholds' range: every
/// bundled scenario and the starter at a few supply voltages and series
/// resistances.
fn held_on_designs() -> Vec<Scenario> {
    let mut out = Vec::new();
    let mut bases = bundled();
    bases.push(template());
    for base in bases {
        for scale in [1.0, 0.93, 1.07, 1.5] {
            for extra_ohm in [0.0, 0.37, 4.0] {
                let mut s = base.clone();
                s.supply.voltage_v *= scale;
                s.switch.on_resistance_ohm += extra_ohm;
                out.push(s);
            }
        }
    }
    out
}

/// The new solve lands on the same float as the old bisection, and the
/// validation's decision (threshold reached or not) is the old one at
/// the threshold's edge: at the held-on current itself and one float
/// either side.
#[test]
fn held_on_current_and_decision_match_the_old_bisection() {
    let mut checked = 0;
    for base in held_on_designs() {
        let r = r_series(&base);
        let reference = bisection_i_on(&base, r);
        let fast = base.held_on_current_a(r);
        assert_eq!(
            fast.to_bits(),
            reference.to_bits(),
            "{}: {fast} vs {reference}",
            base.name
        );
        if matches!(base.controller, ControllerSpec::FixedDuty { .. }) {
            continue;
        }
        for threshold in [reference.next_down(), reference, reference.next_up()] {
            if !(1e-6..=1e3).contains(&threshold) {
                continue;
            }
            let mut s = base.clone();
            set_threshold(&mut s, threshold);
            let old_says_unreachable = reference <= threshold;
            let problems = match s.validate() {
                Ok(()) => Vec::new(),
                Err(e) => e.problems(),
            };
            let flagged = problems
                .iter()
                .any(|p| p.reason.contains("never reaches this threshold"));
            assert_eq!(
                flagged, old_says_unreachable,
                "{} at threshold {threshold:e} (held-on {reference:e}): {problems:?}",
                s.name
            );
            checked += 1;
        }
    }
    assert!(checked > 100, "only {checked} edge cases checked");
}

/// Against closed forms: with a resistor load the held-on current is
/// V/(R + r) and with a knee LED string (V − N·V_k)/(N·r_d + r) (Ohm's
/// law on the series loop).
#[test]
fn held_on_current_matches_ohms_law() {
    let mut s = template();
    for (v, r_load, r_sw) in [(12.0, 10.0, 0.1), (48.0, 3.3, 0.0), (5.0, 1e3, 2.0)] {
        s.supply.voltage_v = v;
        s.switch.on_resistance_ohm = r_sw;
        s.load = Load::Resistor {
            resistance_ohm: r_load,
        };
        let r = r_series(&s);
        let want = v / (r_load + r);
        let got = s.held_on_current_a(r);
        assert!((got - want).abs() <= 1e-14 * want, "{got} vs {want}");
    }
    for (v, n, vk, rd) in [
        (24.0, 6u32, 2.8, 0.4),
        (12.0, 3, 3.0, 0.0),
        (325.0, 90, 2.9, 1.1),
    ] {
        s.supply.voltage_v = v;
        s.load = Load::LedKnee {
            count: n,
            knee_voltage_v: vk,
            dynamic_resistance_ohm: rd,
        };
        let r = r_series(&s);
        let want = (v - f64::from(n) * vk) / (f64::from(n) * rd + r);
        let got = s.held_on_current_a(r);
        assert!((got - want).abs() <= 1e-12 * want, "{got} vs {want}");
    }
}

/// The route a study point took before: the scenario as JSON, the value
/// written as exact text by the override code, read back and validated.
fn by_json(base: &Scenario, path: &str, x: f64) -> Result<Scenario, ScenarioError> {
    let mut v = serde_json::to_value(base).unwrap();
    apply_override(&mut v, path, &format!("{x:e}"))?;
    Scenario::from_json_value(&v)
}

/// Every numeric leaf of a scenario as JSON, by dotted path (what a
/// `--vary` accepts).
fn numeric_leaves(v: &serde_json::Value, at: &str, out: &mut Vec<String>) {
    if let Some(map) = v.as_object() {
        for (k, child) in map {
            let path = if at.is_empty() {
                k.clone()
            } else {
                format!("{at}.{k}")
            };
            if child.is_number() {
                out.push(path);
            } else {
                numeric_leaves(child, &path, out);
            }
        }
    }
}

/// Designs covering every variant of the tagged parts and every optional
/// section the table knows.
fn path_designs() -> Vec<Scenario> {
    let mut out = bundled();
    let mut full = template_with_parts();
    full.sense_resistor = Some(SenseResistor {
        resistance_ohm: 0.1,
        position: None,
    });
    full.inductor.saturation_current_a = Some(2.0);
    full.parts.inductor.core = Some(Core {
        turns: 20,
        area_m2: 2e-5,
        volume_m3: 1e-6,
        steinmetz_k: 10.0,
        steinmetz_alpha: 1.4,
        steinmetz_beta: 2.5,
    });
    out.push(full.clone());
    let mut shockley = full.clone();
    shockley.diode = Diode::Shockley {
        saturation_current_a: 1e-6,
        emission_coefficient: 1.1,
        series_resistance_ohm: 0.05,
        temperature_c: 60.0,
        reference_temperature_c: Some(25.0),
        bandgap_ev: None,
        is_temp_exponent: Some(2.0),
        forward_voltage_tempco_v_per_k: Some(-1.5e-3),
        tempco_current_a: Some(0.5),
    };
    shockley.controller = ControllerSpec::Hysteretic {
        upper_current_a: 0.8,
        lower_current_a: 0.6,
        turn_off_delay_s: 5e-8,
        turn_on_delay_s: 5e-8,
    };
    out.push(shockley);
    let mut resistor = template();
    resistor.load = Load::Resistor {
        resistance_ohm: 8.0,
    };
    out.push(resistor);
    out
}

/// Setting a value on the scenario directly gives the scenario the JSON
/// route gives, bit for bit (compared as serialised text, where a
/// negative zero shows, and field by field), or the same error, for
/// every numeric path of every design and values of every kind.
#[test]
fn with_value_equals_the_json_route_on_every_numeric_path() {
    let mut compared = 0;
    for base in path_designs() {
        let mut paths = Vec::new();
        numeric_leaves(&serde_json::to_value(&base).unwrap(), "", &mut paths);
        // Paths the table must set in place: every numeric leaf.
        for path in &paths {
            assert!(
                base.numeric_value(path).is_some(),
                "{}: `{path}` is not in the path table",
                base.name
            );
        }
        paths.extend(
            [
                "name",
                "supply.volts",
                "diode.forward_voltage_v",
                "parts.led.heat_fraction",
                "spec.min_efficiency",
                "supply.voltage_v.x",
                "",
            ]
            .map(String::from),
        );
        for path in &paths {
            let x0 = base.numeric_value(path).unwrap_or(1.0);
            for x in [
                x0,
                x0 * 1.01,
                x0 * 0.5,
                x0 + 1.0,
                3.0,
                2.5,
                0.0,
                -0.0,
                -1.0,
                1e16,
                f64::NAN,
            ] {
                let typed = base.with_value(path, x);
                let json = by_json(&base, path, x);
                match (&typed, &json) {
                    (Ok(a), Ok(b)) => {
                        assert_eq!(a, b, "{}: {path}={x:e}", base.name);
                        assert_eq!(
                            serde_json::to_string(a).unwrap(),
                            serde_json::to_string(b).unwrap(),
                            "{}: {path}={x:e}",
                            base.name
                        );
                    }
                    (Err(a), Err(b)) => {
                        assert_eq!(a.to_string(), b.to_string(), "{}: {path}={x:e}", base.name)
                    }
                    _ => panic!("{}: {path}={x:e}: {typed:?} vs {json:?}", base.name),
                }
                compared += 1;
            }
        }
    }
    assert!(compared > 1000, "only {compared} comparisons");
}

/// A value set on the table's paths really lands in the field (not only
/// through the fallback): the field reads back the value.
#[test]
fn with_value_sets_the_named_field() {
    let s = template();
    let t = s.with_value("inductor.inductance_h", 68e-6).unwrap();
    assert_eq!(t.inductor.inductance_h.to_bits(), 68e-6_f64.to_bits());
    let t = s.with_value("load.count", 2.0).unwrap();
    assert!(matches!(t.load, Load::LedExponential { count: 2, .. }));
    let e = s.with_value("inductor.inductance_h", -1e-6).unwrap_err();
    assert!(e.to_string().contains("inductor.inductance_h"), "{e}");
}
