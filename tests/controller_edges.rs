//! Controller parameters exercised asymmetrically, each against a closed
//! form derived here from first principles (the inductor equation
//! L·di/dt = v_L over straight or first-order segments; Erickson &
//! Maksimovic, Fundamentals of Power Electronics, 3rd ed., ch. 2, sec.
//! 2.2–2.3, volt-second balance and the current ripple):
//!
//! - hysteretic turn-on and turn-off delays of very different lengths,
//!   one long enough to let the current rest at zero, each delay alone;
//! - the constant off-time controller's minimum on-time, binding and not,
//!   with a turn-off delay, in CCM on a string with dynamic resistance
//!   (first-order segments, exact exponentials): when it binds the
//!   controller is a fixed-duty one at D = (t_min + t_d)/(t_min + t_d +
//!   t_off) and the LED current leaves regulation;
//! - fixed-duty timing at both ends of the duty range on the same string.
//!
//! `figures.rs` holds the straight-segment cases (equal-ish hysteretic
//! delays both non-zero, the constant off-time delay, minimum on-time
//! binding and not in DCM); these add what it does not.

use approx::assert_relative_eq;
use chopwave_suite::*;
use sim_core::metrics::{ConductionMode, Metrics};
use sim_core::scenario::{ControllerSpec, Load, Scenario};
use sim_core::{run::drive::simulate, run::RunOptions};

fn run(s: &Scenario) -> Metrics {
    s.validate().expect("circuit validates");
    simulate(s, &RunOptions::default())
        .expect("circuit runs")
        .metrics
}

fn hysteretic(hi: f64, lo: f64, t_a: f64, t_b: f64) -> ControllerSpec {
    ControllerSpec::Hysteretic {
        upper_current_a: hi,
        lower_current_a: lo,
        turn_off_delay_s: t_a,
        turn_on_delay_s: t_b,
    }
}

/// Checks the timing, extremes and averages of a straight-segment cycle:
/// rise from `valley` to `peak` in `t_on`, fall back to max(valley, 0) in
/// `t_fall`, rest at zero for `t_idle`. Means by Appendix A of Erickson &
/// Maksimovic (segment a→b: mean (a + b)/2, mean square (a² + ab + b²)/3).
fn check_straight(m: &Metrics, valley: f64, peak: f64, t_on: f64, t_fall: f64, t_idle: f64) {
    let tol = 1e-6;
    let period = t_on + t_fall + t_idle;
    let start = valley.max(0.0);
    let area = (start + peak) / 2.0 * (t_on + t_fall);
    let sq = (start * start + start * peak + peak * peak) / 3.0 * (t_on + t_fall);
    assert_relative_eq!(m.period_s, period, max_relative = tol);
    assert_relative_eq!(m.on_time_s, t_on, max_relative = tol);
    assert_relative_eq!(m.duty, t_on / period, max_relative = tol);
    assert_relative_eq!(m.idle_time_s, t_idle, epsilon = tol * period);
    assert_relative_eq!(m.inductor_current_peak_a, peak, max_relative = tol);
    assert_relative_eq!(m.inductor_current_valley_a, start, epsilon = tol * peak);
    assert_relative_eq!(m.led_current_avg_a, area / period, max_relative = tol);
    assert_relative_eq!(
        m.led_current_rms_a,
        (sq / period).sqrt(),
        max_relative = tol
    );
}

#[test]
fn hysteretic_delays_act_on_their_own_edges_even_into_dcm() {
    // Turn-off delay t_a: the current overshoots the upper threshold by
    // (V_in − V_out)·t_a/L. Turn-on delay t_b: it falls V_out·t_b/L below
    // the lower one, or, when that would cross zero, reaches zero
    // lo·L/V_out into the delay (the diode then stops) and rests there for
    // the remaining t_b − lo·L/V_out.
    let (v_in, v_out, l, hi, lo) = (24.0, 8.0, 47e-6, 0.5, 0.1);
    let (short, long) = (80e-9, 1.2e-6);
    // Long turn-on delay: DCM.
    let m = run(&ideal_buck(v_in, v_out, l, hysteretic(hi, lo, short, long)));
    let peak = hi + (v_in - v_out) * short / l;
    let t_zero = lo * l / v_out;
    assert!(t_zero < long);
    check_straight(
        &m,
        0.0,
        peak,
        peak * l / (v_in - v_out),
        peak * l / v_out,
        long - t_zero,
    );
    assert_eq!(m.conduction_mode, ConductionMode::Dcm);
    // The same two delays swapped: the long one now carries the peak far
    // past the upper threshold, the short one keeps the valley above zero.
    let m = run(&ideal_buck(v_in, v_out, l, hysteretic(hi, lo, long, short)));
    let peak = hi + (v_in - v_out) * long / l;
    let valley = lo - v_out * short / l;
    assert!(valley > 0.0);
    let di = peak - valley;
    check_straight(
        &m,
        valley,
        peak,
        di * l / (v_in - v_out),
        di * l / v_out,
        0.0,
    );
    assert_eq!(m.conduction_mode, ConductionMode::Ccm);
}

#[test]
fn hysteretic_each_delay_alone() {
    let (v_in, v_out, l, hi, lo, t_d) = (36.0, 12.0, 68e-6, 1.0, 0.8, 150e-9);
    for (t_a, t_b) in [(t_d, 0.0), (0.0, t_d)] {
        let m = run(&ideal_buck(v_in, v_out, l, hysteretic(hi, lo, t_a, t_b)));
        let peak = hi + (v_in - v_out) * t_a / l;
        let valley = lo - v_out * t_b / l;
        let di = peak - valley;
        check_straight(
            &m,
            valley,
            peak,
            di * l / (v_in - v_out),
            di * l / v_out,
            0.0,
        );
    }
}

// ---------------------------------------------------------------------------
// First-order segments. A string of n LEDs with knee V_k and dynamic
// resistance r each, no output capacitor, ideal switch and diode: while on
// L·di/dt = V_in − n·V_k − n·r·i, while off L·di/dt = −n·V_k − n·r·i, so
// i(t) = a + (i₀ − a)·e^{−t/τ} with τ = L/(n·r) and the asymptote
// a_on = (V_in − n·V_k)/(n·r), a_off = −V_k/r (the first-order step
// response; the integrals of i and i² over a segment follow in closed form).

struct Rl {
    v_in: f64,
    n: f64,
    knee: f64,
    r: f64,
    l: f64,
}

impl Rl {
    const BASE: Rl = Rl {
        v_in: 24.0,
        n: 3.0,
        knee: 2.8,
        r: 0.5,
        l: 47e-6,
    };
    fn tau(&self) -> f64 {
        self.l / (self.n * self.r)
    }
    fn a_on(&self) -> f64 {
        (self.v_in - self.n * self.knee) / (self.n * self.r)
    }
    fn a_off(&self) -> f64 {
        -self.knee / self.r
    }
    /// The current after `t` from `i0` towards `a`.
    fn after(&self, a: f64, i0: f64, t: f64) -> f64 {
        a + (i0 - a) * (-t / self.tau()).exp()
    }
    /// (∫ i dt, ∫ i² dt) over a segment of length `t` from `i0` towards `a`.
    fn integrals(&self, a: f64, i0: f64, t: f64) -> (f64, f64) {
        let (tau, b) = (self.tau(), i0 - a);
        let e1 = 1.0 - (-t / tau).exp();
        let e2 = 1.0 - (-2.0 * t / tau).exp();
        (
            a * t + b * tau * e1,
            a * a * t + 2.0 * a * b * tau * e1 + b * b * tau / 2.0 * e2,
        )
    }
    fn scenario(&self, c: ControllerSpec) -> Scenario {
        let mut s = ideal_buck(self.v_in, 0.0, self.l, c);
        s.load = Load::LedKnee {
            count: self.n as u32,
            knee_voltage_v: self.knee,
            dynamic_resistance_ohm: self.r,
        };
        s
    }
    /// The periodic solution of a fixed on-time `t_on` and off-time
    /// `t_off` (CCM): peak and valley from i_p = a_on + (i_v − a_on)·e_on,
    /// i_v = a_off + (i_p − a_off)·e_off.
    fn fixed_timing(&self, t_on: f64, t_off: f64) -> (f64, f64) {
        let e_on = (-t_on / self.tau()).exp();
        let e_off = (-t_off / self.tau()).exp();
        let peak = (self.a_on() * (1.0 - e_on) + e_on * self.a_off() * (1.0 - e_off))
            / (1.0 - e_on * e_off);
        (peak, self.after(self.a_off(), peak, t_off))
    }
    /// Checks a CCM cycle rising from `valley` for `t_on` and falling for
    /// `t_off`: timing, extremes, average and RMS; and the average against
    /// the volt-second balance D·V_in = n·V_k + n·r·I_avg.
    fn check(&self, m: &Metrics, valley: f64, t_on: f64, t_off: f64) {
        let tol = 1e-6;
        let period = t_on + t_off;
        let peak = self.after(self.a_on(), valley, t_on);
        assert_relative_eq!(
            self.after(self.a_off(), peak, t_off),
            valley,
            epsilon = 1e-9
        );
        let (q_on, sq_on) = self.integrals(self.a_on(), valley, t_on);
        let (q_off, sq_off) = self.integrals(self.a_off(), peak, t_off);
        let avg = (q_on + q_off) / period;
        let d = t_on / period;
        assert_relative_eq!(
            avg,
            (d * self.v_in - self.n * self.knee) / (self.n * self.r),
            max_relative = 1e-9
        );
        assert_relative_eq!(m.period_s, period, max_relative = tol);
        assert_relative_eq!(m.on_time_s, t_on, max_relative = tol);
        assert_relative_eq!(m.duty, d, max_relative = tol);
        assert_relative_eq!(m.inductor_current_peak_a, peak, max_relative = tol);
        assert_relative_eq!(m.inductor_current_valley_a, valley, max_relative = tol);
        assert_relative_eq!(m.led_current_avg_a, avg, max_relative = tol);
        assert_relative_eq!(
            m.led_current_rms_a,
            ((sq_on + sq_off) / period).sqrt(),
            max_relative = tol
        );
        assert_eq!(m.conduction_mode, ConductionMode::Ccm);
    }
}

#[test]
fn minimum_on_time_binding_and_not_in_ccm_with_a_delay() {
    let c = Rl::BASE;
    let (i_thr, t_off, t_d) = (0.7, 2e-6, 60e-9);
    let cot = |t_min: f64| ControllerSpec::ConstantOffTime {
        peak_current_a: i_thr,
        off_time_s: t_off,
        delay_s: t_d,
        min_on_time_s: t_min,
    };
    // Free-running: the comparator trips at the threshold and the switch
    // opens one delay later; the fixed off-time takes it to the valley.
    let peak = c.after(c.a_on(), i_thr, t_d);
    let valley = c.after(c.a_off(), peak, t_off);
    let t_trip = c.tau() * ((c.a_on() - valley) / (c.a_on() - i_thr)).ln();
    // Not binding: a minimum of 80 % of the natural time to the trip.
    let m = run(&c.scenario(cot(0.8 * t_trip)));
    c.check(&m, valley, t_trip + t_d, t_off);
    // Binding: the comparator trips at the end of the minimum on-time,
    // the switch opens a delay later, and the timing is fixed:
    // f = 1/(t_min + t_d + t_off) whatever the threshold.
    let t_min = 1.3 * t_trip;
    let (_, valley) = c.fixed_timing(t_min + t_d, t_off);
    // The current is past the threshold at the end of the minimum on-time
    // (it binds), so the LED current is no longer regulated to it.
    assert!(c.after(c.a_on(), valley, t_min) > i_thr);
    let m = run(&c.scenario(cot(t_min)));
    c.check(&m, valley, t_min + t_d, t_off);
    assert!(m.led_current_avg_a > 1.5 * i_thr);
}

#[test]
fn fixed_duty_timing_at_a_low_and_a_high_duty() {
    // On for D·T from the start of each period, off for the rest, on an
    // exact grid: the same first-order periodic solution as above.
    let c = Rl::BASE;
    let f = 150e3;
    let period = 1.0 / f;
    for d in [0.4, 0.9] {
        let m = run(&c.scenario(ControllerSpec::FixedDuty {
            frequency_hz: f,
            duty: d,
        }));
        let (_, valley) = c.fixed_timing(d * period, (1.0 - d) * period);
        c.check(&m, valley, d * period, (1.0 - d) * period);
        assert_relative_eq!(m.off_time_s, (1.0 - d) * period, max_relative = 1e-6);
        assert_relative_eq!(m.switching_frequency_hz, f, max_relative = 1e-9);
    }
}
