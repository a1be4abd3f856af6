//! Unit tests of the reference engine's model and event location.

use super::*;
use crate::devices::ExpDevice;
use crate::scenario::Load;
use crate::scenario::{template, Capacitor};
use approx::assert_relative_eq;

#[test]
fn output_side_satisfies_kirchhoff_and_the_exact_curve() {
    let mut s = template();
    s.output_capacitor = Some(Capacitor {
        capacitance_f: 4.7e-6,
        esr_ohm: 0.02,
    });
    let m = Model::from_scenario(&s, 1e-9);
    let dev = ExpDevice::from_load(&s.load).unwrap();
    for &(il, vco) in &[(0.7, 9.5), (0.0, 9.0), (1.2, 8.0), (-0.1, 9.8)] {
        let (vo, iled, ico, _) = m.output_side(vco, il, true);
        assert_relative_eq!(iled + ico, il, epsilon = 1e-12);
        assert_relative_eq!(vo, vco + 0.02 * ico, epsilon = 1e-9);
        assert_relative_eq!(vo, dev.voltage_v(iled), epsilon = 1e-9);
    }
}

#[test]
fn scaled_derivative_unscales_to_the_circuit_equations() {
    let s = template();
    let m = Model::from_scenario(&s, 1e-9);
    let ctx = Ctx::new(m, 0.8, 12.0);
    let mode = Mode {
        switch_on: false,
        conducting: true,
    };
    let mut y = Y::zeros();
    y[Y_IL] = 0.7 / 0.8;
    y[Y_VCIN] = 11.9 / 12.0;
    let d = ctx.deriv(mode, &y);
    let sig = m.eval(mode, 0.7, 0.0, 11.9);
    // Off: L di/dt = -v_d - DCR·i - v_LED.
    let dev = ExpDevice::from_load(&s.load).unwrap();
    let expect = (-(0.4 + 0.03 * 0.7) - 0.08 * 0.7 - dev.voltage_v(0.7)) / s.inductor.inductance_h;
    assert_relative_eq!(sig.dil, expect, max_relative = 1e-12);
    assert_relative_eq!(d[Y_IL] * 0.8 / ctx.t_s, expect, max_relative = 1e-12);
    assert_relative_eq!(
        d[A_PDI] * ctx.scale[A_PDI] / ctx.t_s,
        (0.4 + 0.021) * 0.7,
        max_relative = 1e-12
    );
}
#[test]
fn knee_crossing_is_located_on_the_dense_output() {
    // Illustrative: 24 V into five 2.7 V knees behind a 1 µF, 50 mΩ
    // capacitor; from power-on the output node rises through 13.5 V.
    let mut s = template();
    s.supply.voltage_v = 24.0;
    s.load = Load::LedKnee {
        count: 5,
        knee_voltage_v: 2.7,
        dynamic_resistance_ohm: 0.4,
    };
    s.output_capacitor = Some(Capacitor {
        capacitance_f: 1e-6,
        esr_ohm: 0.05,
    });
    let mut e = ReferenceEngine::new(&s);
    let (evs, n, _) = e.events();
    let knee: Vec<Event> = evs[..n]
        .iter()
        .copied()
        .filter(|ev| matches!(ev.kind, EventKind::Knee { .. }))
        .collect();
    assert_eq!(knee.len(), 1);
    let seg = e.integrate(&knee, 100.0).unwrap();
    assert_eq!(seg.fired, Some(0));
    let sig = e.ctx.sig(e.mode, &seg.y);
    assert!((sig.vo_open - 13.5).abs() < 1e-9, "{}", sig.vo_open);
    // The crossing lies inside the last accepted step, not at its end.
    assert!(seg.points.len() > 2);
}
