//! Integration tests of the `chopwave` binary: every command, run as a
//! user would run it, through `std::process::Command`.
//!
//! Analytic checks name their source beside the check.

mod common;

use common::{chopwave, decode_png, run, scenarios_dir, scratch, stderr, stdout};
use serde_json::Value;
use std::path::{Path, PathBuf};
use std::process::Output;

fn bundled_files() -> Vec<PathBuf> {
    let mut v: Vec<PathBuf> = std::fs::read_dir(scenarios_dir())
        .unwrap()
        .map(|e| e.unwrap().path())
        .filter(|p| p.extension().is_some_and(|e| e == "json"))
        .collect();
    v.sort();
    v
}

fn run_json(args: &[&str]) -> Value {
    let o = run(args);
    assert!(
        o.status.success(),
        "chopwave {args:?} failed: {}",
        stderr(&o)
    );
    serde_json::from_slice(&o.stdout).unwrap_or_else(|e| panic!("not JSON ({e}): {}", stdout(&o)))
}

fn num(v: &Value, key: &str) -> f64 {
    v[key]
        .as_f64()
        .unwrap_or_else(|| panic!("`{key}` missing or not a number in {v}"))
}

fn assert_input_error(o: &Output, needle: &str) {
    let err = stderr(o);
    assert_eq!(o.status.code(), Some(2), "exit code; stderr: {err}");
    assert!(err.contains(needle), "stderr should name `{needle}`: {err}");
    assert!(!err.contains("panicked"), "no panic: {err}");
    assert!(!err.contains("stack backtrace"), "no backtrace: {err}");
}

/// A lossless buck: ideal switch and diode, no resistances, no capacitors,
/// and a constant-voltage sink of 8 V (an LED knee model with zero
/// dynamic resistance) on a 20 V supply, under constant off-time control.
fn lossless_scenario(dir: &Path) -> PathBuf {
    let s = serde_json::json!({
        "name": "lossless-cot",
        "description": "Test circuit: every part ideal, for the textbook formulas.",
        "supply": { "voltage_v": 20.0 },
        "switch": { "on_resistance_ohm": 0.0 },
        "diode": { "model": "fixed_drop", "forward_voltage_v": 0.0 },
        "inductor": { "inductance_h": 100e-6 },
        "load": { "kind": "led_knee", "count": 1, "knee_voltage_v": 8.0 },
        "controller": { "kind": "constant_off_time", "peak_current_a": 1.0, "off_time_s": 2e-6 }
    });
    let p = dir.join("lossless.json");
    std::fs::write(&p, serde_json::to_string_pretty(&s).unwrap()).unwrap();
    p
}

#[test]
fn every_bundled_scenario_runs_and_its_json_is_sane() {
    let files = bundled_files();
    assert!(files.len() >= 6, "at least six example scenarios");
    for f in &files {
        let started = std::time::Instant::now();
        let j = run_json(&["run", "--json", "-q", f.to_str().unwrap()]);
        let secs = started.elapsed().as_secs_f64();
        assert!(secs < 10.0, "{}: took {secs:.1} s", f.display());
        let name = f.file_stem().unwrap().to_str().unwrap();
        assert_eq!(j["scenario"], name, "the scenario is named after its file");
        assert_eq!(j["engine"], "exact");
        let iled = num(&j, "led_current_avg_a");
        assert!((0.01..10.0).contains(&iled), "{name}: LED current {iled}");
        let ripple = num(&j, "led_current_ripple_pp_a");
        // The LED current swings at most from zero to the inductor peak
        // (round-off of a few nA around zero in DCM allowed).
        let peak = num(&j, "inductor_current_peak_a");
        assert!(
            (0.0..=peak * (1.0 + 1e-6)).contains(&ripple),
            "{name}: ripple {ripple}"
        );
        let f_sw = num(&j, "switching_frequency_hz");
        assert!((1e3..1e7).contains(&f_sw), "{name}: frequency {f_sw}");
        let duty = num(&j, "duty");
        assert!((1e-6..1.0).contains(&duty), "{name}: duty {duty}");
        assert!(["ccm", "dcm", "boundary"].contains(&j["conduction_mode"].as_str().unwrap()));
        let eff = num(&j, "efficiency");
        assert!((0.5..=1.0).contains(&eff), "{name}: efficiency {eff}");
        // Energy conservation: input = LED + losses + stored change. The
        // powers alone leave out the change in stored energy over the
        // measured cycles (at 325 V, 10 µF holds 0.5 J: a residual drift of
        // 1e-9 of the voltage is already 1e-6 of the input power), so they
        // balance to 1e-5; the residual, which includes it, to 1e-6.
        let p_in = num(&j, "input_power_w");
        let p_led = num(&j, "led_power_w");
        let losses = j["losses_w"].as_object().expect("losses_w is an object");
        assert!(losses.contains_key("switch_conduction") && losses.contains_key("inductor_dcr"));
        let sum: f64 = losses.values().map(|v| v.as_f64().unwrap()).sum();
        assert!(
            ((p_in - p_led - sum) / p_in).abs() < 1e-5,
            "{name}: {p_in} W in, {p_led} W out, {sum} W lost"
        );
        assert!(num(&j, "energy_balance_residual").abs() < 1e-6);
        assert!(j["steady_state"]["cycles_to_settle"].as_u64().unwrap() > 0);
        assert!(j["fit"].is_object() && j["stats"].is_object());
        assert!(j["warnings"].is_array());
        let cautions = j["cautions"].as_array().unwrap();
        assert!(cautions.iter().any(|c| c
            .as_str()
            .unwrap()
            .contains("no substitute for bench measurement")));
    }
}

#[test]
fn lossless_constant_off_time_matches_the_textbook() {
    // Erickson & Maksimovic, Fundamentals of Power Electronics, 3rd ed.,
    // ch. 2: with ideal parts the inductor current falls at V_out/L during
    // the off-time, so the ripple is ΔI = V_out·t_off/L; volt-second
    // balance gives D = V_out/V_in, hence t_on = D/(1 − D)·t_off.
    let d = scratch("lossless");
    let f = lossless_scenario(&d);
    let j = run_json(&["run", "--json", f.to_str().unwrap()]);
    let (v_in, v_out, l, t_off) = (20.0, 8.0, 100e-6, 2e-6);
    let ripple = v_out * t_off / l;
    let duty = v_out / v_in;
    let period = t_off / (1.0 - duty);
    let rel = |a: f64, b: f64| ((a - b) / b).abs();
    assert!(
        rel(num(&j, "led_current_ripple_pp_a"), ripple) < 1e-6,
        "{j}"
    );
    assert!(rel(num(&j, "inductor_ripple_pp_a"), ripple) < 1e-6);
    assert!(rel(num(&j, "duty"), duty) < 1e-6);
    assert!(rel(num(&j, "switching_frequency_hz"), 1.0 / period) < 1e-6);
    // Average of a triangle between the peak threshold and the valley.
    assert!(rel(num(&j, "led_current_avg_a"), 1.0 - ripple / 2.0) < 1e-6);
    assert!(rel(num(&j, "efficiency"), 1.0) < 1e-9);
    assert_eq!(j["conduction_mode"], "ccm");
}

#[test]
fn set_overrides_change_the_result_as_expected() {
    let d = scratch("set");
    let f = lossless_scenario(&d);
    let f = f.to_str().unwrap();
    // Lossless: doubling the off-time doubles the ripple and the on-time
    // (same textbook relations as above), so the frequency halves exactly.
    let base = run_json(&["run", "--json", f]);
    let doubled = run_json(&["run", "--json", f, "--set", "controller.off_time_s=4u"]);
    let ratio = num(&doubled, "switching_frequency_hz") / num(&base, "switching_frequency_hz");
    assert!((ratio - 0.5).abs() < 1e-6, "frequency ratio {ratio}");
    // With real losses (the headlamp) it only roughly halves.
    let head = scenarios_dir().join("headlamp-4cell.json");
    let head = head.to_str().unwrap();
    let a = run_json(&["run", "--json", head]);
    let b = run_json(&[
        "run",
        "--json",
        head,
        "--set",
        "controller.off_time_s=2.4e-6",
    ]);
    let ratio = num(&b, "switching_frequency_hz") / num(&a, "switching_frequency_hz");
    assert!(
        (0.4..0.6).contains(&ratio),
        "headlamp frequency ratio {ratio}"
    );
    // A supply override reaches the report.
    let c = run_json(&["run", "--json", head, "--set", "supply.voltage_v=16"]);
    assert!((num(&c, "supply_voltage_v") - 16.0).abs() < 1e-12);
    assert!(
        num(&c, "duty") < num(&a, "duty"),
        "higher supply, lower duty"
    );
}

fn assert_readable_png(p: &Path) {
    let (w, h, px, color) = decode_png(p);
    assert_eq!((w, h), (1600, 1000), "{}", p.display());
    assert_eq!(color, png::ColorType::Rgb);
    // Not blank: the grey level varies, and a plot has many colours
    // (traces, grid, anti-aliased text).
    let grey: Vec<f64> = px
        .chunks(3)
        .map(|c| (f64::from(c[0]) + f64::from(c[1]) + f64::from(c[2])) / 3.0)
        .collect();
    let mean = grey.iter().sum::<f64>() / grey.len() as f64;
    let var = grey.iter().map(|g| (g - mean).powi(2)).sum::<f64>() / grey.len() as f64;
    assert!(var > 100.0, "{}: pixel variance {var}", p.display());
    let mut colours: Vec<[u8; 3]> = px.chunks(3).map(|c| [c[0], c[1], c[2]]).collect();
    colours.sort_unstable();
    colours.dedup();
    assert!(
        colours.len() > 50,
        "{}: {} colours",
        p.display(),
        colours.len()
    );
}

#[test]
fn plots_are_written_at_the_stated_size_and_are_not_blank() {
    let d = scratch("plot");
    let f = scenarios_dir().join("grow-light-48v.json");
    let o = run(&["run", f.to_str().unwrap(), "--plot", d.to_str().unwrap()]);
    assert!(o.status.success(), "{}", stderr(&o));
    for name in ["grow-light-48v-steady.png", "grow-light-48v-startup.png"] {
        assert_readable_png(&d.join(name));
    }
    // Nothing half-written is left behind.
    let leftovers: Vec<_> = std::fs::read_dir(&d)
        .unwrap()
        .filter_map(|e| e.ok())
        .filter(|e| e.file_name().to_string_lossy().ends_with(".tmp"))
        .collect();
    assert!(leftovers.is_empty());
}

#[test]
fn csv_has_the_header_and_every_recorded_sample() {
    let d = scratch("csv");
    let csv = d.join("wave.csv");
    let f = scenarios_dir().join("cabin-light-9-32v.json");
    let j = run_json(&[
        "run",
        "--json",
        f.to_str().unwrap(),
        "--csv",
        csv.to_str().unwrap(),
    ]);
    let text = std::fs::read_to_string(&csv).unwrap();
    let mut lines = text.lines();
    assert_eq!(
        lines.next().unwrap(),
        "time (s),inductor_current (A),led_current (A),led_voltage (V),\
         switch_node_voltage (V),input_node_voltage (V),switch_on (1 = on)"
    );
    let rows: Vec<Vec<f64>> = lines
        .map(|l| l.split(',').map(|x| x.parse::<f64>().unwrap()).collect())
        .collect();
    assert_eq!(rows.len() as u64, j["recorded_samples"].as_u64().unwrap());
    assert!(rows.len() > 100);
    assert!(rows.iter().all(|r| r.len() == 7));
    assert!(
        rows.windows(2).all(|w| w[1][0] >= w[0][0]),
        "time never runs back"
    );
    // The samples agree with the summary's extremes.
    let peak = rows.iter().map(|r| r[1]).fold(f64::MIN, f64::max);
    assert!((peak - num(&j, "inductor_current_peak_a")).abs() < 1e-9 * peak.abs().max(1.0));
}

fn headlamp_json() -> Value {
    serde_json::from_str(
        &std::fs::read_to_string(scenarios_dir().join("headlamp-4cell.json")).unwrap(),
    )
    .unwrap()
}

#[test]
fn bad_input_exits_2_naming_the_file_and_field() {
    let d = scratch("bad");
    let write = |name: &str, text: &str| {
        let p = d.join(name);
        std::fs::write(&p, text).unwrap();
        p.to_str().unwrap().to_string()
    };
    // Malformed JSON.
    let good = serde_json::to_string_pretty(&headlamp_json()).unwrap();
    let p = write("malformed.json", &good[..good.len() / 2]);
    for cmd in ["run", "check"] {
        let o = run(&[cmd, &p]);
        assert_input_error(&o, "malformed.json");
    }
    // A missing field.
    let mut v = headlamp_json();
    v["inductor"]
        .as_object_mut()
        .unwrap()
        .remove("inductance_h");
    let p = write("missing.json", &v.to_string());
    assert_input_error(&run(&["run", &p]), "inductance_h");
    // An unknown (misspelt) field.
    let mut v = headlamp_json();
    v["inductor"]["inductanse_h"] = 47e-6.into();
    let p = write("unknown.json", &v.to_string());
    assert_input_error(&run(&["check", &p]), "inductanse_h");
    // A negative inductance, and with it a second problem: all are listed.
    let mut v = headlamp_json();
    v["inductor"]["inductance_h"] = (-47e-6).into();
    v["switch"]["on_resistance_ohm"] = (-0.1).into();
    let p = write("negative.json", &v.to_string());
    let o = run(&["check", &p]);
    assert_input_error(&o, "inductor.inductance_h");
    assert!(stderr(&o).contains("switch.on_resistance_ohm"));
    assert!(stderr(&o).contains("negative.json"));
    // The same through --set.
    let head = scenarios_dir().join("headlamp-4cell.json");
    let o = run(&[
        "run",
        head.to_str().unwrap(),
        "--set",
        "inductor.inductance_h=-1u",
    ]);
    assert_input_error(&o, "inductor.inductance_h");
    // A missing file, and a malformed --set.
    assert_input_error(
        &run(&["run", &d.join("nope.json").to_string_lossy()]),
        "nope.json",
    );
    assert_input_error(
        &run(&["run", head.to_str().unwrap(), "--set", "supply"]),
        "PATH=VALUE",
    );
}

#[test]
fn a_simulation_failure_exits_1_saying_what_was_reached() {
    let head = scenarios_dir().join("headlamp-4cell.json");
    let o = run(&[
        "run",
        head.to_str().unwrap(),
        "--set",
        "simulation.max_cycles=2",
    ]);
    assert_eq!(o.status.code(), Some(1), "{}", stderr(&o));
    let err = stderr(&o);
    assert!(err.contains("no steady state after 2 cycles"), "{err}");
    assert!(!err.contains("panicked"));
}

#[test]
fn check_accepts_the_template_and_every_bundled_scenario() {
    let o = run(&["template"]);
    assert!(o.status.success());
    let d = scratch("template");
    let p = d.join("template.json");
    std::fs::write(&p, &o.stdout).unwrap();
    let t: Value = serde_json::from_slice(&o.stdout).unwrap();
    for key in [
        "name",
        "description",
        "supply",
        "input_capacitor",
        "switch",
        "diode",
        "inductor",
        "output_capacitor",
        "load",
        "controller",
        "simulation",
    ] {
        assert!(t.get(key).is_some(), "template has `{key}`");
    }
    let o = run(&["check", p.to_str().unwrap()]);
    assert!(o.status.success(), "{}", stderr(&o));
    assert!(stdout(&o).contains("valid scenario"));
    for f in bundled_files() {
        let o = run(&["check", f.to_str().unwrap()]);
        assert!(o.status.success(), "{}: {}", f.display(), stderr(&o));
    }
}

#[test]
fn text_summary_has_every_section_and_the_high_voltage_caution() {
    let f = scenarios_dir().join("tube-325v-bus.json");
    let o = run(&["run", f.to_str().unwrap()]);
    assert!(o.status.success(), "{}", stderr(&o));
    let t = stdout(&o);
    for section in [
        "LED current",
        "Switching",
        "conduction mode",
        "efficiency",
        "losses",
        "part stresses",
        "LED curve fit error",
        "Warnings",
        "Cautions",
        "HIGH VOLTAGE",
    ] {
        assert!(t.contains(section), "summary lacks `{section}`:\n{t}");
    }
    // A low-voltage design gets no high-voltage caution.
    let f = scenarios_dir().join("headlamp-4cell.json");
    let t = stdout(&run(&["run", f.to_str().unwrap()]));
    assert!(!t.contains("HIGH VOLTAGE"));
    assert!(
        t.contains(" A\n") && t.contains("Hz"),
        "units in the summary:\n{t}"
    );
}

#[test]
fn the_dcm_example_is_reported_as_dcm() {
    let f = scenarios_dir().join("undersized-inductor-dcm.json");
    let j = run_json(&["run", "--json", f.to_str().unwrap()]);
    assert_eq!(j["conduction_mode"], "dcm");
    assert!(num(&j, "idle_time_s") > 0.0);
    assert!(j["warnings"]
        .as_array()
        .unwrap()
        .iter()
        .any(|w| w.as_str().unwrap().contains("discontinuous")));
}

#[test]
fn demo_writes_everything_it_claims() {
    let d = scratch("demo");
    let out = d.join("out");
    // Run from another folder: the scenarios are inside the binary.
    let o = chopwave()
        .current_dir(&d)
        .args(["demo", "--out", "out", "-q"])
        .output()
        .unwrap();
    assert!(o.status.success(), "{}", stderr(&o));
    let text = stdout(&o);
    let claimed: Vec<PathBuf> = text
        .lines()
        .filter_map(|l| l.strip_prefix("  "))
        .map(|p| d.join(p.trim()))
        .collect();
    let n = bundled_files().len();
    // Every bundled scenario drives LEDs, so each also gets the
    // alternatives plot: six files per scenario and an index.
    assert_eq!(
        claimed.len(),
        6 * n + 1,
        "six files per scenario and an index:\n{text}"
    );
    for p in &claimed {
        assert!(p.is_file(), "claimed but missing: {}", p.display());
    }
    for f in bundled_files() {
        let stem = f.file_stem().unwrap().to_str().unwrap();
        let j: Value = serde_json::from_str(
            &std::fs::read_to_string(out.join(format!("{stem}.json"))).unwrap(),
        )
        .unwrap();
        assert_eq!(j["scenario"], stem);
        assert_readable_png(&out.join(format!("{stem}-steady.png")));
        assert_readable_png(&out.join(format!("{stem}-alternatives.png")));
    }
}

#[test]
fn lossless_dcm_matches_the_textbook() {
    // Erickson & Maksimovic, Fundamentals of Power Electronics, 3rd ed.,
    // ch. 5 (discontinuous conduction mode): with ideal parts the current
    // rises from zero to the peak I_p in t_on = L·I_p/(V_in − V_out), falls
    // back in t_fall = L·I_p/V_out and then rests at zero until the
    // off-time ends; the average is the triangle's area over the period.
    let d = scratch("dcm");
    let f = lossless_scenario(&d);
    let j = run_json(&[
        "run",
        "--json",
        f.to_str().unwrap(),
        "--set",
        "inductor.inductance_h=10u",
    ]);
    let (v_in, v_out, l, t_off, i_p) = (20.0, 8.0, 10e-6, 2e-6, 1.0);
    let t_on = l * i_p / (v_in - v_out);
    let t_fall = l * i_p / v_out;
    let period = t_on + t_off;
    let rel = |a: f64, b: f64| ((a - b) / b).abs();
    assert_eq!(j["conduction_mode"], "dcm");
    assert!(
        rel(num(&j, "switching_frequency_hz"), 1.0 / period) < 1e-6,
        "{j}"
    );
    assert!(rel(num(&j, "idle_time_s"), t_off - t_fall) < 1e-6);
    assert!(
        rel(
            num(&j, "led_current_avg_a"),
            0.5 * i_p * (t_on + t_fall) / period
        ) < 1e-6
    );
}
