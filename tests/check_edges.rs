//! Every design check probed at its edges: ok, warn (just inside the
//! warning band) and fail, each a fraction of a percent (`EPS`) from the
//! limit or from the edge of the band, on an ideal constant off-time buck
//! whose figures are known in closed form; and the worst case over a
//! declared input range, for a rating exceeded only at the bottom or only
//! at the top of the range, reported at that end with that end's value.
//!
//! The value each row is held against is computed here, never read from
//! the run: Erickson & Maksimovic, Fundamentals of Power Electronics,
//! 3rd ed., ch. 2 (volt-second balance with a diode drop:
//! ΔI = (V_out + V_F)·t_off/L, t_on = ΔI·L/(V_in − V_out)), and its
//! Appendix A (a straight segment from a to b has mean square
//! (a² + a·b + b²)/3, so the switch's RMS is √(D·(I_p² + I_p·I_v + I_v²)/3)
//! and the diode's the same with 1 − D). The warning bands are those the
//! checks document (all **common practice**): 90 % of a current rating,
//! 80 % of a switch or diode voltage rating, 50 % (tantalum) or 80 % of a
//! capacitor's voltage rating, 70 % (aluminium electrolytic) or 80 % of a
//! ripple rating, 1.5× a minimum on-time, 50 % capacitance left under
//! bias, 20 kHz for hearing, 60 °C to the touch.

use approx::assert_relative_eq;
use chopwave_suite::*;
use sim_core::parts::checks::{Check, Status};
use sim_core::run::assess::{assess, AssessOptions, Assessment};
use sim_core::scenario::{
    BiasPoint, Capacitor, ControllerSpec, Dielectric, Diode, IntendedMode, Scenario, Thermal,
    VoltageRange,
};

/// How far from each edge a probe sits (relative): 0.3 %.
const EPS: f64 = 3e-3;

/// An ideal constant off-time buck with a fixed-drop diode: every current
/// segment straight, every figure in closed form.
#[derive(Debug, Clone, Copy)]
struct Buck {
    v_in: f64,
    v_out: f64,
    v_f: f64,
    l: f64,
    i_pk: f64,
    t_off: f64,
}

impl Buck {
    const BASE: Buck = Buck {
        v_in: 24.0,
        v_out: 12.0,
        v_f: 0.5,
        l: 100e-6,
        i_pk: 1.0,
        t_off: 2e-6,
    };
    fn scenario(&self) -> Scenario {
        let mut s = ideal_buck(
            self.v_in,
            self.v_out,
            self.l,
            ControllerSpec::ConstantOffTime {
                peak_current_a: self.i_pk,
                off_time_s: self.t_off,
                delay_s: 0.0,
                min_on_time_s: 0.0,
            },
        );
        s.diode = Diode::FixedDrop {
            forward_voltage_v: self.v_f,
            series_resistance_ohm: 0.0,
        };
        s
    }
    /// Ripple (CCM), A.
    fn di(&self) -> f64 {
        (self.v_out + self.v_f) * self.t_off / self.l
    }
    fn i_v(&self) -> f64 {
        self.i_pk - self.di()
    }
    fn t_on(&self) -> f64 {
        self.di() * self.l / (self.v_in - self.v_out)
    }
    fn period(&self) -> f64 {
        self.t_on() + self.t_off
    }
    fn f(&self) -> f64 {
        1.0 / self.period()
    }
    fn d(&self) -> f64 {
        self.t_on() / self.period()
    }
    fn avg(&self) -> f64 {
        self.i_pk - self.di() / 2.0
    }
    /// Mean square of the current over one straight segment (Appendix A).
    fn seg_sq(&self) -> f64 {
        let (p, v) = (self.i_pk, self.i_v());
        (p * p + p * v + v * v) / 3.0
    }
    fn inductor_rms(&self) -> f64 {
        self.seg_sq().sqrt()
    }
    fn switch_rms(&self) -> f64 {
        (self.d() * self.seg_sq()).sqrt()
    }
    fn diode_rms(&self) -> f64 {
        ((1.0 - self.d()) * self.seg_sq()).sqrt()
    }
    fn diode_avg(&self) -> f64 {
        self.avg() * (1.0 - self.d())
    }
}

fn assessed(s: &Scenario) -> Assessment {
    s.validate().unwrap();
    assess(s, &AssessOptions::default()).unwrap()
}

fn find<'a>(a: &'a Assessment, check: &str) -> Option<&'a Check> {
    a.checks.iter().find(|c| c.check == check)
}

fn row<'a>(a: &'a Assessment, check: &str) -> &'a Check {
    find(a, check).unwrap_or_else(|| panic!("no check `{check}` in {:#?}", a.checks))
}

/// Limits around `value` for a check against an upper limit with a
/// warning band above `frac`·limit (none when `frac` is 1), each with the
/// status it must give: just clear of the band, just inside it, just
/// under the limit, just over it.
fn upper_edges(value: f64, frac: f64) -> Vec<(f64, Status)> {
    let mut v = Vec::new();
    if frac < 1.0 {
        v.push((value / frac * (1.0 + EPS), Status::Ok));
        v.push((value / frac * (1.0 - EPS), Status::Warn));
        v.push((value * (1.0 + EPS), Status::Warn));
    } else {
        v.push((value * (1.0 + EPS), Status::Ok));
    }
    v.push((value * (1.0 - EPS), Status::Fail));
    v
}

type Set = fn(&mut Scenario, f64);

/// Runs `set(limit)` for each edge and checks the row's status, value
/// and limit.
fn probe(b: &Buck, check: &str, value: f64, frac: f64, set: Set) {
    for (limit, want) in upper_edges(value, frac) {
        let mut s = b.scenario();
        set(&mut s, limit);
        let a = assessed(&s);
        let c = row(&a, check);
        assert_eq!(
            c.status, want,
            "{check} at limit {limit} (value {value}): {c:?}"
        );
        assert_relative_eq!(c.value, value, max_relative = 1e-6);
        assert_relative_eq!(c.limit.unwrap(), limit, max_relative = 1e-12);
    }
}

#[test]
fn current_and_voltage_ratings_at_their_edges() {
    let b = Buck::BASE;
    let cases: [(&str, f64, f64, Set); 9] = [
        (
            "inductor peak current vs saturation current",
            b.i_pk,
            0.9,
            |s, x| s.inductor.saturation_current_a = Some(x),
        ),
        (
            "inductor RMS current vs rating",
            b.inductor_rms(),
            0.9,
            |s, x| s.parts.inductor.rms_current_rating_a = Some(x),
        ),
        (
            // Blocks the supply plus the diode drop while off.
            "switch blocking voltage vs rating",
            b.v_in + b.v_f,
            0.8,
            |s, x| s.parts.switch.voltage_rating_v = Some(x),
        ),
        ("switch peak current vs rating", b.i_pk, 0.9, |s, x| {
            s.parts.switch.peak_current_rating_a = Some(x)
        }),
        (
            "switch RMS current vs rating",
            b.switch_rms(),
            0.9,
            |s, x| s.parts.switch.rms_current_rating_a = Some(x),
        ),
        (
            // The switch node at the supply while on.
            "diode reverse voltage vs rating",
            b.v_in,
            0.8,
            |s, x| s.parts.diode.voltage_rating_v = Some(x),
        ),
        ("diode peak current vs rating", b.i_pk, 0.9, |s, x| {
            s.parts.diode.peak_current_rating_a = Some(x)
        }),
        ("diode RMS current vs rating", b.diode_rms(), 0.9, |s, x| {
            s.parts.diode.rms_current_rating_a = Some(x)
        }),
        (
            "diode average current vs rating",
            b.diode_avg(),
            0.9,
            |s, x| s.parts.diode.average_current_rating_a = Some(x),
        ),
    ];
    for (check, value, frac, set) in cases {
        probe(&b, check, value, frac, set);
    }
}

fn with_input_capacitor(s: &mut Scenario, dielectric: Dielectric) {
    s.input_capacitor = Some(Capacitor {
        capacitance_f: 10e-6,
        esr_ohm: 0.01,
    });
    s.parts.input_capacitor.dielectric = dielectric;
}

#[test]
fn capacitor_voltage_and_ripple_bands_follow_the_dielectric() {
    // Peak voltage: the input capacitor sits at the supply (an ideal
    // source). Tantalum warns above 50 % of its rating, an aluminium
    // electrolytic above 80 %.
    let b = Buck::BASE;
    let check = "input capacitor peak voltage vs rating";
    probe(&b, check, b.v_in, 0.5, |s, x| {
        with_input_capacitor(s, Dielectric::Tantalum);
        s.parts.input_capacitor.voltage_rating_v = Some(x);
    });
    probe(&b, check, b.v_in, 0.8, |s, x| {
        with_input_capacitor(s, Dielectric::AluminiumElectrolytic);
        s.parts.input_capacitor.voltage_rating_v = Some(x);
    });
    // Ripple behind an ideal source: the textbook I_out·√(D(1−D))
    // (Erickson & Maksimovic, ch. 2, charge balance); an aluminium
    // electrolytic warns above 70 % of its rating.
    let ripple = b.avg() * (b.d() * (1.0 - b.d())).sqrt();
    probe(
        &b,
        "input capacitor RMS ripple current vs rating",
        ripple,
        0.7,
        |s, x| {
            with_input_capacitor(s, Dielectric::AluminiumElectrolytic);
            s.parts.input_capacitor.ripple_current_rating_a = Some(x);
        },
    );
}

#[test]
fn capacitance_left_under_bias_warns_below_half() {
    // A 48 V part at 24 V (bias fraction 0.5) with its own curve holding
    // `x` from half its rating up: x of the capacitance is left, reported
    // in %; warn below 50 %.
    let b = Buck::BASE;
    for (x, want) in [
        (0.5 * (1.0 + EPS), Status::Ok),
        (0.5 * (1.0 - EPS), Status::Warn),
    ] {
        let mut s = b.scenario();
        with_input_capacitor(&mut s, Dielectric::X7r);
        s.parts.input_capacitor.voltage_rating_v = Some(48.0);
        s.parts.input_capacitor.bias_curve = [(0.0, 1.0), (0.5, x), (1.0, x)]
            .iter()
            .map(|&(bias_fraction, capacitance_fraction)| BiasPoint {
                bias_fraction,
                capacitance_fraction,
            })
            .collect();
        let a = assessed(&s);
        let c = row(&a, "input capacitor capacitance left under DC bias");
        assert_eq!(c.status, want, "{x}: {c:?}");
        assert_relative_eq!(c.value, 100.0 * x, max_relative = 1e-9);
    }
}

#[test]
fn too_hot_to_touch_just_above_sixty_degrees() {
    // The diode dissipates V_F·I_D,avg (the only loss of the ideal circuit)
    // and reaches T_a + R_th·P (one thermal resistance to ambient); a
    // resistance that puts it 0.1 K either side of 60 °C adds the touch
    // row only above.
    let b = Buck::BASE;
    let p = b.v_f * b.diode_avg();
    for (t, hot) in [(59.9, false), (60.1, true)] {
        let mut s = b.scenario();
        s.parts.ambient_temperature_c = 40.0;
        s.parts.diode.thermal = Some(Thermal {
            resistance_c_per_w: (t - 40.0) / p,
            max_temperature_c: 150.0,
        });
        let a = assessed(&s);
        let c = row(&a, "diode temperature vs maximum");
        assert_relative_eq!(c.value, t, max_relative = 1e-6);
        assert_eq!(c.status, Status::Ok);
        let touch = find(&a, "diode too hot to touch");
        assert_eq!(touch.is_some(), hot, "{t} °C: {touch:?}");
        if let Some(touch) = touch {
            assert_eq!(touch.status, Status::Warn);
        }
    }
}

/// An ideal buck with no diode drop whose off-time puts the valley at
/// `margin` × the average (CCM side) — I_v = I_pk − ΔI and
/// I_avg = I_pk − ΔI/2 give ΔI = I_pk·(1 − m)/(1 − m/2) — or, for
/// `idle` > 0, rests at zero for that fraction of the period:
/// t_off = (t_fall + q·t_on)/(1 − q).
fn at_mode_edge(margin: f64, idle: f64) -> Scenario {
    let mut b = Buck {
        v_f: 0.0,
        ..Buck::BASE
    };
    if idle > 0.0 {
        b.l = 10e-6;
        let t_on = b.i_pk * b.l / (b.v_in - b.v_out);
        let t_fall = b.i_pk * b.l / b.v_out;
        b.t_off = (t_fall + idle * t_on) / (1.0 - idle);
    } else {
        let di = b.i_pk * (1.0 - margin) / (1.0 - margin / 2.0);
        b.t_off = di * b.l / b.v_out;
    }
    b.scenario()
}

#[test]
fn intended_mode_at_the_edges_of_the_classification() {
    // The classification's limits (documented in sim_core::metrics): CCM
    // when the valley is over 1 % of the average, DCM when the current
    // rests at zero for over 0.1 % of the period, the boundary between.
    // CCM intended: warn at the boundary, fail in DCM; DCM intended: fail
    // only in CCM.
    let probes = [
        (0.0105, 0.0, Status::Ok, Status::Fail),
        (0.0095, 0.0, Status::Warn, Status::Ok),
        (0.0, 0.9e-3, Status::Warn, Status::Ok),
        (0.0, 1.1e-3, Status::Fail, Status::Ok),
    ];
    for (margin, idle, ccm_wants, dcm_wants) in probes {
        for (mode, check, want) in [
            (
                IntendedMode::Ccm,
                "CCM intended: inductor valley over average",
                ccm_wants,
            ),
            (
                IntendedMode::Dcm,
                "DCM intended: idle time per period",
                dcm_wants,
            ),
        ] {
            let mut s = at_mode_edge(margin, idle);
            s.parts.intended_mode = mode;
            let a = assessed(&s);
            let c = row(&a, check);
            assert_eq!(
                c.status, want,
                "{check}, margin {margin}, idle {idle}: {c:?}"
            );
            let expect = if mode == IntendedMode::Ccm {
                margin
            } else {
                idle
            };
            assert!((c.value - expect).abs() < 1e-5, "{c:?}");
        }
    }
}

#[test]
fn frequency_and_on_time_limits_at_their_edges() {
    let b = Buck::BASE;
    let f = b.f();
    // Controller minimum frequency: fail below it, no warning band.
    for (lo, want) in [
        (f * (1.0 - EPS), Status::Ok),
        (f * (1.0 + EPS), Status::Fail),
    ] {
        let mut s = b.scenario();
        s.parts.controller.min_frequency_hz = Some(lo);
        let a = assessed(&s);
        let c = row(&a, "switching frequency vs controller minimum");
        assert_eq!(c.status, want, "{lo}: {c:?}");
        assert_relative_eq!(c.value, f, max_relative = 1e-6);
    }
    // Controller maximum: fail above it, no warning band.
    probe(
        &b,
        "switching frequency vs controller maximum",
        f,
        1.0,
        |s, x| s.parts.controller.max_frequency_hz = Some(x),
    );
    // Minimum on-time: fail below it, warn below 1.5× it.
    let t_on = b.t_on();
    for (min, want) in [
        (t_on / 1.5 * (1.0 - EPS), Status::Ok),
        (t_on / 1.5 * (1.0 + EPS), Status::Warn),
        (t_on * (1.0 - EPS), Status::Warn),
        (t_on * (1.0 + EPS), Status::Fail),
    ] {
        let mut s = b.scenario();
        s.parts.controller.min_on_time_s = Some(min);
        let a = assessed(&s);
        let c = row(&a, "on-time vs controller minimum");
        assert_eq!(c.status, want, "{min}: {c:?}");
        assert_relative_eq!(c.value, t_on, max_relative = 1e-6);
    }
    // The audible band: f = (V_in − V_out)/((V_in + V_F)·t_off) in CCM
    // (t_on + t_off from the balance above), so this t_off puts it at
    // 20 kHz·(1 ± EPS); a 1 mH inductor keeps it in CCM.
    for (target, want) in [
        (20e3 * (1.0 + EPS), Status::Ok),
        (20e3 * (1.0 - EPS), Status::Warn),
    ] {
        let mut slow = Buck { l: 1e-3, ..b };
        slow.t_off = (slow.v_in - slow.v_out) / ((slow.v_in + slow.v_f) * target);
        assert!(slow.di() < slow.i_pk);
        let a = assessed(&slow.scenario());
        let c = row(&a, "switching frequency above the audible band");
        assert_eq!(c.status, want, "{target} Hz: {c:?}");
        assert_relative_eq!(c.value, target, max_relative = 1e-6);
    }
}

#[test]
fn led_current_deviation_from_target_at_its_edge() {
    // |I_avg − target|/target in %, against the accuracy; no warning band.
    let b = Buck::BASE;
    for factor in [1.02, 0.97] {
        let target = b.avg() * factor;
        let dev = 100.0 * (b.avg() - target).abs() / target;
        for (acc, want) in [
            (dev * (1.0 + EPS), Status::Ok),
            (dev * (1.0 - EPS), Status::Fail),
        ] {
            let mut s = b.scenario();
            s.parts.led_current_target_a = Some(target);
            s.parts.current_accuracy_pct = Some(acc);
            let a = assessed(&s);
            let c = row(&a, "LED current deviation from target");
            assert_eq!(c.status, want, "{factor}, {acc}: {c:?}");
            assert_relative_eq!(c.value, dev, max_relative = 1e-5);
        }
    }
}

// ---------------------------------------------------------------------------
// The input-range worst case. With a fixed off-time the ripple and the
// average do not depend on the supply, but the duty does: the switch's RMS
// is largest and the frequency lowest at the bottom of the range, the
// frequency highest and the capacitor's voltage largest at the top.

fn ranged(b: &Buck, min_v: f64, max_v: f64) -> Scenario {
    let mut s = b.scenario();
    s.supply.input_range_v = Some(VoltageRange { min_v, max_v });
    s
}

#[test]
fn a_rating_exceeded_only_at_the_bottom_of_the_range_is_reported_there() {
    let b = Buck::BASE;
    let at = |v: f64| Buck { v_in: v, ..b };
    let (lo, hi) = (20.0, 30.0);
    let sw = |v: f64| at(v).switch_rms();
    assert!(sw(lo) > sw(b.v_in) && sw(b.v_in) > sw(hi));
    // Switch RMS rating just under the bottom's value: fails there only.
    let mut s = ranged(&b, lo, hi);
    s.parts.switch.rms_current_rating_a = Some(sw(lo) * (1.0 - EPS));
    // Minimum frequency just over the bottom's frequency.
    s.parts.controller.min_frequency_hz = Some(at(lo).f() * (1.0 + EPS));
    let a = assessed(&s);
    let c = row(&a, "switch RMS current vs rating");
    assert_eq!(c.status, Status::Fail, "{c:?}");
    assert_relative_eq!(c.supply_v, lo);
    assert_relative_eq!(c.value, sw(lo), max_relative = 1e-6);
    let c = row(&a, "switching frequency vs controller minimum");
    assert_eq!(c.status, Status::Fail, "{c:?}");
    assert_relative_eq!(c.supply_v, lo);
    assert_relative_eq!(c.value, at(lo).f(), max_relative = 1e-6);
    // Both warn at the nominal supply and at the bottom (the rating between
    // sw(lo) and sw(nominal)/0.9): the row is the bottom's, the closer to
    // its limit, not the first one met.
    let rating = 0.5 * (sw(lo) + sw(b.v_in) / 0.9);
    assert!(sw(b.v_in) > 0.9 * rating && sw(lo) < rating);
    let mut s = ranged(&b, lo, hi);
    s.parts.switch.rms_current_rating_a = Some(rating);
    let a = assessed(&s);
    let c = row(&a, "switch RMS current vs rating");
    assert_eq!(c.status, Status::Warn, "{c:?}");
    assert_relative_eq!(c.supply_v, lo);
    assert_relative_eq!(c.value, sw(lo), max_relative = 1e-6);
}

#[test]
fn a_rating_exceeded_only_at_the_top_of_the_range_is_reported_there() {
    let b = Buck::BASE;
    let at = |v: f64| Buck { v_in: v, ..b };
    let (lo, hi) = (20.0, 30.0);
    let mut s = ranged(&b, lo, hi);
    // Maximum frequency just under the top's frequency.
    s.parts.controller.max_frequency_hz = Some(at(hi).f() * (1.0 - EPS));
    // An electrolytic rated just under the top supply: warns (above 80 %)
    // at the nominal 24 V, fails at 30 V only.
    with_input_capacitor(&mut s, Dielectric::AluminiumElectrolytic);
    s.parts.input_capacitor.voltage_rating_v = Some(hi * (1.0 - EPS));
    let a = assessed(&s);
    let c = row(&a, "switching frequency vs controller maximum");
    assert_eq!(c.status, Status::Fail, "{c:?}");
    assert_relative_eq!(c.supply_v, hi);
    assert_relative_eq!(c.value, at(hi).f(), max_relative = 1e-6);
    let c = row(&a, "input capacitor peak voltage vs rating");
    assert_eq!(c.status, Status::Fail, "{c:?}");
    assert_relative_eq!(c.supply_v, hi);
    assert_relative_eq!(c.value, hi, max_relative = 1e-12);
}

#[test]
fn a_rating_exceeded_everywhere_is_reported_where_it_is_exceeded_most() {
    // An input capacitor rated 12 V on a 20–30 V range (24 V nominal):
    // every end fails, by 20/12, 24/12 and 30/12 of its rating; the row
    // must be the top's, the one furthest past its limit (the worst case a
    // designer must cover), not the first met nor the one whose excess is
    // smallest in absolute terms. With an ideal source the capacitor sits
    // at the supply voltage (no ripple), so the value is the supply itself.
    let b = Buck::BASE;
    let (lo, hi) = (20.0, 30.0);
    let mut s = ranged(&b, lo, hi);
    with_input_capacitor(&mut s, Dielectric::AluminiumElectrolytic);
    s.parts.input_capacitor.voltage_rating_v = Some(12.0);
    let a = assessed(&s);
    let c = row(&a, "input capacitor peak voltage vs rating");
    assert_eq!(c.status, Status::Fail, "{c:?}");
    assert_relative_eq!(c.supply_v, hi);
    assert_relative_eq!(c.value, hi, max_relative = 1e-12);
}

#[test]
fn peak_current_and_temperature_worst_at_the_top_of_the_range() {
    // With a turn-off delay t_d the peak is I_pk + (V_in − V_out)·t_d/L
    // (the on-slope carries it past the threshold; Erickson & Maksimovic,
    // ch. 2), in steady state and in the first cycle from power-on alike
    // (no output capacitor): largest at the top of the range. The
    // diode's heat V_F·I_out·(1 − D) grows with the supply too.
    let b = Buck::BASE;
    let t_d = 150e-9;
    let (lo, hi) = (20.0, 30.0);
    let peak = |v: f64| b.i_pk + (v - b.v_out) * t_d / b.l;
    // The delayed cycle: the same off-time ripple from the higher peak.
    let heat = |v: f64| {
        let x = Buck {
            v_in: v,
            i_pk: peak(v),
            ..b
        };
        b.v_f * x.diode_avg()
    };
    let mut s = ranged(&b, lo, hi);
    s.controller = ControllerSpec::ConstantOffTime {
        peak_current_a: b.i_pk,
        off_time_s: b.t_off,
        delay_s: t_d,
        min_on_time_s: 0.0,
    };
    // Saturation just under the top's peak, above the nominal's.
    s.inductor.saturation_current_a = Some(peak(hi) * (1.0 - EPS));
    assert!(peak(b.v_in) < peak(hi) * (1.0 - EPS));
    // A diode maximum 0.1 K under its temperature at the top.
    s.parts.ambient_temperature_c = 40.0;
    let r_th = 400.0;
    let t_top = 40.0 + r_th * heat(hi);
    assert!(t_top - (40.0 + r_th * heat(b.v_in)) > 0.5);
    s.parts.diode.thermal = Some(Thermal {
        resistance_c_per_w: r_th,
        max_temperature_c: t_top - 0.1,
    });
    let a = assessed(&s);
    for check in [
        "inductor peak current vs saturation current",
        "inductor start-up peak vs saturation current",
    ] {
        let c = row(&a, check);
        assert_eq!(c.status, Status::Fail, "{c:?}");
        assert_relative_eq!(c.supply_v, hi);
        assert_relative_eq!(c.value, peak(hi), max_relative = 1e-6);
    }
    let c = row(&a, "diode temperature vs maximum");
    assert_eq!(c.status, Status::Fail, "{c:?}");
    assert_relative_eq!(c.supply_v, hi);
    assert_relative_eq!(c.value, t_top, max_relative = 1e-6);
    // Without the range, the nominal supply's figures pass both.
    s.supply.input_range_v = None;
    let a = assessed(&s);
    assert_eq!(
        row(&a, "inductor peak current vs saturation current").status,
        Status::Warn
    );
    let c = row(&a, "diode temperature vs maximum");
    assert_ne!(c.status, Status::Fail, "{c:?}");
    assert_relative_eq!(c.value, 40.0 + r_th * heat(b.v_in), max_relative = 1e-6);
}

#[test]
fn output_capacitor_rows_at_their_edges() {
    // Fixed duty D into a resistor behind a large output capacitor, ideal
    // parts, CCM: the average output is D·V_in (volt-second balance); the
    // capacitor takes the inductor's triangular ripple
    // ΔI = (V_in − V_out)·D·T/L, so its RMS current is ΔI/√12 (Appendix A,
    // a zero-mean triangle) and its voltage ripple ΔV = ΔI·T/(8·C)
    // (Erickson & Maksimovic, ch. 2, capacitor charge over the half-cycle
    // the ripple current is positive): the peak is D·V_in + ΔV/2. Both
    // neglect the load current's own ripple (ΔV/R, a thousandth of ΔI
    // here), well inside the tolerances below.
    let (v_in, l, r, c, f, d) = (24.0, 100e-6, 12.0, 100e-6, 100e3, 0.5);
    let t = 1.0 / f;
    let v_out = d * v_in;
    let di = (v_in - v_out) * d * t / l;
    let peak_v = v_out + di * t / (8.0 * c) / 2.0;
    let ripple = di / 12f64.sqrt();
    let opts = AssessOptions {
        run: sim_core::run::RunOptions {
            initial_state: Some([v_out / r - di / 2.0, v_out, 0.0]),
            ..Default::default()
        },
        alternatives: false,
    };
    type Set = fn(&mut Scenario, f64);
    let cases: [(&str, f64, f64, f64, Set); 2] = [
        (
            "output capacitor peak voltage vs rating",
            peak_v,
            2e-5,
            0.8,
            |s, x| {
                s.parts.output_capacitor.dielectric = Dielectric::Polymer;
                s.parts.output_capacitor.voltage_rating_v = Some(x);
            },
        ),
        (
            "output capacitor RMS ripple current vs rating",
            ripple,
            5e-4,
            0.7,
            |s, x| {
                s.parts.output_capacitor.dielectric = Dielectric::AluminiumElectrolytic;
                s.parts.output_capacitor.ripple_current_rating_a = Some(x);
            },
        ),
    ];
    for (check, value, tol, frac, set) in cases {
        for (limit, want) in upper_edges(value, frac) {
            let mut s = fixed_duty_resistive(v_in, l, r, c, f, d);
            set(&mut s, limit);
            s.validate().unwrap();
            let a = assess(&s, &opts).unwrap();
            let got = row(&a, check);
            assert_eq!(got.status, want, "{check} at {limit}: {got:?}");
            assert_relative_eq!(got.value, value, max_relative = tol);
        }
    }
}
