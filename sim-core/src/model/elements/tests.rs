//! Both engines and the post-processed losses see the same element values.

use super::*;
use crate::exact::ExactEngine;
use crate::metrics::Totals;
use crate::parts::losses::part_loss_energies;
use crate::record::Recorder;
use crate::reference::ReferenceEngine;
use crate::scenario::{template, template_with_parts, Capacitor, InductancePoint, SenseResistor};

/// Scenarios that exercise every element: the starter design, the one
/// with every part section (output capacitor, saturating inductor), a
/// Shockley diode with an exponential string, and a sense resistor.
fn scenarios() -> Vec<Scenario> {
    let mut shockley = template_with_parts();
    shockley.diode = Diode::Shockley {
        saturation_current_a: 5e-6,
        emission_coefficient: 1.05,
        series_resistance_ohm: 0.03,
        temperature_c: 70.0,
        reference_temperature_c: None,
        bandgap_ev: None,
        is_temp_exponent: None,
        forward_voltage_tempco_v_per_k: None,
        tempco_current_a: None,
    };
    shockley.input_capacitor = Some(Capacitor {
        capacitance_f: 10e-6,
        esr_ohm: 0.01,
    });
    vec![template(), template_with_parts(), shockley]
}

#[test]
fn both_engines_use_the_elements_the_scenario_gives() {
    for s in scenarios() {
        let e = Elements::new(&s);
        // Against the scenario's own fields (the independent values).
        assert_eq!(e.supply_v.to_bits(), s.supply.voltage_v.to_bits());
        assert_eq!(e.switch_ohm.to_bits(), s.switch.on_resistance_ohm.to_bits());
        assert_eq!(e.dcr_ohm.to_bits(), s.inductor.dcr_ohm.to_bits());
        let l0 = s
            .parts
            .inductor
            .saturation_curve
            .first()
            .map_or(s.inductor.inductance_h, |p| p.inductance_h);
        assert!(
            (e.inductance_h - l0).abs() <= 1e-15 * l0,
            "{} vs {l0}",
            e.inductance_h
        );
        assert_eq!(
            e.output_cap,
            s.output_capacitor.map(|c| (c.capacitance_f, c.esr_ohm))
        );

        // The exact engine's circuit.
        let c = ExactEngine::new(&s).circuit;
        assert_eq!(c.el.supply_v.to_bits(), e.supply_v.to_bits());
        assert_eq!(c.el.source_ohm.to_bits(), e.source_ohm.to_bits());
        assert_eq!(c.el.input_cap, e.input_cap);
        assert_eq!(c.el.switch_ohm.to_bits(), e.switch_ohm.to_bits());
        assert_eq!(c.el.inductance_h.to_bits(), e.inductance_h.to_bits());
        assert_eq!(c.el.saturation, e.saturation);
        assert_eq!(c.el.dcr_ohm.to_bits(), e.dcr_ohm.to_bits());
        assert_eq!(
            c.el.sense_string_ohm.to_bits(),
            e.sense_string_ohm.to_bits()
        );
        assert_eq!(
            c.el.sense_switch_ohm.to_bits(),
            e.sense_switch_ohm.to_bits()
        );
        assert_eq!(c.el.output_cap, e.output_cap);
        assert_eq!(c.led_exact, e.led.exp());
        assert_eq!(c.diode_exact, e.diode.exp());
        assert_eq!(c.led_idle_v.to_bits(), e.led_idle_v().to_bits());

        // The reference engine integrates the very same values.
        assert_eq!(*ReferenceEngine::new(&s).elements(), e);
    }
}

#[test]
fn a_sense_resistor_reaches_both_engines_once() {
    let mut s = template();
    s.sense_resistor = Some(SenseResistor {
        resistance_ohm: 0.33,
        position: Some(SensePosition::Switch),
    });
    let e = Elements::new(&s);
    assert_eq!(
        (e.sense_string_ohm.to_bits(), e.sense_switch_ohm.to_bits()),
        (0.0f64.to_bits(), 0.33f64.to_bits())
    );
    assert_eq!(
        ExactEngine::new(&s).circuit.el.sense_switch_ohm.to_bits(),
        0.33f64.to_bits()
    );
    assert_eq!(
        ReferenceEngine::new(&s)
            .elements()
            .sense_switch_ohm
            .to_bits(),
        0.33f64.to_bits()
    );
}

/// The core loss of a measured triangular current through the scenario's
/// inductor, W·s.
fn core_loss_j(s: &Scenario) -> f64 {
    // Ten cycles of 10 µs: 0 → 1 A in 4 µs, back in 6 µs.
    let mut r = Recorder::new(0, 0);
    for k in 0..10 {
        let t0 = k as f64 * 10e-6;
        r.cycle_start(t0);
        r.push([t0, 0.0, 0.0, 0.0, 0.0, 0.0, 1.0]);
        r.push([t0 + 4e-6, 1.0, 0.0, 0.0, 0.0, 0.0, 0.0]);
    }
    r.push([100e-6, 0.0, 0.0, 0.0, 0.0, 0.0, 1.0]);
    let w = r.finish();
    let t = Totals {
        time_s: 100e-6,
        cycles: 10,
        ..Totals::default()
    };
    part_loss_energies(s, &t, &w).inductor_core
}

#[test]
fn the_core_loss_reads_the_inductor_the_engines_use() {
    // A part curve flat at 47 µH replaces a nominal 150 µH: the engines
    // run 47 µH, so the core loss must be that of a plain 47 µH inductor
    // (flux ψ = L·i, B = ψ/(N·A_e)), not that of 150 µH.
    let mut plain = template_with_parts();
    plain.parts.inductor.saturation_curve.clear();
    plain.inductor.inductance_h = 47e-6;
    let mut curved = plain.clone();
    curved.inductor.inductance_h = 150e-6;
    curved.parts.inductor.saturation_curve = vec![
        InductancePoint {
            current_a: 0.0,
            inductance_h: 47e-6,
        },
        InductancePoint {
            current_a: 2.0,
            inductance_h: 47e-6,
        },
    ];
    let mut nominal = plain.clone();
    nominal.inductor.inductance_h = 150e-6;
    assert_eq!(
        ExactEngine::new(&curved).circuit.el.inductance_h.to_bits(),
        47e-6f64.to_bits()
    );
    assert_eq!(
        ReferenceEngine::new(&curved)
            .elements()
            .inductance_h
            .to_bits(),
        47e-6f64.to_bits()
    );
    let (p, c, n) = (
        core_loss_j(&plain),
        core_loss_j(&curved),
        core_loss_j(&nominal),
    );
    assert!(p > 0.0);
    assert!((c - p).abs() <= 1e-12 * p, "curve {c} vs plain {p}");
    // The check can fail: the nominal inductance gives another loss
    // (B scales with L, the loss as B^β).
    assert!(n > 2.0 * p, "nominal {n} vs {p}");
}
