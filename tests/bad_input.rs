//! Every bad value gives an error naming its field, and nothing panics.

use sim_core::scenario::{template, Scenario};

/// (field path, bad JSON value) pairs, each checked alone on the template.
const CASES: &[(&str, &str)] = &[
    ("supply.voltage_v", "-12"),
    ("supply.voltage_v", "0"),
    ("supply.voltage_v", "1e6"),
    ("supply.source_resistance_ohm", "-0.1"),
    ("supply.input_range_v.min_v", "-1"),
    ("input_capacitor.capacitance_f", "0"),
    ("input_capacitor.esr_ohm", "-1e-3"),
    ("switch.on_resistance_ohm", "-0.05"),
    ("diode.forward_voltage_v", "-0.3"),
    ("diode.series_resistance_ohm", "-1"),
    ("inductor.inductance_h", "-4.7e-6"),
    ("inductor.inductance_h", "0"),
    ("inductor.inductance_h", "1e30"),
    ("inductor.dcr_ohm", "-0.01"),
    ("inductor.saturation_current_a", "-2"),
    ("load.count", "0"),
    ("load.saturation_current_a", "0"),
    ("load.emission_coefficient", "-2"),
    ("load.series_resistance_ohm", "-0.3"),
    ("load.junction_temperature_c", "900"),
    ("load.reference_temperature_c", "-300"),
    ("load.bandgap_ev", "0"),
    ("load.bandgap_ev", "40"),
    ("load.is_temp_exponent", "-1"),
    ("load.forward_voltage_tempco_v_per_k", "0.5"),
    ("load.tempco_current_a", "-1"),
    ("controller.peak_current_a", "0"),
    ("controller.peak_current_a", "-1"),
    ("controller.off_time_s", "1e-15"),
    ("controller.off_time_s", "-2e-6"),
    ("controller.delay_s", "-1e-9"),
    ("controller.min_on_time_s", "1"),
    ("simulation.steady_state_tolerance", "0"),
    ("simulation.max_cycles", "0"),
    ("simulation.record_cycles", "0"),
    ("simulation.curve_segments", "0"),
    ("simulation.curve_segments", "1000"),
    ("simulation.max_interval_s", "-1"),
    ("inductor.inductance_h", "\"4.7uu\""),
    ("inductor.inductance_h", "\"1e\""),
    ("inductor.inductance_h", "\"47uF\""),
    ("controller.off_time_s", "\"2uH\""),
    ("supply.voltage_v", "\"twelve\""),
    ("supply.voltage_v", "true"),
    ("load.count", "2.5"),
    ("inductor.inductanse_h", "1e-6"),
];

#[test]
fn every_bad_value_names_its_field() {
    for (path, value) in CASES {
        let mut v = serde_json::to_value(template()).unwrap();
        sim_core::scenario::apply_override(&mut v, path, "0").unwrap();
        // Put the raw JSON value in place (apply_override would turn text into a string).
        let raw: serde_json::Value = serde_json::from_str(value).unwrap();
        let mut node = &mut v;
        let parts: Vec<&str> = path.split('.').collect();
        for p in &parts[..parts.len() - 1] {
            node = node.get_mut(*p).unwrap();
        }
        node[parts[parts.len() - 1]] = raw;
        let text = serde_json::to_string_pretty(&v).unwrap();
        let result = std::panic::catch_unwind(|| Scenario::from_json_str(&text));
        let err = result
            .unwrap_or_else(|_| panic!("{path} = {value}: panicked"))
            .expect_err(&format!("{path} = {value} accepted"));
        let named = err.problems().iter().any(|p| p.path == *path);
        assert!(
            named,
            "{path} = {value}: error does not name the field: {err}"
        );
    }
}

#[test]
fn missing_field_is_named() {
    let mut v = serde_json::to_value(template()).unwrap();
    v["inductor"]
        .as_object_mut()
        .unwrap()
        .remove("inductance_h");
    let err = Scenario::from_json_str(&v.to_string()).unwrap_err();
    assert!(err.to_string().contains("inductance_h"), "{err}");
}

#[test]
fn malformed_json_gives_line_and_column() {
    let err = Scenario::from_json_str("{\n  \"name\": \"x\",\n  \"supply\": {\n").unwrap_err();
    match err {
        sim_core::ScenarioError::Syntax { line, .. } => assert!(line >= 3),
        e => panic!("unexpected {e:?}"),
    }
}

#[test]
#[ignore = "prints the messages for review"]
fn print_messages() {
    for (path, value) in CASES {
        let mut v = serde_json::to_value(template()).unwrap();
        let parts: Vec<&str> = path.split('.').collect();
        let mut node = &mut v;
        for p in &parts[..parts.len() - 1] {
            node = node.get_mut(*p).unwrap();
        }
        node[parts[parts.len() - 1]] = serde_json::from_str(value).unwrap();
        let err = Scenario::from_json_str(&serde_json::to_string_pretty(&v).unwrap()).unwrap_err();
        println!("{path} = {value}\n    {err}");
    }
}

#[test]
fn regression_fuzz_stalled_event_scan() {
    // Found by the loader fuzz target: a 1 F input capacitor charging for
    // milliseconds made the event scan creep towards a zero it approached
    // only asymptotically (each predicted step smaller than the last). The
    // run must end promptly with a result or a clear error.
    let text = include_str!("../fuzz/regressions/stalled-scan-1F-input-cap.json");
    let mut s = Scenario::from_json_str(text).unwrap();
    s.simulation.max_cycles = 2_000;
    s.simulation.max_time_s = 1e-2;
    let t = std::time::Instant::now();
    let r = sim_core::simulate(&s, &sim_core::RunOptions::default());
    assert!(t.elapsed().as_secs_f64() < 5.0, "took {:?}", t.elapsed());
    if let Err(e) = r {
        assert!(!e.to_string().is_empty());
    }
}

/// An off-time so long that the current collapses every cycle is deep
/// DCM, reported as a valid way to run — unless the design asked for CCM,
/// when the warning says so and how much inductance would restore CCM.
#[test]
fn deep_dcm_is_explained_not_rejected() {
    use sim_core::metrics::ConductionMode;
    use sim_core::scenario::IntendedMode;
    use sim_core::simulate::{simulate, RunOptions};
    let s = chopwave_suite::dcm_long_off_time();
    let r = simulate(&s, &RunOptions::default()).expect("deep DCM still runs");
    assert_eq!(r.metrics.conduction_mode, ConductionMode::Dcm);
    assert!(r.metrics.idle_time_s / r.metrics.period_s > 0.5);
    let w = r.warnings.join("\n");
    assert!(w.contains("deep discontinuous conduction"), "{w}");
    assert!(w.contains("not an error"), "{w}");

    let mut ccm = s.clone();
    ccm.parts.intended_mode = IntendedMode::Ccm;
    let r = simulate(&ccm, &RunOptions::default()).expect("runs");
    let w = r.warnings.join("\n");
    assert!(w.contains("asks for CCM"), "{w}");
    assert!(!w.contains("not an error"), "{w}");
    // The suggested inductance, with a 30 % margin, does give CCM.
    let at = w.find("roughly ").expect("a suggested inductance") + "roughly ".len();
    let l_uh: f64 = w[at..]
        .split(' ')
        .next()
        .unwrap()
        .parse()
        .expect("a number");
    let mut fixed = s.clone();
    fixed.inductor.inductance_h = 1.3 * l_uh * 1e-6;
    let r = simulate(&fixed, &RunOptions::default()).expect("runs");
    assert_eq!(
        r.metrics.conduction_mode,
        ConductionMode::Ccm,
        "{l_uh} µH × 1.3"
    );
}
