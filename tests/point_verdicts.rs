//! Per-point verdicts of studies: audible switching, duty near 100 %,
//! inductor saturation and loss of regulation, as typed values in the
//! rows' CSV and JSON.

use chopwave_suite::*;
use sim_core::study::rows::{PointVerdict, PointWarning, RowExt, AUDIBLE_LIMIT_HZ};
use sim_core::study::run::{Hooks, RunSettings};
use sim_core::study::sweep::sweep;
use sim_core::study::vary::{Grid, Vary};

fn grid(s: &sim_core::Scenario, spec: &str) -> Grid {
    Grid::new(vec![Vary::parse(spec, s).unwrap()]).unwrap()
}

/// A buck can only step down: with the supply below the LED string's
/// voltage at the target current (plus the switch and inductor drops)
/// the current falls short and the point fails as not regulating; with
/// a few volts of headroom it regulates. Erickson & Maksimovic,
/// Fundamentals of Power Electronics, 3rd ed., ch. 2: V_out = D·V_in ≤ V_in.
#[test]
fn a_supply_below_the_string_is_not_regulating() {
    let s = lamp_12v();
    // The switch-off threshold of the constant off-time controller.
    let v_string = s.load_voltage_v(0.8);
    let t = sweep(
        &s,
        &grid(
            &s,
            &format!("supply.voltage_v={}:{}:5", v_string - 2.0, v_string + 4.0),
        ),
        &RunSettings::default(),
        None,
        &Hooks::default(),
    );
    let mut short = 0;
    let mut fine = 0;
    for r in &t.rows {
        let v = r.input(0);
        let c = t.manifest.check_point(r);
        let not_reg = c
            .warnings
            .iter()
            .any(|w| matches!(w, PointWarning::NotRegulating { .. }));
        if v < v_string {
            assert!(
                !r.ok() || (not_reg && c.verdict == PointVerdict::Fail),
                "{v} V: {c:?}"
            );
            short += 1;
        } else if v > v_string + 2.0 {
            assert!(!not_reg, "{v} V: {c:?}");
            fine += 1;
        }
    }
    assert!(short > 0 && fine > 0);
    // Typed values in the files.
    let csv = t.to_csv_text();
    let head = csv.lines().next().unwrap();
    assert!(head.ends_with(",verdict,warnings"), "{head}");
    let json = t.to_json_text();
    assert!(json.contains("\"verdict\":"));
}

/// A long fixed off-time pulls the switching frequency below 20 kHz (the
/// upper limit of hearing; common practice): exactly those points are
/// flagged audible; a saturation rating under the peak threshold fails
/// every point.
#[test]
fn audible_and_saturation_points_are_flagged() {
    let mut s = lamp_12v();
    s.inductor.saturation_current_a = Some(0.7);
    s.inductor.inductance_h = 1e-3;
    let t = sweep(
        &s,
        &grid(&s, "controller.off_time_s=5u:60u:4"),
        &RunSettings::default(),
        None,
        &Hooks::default(),
    );
    let mut audible = 0;
    for r in &t.rows {
        let c = t.manifest.check_point(r);
        let f = r.metric("switching_frequency_hz").unwrap();
        let flagged = c.warnings.iter().any(|w| w.code() == "audible");
        assert_eq!(flagged, f < AUDIBLE_LIMIT_HZ, "{f} Hz: {c:?}");
        audible += usize::from(flagged);
        assert!(c.warnings.iter().any(|w| w.code() == "saturation"), "{c:?}");
        assert_eq!(c.verdict, PointVerdict::Fail);
    }
    assert!(audible > 0 && audible < t.rows.len(), "{audible}");
}

/// The saturation flag at its edge: a peak exactly at the inductor's
/// saturation rating is within it (the rating is the largest current the
/// part is specified for), one float above it is flagged. Probed on a
/// real row by moving the manifest's rating to the row's own peak.
#[test]
fn the_saturation_flag_sits_exactly_at_the_rating() {
    let s = lamp_12v();
    let mut t = sweep(
        &s,
        &grid(&s, "supply.voltage_v=12:12:1"),
        &RunSettings::default(),
        None,
        &Hooks::default(),
    );
    let r = t.rows[0].clone();
    let peak = r.metric("inductor_current_peak_a").unwrap();
    let saturation = |t: &sim_core::study::rows::StudyTable| {
        t.manifest
            .check_point(&r)
            .warnings
            .iter()
            .any(|w| w.code() == "saturation")
    };
    t.manifest.inductor_saturation_a = Some(peak);
    assert!(!saturation(&t), "a peak at the rating is within it");
    t.manifest.inductor_saturation_a = Some(peak.next_down());
    assert!(saturation(&t), "a peak above the rating is flagged");
}
