//! How `chopwave` writes numbers for people: the starter template in
//! engineering notation, study summaries in engineering notation, and
//! round-off shown as zero.

use serde_json::Value;
use std::process::{Command, Output};

fn run(args: &[&str]) -> Output {
    Command::new(env!("CARGO_BIN_EXE_chopwave"))
        .env("RUST_BACKTRACE", "1")
        .args(args)
        .output()
        .expect("the chopwave binary runs")
}

fn text(b: &[u8]) -> String {
    String::from_utf8_lossy(b).into_owned()
}

/// A fresh, empty scratch folder for one test.
fn scratch(name: &str) -> std::path::PathBuf {
    let d = std::env::temp_dir().join(format!(
        "chopwave-display-{name}-{}",
        std::process::id()
    ));
    let _ = std::fs::remove_dir_all(&d);
    std::fs::create_dir_all(&d).unwrap();
    d
}

fn scenario(name: &str) -> String {
    std::path::Path::new(env!("CARGO_MANIFEST_DIR"))
        .join("../scenarios")
        .join(name)
        .to_string_lossy()
        .into_owned()
}

#[test]
fn template_shows_every_section_in_engineering_notation_and_loads_back() {
    let o = run(&["template"]);
    assert!(o.status.success(), "{}", text(&o.stderr));
    let printed = text(&o.stdout);
    let v: Value = serde_json::from_str(&printed).unwrap();
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
            "template lacks `{key}`:\n{printed}"
        );
    }
    for k in [
        "switch",
        "diode",
        "inductor",
        "input_capacitor",
        "output_capacitor",
        "led",
        "controller",
    ] {
        assert!(v["parts"].get(k).is_some(), "parts.{k}");
    }
    assert_eq!(v["inductor"]["inductance_h"], "68uH");
    assert_eq!(v["switch"]["on_resistance_ohm"], "120mOhm");
    assert_eq!(v["output_capacitor"]["capacitance_f"], "4.7uF");
    assert_eq!(v["controller"]["off_time_s"], "2us");
    // It is a valid scenario that the loader reads as the very values
    // meant (literals, compared bit for bit).
    let dir = scratch("template");
    let f = dir.join("t.json");
    std::fs::write(&f, &printed).unwrap();
    let o = run(&["check", f.to_str().unwrap()]);
    assert!(o.status.success(), "{}", text(&o.stderr));
    let s = sim_core::scenario::Scenario::from_json_str(&printed).unwrap();
    assert_eq!(s.inductor.inductance_h.to_bits(), 68e-6_f64.to_bits());
    assert_eq!(s.switch.on_resistance_ohm.to_bits(), 0.12_f64.to_bits());
    let cout = s.output_capacitor.unwrap();
    assert_eq!(cout.capacitance_f.to_bits(), 4.7e-6_f64.to_bits());
    assert_eq!(s, sim_core::scenario::template_with_parts());
    let _ = std::fs::remove_dir_all(&dir);
}
