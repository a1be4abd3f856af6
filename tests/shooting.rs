//! Periodic steady state by shooting (Newton on the cycle map; Aprille &
//! Trick, Proc. IEEE 60(1), 1972) against brute-force cycling, and the
//! analytic cycle-map Jacobian against central differences.

use chopwave_suite as circuits;
use nalgebra::Matrix3;
use sim_core::exact::engine::ExactEngine;
use sim_core::model::circuit::{N_STATES, X_IL};
use sim_core::run::shooting::{averaged_guess, find_orbit, Limits};
use sim_core::run::steady::{SteadyDetector, Verdict};
use sim_core::scenario::Scenario;
use sim_core::scenario::{JacobianSource, SteadyMethod};
use sim_core::{
    model::seam::state_scales,
    run::drive::simulate,
    run::{RunOptions, SimResult},
};

fn bundled() -> Vec<Scenario> {
    let dir = std::path::Path::new(env!("CARGO_MANIFEST_DIR")).join("scenarios");
    let mut files: Vec<_> = std::fs::read_dir(&dir)
        .expect("scenarios folder")
        .map(|e| e.expect("entry").path())
        .filter(|p| p.extension().is_some_and(|x| x == "json"))
        .collect();
    files.sort();
    assert!(files.len() >= 6, "bundled scenarios: {files:?}");
    files
        .iter()
        .map(|p| {
            let text = std::fs::read_to_string(p).expect("read");
            Scenario::from_json_str(&text).unwrap_or_else(|e| panic!("{}: {e}", p.display()))
        })
        .collect()
}

fn scaled_distance(a: &[f64; N_STATES], b: &[f64; N_STATES], scale: &[f64; N_STATES]) -> f64 {
    (0..N_STATES)
        .map(|i| ((a[i] - b[i]) / scale[i]).abs())
        .fold(0.0, f64::max)
}

/// Shooting from the averaged guess, then brute-force cycling from
/// power-on on the *same* circuit (the fitted curves frozen where
/// shooting left them) until the change per cycle is at round-off: the
/// two fixed points agree to 1e-9 of the state scales on every bundled
/// scenario.
#[test]
fn shooting_and_cycling_find_the_same_orbit_on_every_bundled_scenario() {
    for s in bundled() {
        let scale = state_scales(&s);
        let mut e = ExactEngine::new(&s);
        if let Some(x) = averaged_guess(&s, &e.circuit) {
            e.set_state(x);
        }
        let limits = Limits {
            max_cycles: 1000,
            max_time_s: 10.0,
        };
        let orbit = find_orbit(&mut e, scale, JacobianSource::Analytic, limits)
            .unwrap_or_else(|f| panic!("{}: shooting failed: {}", s.name, f.reason));
        assert!(
            orbit.residual <= 1e-12,
            "{}: residual {}",
            s.name,
            orbit.residual
        );
        assert!(orbit.largest_multiplier < 1.0, "{}", s.name);
        // Brute force on the frozen fits, from power-on.
        e.freeze_fits = true;
        e.restart_at_turn_on([0.0; N_STATES]);
        let mut det = SteadyDetector::new(1e-13, scale);
        det.push(e.state_array());
        let mut cycles = 0u64;
        loop {
            e.run_cycle(None, None).expect("cycle");
            cycles += 1;
            if let Verdict::Settled { order } = det.push(e.state_array()) {
                assert_eq!(order, 1, "{}", s.name);
                break;
            }
            assert!(cycles < 200_000, "{}: cycling did not settle", s.name);
        }
        let d = scaled_distance(&e.state_array(), &orbit.state, &scale);
        assert!(
            d <= 1e-9,
            "{}: shooting {:?} vs cycling {:?}: scaled difference {d:.2e}",
            s.name,
            orbit.state,
            e.state_array()
        );
    }
}

fn run(s: &Scenario, method: SteadyMethod, jacobian: JacobianSource) -> SimResult {
    let mut s = s.clone();
    s.simulation.steady_state_method = method;
    s.simulation.shooting_jacobian = jacobian;
    simulate(&s, &RunOptions::default()).unwrap_or_else(|e| panic!("{}: {e}", s.name))
}

/// What the engineer reads agrees whichever method found the steady
/// state. The two runs fit the exponential curves over the currents each
/// happened to visit (within the 1 mV curve tolerance), so the figures
/// agree to the fits' effect, well under a part in 10⁴, not to 1e-9.
#[test]
fn shooting_and_cycling_report_the_same_figures() {
    for s in bundled() {
        let a = run(&s, SteadyMethod::Shooting, JacobianSource::Analytic);
        let b = run(&s, SteadyMethod::Cycling, JacobianSource::Analytic);
        assert_eq!(a.steady.method, SteadyMethod::Shooting, "{}", s.name);
        assert!(a.steady.note.is_none(), "{}: {:?}", s.name, a.steady.note);
        assert_eq!(b.steady.method, SteadyMethod::Cycling);
        let (ma, mb) = (&a.metrics, &b.metrics);
        for (what, x, y) in [
            ("LED average", ma.led_current_avg_a, mb.led_current_avg_a),
            (
                "frequency",
                ma.switching_frequency_hz,
                mb.switching_frequency_hz,
            ),
            ("input power", ma.input_power_w, mb.input_power_w),
            (
                "inductor peak",
                ma.inductor_current_peak_a,
                mb.inductor_current_peak_a,
            ),
        ] {
            let rel = (x - y).abs() / y.abs();
            assert!(rel <= 1e-4, "{} {what}: {x} vs {y} ({rel:.1e})", s.name);
        }
        assert!(ma.energy_balance_residual.abs() < 1e-9, "{}", s.name);
    }
}

/// The slow-settling target: an output time constant of over 50
/// switching periods. Shooting reaches a scaled residual of 1e-12 in at
/// most 10 cycle evaluations with the analytic Jacobian and 25 with
/// differences; cycling from power-on to the same residual needs at least
/// 50 times as many cycles.
#[test]
fn shooting_settles_a_slow_output_filter_in_a_few_cycles() {
    let s = circuits::slow_output_filter();
    let analytic = run(&s, SteadyMethod::Shooting, JacobianSource::Analytic);
    let diff = run(&s, SteadyMethod::Shooting, JacobianSource::FiniteDifference);
    let mut tight = s.clone();
    tight.simulation.steady_state_tolerance = 1e-12;
    let cycling = run(&tight, SteadyMethod::Cycling, JacobianSource::Analytic);

    // The design really is slow: C·r_string against the period.
    let period = 1.0 / analytic.metrics.switching_frequency_hz;
    let tau = 470e-6 * 6.0 * 0.8;
    assert!(tau / period >= 50.0, "τ/T = {}", tau / period);
    assert!(
        analytic.steady.contraction > 0.98,
        "{}",
        analytic.steady.contraction
    );

    let (na, nd, nc) = (
        analytic.steady.cycles_to_settle,
        diff.steady.cycles_to_settle,
        cycling.steady.cycles_to_settle,
    );
    assert_eq!(analytic.steady.method, SteadyMethod::Shooting);
    assert_eq!(analytic.steady.jacobian, Some(JacobianSource::Analytic));
    assert_eq!(diff.steady.method, SteadyMethod::Shooting);
    assert_eq!(diff.steady.jacobian, Some(JacobianSource::FiniteDifference));
    assert!(analytic.steady.last_change <= 1e-12);
    assert!(diff.steady.last_change <= 1e-12);
    println!(
        "slow output filter: τ/T {:.0}, multiplier {:.5}; cycle evaluations: analytic {na}, \
         differences {nd}, cycling {nc}",
        tau / period,
        analytic.steady.contraction
    );
    assert!(na <= 10, "analytic: {na} cycle evaluations");
    assert!(nd <= 25, "differences: {nd} cycle evaluations");
    assert!(nc >= 50 * nd, "cycling {nc} vs shooting {nd}");
    // All three agree on the orbit (the knee LED needs no curve fit).
    let scale = state_scales(&s);
    for r in [&diff, &cycling] {
        let d = scaled_distance(
            &r.steady.state_at_turn_on,
            &analytic.steady.state_at_turn_on,
            &scale,
        );
        assert!(d <= 1e-9, "{:?}: {d:.2e}", r.steady.method);
    }
}

/// Central differences of the cycle map, `(P(x + h) − P(x − h)) / 2h`
/// (one-sided at zero inductor current).
fn central_jacobian(
    e: &mut ExactEngine,
    x: [f64; N_STATES],
    scale: [f64; N_STATES],
) -> Matrix3<f64> {
    let active = [
        true,
        e.circuit.el.output_cap.is_some(),
        e.circuit.el.input_cap.is_some(),
    ];
    let mut at = |xp: [f64; N_STATES]| {
        e.restart_at_turn_on(xp);
        e.run_cycle(None, None).expect("cycle");
        e.state_array()
    };
    let mut j = Matrix3::zeros();
    for c in (0..N_STATES).filter(|&c| active[c]) {
        let h = 1e-6 * scale[c];
        let shifted = |k: f64| {
            let mut xp = x;
            xp[c] += k * h;
            xp
        };
        if c == X_IL && x[c] == 0.0 {
            // In DCM the orbit starts at zero current, the edge of the
            // state space (no reverse current): one-sided, second order,
            // (−3P(x) + 4P(x + h) − P(x + 2h)) / 2h.
            let (p0, p1, p2) = (at(x), at(shifted(1.0)), at(shifted(2.0)));
            for r in 0..N_STATES {
                j[(r, c)] = (-3.0 * p0[r] + 4.0 * p1[r] - p2[r]) / (2.0 * h);
            }
        } else {
            let (p1, m1) = (at(shifted(1.0)), at(shifted(-1.0)));
            for r in 0..N_STATES {
                j[(r, c)] = (p1[r] - m1[r]) / (2.0 * h);
            }
        }
    }
    j
}

/// The analytic Jacobian (transition matrices and event-time shifts)
/// matches central differences at the orbit of designs covering each
/// event kind: peak and valley thresholds, timers, delays and blanking,
/// DCM (the diode current reaching zero), chord boundaries of fitted
/// curves, a saturating inductor and the open-loop timer.
#[test]
fn analytic_cycle_jacobian_matches_central_differences() {
    let mut designs = vec![
        circuits::ccm_constant_off_time(),
        circuits::dcm_long_off_time(),
        circuits::with_output_capacitor(),
        circuits::hysteretic(),
        circuits::delay_and_min_on_time(),
        circuits::shockley_diode(),
        circuits::knee_string_with_output_capacitor(),
        circuits::fixed_duty_resistor(),
        circuits::lamp_12v_saturating(),
        circuits::slow_output_filter(),
    ];
    designs.extend(bundled());
    for s in designs {
        let scale = state_scales(&s);
        let mut e = ExactEngine::new(&s);
        for _ in 0..50 {
            e.run_cycle(None, None).expect("cycle");
        }
        e.freeze_fits = true;
        let x = e.state_array();
        e.restart_at_turn_on(x);
        let analytic = e
            .run_cycle_with_jacobian()
            .expect("cycle")
            .unwrap_or_else(|| panic!("{}: no analytic Jacobian", s.name));
        let numeric = central_jacobian(&mut e, x, scale);
        // Compare in scaled units (∂(x_r/s_r)/∂(x_c/s_c)).
        let mut worst: f64 = 0.0;
        for r in 0..N_STATES {
            for c in 0..N_STATES {
                let k = scale[c] / scale[r];
                worst = worst.max(((analytic[(r, c)] - numeric[(r, c)]) * k).abs());
            }
        }
        assert!(
            worst <= 1e-6,
            "{}: analytic {analytic} vs differences {numeric}: worst scaled gap {worst:.2e}",
            s.name
        );
    }
}

/// Shooting started from a poor state (discharged capacitors, no current)
/// still ends on the orbit the averaged start finds.
#[test]
fn shooting_from_power_on_reaches_the_same_orbit() {
    for s in [circuits::slow_output_filter()]
        .into_iter()
        .chain(bundled())
    {
        let from_guess = run(&s, SteadyMethod::Shooting, JacobianSource::Analytic);
        let mut s0 = s.clone();
        s0.simulation.steady_state_method = SteadyMethod::Shooting;
        let opts = RunOptions {
            initial_state: Some([0.0; N_STATES]),
            ..RunOptions::default()
        };
        let cold = simulate(&s0, &opts).unwrap_or_else(|e| panic!("{}: {e}", s.name));
        let rel = (cold.metrics.led_current_avg_a - from_guess.metrics.led_current_avg_a).abs()
            / from_guess.metrics.led_current_avg_a;
        assert!(
            rel <= 1e-4,
            "{}: {} vs {} ({:?})",
            s.name,
            cold.metrics.led_current_avg_a,
            from_guess.metrics.led_current_avg_a,
            cold.steady.note
        );
    }
}

/// A shooting run's start-up is a real run from power-on: it starts at
/// zero current and ends (at a turn-on) within 0.1 % of the state scales
/// of the steady orbit shooting found, the same as a cycling run's.
#[test]
fn shooting_runs_record_the_start_up_from_power_on() {
    use sim_core::record::{COL_IL, COL_TIME};
    for s in bundled() {
        let mut s = s.clone();
        s.simulation.record_startup = true;
        let r = run(&s, SteadyMethod::Shooting, JacobianSource::Analytic);
        let w = r.startup.as_ref().expect("start-up recorded");
        assert_eq!(w.data[[0, COL_TIME]], 0.0, "{}", s.name);
        assert_eq!(w.data[[0, COL_IL]], 0.0, "{}", s.name);
        let last = w.len() - 1;
        let scale = state_scales(&s);
        let gap = (w.data[[last, COL_IL]] - r.steady.state_at_turn_on[0]).abs() / scale[0];
        assert!(
            gap <= 1.5e-3,
            "{}: end of start-up {gap:.1e} from steady",
            s.name
        );
        // Cycling records the same transient (both from power-on, same
        // engine): its start-up's first cycle agrees.
        let c = run(&s, SteadyMethod::Cycling, JacobianSource::Analytic);
        let wc = c.startup.as_ref().expect("start-up recorded");
        let n = w.len().min(wc.len()).min(50);
        for k in 0..n {
            assert_eq!(
                w.data[[k, COL_IL]],
                wc.data[[k, COL_IL]],
                "{} sample {k}",
                s.name
            );
        }
    }
}
