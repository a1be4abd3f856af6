//! A sample's scenario, set in place and validated once, against the
//! JSON route written out here (each value as exact text into the
//! scenario as JSON, read back unchecked, the LED factor applied, checked
//! once); and a failed sample keeps its scenario error as the source.

use super::*;
use crate::error::ScenarioError;
use crate::scenario::{apply_override, Scenario};
use crate::study::run::PointError;
use crate::study::{exact_text, scenario_json};

fn cabin() -> Scenario {
    Scenario::from_json_str(include_str!("../../../../scenarios/cabin-light-9-32v.json")).unwrap()
}

/// The sample by the JSON route, or its error's text.
fn json_route(base: &Scenario, params: &[Param], x: &[f64]) -> Result<Scenario, String> {
    let mut v = scenario_json(base);
    let mut led = None;
    for (p, &x) in params.iter().zip(x) {
        match &p.kind {
            ParamKind::Field { path, .. } => apply_override(&mut v, path, &exact_text(x)).unwrap(),
            ParamKind::Supply { .. } => {
                apply_override(&mut v, "supply.voltage_v", &exact_text(x)).unwrap()
            }
            ParamKind::LedVoltage { at_current_a } => led = Some((x, *at_current_a)),
        }
    }
    let mut s: Scenario = serde_json::from_value(v).map_err(|e| e.to_string())?;
    if let Some((f, i)) = led {
        scale_led_voltage(&mut s, f, i).map_err(|e| e.to_string())?;
    }
    s.validate().map_err(|e| format!("invalid sample: {e}"))?;
    Ok(s)
}

#[test]
fn a_sample_set_in_place_equals_the_json_route_bit_for_bit() {
    let s = cabin();
    let params = params(&s).unwrap();
    let led = params
        .iter()
        .position(|p| matches!(p.kind, ParamKind::LedVoltage { .. }))
        .expect("the cabin light tolerances its LED voltage");
    let supply = params
        .iter()
        .position(|p| matches!(p.kind, ParamKind::Supply { .. }))
        .unwrap();
    let mut cases: Vec<Vec<f64>> = (0..64).map(|k| sample_inputs(&params, 7, k)).collect();
    // Stressed samples: supplies near and below the LED string's voltage,
    // factors far off, an inductance that is not allowed (negative).
    for v_in in [4.0, 6.5, 9.0, 32.0] {
        for factor in [0.2, 0.8, 1.0, 1.3, 2.5] {
            for l_scale in [1.0, -1.0] {
                let mut x = sample_inputs(&params, 7, 0);
                x[supply] = v_in;
                x[led] = factor;
                x[0] *= l_scale;
                cases.push(x);
            }
        }
    }
    let (mut ok, mut failed) = (0, 0);
    for x in &cases {
        match (scenario_at(&s, &params, x), json_route(&s, &params, x)) {
            (Ok(a), Ok(b)) => {
                assert_eq!(
                    serde_json::to_string(&a).unwrap(),
                    serde_json::to_string(&b).unwrap(),
                    "{x:?}"
                );
                ok += 1;
            }
            (Err(a), Err(b)) => {
                assert_eq!(a.to_string(), b, "{x:?}");
                failed += 1;
            }
            (a, b) => panic!("{x:?}: {a:?} vs {b:?}"),
        }
    }
    assert!(ok >= 64 && failed >= 20, "{ok} valid, {failed} invalid");
}

#[test]
fn a_failed_sample_keeps_its_scenario_error() {
    let s = cabin();
    let params = params(&s).unwrap();
    let mut x = sample_inputs(&params, 7, 0);
    x[0] = -x[0];
    let e = scenario_at(&s, &params, &x).unwrap_err();
    assert!(matches!(e, PointError::InvalidSample(_)), "{e:?}");
    let source = std::error::Error::source(&e)
        .and_then(|s| s.downcast_ref::<ScenarioError>())
        .expect("the scenario error is the source");
    assert!(
        source.to_string().contains("inductor.inductance_h"),
        "{source}"
    );
    assert_eq!(e.to_string(), format!("invalid sample: {source}"));
}
