//! How `chopwave` writes numbers for people: the starter template in
//! engineering notation, study summaries in engineering notation, and
//! round-off shown as zero.

mod common;

use common::{run, scenario, scratch, text};
use serde_json::Value;

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

/// True when `s` holds a number in raw scientific notation (`1.7e-5`,
/// `9e0`), which people should not have to decode.
fn has_raw_scientific(s: &str) -> Option<String> {
    let b = s.as_bytes();
    for i in 1..b.len().saturating_sub(1) {
        if (b[i] == b'e' || b[i] == b'E') && b[i - 1].is_ascii_digit() {
            let next = if b[i + 1] == b'-' || b[i + 1] == b'+' {
                b.get(i + 2)
            } else {
                b.get(i + 1)
            };
            if next.is_some_and(u8::is_ascii_digit) {
                let from = s[..i].rfind(char::is_whitespace).map_or(0, |k| k + 1);
                let to = s[i..].find(char::is_whitespace).map_or(s.len(), |k| i + k);
                return Some(s[from..to].to_string());
            }
        }
    }
    None
}

#[test]
fn boundary_prints_engineering_notation() {
    let o = run(&[
        "boundary",
        &scenario("undersized-inductor-dcm.json"),
        "--vary",
        "inductor.inductance_h=2u:60u",
        "-q",
    ]);
    assert!(o.status.success(), "{}", text(&o.stderr));
    let out = text(&o.stdout);
    assert_eq!(has_raw_scientific(&out), None, "{out}");
    let line = out
        .lines()
        .find(|l| l.trim_start().starts_with("boundary "))
        .unwrap_or_else(|| panic!("no boundary line: {out}"));
    assert!(line.contains(" µH"), "{line}");
    assert!(out.contains("nominal    6.8 µH"), "{out}");
}

#[test]
fn spread_inputs_and_limits_print_engineering_notation() {
    let dir = scratch("spread");
    let o = run(&[
        "spread",
        &scenario("cabin-light-9-32v.json"),
        "--samples",
        "8",
        "--no-plots",
        "-q",
        "--out",
        dir.to_str().unwrap(),
    ]);
    assert!(o.status.success(), "{}", text(&o.stderr));
    let out = text(&o.stdout);
    assert_eq!(has_raw_scientific(&out), None, "{out}");
    // The scenario's own values (68 µH, 9 to 32 V) as engineers write them.
    assert!(
        out.contains("inductor.inductance_h: nominal 68 µH"),
        "{out}"
    );
    assert!(out.contains("uniform over 9 V to 32 V"), "{out}");
    let _ = std::fs::remove_dir_all(&dir);
}

/// In DCM without an output capacitor the LED current is the inductor
/// current, zero while it rests: its minimum is 0, whatever round-off the
/// arithmetic leaves (it printed −0.763 pA).
#[test]
fn round_off_minimum_of_a_dcm_led_current_reads_zero() {
    let o = run(&["run", &scenario("undersized-inductor-dcm.json")]);
    assert!(o.status.success(), "{}", text(&o.stderr));
    let out = text(&o.stdout);
    let line = out
        .lines()
        .find(|l| l.trim_start().starts_with("min / max"))
        .unwrap_or_else(|| panic!("no min / max line: {out}"));
    let min = line.split_once("max").unwrap().1.trim();
    assert!(min.starts_with("0 A /"), "{line}");
    assert!(out.contains("DCM"), "{out}");
}

/// Bad values are quoted in engineering notation with the field's unit.
#[test]
fn range_errors_quote_engineering_notation() {
    let dir = scratch("range");
    let f = dir.join("bad.json");
    let mut v: Value = serde_json::from_slice(&run(&["template"]).stdout).unwrap();
    v["inductor"]["inductance_h"] = "-4.7u".into();
    v["parts"]["switch"]["gate_charge_c"] = "20uC".into();
    std::fs::write(&f, v.to_string()).unwrap();
    let o = run(&["check", f.to_str().unwrap()]);
    assert_eq!(o.status.code(), Some(2));
    let err = text(&o.stderr);
    assert!(err.contains("−4.7 µH"), "{err}");
    assert!(err.contains("1 nH to 10 H"), "{err}");
    assert!(err.contains("20 µC"), "{err}");
    assert_eq!(has_raw_scientific(&err), None, "{err}");
    let _ = std::fs::remove_dir_all(&dir);
}

/// A swept ratio (duty) is shown as the plain number the user wrote
/// (`0.3`), not with a prefix (`300 m`); every figure in engineering
/// notation.
#[test]
fn sweep_of_a_ratio_shows_plain_numbers() {
    let dir = scratch("sweep");
    let o = run(&[
        "sweep",
        &scenario("cove-light-fixed-duty.json"),
        "--vary",
        "controller.duty=0.3:0.6:4",
        "--no-plots",
        "-q",
        "--out",
        dir.to_str().unwrap(),
    ]);
    assert!(o.status.success(), "{}", text(&o.stderr));
    let out = text(&o.stdout);
    assert_eq!(has_raw_scientific(&out), None, "{out}");
    for v in ["0.3", "0.4", "0.5", "0.6"] {
        assert!(
            out.lines()
                .any(|l| l.trim_start().starts_with(&format!("{v} "))),
            "{v} missing: {out}"
        );
    }
    assert!(!out.contains(" m "), "{out}");
    let _ = std::fs::remove_dir_all(&dir);
}

#[test]
fn loss_table_columns_line_up_for_every_row_name() {
    // The template's parts give every part loss (gate, output and junction
    // capacitance, recovery, core, quiescent); with a sense resistor every
    // loss row of the table is printed. Every row's "%" must sit in the
    // same column, however long the row's name.
    let dir = scratch("loss-columns");
    let f = dir.join("t.json");
    std::fs::write(&f, run(&["template"]).stdout).unwrap();
    let o = run(&[
        "run",
        "--no-startup",
        f.to_str().unwrap(),
        "--set",
        "sense_resistor.resistance_ohm=0.1",
    ]);
    assert!(o.status.success(), "{}", text(&o.stderr));
    let out = text(&o.stdout);
    let lines: Vec<&str> = out.lines().collect();
    let head = lines
        .iter()
        .position(|l| l.trim_start().starts_with("losses") && l.contains("% of input"))
        .expect("a loss table");
    let col = |l: &str| l.chars().position(|c| c == '%');
    let row_col = col(lines[head + 1]);
    assert!(row_col.is_some(), "{out}");
    let mut rows = 0;
    for l in &lines[head + 1..] {
        if l.trim().is_empty() || !l.contains('%') {
            break;
        }
        assert_eq!(col(l), row_col, "misaligned: {l:?}\n{out}");
        rows += 1;
        if l.trim_start().starts_with("total") {
            break;
        }
    }
    assert!(rows >= 10, "only {rows} loss rows:\n{out}");
    assert!(out.contains("diode junction capacitance"), "{out}");
    let _ = std::fs::remove_dir_all(&dir);
}
