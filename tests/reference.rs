//! The reference engine (Dopri5 on the exact nonlinear circuit) against
//! the exact piecewise-linear engine, and against closed forms.
//!
//! The exact-vs-reference comparisons are the **independent cross-check**
//! of the exact engine: the two share the scenario, the controller state
//! machines and the steady-state driver, but not the circuit equations'
//! solution (closed-form matrix exponential on fitted chords vs numerical
//! integration of the exact exponential curves), nor the event location.
//! All circuits are illustrative (see `chopwave_suite`).

use chopwave_suite as circuits;
use sim_core::metrics::{ConductionMode, Metrics};
use sim_core::scenario::Scenario;
use sim_core::SimError;
use sim_core::{
    run::drive::simulate,
    run::{EngineKind, RunOptions, SimResult},
};

fn run(s: &Scenario, engine: EngineKind) -> SimResult {
    let opts = RunOptions {
        engine,
        initial_state: None,
    };
    match simulate(s, &opts) {
        Ok(r) => r,
        Err(e) => panic!("{} with the {engine:?} engine failed: {e}", s.name),
    }
}

fn rel(a: f64, b: f64) -> f64 {
    (a - b).abs() / b.abs()
}

/// Tolerances of the cross-check.
struct Tol {
    /// Average LED current, relative.
    led_avg: f64,
    /// LED ripple peak-to-peak, relative.
    ripple: f64,
    /// Switching frequency, relative.
    freq: f64,
    /// Efficiency, absolute (fraction, not %).
    eff: f64,
}

const TOL: Tol = Tol {
    led_avg: 2e-3,
    ripple: 1e-2,
    freq: 5e-3,
    eff: 2e-3,
};

/// Runs both engines and checks the figures an engineer reads against
/// each other; returns both sets of metrics.
fn cross_check(s: &Scenario, mode: ConductionMode) -> (Metrics, Metrics) {
    let ex = run(s, EngineKind::Exact);
    let rf = run(s, EngineKind::Reference);
    let (e, r) = (&ex.metrics, &rf.metrics);
    let d_avg = rel(e.led_current_avg_a, r.led_current_avg_a);
    let d_rip = rel(e.led_current_ripple_pp_a, r.led_current_ripple_pp_a);
    let d_f = rel(e.switching_frequency_hz, r.switching_frequency_hz);
    let d_eff = (e.efficiency - r.efficiency).abs();
    println!(
        "{}: I_LED {:.6} / {:.6} A (rel {:.2e}); ripple {:.6} / {:.6} A (rel {:.2e}); \
         f {:.2} / {:.2} Hz (rel {:.2e}); eff {:.6} / {:.6} (abs {:.2e}); \
         residual {:.1e} / {:.1e}; cycles {} / {}; reference steps {}",
        s.name,
        e.led_current_avg_a,
        r.led_current_avg_a,
        d_avg,
        e.led_current_ripple_pp_a,
        r.led_current_ripple_pp_a,
        d_rip,
        e.switching_frequency_hz,
        r.switching_frequency_hz,
        d_f,
        e.efficiency,
        r.efficiency,
        d_eff,
        e.energy_balance_residual,
        r.energy_balance_residual,
        ex.stats.cycles,
        rf.stats.cycles,
        rf.stats.integrator_steps,
    );
    assert_eq!(e.conduction_mode, mode, "{}: exact engine mode", s.name);
    assert_eq!(r.conduction_mode, mode, "{}: reference engine mode", s.name);
    assert!(
        d_avg <= TOL.led_avg,
        "{}: average LED current differs by {d_avg:.3e}",
        s.name
    );
    assert!(
        d_rip <= TOL.ripple,
        "{}: LED ripple differs by {d_rip:.3e}",
        s.name
    );
    assert!(
        d_f <= TOL.freq,
        "{}: switching frequency differs by {d_f:.3e}",
        s.name
    );
    assert!(
        d_eff <= TOL.eff,
        "{}: efficiency differs by {d_eff:.3e}",
        s.name
    );
    // Each engine conserves energy on its own (input = LED + losses +
    // change in storage, over whole cycles).
    assert!(
        r.energy_balance_residual.abs() < 1e-7,
        "{}: reference residual {}",
        s.name,
        r.energy_balance_residual
    );
    assert!(rf.stats.integrator_steps > 0);
    (*e, *r)
}

// Independent cross-check: CCM constant off-time, exponential LED string.
#[test]
fn cross_check_ccm_constant_off_time() {
    cross_check(&circuits::ccm_constant_off_time(), ConductionMode::Ccm);
}

// Independent cross-check: DCM (small inductor, long off-time).
#[test]
fn cross_check_dcm() {
    let (e, r) = cross_check(&circuits::dcm_long_off_time(), ConductionMode::Dcm);
    assert!(
        rel(e.idle_time_s, r.idle_time_s) < 5e-3,
        "idle {} vs {}",
        e.idle_time_s,
        r.idle_time_s
    );
}

// Independent cross-check: output capacitor across the LEDs (the LED
// current is the implicit solution of the exponential curve behind the ESR),
// at the default steady-state tolerance 1e-9.
#[test]
fn cross_check_output_capacitor() {
    let (e, r) = cross_check(&circuits::with_output_capacitor(), ConductionMode::Ccm);
    assert!(
        rel(
            e.output_capacitor_ripple_rms_a,
            r.output_capacitor_ripple_rms_a
        ) < 1e-2
    );
}

// Independent cross-check: as above with the steady-state tolerance
// loosened to 1e-7 (for both engines), which the exact engine reaches.
#[test]
fn cross_check_output_capacitor_loose_steady_state() {
    let mut s = circuits::with_output_capacitor();
    s.simulation.steady_state_tolerance = 1e-7;
    let (e, r) = cross_check(&s, ConductionMode::Ccm);
    assert!(
        rel(
            e.output_capacitor_ripple_rms_a,
            r.output_capacitor_ripple_rms_a
        ) < 1e-2
    );
}

// Independent cross-check: the starter design as shipped (exponential LEDs,
// 80 ns delay, 150 ns minimum on-time shorter than the natural on-time).
#[test]
fn cross_check_template() {
    cross_check(&sim_core::scenario::template(), ConductionMode::Ccm);
}

// Independent cross-check: open-loop fixed duty into a resistor with an
// output capacitor (no curve fits in either engine, so the two should agree
// to the integrator's accuracy).
#[test]
fn cross_check_fixed_duty_resistor() {
    let (e, r) = cross_check(&circuits::fixed_duty_resistor(), ConductionMode::Ccm);
    assert!(rel(e.led_current_avg_a, r.led_current_avg_a) < 1e-7);
    assert!(rel(e.led_current_ripple_pp_a, r.led_current_ripple_pp_a) < 1e-6);
}

// The exact engine's only approximation is the chord fit of the
// exponential curves, so its difference from the reference must shrink as
// the fit tolerance is tightened, down to the reference's own accuracy.
// The chords' error alternates ± with zero mean over each segment, and
// in DCM the tail segment below 1 % of the peak matches the curve's
// integral, so there is no floor of a one-sided error: the difference
// falls below 1e-5 and keeps falling (before the zero-mean chords and the
// tail it levelled off near 5e-5 whatever the tolerance).
#[test]
fn exact_engine_converges_to_the_reference_with_tighter_fits() {
    let mut s = circuits::dcm_long_off_time();
    let r = run(&s, EngineKind::Reference).metrics;
    let mut diffs = vec![];
    for tol_v in [16e-3, 4e-3, 1e-3, 2.5e-4, 6.25e-5] {
        s.simulation.curve_tolerance_v = tol_v;
        let e = run(&s, EngineKind::Exact).metrics;
        let d = rel(e.led_current_avg_a, r.led_current_avg_a)
            .max(rel(e.switching_frequency_hz, r.switching_frequency_hz))
            .max((e.idle_time_s / e.period_s - r.idle_time_s / r.period_s).abs())
            .max((e.duty - r.duty).abs());
        println!("fit tolerance {tol_v:.2e} V: largest difference {d:.3e}");
        diffs.push(d);
    }
    assert!(diffs[2] < 1e-4, "1 mV fit: {:.3e}", diffs[2]);
    assert!(diffs[4] < 1e-5, "62.5 µV fit: {:.3e}", diffs[4]);
    assert!(diffs[4] < 0.25 * diffs[0], "no convergence: {diffs:?}");
}

// Independent cross-check: hysteretic control with a turn-off delay.
#[test]
fn cross_check_hysteretic() {
    cross_check(&circuits::hysteretic(), ConductionMode::Ccm);
}

// Independent cross-check: propagation delay and a minimum on-time that
// outlasts the natural on-time.
#[test]
fn cross_check_delay_and_min_on_time() {
    let (e, r) = cross_check(&circuits::delay_and_min_on_time(), ConductionMode::Ccm);
    // The on-time is the blanking plus the delay in both engines.
    let expect = 700e-9 + 100e-9;
    assert!(
        rel(e.on_time_s, expect) < 1e-9,
        "exact on-time {}",
        e.on_time_s
    );
    assert!(
        rel(r.on_time_s, expect) < 1e-9,
        "reference on-time {}",
        r.on_time_s
    );
}

// Independent cross-check: Shockley freewheel diode, CCM.
#[test]
fn cross_check_shockley_diode() {
    cross_check(&circuits::shockley_diode(), ConductionMode::Ccm);
}

// Independent cross-check: Shockley diode in DCM with an exponential LED
// string and no output capacitor (the reference's current floor).
#[test]
fn cross_check_shockley_diode_dcm() {
    cross_check(&circuits::shockley_diode_dcm(), ConductionMode::Dcm);
}

// Independent cross-check: linear LED string with an output capacitor
// (the output node rises through the knee during start-up).
#[test]
fn cross_check_knee_string_with_output_capacitor() {
    cross_check(
        &circuits::knee_string_with_output_capacitor(),
        ConductionMode::Ccm,
    );
}

// Reference engine alone against the closed form of the ideal constant
// off-time buck: the off-time slope is V_out/L, so ΔI = V_out·t_off/L, and
// volt-second balance on the inductor, (V_in − V_out)·t_on = V_out·t_off,
// gives f = 1/(t_on + t_off) = (1 − V_out/V_in)/t_off.
// Erickson & Maksimovic, Fundamentals of Power Electronics, 3rd ed., ch. 2.
#[test]
fn reference_matches_ideal_constant_off_time_closed_form() {
    for &(vin, count, knee, l, peak, toff) in &[
        (24.0, 4u32, 3.0, 47e-6, 1.0, 2e-6),
        (48.0, 10, 3.1, 100e-6, 0.7, 1.2e-6),
    ] {
        let s = circuits::ideal_constant_off_time(vin, count, knee, l, peak, toff);
        let m = run(&s, EngineKind::Reference).metrics;
        let vout = f64::from(count) * knee;
        let ripple = vout * toff / l;
        let f = (1.0 - vout / vin) / toff;
        println!(
            "ideal {vin} V -> {vout} V: ripple {:.12} vs {ripple:.12} A, f {:.6} vs {f:.6} Hz, residual {:.1e}",
            m.led_current_ripple_pp_a, m.switching_frequency_hz, m.energy_balance_residual
        );
        assert!(
            rel(m.led_current_ripple_pp_a, ripple) < 1e-6,
            "ripple {}",
            m.led_current_ripple_pp_a
        );
        assert!(rel(m.inductor_ripple_pp_a, ripple) < 1e-6);
        assert!(
            rel(m.switching_frequency_hz, f) < 1e-6,
            "f {}",
            m.switching_frequency_hz
        );
        // Triangular current: the average is the peak less half the ripple.
        assert!(rel(m.led_current_avg_a, peak - 0.5 * ripple) < 1e-6);
        assert!(rel(m.duty, vout / vin) < 1e-6, "duty {}", m.duty);
        // Lossless: all input energy reaches the LEDs.
        assert!(
            m.energy_balance_residual.abs() < 1e-9,
            "residual {}",
            m.energy_balance_residual
        );
        assert!(
            (m.efficiency - 1.0).abs() < 1e-9,
            "efficiency {}",
            m.efficiency
        );
    }
}

// The reference engine reports an unreachable threshold as an error (it
// never panics on user input). Built directly (validation would reject
// it): a 50 A peak behind 1 Ω of source resistance from 24 V into a 12 V
// string can reach at most 12 A.
#[test]
fn reference_reports_an_unreachable_peak() {
    let mut s = circuits::ideal_constant_off_time(24.0, 4, 3.0, 47e-6, 1.0, 2e-6);
    s.supply.source_resistance_ohm = 1.0;
    s.controller = sim_core::scenario::ControllerSpec::ConstantOffTime {
        peak_current_a: 50.0,
        off_time_s: 2e-6,
        delay_s: 0.0,
        min_on_time_s: 0.0,
    };
    s.simulation.max_interval_s = 1e-3;
    let opts = RunOptions {
        engine: EngineKind::Reference,
        initial_state: None,
    };
    match simulate(&s, &opts) {
        Err(SimError::IntervalTooLong {
            switch, current_a, ..
        }) => {
            assert_eq!(switch, "on");
            // Settled at (24 − 12)/1 Ω = 12 A (L/R = 47 µs ≪ 1 ms).
            assert!(rel(current_a, 12.0) < 1e-6, "current {current_a}");
        }
        other => panic!("expected IntervalTooLong, got {other:?}"),
    }
}

// The recorded reference waveform is consistent with its own measurements
// and with the exact LED curve: time runs forward, the inductor current
// never exceeds the measured peak, and every sample's LED voltage is the
// exponential curve's voltage at its LED current (no output capacitor, so
// the two are tied by v = count·(n·Vt·ln(1 + i/Is) + Rs·i)).
#[test]
fn reference_waveform_follows_the_exponential_curve() {
    use sim_core::devices::ExpDevice;
    use sim_core::record::{COL_IL, COL_ILED, COL_SWITCH, COL_TIME, COL_VLED};
    let s = circuits::ccm_constant_off_time();
    let r = run(&s, EngineKind::Reference);
    let w = &r.waveform;
    assert!(w.len() > 100, "{} samples", w.len());
    let t = w.column(COL_TIME);
    assert!(t.windows(2).into_iter().all(|p| p[1] >= p[0]));
    let peak = r.metrics.inductor_current_peak_a;
    let il = w.column(COL_IL);
    assert!(il.iter().all(|&i| i <= peak + 1e-9 * peak));
    assert!(
        il.iter().any(|&i| i > peak - 1e-6 * peak),
        "peak {peak} not sampled"
    );
    let dev = ExpDevice::from_load(&s.load).expect("exponential load");
    for row in w.data.rows() {
        assert!(row[COL_SWITCH] == 0.0 || row[COL_SWITCH] == 1.0);
        let v = dev.voltage_v(row[COL_ILED]);
        assert!(
            (row[COL_VLED] - v).abs() < 1e-9 * v,
            "{} V at {} A",
            row[COL_VLED],
            row[COL_ILED]
        );
    }
}

#[test]
fn cross_check_saturating_inductor() {
    // The exact engine's constant-L chord segments (flux exact at every
    // boundary) against the reference engine's continuous L(i).
    let s = circuits::lamp_12v_saturating();
    let (e, r) = cross_check(&s, ConductionMode::Ccm);
    let d_pk = rel(e.inductor_current_peak_a, r.inductor_current_peak_a);
    let d_rip = rel(e.inductor_ripple_pp_a, r.inductor_ripple_pp_a);
    println!("saturating: peak rel {d_pk:.2e}, inductor ripple rel {d_rip:.2e}");
    assert!(d_pk < 2e-3, "peak {d_pk}");
    assert!(d_rip < 1e-2, "ripple {d_rip}");
    // Saturation widens the ripple against the unsaturated part.
    let plain = run(&circuits::lamp_12v(), EngineKind::Exact).metrics;
    assert!(e.inductor_ripple_pp_a > 1.15 * plain.inductor_ripple_pp_a);
    assert!(r.inductor_ripple_pp_a > 1.15 * plain.inductor_ripple_pp_a);
}

/// `s` with a current-sense resistor of `r` ohms (position `None`: the
/// controller's default).
fn with_sense(
    mut s: Scenario,
    r: f64,
    position: Option<sim_core::scenario::SensePosition>,
) -> Scenario {
    s.name = format!("{}-sense", s.name);
    s.sense_resistor = Some(sim_core::scenario::SenseResistor {
        resistance_ohm: r,
        position,
    });
    s.validate().expect("valid");
    s
}

/// Both engines' current-sense loss agree (relative).
fn sense_losses_agree(e: &Metrics, r: &Metrics) {
    let (a, b) = (e.losses_w.current_sense, r.losses_w.current_sense);
    assert!(b > 0.0, "no sense loss in the reference engine");
    assert!(rel(a, b) < 2e-3, "sense loss {a} vs {b}");
}

// Independent cross-check: a current-sense resistor in series with the
// switch (constant off-time default) with a Shockley diode and exponential
// LEDs, and in series with the LED string (hysteretic default) ahead of an
// output capacitor.
#[test]
fn cross_check_current_sense_resistor() {
    let (e, r) = cross_check(
        &with_sense(circuits::shockley_diode(), 0.33, None),
        ConductionMode::Ccm,
    );
    sense_losses_agree(&e, &r);
    let mut h = circuits::hysteretic();
    h.output_capacitor = Some(sim_core::scenario::Capacitor {
        capacitance_f: 1e-6,
        esr_ohm: 0.02,
    });
    let (e, r) = cross_check(&with_sense(h, 0.27, None), ConductionMode::Ccm);
    sense_losses_agree(&e, &r);
    let (e, r) = cross_check(
        &with_sense(
            circuits::dcm_long_off_time(),
            0.5,
            Some(sim_core::scenario::SensePosition::LedString),
        ),
        ConductionMode::Dcm,
    );
    sense_losses_agree(&e, &r);
}
