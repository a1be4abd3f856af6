//! The real-part output of the `chopwave` binary: the design-check table,
//! `--strict`, the alternatives and their plot, and `fit-led`.

mod common;

use common::{run, scenario, scratch, text};
use serde_json::Value;

#[test]
fn strict_exits_3_on_a_failed_check_and_0_on_a_passing_design() {
    let bad = scenario("undersized-inductor-dcm.json");
    let o = run(&["run", "--strict", &bad]);
    assert_eq!(o.status.code(), Some(3), "{}", text(&o.stderr));
    let out = text(&o.stdout);
    assert!(out.contains("Design checks"), "{out}");
    assert!(out.contains("FAIL  CCM intended"), "{out}");
    assert!(
        text(&o.stderr).contains("design check"),
        "{}",
        text(&o.stderr)
    );
    // Without --strict the same run succeeds.
    assert_eq!(run(&["run", &bad]).status.code(), Some(0));
    // A design whose checks pass (at most warnings) exits 0 under --strict.
    let o = run(&["run", "--strict", &scenario("headlamp-4cell.json")]);
    assert_eq!(o.status.code(), Some(0), "{}", text(&o.stderr));
}

#[test]
fn json_has_the_checks_capacitors_temperatures_and_alternatives() {
    let o = run(&["run", "--json", &scenario("grow-light-48v.json")]);
    assert!(o.status.success(), "{}", text(&o.stderr));
    let v: Value = serde_json::from_slice(&o.stdout).unwrap();
    assert_eq!(v["schema"], "chopwave-run-2");
    let checks = v["design_checks"].as_array().unwrap();
    assert!(checks.len() > 10);
    for c in checks {
        for k in ["check", "status", "value", "limit", "unit", "source"] {
            assert!(c.get(k).is_some(), "{k} missing in {c}");
        }
    }
    // The X7R output capacitor at ~35 V of a 50 V rating keeps under half
    // its capacitance (class curve, from memory): a warning.
    let bias = checks
        .iter()
        .find(|c| c["check"] == "output capacitor capacitance left under DC bias")
        .unwrap();
    assert_eq!(bias["status"], "warn");
    let caps = v["capacitors"].as_array().unwrap();
    let out = caps
        .iter()
        .find(|c| c["part"] == "output_capacitor")
        .unwrap();
    assert!(out["effective_f"].as_f64().unwrap() < 0.5 * out["nominal_f"].as_f64().unwrap());
    assert!(v["losses_w"]["inductor_core"].as_f64().unwrap() > 0.0);
    assert!(v["losses_w"]["switch_transition"].as_f64().unwrap() > 0.0);
    assert!(v["energy_balance_residual"].as_f64().unwrap().abs() < 1e-8);
    let t = v["temperatures"].as_array().unwrap();
    assert!(t.iter().any(|t| t["part"] == "led"));
    assert!(v["iteration"]["converged"].as_bool().unwrap());
    let alt = &v["alternatives"];
    let drivers = alt["drivers"].as_array().unwrap();
    assert_eq!(drivers.len(), 3);
    // The linear regulator holds the current over 44-52 V; the resistor does not.
    let var = |k: usize| drivers[k]["current_variation_pct"].as_f64().unwrap();
    assert!(var(1) > 10.0 * var(0).max(0.1), "{alt}");
    assert!(var(2) < 1e-9, "{alt}");
}

#[test]
fn plot_includes_the_comparison() {
    let dir = scratch("plot");
    let o = run(&[
        "run",
        &scenario("cabin-light-9-32v.json"),
        "--plot",
        dir.to_str().unwrap(),
    ]);
    assert!(o.status.success(), "{}", text(&o.stderr));
    let png = dir.join("cabin-light-9-32v-alternatives.png");
    let bytes = std::fs::read(&png).unwrap();
    assert!(bytes.starts_with(b"\x89PNG"), "{}", png.display());
    let _ = std::fs::remove_dir_all(&dir);
}

#[test]
fn fit_led_prints_the_model_and_a_fragment_that_loads() {
    // Points from a known model (Is = 1e-18 A, n = 2.5, Rs = 0.5 Ω at
    // 25 °C, Vt = kT/q with CODATA 2018 constants), to 0.1 mV.
    let vt = 1.380_649e-23 * 298.15 / 1.602_176_634e-19;
    let v = |i: f64| 2.5 * vt * (i / 1e-18_f64).ln_1p() + 0.5 * i;
    let pts: Vec<String> = [0.05, 0.2, 0.5, 1.0]
        .iter()
        .map(|&i| format!("{i},{:.4}", v(i)))
        .collect();
    let mut args = vec!["fit-led", "--json", "--count", "4", "--tempco-mv", "-2"];
    for p in &pts {
        args.push("--point");
        args.push(p);
    }
    let o = run(&args);
    assert!(o.status.success(), "{}", text(&o.stderr));
    let j: Value = serde_json::from_slice(&o.stdout).unwrap();
    let n = j["fit"]["emission_coefficient"].as_f64().unwrap();
    // Voltages rounded to 0.1 mV move n by about 0.1 %.
    assert!((n / 2.5 - 1.0).abs() < 1e-2, "{j}");
    assert!((j["fit"]["tempco_v_per_k"].as_f64().unwrap() + 2e-3).abs() < 1e-12);
    for r in j["fit"]["residuals_v"].as_array().unwrap() {
        assert!(r.as_f64().unwrap().abs() < 1e-4);
    }
    // The fragment's load drops into a scenario that validates.
    let mut s: Value = serde_json::from_str(&text(&run(&["template"]).stdout)).unwrap();
    s["load"] = j["load"].clone();
    s["supply"]["voltage_v"] = 24.0.into();
    s["supply"]["input_range_v"] = Value::Null;
    let dir = scratch("fit");
    let f = dir.join("fitted.json");
    std::fs::write(&f, s.to_string()).unwrap();
    let o = run(&["check", f.to_str().unwrap()]);
    assert!(o.status.success(), "{}", text(&o.stderr));
    // Text output names the residuals; too few points is bad input (2).
    let o = run(&["fit-led", "--point", "0.1,2.8", "--point", "0.3,3.0"]);
    assert_eq!(o.status.code(), Some(2));
    assert!(
        text(&o.stderr).contains("at least three"),
        "{}",
        text(&o.stderr)
    );
    let _ = std::fs::remove_dir_all(&dir);
}

#[test]
fn the_template_carries_every_part_field_and_runs_with_its_checks() {
    let o = run(&["template"]);
    assert!(o.status.success());
    let t: Value = serde_json::from_slice(&o.stdout).unwrap();
    for k in [
        "switch",
        "diode",
        "inductor",
        "input_capacitor",
        "led",
        "controller",
    ] {
        assert!(t["parts"].get(k).is_some(), "parts.{k}");
    }
    let dir = scratch("template");
    let f = dir.join("t.json");
    std::fs::write(&f, &o.stdout).unwrap();
    let o = run(&["run", "--strict", "--json", f.to_str().unwrap()]);
    assert!(o.status.success(), "{}", text(&o.stderr));
    let v: Value = serde_json::from_slice(&o.stdout).unwrap();
    assert_ne!(v["design_verdict"], "fail", "{}", v["design_checks"]);
    assert!(v["energy_balance_residual"].as_f64().unwrap().abs() < 1e-8);
    let _ = std::fs::remove_dir_all(&dir);
}

#[test]
fn strict_fails_when_only_the_start_up_peak_exceeds_the_saturation_current() {
    // The template's start-up meets an empty output: its inductor peak
    // then exceeds the steady-state peak. A saturation rating between the
    // two must fail the table (and --strict exit 3), not only warn.
    let mut s: Value = serde_json::from_slice(&run(&["template"]).stdout).unwrap();
    s["supply"]["input_range_v"] = Value::Null;
    s["output_capacitor"] = serde_json::json!({"capacitance_f": "2.2u", "esr_ohm": 0.01});
    let dir = scratch("startup-peak");
    let f = dir.join("s.json");
    std::fs::write(&f, s.to_string()).unwrap();
    let o = run(&["run", "--json", f.to_str().unwrap()]);
    assert!(o.status.success(), "{}", text(&o.stderr));
    let v: Value = serde_json::from_slice(&o.stdout).unwrap();
    let steady = v["inductor_current_peak_a"].as_f64().unwrap();
    let startup = v["startup_inductor_current_peak_a"].as_f64().unwrap();
    assert!(startup > steady + 2e-3, "{startup} vs {steady}");
    s["inductor"]["saturation_current_a"] = (0.5 * (steady + startup)).into();
    std::fs::write(&f, s.to_string()).unwrap();
    let o = run(&["run", "--strict", f.to_str().unwrap()]);
    assert_eq!(o.status.code(), Some(3), "{}", text(&o.stdout));
    let out = text(&o.stdout);
    assert!(
        out.contains("FAIL  inductor start-up peak vs saturation current"),
        "{out}"
    );
    let _ = std::fs::remove_dir_all(&dir);
}

#[test]
fn check_rows_name_the_supply_of_their_worst_case() {
    // With a declared range (the template's 10.5-14 V) each row says at
    // which supply its worst case occurred; the switch blocks most at the
    // top of the range. The JSON carries it as supply_v.
    let dir = scratch("range-rows");
    let f = dir.join("t.json");
    std::fs::write(&f, run(&["template"]).stdout).unwrap();
    let o = run(&["run", "--json", f.to_str().unwrap()]);
    assert!(o.status.success(), "{}", text(&o.stderr));
    let v: Value = serde_json::from_slice(&o.stdout).unwrap();
    let checks = v["design_checks"].as_array().unwrap();
    let sw = checks
        .iter()
        .find(|c| c["check"] == "switch blocking voltage vs rating")
        .unwrap();
    assert!(
        (sw["supply_v"].as_f64().unwrap() - 14.0).abs() < 1e-9,
        "{sw}"
    );
    let o = run(&["run", f.to_str().unwrap()]);
    let out = text(&o.stdout);
    assert!(
        out.lines()
            .any(|l| l.contains("switch blocking voltage vs rating") && l.contains("at 14 V")),
        "{out}"
    );
    let _ = std::fs::remove_dir_all(&dir);
}

#[test]
fn sense_resistor_appears_in_the_loss_table_and_the_json() {
    // The headlamp with a 0.22 Ω sense resistor set from the command line.
    let f = scenario("headlamp-4cell.json");
    let o = run(&[
        "run",
        "--json",
        &f,
        "--set",
        "sense_resistor.resistance_ohm=0.22",
    ]);
    assert!(o.status.success(), "{}", text(&o.stderr));
    let v: Value = serde_json::from_slice(&o.stdout).unwrap();
    let w = v["losses_w"]["current_sense"].as_f64().unwrap();
    assert!(w > 0.0, "{v}");
    let total = v["total_loss_w"].as_f64().unwrap();
    assert!(total > w);
    let o = run(&["run", &f, "--set", "sense_resistor.resistance_ohm=0.22"]);
    assert!(o.status.success(), "{}", text(&o.stderr));
    let out = text(&o.stdout);
    assert!(out.contains("current-sense resistor"), "{out}");
    // Without the section there is no such row and a zero entry.
    let o = run(&["run", "--json", &f]);
    let v: Value = serde_json::from_slice(&o.stdout).unwrap();
    assert!(v["losses_w"]["current_sense"].as_f64().unwrap().abs() < 1e-300);
    let o = run(&["run", &f]);
    assert!(!text(&o.stdout).contains("current-sense resistor"));
}

#[test]
fn fit_led_puts_the_coefficient_and_its_current_into_the_load() {
    // Points of Is = 1e-18 A, n = 2.5, Rs = 0.5 Ω at 25 °C (CODATA kT/q).
    let vt = 1.380_649e-23 * 298.15 / 1.602_176_634e-19;
    let v = |i: f64| 2.5 * vt * (i / 1e-18_f64).ln_1p() + 0.5 * i;
    let pts: Vec<String> = [0.05, 0.2, 0.5, 1.0]
        .iter()
        .map(|&i| format!("{i},{:.5}", v(i)))
        .collect();
    let mut args = vec![
        "fit-led",
        "--json",
        "--tempco-mv",
        "-2.5",
        "--tempco-current",
        "0.35",
    ];
    for p in &pts {
        args.push("--point");
        args.push(p);
    }
    let o = run(&args);
    assert!(o.status.success(), "{}", text(&o.stderr));
    let j: Value = serde_json::from_slice(&o.stdout).unwrap();
    let l = &j["load"];
    assert!((l["forward_voltage_tempco_v_per_k"].as_f64().unwrap() + 2.5e-3).abs() < 1e-12);
    assert!((l["tempco_current_a"].as_f64().unwrap() - 0.35).abs() < 1e-12);
    assert!((l["reference_temperature_c"].as_f64().unwrap() - 25.0).abs() < 1e-12);
    // Without --tempco-current: the largest point's current.
    args.drain(4..6);
    let j: Value = serde_json::from_slice(&run(&args).stdout).unwrap();
    assert!((j["load"]["tempco_current_a"].as_f64().unwrap() - 1.0).abs() < 1e-12);
}
