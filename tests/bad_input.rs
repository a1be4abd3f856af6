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
    use sim_core::parts::advice::Warning;
    use sim_core::scenario::{ControllerSpec, IntendedMode};
    use sim_core::{run::drive::simulate, run::RunOptions};
    let s = chopwave_suite::dcm_long_off_time();
    let r = simulate(&s, &RunOptions::default()).expect("deep DCM still runs");
    assert_eq!(r.metrics.conduction_mode, ConductionMode::Dcm);
    assert!(r.metrics.idle_time_s / r.metrics.period_s > 0.5);
    let dcm = |r: &sim_core::SimResult| {
        r.warnings
            .iter()
            .find(|w| matches!(w, Warning::Dcm { .. }))
            .cloned()
            .unwrap_or_else(|| panic!("a DCM warning in {:?}", r.warnings))
    };
    let w = dcm(&r);
    assert!(w.is_deep_dcm(), "{w:?}");
    let Warning::Dcm {
        idle_time_s,
        period_s,
        ccm_intended,
        ..
    } = w
    else {
        unreachable!()
    };
    let close = |a: f64, b: f64| (a - b).abs() <= 1e-12 * b.abs();
    assert!(close(idle_time_s, r.metrics.idle_time_s), "{w:?}");
    assert!(close(period_s, r.metrics.period_s), "{w:?}");
    assert!(!ccm_intended);
    let text = w.to_string();
    assert!(text.contains("deep discontinuous conduction"), "{text}");
    assert!(text.contains("not an error"), "{text}");

    let mut ccm = s.clone();
    ccm.parts.intended_mode = IntendedMode::Ccm;
    let r = simulate(&ccm, &RunOptions::default()).expect("runs");
    let w = dcm(&r);
    let text = w.to_string();
    assert!(text.contains("asks for CCM"), "{text}");
    assert!(!text.contains("not an error"), "{text}");
    let Warning::Dcm {
        ccm_inductance_h: Some(l_h),
        ccm_intended: true,
        ..
    } = w
    else {
        panic!("a suggested inductance and the stated intent: {w:?}")
    };
    // The boundary inductance stretches the current's fall from the peak
    // to zero over the whole off-time: L·t_off/(t_off − t_idle).
    let ControllerSpec::ConstantOffTime { off_time_s, .. } = s.controller else {
        panic!("a constant off-time design")
    };
    let expected = s.inductor.inductance_h * off_time_s / (off_time_s - r.metrics.idle_time_s);
    assert!(
        (l_h - expected).abs() <= 1e-9 * expected,
        "{l_h} vs {expected}"
    );
    // The suggested inductance, with a 30 % margin, does give CCM.
    let l_uh = l_h * 1e6;
    let mut fixed = s.clone();
    fixed.inductor.inductance_h = 1.3 * l_uh * 1e-6;
    let r = simulate(&fixed, &RunOptions::default()).expect("runs");
    assert_eq!(
        r.metrics.conduction_mode,
        ConductionMode::Ccm,
        "{l_uh} µH × 1.3"
    );
}

fn template_text() -> serde_json::Value {
    serde_json::to_value(template()).unwrap()
}

fn overrides(list: &[(&str, &str)]) -> Vec<(String, String)> {
    list.iter()
        .map(|(p, v)| (p.to_string(), v.to_string()))
        .collect()
}

#[test]
fn a_duplicate_key_is_refused_with_and_without_overrides() {
    let text = serde_json::to_string_pretty(&template_text()).unwrap();
    // The same key twice in one object, at the top and inside sections
    // (a tagged part included).
    for (section, key) in [
        ("\"supply\": {", "\"voltage_v\": 13,"),
        ("\"inductor\": {", "\"inductance_h\": 1e-4,"),
        ("\"load\": {", "\"count\": 7,"),
        ("{", "\"name\": \"twice\","),
    ] {
        let dup = text.replacen(section, &format!("{section}\n{key}"), 1);
        for set in [vec![], overrides(&[("supply.voltage_v", "12")])] {
            let e = Scenario::from_json_str_with_overrides(&dup, &set).unwrap_err();
            assert!(
                e.to_string().contains("duplicate key"),
                "{key} with {set:?}: {e}"
            );
        }
    }
}

#[test]
fn a_type_error_inside_a_section_names_the_full_path() {
    for (path, bad) in [
        ("load.count", "\"abc\""),
        ("load.emission_coefficient", "[1]"),
        ("diode.forward_voltage_v", "{\"a\": 1}"),
        ("controller.off_time_s", "[2e-6]"),
        ("inductor.inductance_h", "[1]"),
    ] {
        let mut v = template_text();
        let (sec, field) = path.split_once('.').unwrap();
        v[sec][field] = serde_json::from_str(bad).unwrap();
        let e = Scenario::from_json_str(&v.to_string()).unwrap_err();
        let problems = e.problems();
        assert_eq!(problems[0].path, path, "{bad}: {e}");
    }
}

#[test]
fn errors_from_set_name_the_override() {
    let text = template_text().to_string();
    for (path, value) in [
        ("load.count", "abc"),
        ("supply.voltage_v", "abc"),
        ("inductor.inductanse_h", "3"),
        ("controller.off_time_s", "true"),
    ] {
        let e = Scenario::from_json_str_with_overrides(&text, &overrides(&[(path, value)]))
            .unwrap_err();
        match &e {
            sim_core::ScenarioError::Override { path: p, reason } => {
                assert_eq!(p, &format!("{path}={value}"));
                assert!(reason.contains(path), "{reason}");
            }
            other => panic!("{path}={value}: {other:?}"),
        }
        assert!(!e.to_string().contains("line"), "{e}");
    }
    // A problem elsewhere in the file keeps the file's own line.
    let mut v = template_text();
    v["inductor"]["inductance_h"] = "4.7uu".into();
    let pretty = serde_json::to_string_pretty(&v).unwrap();
    let line = pretty
        .lines()
        .position(|l| l.contains("4.7uu"))
        .map(|k| k + 1)
        .unwrap();
    let e =
        Scenario::from_json_str_with_overrides(&pretty, &overrides(&[("supply.voltage_v", "12")]))
            .unwrap_err();
    match e {
        sim_core::ScenarioError::Syntax { path, line: l, .. } => {
            assert_eq!(path, "inductor.inductance_h");
            assert_eq!(l, line);
        }
        other => panic!("{other:?}"),
    }
}

#[test]
fn every_problem_is_listed_including_every_unknown_field() {
    let mut v = template_text();
    v["inductor"]["inductanse_h"] = 1.into();
    v["supply"]["voltag_v"] = 3.into();
    v["load"]["cuont"] = 3.into();
    v["simulation"]["record_cycle"] = 3.into();
    v["nmae"] = "x".into();
    // And a value problem beside them.
    v["switch"]["on_resistance_ohm"] = (-1.0).into();
    let all = Scenario::problems_in(&v.to_string(), &[]);
    for (path, near) in [
        ("inductor.inductanse_h", "inductance_h"),
        ("supply.voltag_v", "voltage_v"),
        ("load.cuont", "count"),
        ("simulation.record_cycle", "record_cycles"),
        ("nmae", "name"),
    ] {
        let p = all
            .iter()
            .find(|p| p.path == path)
            .unwrap_or_else(|| panic!("{path} not listed: {all:?}"));
        assert!(
            p.reason.contains(&format!("did you mean `{near}`?")),
            "{p:?}"
        );
    }
    assert!(
        all.iter().any(|p| p.path == "switch.on_resistance_ohm"),
        "{all:?}"
    );
    assert_eq!(all.len(), 6, "{all:?}");
    // A scenario that loads has none.
    assert!(Scenario::problems_in(&template_text().to_string(), &[]).is_empty());
}

/// The seed corpora of the `overrides` and `study_files` fuzz targets,
/// replayed by the ordinary suite through the same calls (without the
/// simulation): overrides through the loader and the every-problem list,
/// which must agree on whether there is a problem; study files through
/// the journal reader, the table reader and the merge, which must refuse
/// a manifest claiming 1e15 points without reserving them.
#[test]
fn fuzz_corpora_of_overrides_and_study_files_replay() {
    use sim_core::study::journal::read_journal;
    use sim_core::study::rows::StudyTable;
    let dir = std::path::Path::new(env!("CARGO_MANIFEST_DIR")).join("fuzz/corpus");
    let mut seen = 0;
    for entry in std::fs::read_dir(dir.join("overrides")).unwrap() {
        let text = std::fs::read_to_string(entry.unwrap().path()).unwrap();
        let (head, body) = text.split_once("\n\n").unwrap_or(("", &text));
        let set: Vec<(String, String)> = head
            .lines()
            .filter_map(|l| l.split_once('='))
            .map(|(p, v)| (p.trim().to_string(), v.trim().to_string()))
            .collect();
        let loaded = Scenario::from_json_str_with_overrides(body, &set);
        let problems = Scenario::problems_in(body, &set);
        assert_eq!(loaded.is_ok(), problems.is_empty(), "{problems:?}");
        seen += 1;
    }
    assert!(seen >= 5);
    let study = dir.join("study_files");
    let read = |name: &str| std::fs::read_to_string(study.join(name)).unwrap();
    assert!(read_journal(&read("journal.jsonl")).unwrap().is_some());
    assert!(read_journal(&read("journal-cut.jsonl")).is_ok());
    let pair: Vec<StudyTable> = read("shards-pair.txt")
        .split("\n---\n")
        .map(|p| StudyTable::from_json_text(p).unwrap())
        .collect();
    assert_eq!(StudyTable::merge(pair).unwrap().rows.len(), 3);
    let e = StudyTable::from_json_text(&read("shard-claims-1e15.json")).unwrap_err();
    assert!(e.to_string().contains("manifest"), "{e}");
}
