//! Bad input through the binary: every case exits with code 2 and one
//! message that names the field (or the file), never a panic.

mod common;

use common::{chopwave, scratch};

fn template() -> serde_json::Value {
    let o = chopwave().arg("template").output().unwrap();
    assert!(o.status.success());
    serde_json::from_slice(&o.stdout).unwrap()
}

/// Sets `path` (dotted) in `v` to the raw JSON `value`; `"<delete>"` removes it.
fn set(v: &mut serde_json::Value, path: &str, value: &str) {
    let parts: Vec<&str> = path.split('.').collect();
    let mut node = v;
    for p in &parts[..parts.len() - 1] {
        node = node.get_mut(*p).unwrap();
    }
    let leaf = parts[parts.len() - 1];
    if value == "<delete>" {
        node.as_object_mut().unwrap().remove(leaf);
    } else {
        node[leaf] = serde_json::from_str(value).unwrap();
    }
}

/// Field edits on the starter scenario: (path, raw JSON value, text the
/// message must contain — the field name).
const EDITS: &[(&str, &str, &str)] = &[
    // Numbers out of range, NaN-like text, infinities.
    ("supply.voltage_v", "-12", "supply.voltage_v"),
    ("supply.voltage_v", "0", "supply.voltage_v"),
    ("supply.voltage_v", "\"inf\"", "supply.voltage_v"),
    ("supply.voltage_v", "\"NaN\"", "supply.voltage_v"),
    ("supply.voltage_v", "1e308", "supply.voltage_v"),
    (
        "supply.source_resistance_ohm",
        "-1",
        "supply.source_resistance_ohm",
    ),
    ("supply.input_range_v.min_v", "20", "supply.input_range_v"),
    (
        "input_capacitor.capacitance_f",
        "-1e-6",
        "input_capacitor.capacitance_f",
    ),
    (
        "input_capacitor.esr_ohm",
        "\"-5m\"",
        "input_capacitor.esr_ohm",
    ),
    (
        "switch.on_resistance_ohm",
        "\"1e\"",
        "switch.on_resistance_ohm",
    ),
    ("diode.forward_voltage_v", "-0.4", "diode.forward_voltage_v"),
    ("diode.model", "\"zener\"", "diode.model"),
    ("inductor.inductance_h", "-47e-6", "inductor.inductance_h"),
    ("inductor.inductance_h", "1e30", "inductor.inductance_h"),
    (
        "inductor.inductance_h",
        "\"4.7uu\"",
        "inductor.inductance_h",
    ),
    ("inductor.inductance_h", "\"47uF\"", "inductor.inductance_h"),
    ("inductor.inductance_h", "\"<delete>\"", "inductance_h"),
    ("inductor.inductance_h", "null", "inductor.inductance_h"),
    ("inductor.inductance_h", "[1]", "inductor.inductance_h"),
    ("inductor.dcr_ohm", "-0.08", "inductor.dcr_ohm"),
    (
        "inductor.saturation_current_a",
        "0",
        "inductor.saturation_current_a",
    ),
    ("load.count", "0", "load.count"),
    ("load.count", "-3", "load.count"),
    ("load.count", "2.5", "load.count"),
    ("load.kind", "\"led_exponentail\"", "load.kind"),
    (
        "load.saturation_current_a",
        "1",
        "load.saturation_current_a",
    ),
    (
        "load.emission_coefficient",
        "0",
        "load.emission_coefficient",
    ),
    (
        "load.junction_temperature_c",
        "\"900\"",
        "load.junction_temperature_c",
    ),
    ("controller.kind", "\"pid\"", "controller.kind"),
    (
        "controller.peak_current_a",
        "0",
        "controller.peak_current_a",
    ),
    (
        "controller.peak_current_a",
        "40",
        "controller.peak_current_a",
    ),
    ("controller.off_time_s", "\"1f\"", "controller.off_time_s"),
    ("controller.off_time_s", "\"2uH\"", "controller.off_time_s"),
    ("controller.off_time_s", "\"<delete>\"", "off_time_s"),
    ("controller.delay_s", "-1e-9", "controller.delay_s"),
    ("controller.offtime_s", "2e-6", "controller.offtime_s"),
    ("simulation.max_cycles", "0", "simulation.max_cycles"),
    (
        "simulation.steady_state_tolerance",
        "2",
        "simulation.steady_state_tolerance",
    ),
    ("simulation.record_cycles", "-1", "simulation.record_cycles"),
    (
        "simulation.curve_tolerance_v",
        "0",
        "simulation.curve_tolerance_v",
    ),
    (
        "simulation.max_time_s",
        "\"forever\"",
        "simulation.max_time_s",
    ),
    ("inductr", "{}", "inductr"),
    ("name", "\"\"", "name"),
    // A design that cannot work: the LED string needs more than the supply.
    ("supply.voltage_v", "5", "never light"),
];

#[test]
fn every_bad_field_exits_2_and_names_it() {
    let dir = scratch("fields");
    let base = template();
    for (k, (path, value, must)) in EDITS.iter().enumerate() {
        let mut v = base.clone();
        if *path == "supply.voltage_v" && *value == "5" {
            v["supply"].as_object_mut().unwrap().remove("input_range_v");
        }
        if path.split('.').count() == 1 || !path.contains('.') {
            v[*path] = serde_json::from_str(value).unwrap();
        } else if *value == "\"<delete>\"" {
            set(&mut v, path, "<delete>");
        } else {
            set(&mut v, path, value);
        }
        let file = dir.join(format!("case-{k}.json"));
        let text = serde_json::to_string_pretty(&v)
            .unwrap_or_else(|e| panic!("{path} = {value}: fixture does not serialize: {e}"));
        std::fs::write(&file, text).unwrap();
        for cmd in ["check", "run"] {
            let o = chopwave().arg(cmd).arg(&file).output().unwrap();
            let err = String::from_utf8_lossy(&o.stderr);
            assert_eq!(o.status.code(), Some(2), "{cmd} {path} = {value}: {err}");
            assert!(
                err.contains(must),
                "{cmd} {path} = {value}: message lacks `{must}`: {err}"
            );
            assert!(!err.contains("panicked"), "{cmd} {path} = {value}: {err}");
            assert!(
                err.contains(&format!("case-{k}.json")),
                "file not named: {err}"
            );
        }
    }
}

#[test]
fn bad_files_and_options_exit_2() {
    let dir = scratch("files");
    let good = dir.join("good.json");
    std::fs::write(&good, serde_json::to_string(&template()).unwrap()).unwrap();
    let empty = dir.join("empty.json");
    std::fs::write(&empty, "").unwrap();
    let binary = dir.join("binary.json");
    std::fs::write(&binary, [0xff, 0xfe, 0x00, 0x9c, 0x7b]).unwrap();
    let truncated = dir.join("truncated.json");
    let text = serde_json::to_string_pretty(&template()).unwrap();
    std::fs::write(&truncated, &text[..text.len() / 2]).unwrap();
    let array = dir.join("array.json");
    std::fs::write(&array, "[1, 2, 3]").unwrap();
    let cases: Vec<(Vec<String>, &str)> = vec![
        (
            vec!["run".into(), dir.join("missing.json").display().to_string()],
            "missing.json",
        ),
        (vec!["run".into(), dir.display().to_string()], ""),
        (
            vec!["run".into(), empty.display().to_string()],
            "empty.json",
        ),
        (
            vec!["run".into(), binary.display().to_string()],
            "binary.json",
        ),
        (
            vec!["run".into(), truncated.display().to_string()],
            "EOF while parsing",
        ),
        (
            vec!["run".into(), array.display().to_string()],
            "array.json",
        ),
        (
            vec![
                "run".into(),
                good.display().to_string(),
                "--set".into(),
                "inductor.inductance_h=-1".into(),
            ],
            "inductor.inductance_h",
        ),
        (
            vec![
                "run".into(),
                good.display().to_string(),
                "--set".into(),
                "inductor.inductance_h".into(),
            ],
            "PATH=VALUE",
        ),
        (
            vec![
                "run".into(),
                good.display().to_string(),
                "--set".into(),
                "supply.voltage_v=12V0".into(),
            ],
            "supply.voltage_v",
        ),
        (
            vec![
                "run".into(),
                good.display().to_string(),
                "--set".into(),
                "load.nonsense=1".into(),
            ],
            "nonsense",
        ),
        (
            vec![
                "run".into(),
                good.display().to_string(),
                "--engine".into(),
                "fast".into(),
            ],
            "fast",
        ),
        (vec!["frobnicate".into()], "frobnicate"),
    ];
    for (args, must) in cases {
        let o = chopwave().args(&args).output().unwrap();
        let err = String::from_utf8_lossy(&o.stderr);
        assert_eq!(o.status.code(), Some(2), "{args:?}: {err}");
        assert!(
            err.contains(must),
            "{args:?}: message lacks `{must}`: {err}"
        );
        assert!(!err.contains("panicked"), "{args:?}: {err}");
    }
}

#[test]
fn unwritable_output_is_reported_before_simulating() {
    let dir = scratch("unwritable");
    let good = dir.join("good.json");
    let mut v = template();
    // A run that would take long if it were started.
    v["simulation"]["record_cycles"] = 2000.into();
    std::fs::write(&good, serde_json::to_string(&v).unwrap()).unwrap();
    let blocker = dir.join("not-a-folder");
    std::fs::write(&blocker, "x").unwrap();
    let t = std::time::Instant::now();
    let o = chopwave()
        .arg("run")
        .arg(&good)
        .arg("--plot")
        .arg(blocker.join("plots"))
        .output()
        .unwrap();
    let err = String::from_utf8_lossy(&o.stderr);
    assert_eq!(o.status.code(), Some(1), "{err}");
    assert!(err.contains("not-a-folder"), "{err}");
    assert!(t.elapsed().as_secs_f64() < 5.0);
}

/// `fit-led` with points no LED curve passes through, or settings out of
/// range: exit 2 with a message, never a printed model with inf/NaN or
/// values a scenario would refuse.
#[test]
fn fit_led_refuses_points_that_define_no_led_curve() {
    let cases: &[(&[&str], &str)] = &[
        // The voltage falls as the current rises.
        (
            &[
                "--point", "0.1,3.0", "--point", "0.2,2.9", "--point", "0.3,3.1",
            ],
            "rise",
        ),
        // Three points, two currents.
        (
            &[
                "--point", "0.1,2.8", "--point", "0.1,2.8", "--point", "0.3,3.0",
            ],
            "distinct",
        ),
        // Not one LED's point.
        (
            &[
                "--point", "1e308,3", "--point", "2e308,4", "--point", "3e308,5",
            ],
            "point",
        ),
        (
            &[
                "--point", "0.1,1e6", "--point", "0.2,2e6", "--point", "0.3,3e6",
            ],
            "point",
        ),
        // Rising so little that the emission coefficient falls below what
        // a scenario accepts.
        (
            &[
                "--point",
                "0.1,3.0",
                "--point",
                "0.2,3.0000001",
                "--point",
                "0.3,3.0000002",
            ],
            "outside",
        ),
        // Rising so steeply that it is no exponential an LED follows.
        (
            &[
                "--point", "1e-9,0.1", "--point", "1e-6,50", "--point", "1e-3,99",
            ],
            "outside",
        ),
    ];
    let good = [
        "--point", "0.05,2.6", "--point", "0.2,2.8", "--point", "0.7,3.05",
    ];
    let mut all: Vec<(Vec<&str>, &str)> = cases.iter().map(|(a, w)| (a.to_vec(), *w)).collect();
    for extra in [
        ["--temp", "NaN"],
        ["--temp", "1e9"],
        ["--tempco-mv", "1e300"],
        ["--tempco-mv", "inf"],
        ["--count", "5000"],
    ] {
        let mut a = good.to_vec();
        a.extend(extra);
        all.push((a, ""));
    }
    for (args, want) in all {
        let o = chopwave().arg("fit-led").args(&args).output().unwrap();
        let err = String::from_utf8_lossy(&o.stderr);
        let out = String::from_utf8_lossy(&o.stdout);
        assert_eq!(o.status.code(), Some(2), "{args:?}: {err}\n{out}");
        assert!(err.contains(want), "{args:?}: `{want}` missing: {err}");
        assert!(!err.contains("panicked"), "{err}");
        assert!(out.is_empty(), "{args:?} printed: {out}");
    }
    // A good fit's printed fragment loads through the loader.
    let o = chopwave().arg("fit-led").args(good).output().unwrap();
    assert!(o.status.success(), "{}", String::from_utf8_lossy(&o.stderr));
    let out = String::from_utf8_lossy(&o.stdout);
    for bad in ["inf", "NaN", "nan"] {
        assert!(!out.contains(bad), "{out}");
    }
    let fragment = &out[out.find("\n{").unwrap()..];
    let fragment: serde_json::Value = serde_json::from_str(fragment.trim()).unwrap();
    let mut s = template();
    s["load"] = fragment["load"].clone();
    s["supply"]["voltage_v"] = 24.0.into();
    s["supply"]["input_range_v"] = serde_json::Value::Null;
    let d = scratch("fit-fragment");
    let f = d.join("fitted.json");
    std::fs::write(&f, s.to_string()).unwrap();
    let o = chopwave().arg("check").arg(&f).output().unwrap();
    assert!(o.status.success(), "{}", String::from_utf8_lossy(&o.stderr));
}

#[test]
fn check_lists_every_unknown_field() {
    let mut v = template();
    v["inductor"]["inductanse_h"] = 1.into();
    v["supply"]["voltag_v"] = 3.into();
    v["load"]["cuont"] = 3.into();
    let d = scratch("unknown-all");
    let f = d.join("s.json");
    std::fs::write(&f, v.to_string()).unwrap();
    let o = chopwave().arg("check").arg(&f).output().unwrap();
    assert_eq!(o.status.code(), Some(2));
    let err = String::from_utf8_lossy(&o.stderr);
    for (path, near) in [
        ("inductor.inductanse_h", "inductance_h"),
        ("supply.voltag_v", "voltage_v"),
        ("load.cuont", "count"),
    ] {
        let line = err
            .lines()
            .find(|l| l.contains(&format!("`{path}`")))
            .unwrap_or_else(|| panic!("{path} not listed: {err}"));
        assert!(line.contains(&format!("did you mean `{near}`")), "{line}");
    }
    // An error from --set names the override.
    let t = d.join("t.json");
    std::fs::write(&t, template().to_string()).unwrap();
    let o = chopwave()
        .args(["check", t.to_str().unwrap(), "--set", "load.count=abc"])
        .output()
        .unwrap();
    assert_eq!(o.status.code(), Some(2));
    let err = String::from_utf8_lossy(&o.stderr);
    assert!(err.contains("--set load.count=abc:"), "{err}");
}
