//! Unit tests of the study table.

use super::text::{csv_cell, csv_line};
use super::*;

#[test]
fn digest_is_fnv1a() {
    // FNV-1a 64 test vectors (Fowler, Noll, Vo: the FNV reference
    // page's test suite): "" and "a".
    assert_eq!(digest(""), "cbf29ce484222325");
    assert_eq!(digest("a"), "af63dc4c8601ec8c");
}

#[test]
fn csv_quotes_what_needs_it() {
    let cells = [
        "a,b \"c\"".to_string(),
        String::new(),
        "x\ny".into(),
        "7".into(),
    ];
    assert_eq!(csv_line(&cells), "\"a,b \"\"c\"\"\",,\"x\ny\",7\n");
    assert_eq!(csv_cell(&Value::Null), "");
    for x in [1e-5_f64, 0.1 + 0.2, 4.7e-6, 123_456.789] {
        let back: f64 = csv_cell(&Value::from(x)).parse().unwrap();
        assert_eq!(back.to_bits(), x.to_bits());
    }
}

#[test]
fn rows_read_back_write_the_same_text() {
    let columns: Columns = [
        Metric::ConductionMode,
        Metric::CyclesMeasured,
        Metric::Duty,
        Metric::LedCurrentRipplePct,
    ]
    .as_slice()
    .into();
    let text = r#"{"cycles_to_settle":12,"error":null,"index":3,"inputs":[9.0,0.00001],"label":null,"metrics":{"conduction_mode":"dcm","cycles_measured":8,"duty":0.30000000000000004,"led_current_ripple_pct":null},"status":"ok","warm_start":true}"#;
    let v: Value = serde_json::from_str(text).unwrap();
    let r = Row::from_value(&v, &columns).unwrap();
    assert_eq!(r.to_value().to_string(), text);
    assert_eq!(r.mode(), Some("dcm"));
    assert_eq!(r.metric("cycles_measured"), Some(8.0));
    assert_eq!(r.metric("led_current_ripple_pct"), None);
    let failed = r#"{"cycles_to_settle":null,"error":"no, \"quoted\"","index":0,"inputs":[null],"label":"a low","metrics":{},"status":"failed","warm_start":null}"#;
    let v: Value = serde_json::from_str(failed).unwrap();
    let r = Row::from_value(&v, &columns).unwrap();
    assert_eq!(r.to_value().to_string(), failed);
    assert!(r.input(0).is_nan());
    // A metric the manifest does not list is refused, naming it.
    let odd: Value = serde_json::from_str(&text.replace("\"duty\"", "\"dutty\"")).unwrap();
    let e = Row::from_value(&odd, &columns).unwrap_err();
    assert!(e.to_string().contains("dutty"), "{e}");
}

#[test]
fn metric_columns_flatten_losses() {
    let c = metric_columns();
    assert!(c.iter().any(|n| n.name() == "losses_w.inductor_dcr"));
    assert!(c.iter().any(|n| n.name() == "led_current_avg_a"));
}

/// The typed columns against the metrics serialised by serde, the form
/// the table files have always held: the same names in the same order,
/// and each accessor gives the cell that serde's value reads as.
#[test]
fn typed_columns_match_the_serialised_metrics() {
    let s = crate::scenario::template();
    let r = crate::run::simulate(&s, &crate::run::RunOptions::default()).unwrap();
    let flat = flat_metrics(&r.metrics);
    let names: Vec<&str> = Metric::ALL.iter().map(|m| m.name()).collect();
    let keys: Vec<&str> = flat.keys().map(String::as_str).collect();
    assert_eq!(names, keys);
    for &m in Metric::ALL {
        let via_serde = Cell::from_value(&flat[m.name()]).unwrap();
        assert_eq!(m.cell(&r.metrics), via_serde, "{m}");
        assert_eq!(Metric::from_name(m.name()), Some(m));
        assert_eq!(m.name().parse::<Metric>(), Ok(m));
    }
    assert_eq!(Metric::from_name("led_current"), None);
    // Units follow the names' SI suffixes.
    assert_eq!(Metric::LedCurrentAvgA.unit(), "A");
    assert_eq!(Metric::SwitchingFrequencyHz.unit(), "Hz");
    assert_eq!(Metric::LossInductorDcr.unit(), "W");
    assert_eq!(Metric::LedCurrentRipplePct.unit(), "%");
    assert_eq!(Metric::Efficiency.unit(), "");
}

#[test]
fn a_manifest_naming_an_unknown_column_is_refused() {
    let m: Result<Vec<Metric>, _> = serde_json::from_str(r#"["duty","dutty"]"#);
    let e = m.unwrap_err().to_string();
    assert!(e.contains("dutty"), "{e}");
    let ok: Vec<Metric> = serde_json::from_str(r#"["duty","losses_w.inductor_core"]"#).unwrap();
    assert_eq!(ok, [Metric::Duty, Metric::LossInductorCore]);
    assert_eq!(
        serde_json::to_string(&ok).unwrap(),
        r#"["duty","losses_w.inductor_core"]"#
    );
}
