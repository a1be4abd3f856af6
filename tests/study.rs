//! Studies: the CCM/DCM boundary against closed forms, sweeps against
//! single runs, spread reproducibility and convergence, shard merging.

use approx::assert_relative_eq;
use chopwave_suite::*;
use serde_json::Value;
use sim_core::scenario::SteadyMethod;
use sim_core::scenario::{ControllerSpec, Scenario, VoltageRange};
use sim_core::scenario::{
    Distribution, LedVoltageTolerance, PartTolerance, SpecLimits, Tolerances,
};
use sim_core::study::boundary::{find_boundary, BoundarySettings};
use sim_core::study::rows::{flat_metrics, RowExt, StudyTable};
use sim_core::study::run::{Finished, Hooks, RunSettings, Shard};
use sim_core::study::spread::{
    corners, normal_quantile, sample_inputs, spread, summarize, Param, ParamKind, SpreadSettings,
};
use sim_core::study::sweep::sweep;
use sim_core::study::vary::{Grid, Vary};
use sim_core::study::{scenario_json, scenario_with};
use sim_core::{run::drive::simulate, run::RunOptions};
use std::collections::BTreeMap;

fn nothing() -> Hooks<'static> {
    Hooks::default()
}

#[test]
fn boundary_fixed_duty_resistive_is_k_crit() {
    // DCM exactly when K = 2L/(R·T_s) < K_crit = 1 − D, so the boundary
    // inductance is L = (1 − D)·R·T_s/2. Erickson & Maksimovic,
    // Fundamentals of Power Electronics, 3rd ed., ch. 5. The output
    // capacitor keeps the ripple far below 0.1 % as the formula assumes;
    // the search starts near the output voltage (M = D at the boundary).
    let (v_in, r, f, c, d) = (10.0, 10.0, 100e3, 2000e-6, 0.4);
    let l_crit = (1.0 - d) * r / (2.0 * f);
    let s = fixed_duty_resistive(v_in, 1.5 * l_crit, r, c, f, d);
    let settings = BoundarySettings {
        run: RunSettings {
            initial_state: Some([0.0, d * v_in, 0.0]),
            ..RunSettings::default()
        },
        ..BoundarySettings::default()
    };
    let b = find_boundary(
        &s,
        "inductor.inductance_h",
        0.6 * l_crit,
        1.6 * l_crit,
        &[],
        &settings,
    )
    .unwrap();
    assert_relative_eq!(b.value, l_crit, max_relative = 1e-3);
    assert!(b.ccm_above && b.nominal_ccm);
    assert_relative_eq!(b.margin_pct, 100.0 * (1.0 - 1.0 / 1.5), max_relative = 2e-3);
    assert!(b.bracket.1 - b.bracket.0 <= 2e-4 * b.value * 1.0001);
}

#[test]
fn boundary_constant_off_time_is_zero_valley() {
    // Ideal constant off-time: the current falls by ΔI = V_out·t_off/L
    // from the peak, so the valley reaches zero (ΔI = I_pk, i.e. ΔI twice
    // the average of a triangle from zero) at L = V_out·t_off/I_pk.
    // Erickson & Maksimovic, Fundamentals of Power Electronics, 3rd ed.,
    // ch. 2 (inductor volt-second balance) and ch. 5 (boundary).
    let (v_in, n, knee, peak, t_off) = (24.0, 3, 3.0, 1.0, 2e-6);
    let v_out = f64::from(n) * knee;
    let l_b = v_out * t_off / peak;
    let s = ideal_constant_off_time(v_in, n, knee, 2.0 * l_b, peak, t_off);
    let b = find_boundary(
        &s,
        "inductor.inductance_h",
        0.5 * l_b,
        3.0 * l_b,
        &[],
        &BoundarySettings::default(),
    )
    .unwrap();
    assert_relative_eq!(b.value, l_b, max_relative = 1e-3);
    assert!(b.ccm_above && b.nominal_ccm);
    // Along the off-time the CCM side is below: t_off,b = L·I_pk/V_out.
    let t_b = 2.0 * l_b * peak / v_out;
    let b = find_boundary(
        &s,
        "controller.off_time_s",
        0.5 * t_b,
        2.0 * t_b,
        &[],
        &BoundarySettings::default(),
    )
    .unwrap();
    assert_relative_eq!(b.value, t_b, max_relative = 1e-3);
    assert!(!b.ccm_above && b.nominal_ccm);
    // No crossing in the bracket is an error that says so.
    let e = find_boundary(
        &s,
        "inductor.inductance_h",
        2.0 * l_b,
        3.0 * l_b,
        &[],
        &BoundarySettings::default(),
    )
    .unwrap_err();
    assert!(e.to_string().contains("both ends are CCM"), "{e}");
}

fn supply_sweep(s: &Scenario, spec: &str) -> Grid {
    Grid::new(vec![Vary::parse(spec, s).unwrap()]).unwrap()
}

#[test]
fn cold_sweep_points_equal_single_runs_exactly() {
    let s = lamp_12v();
    let grid = supply_sweep(&s, "supply.voltage_v=10.5:14:6");
    let cold = RunSettings {
        warm_start: false,
        ..RunSettings::default()
    };
    let t = sweep(&s, &grid, &cold, None, &nothing());
    assert_eq!(t.rows.len(), 6);
    for (k, row) in t.rows.iter().enumerate() {
        let mut one = s.clone();
        one.supply.voltage_v = grid.axes[0].values[k];
        let m = simulate(&one, &RunOptions::default()).unwrap().metrics;
        // To the last digit: every metric, compared as JSON numbers.
        assert_eq!(
            row.to_value()["metrics"],
            Value::Object(flat_metrics(&m)),
            "point {k}"
        );
    }
}

fn check_warm(s: &Scenario, spec: &str, rel: f64) {
    // Warm-start chains are for cycling (shooting starts every point from
    // its own averaged operating point; see below).
    let mut s = s.clone();
    s.simulation.steady_state_method = SteadyMethod::Cycling;
    let s = &s;
    let grid = supply_sweep(s, spec);
    let t = sweep(s, &grid, &RunSettings::default(), None, &nothing());
    let warm = t
        .rows
        .iter()
        .filter(|r| r.warm_start() == Some(true))
        .count();
    assert_eq!(warm, 7, "all but the chain's first point start warm");
    for (k, row) in t.rows.iter().enumerate() {
        let mut one = s.clone();
        one.supply.voltage_v = grid.axes[0].values[k];
        let m = simulate(&one, &RunOptions::default()).unwrap().metrics;
        for (name, v) in [
            ("led_current_avg_a", m.led_current_avg_a),
            ("switching_frequency_hz", m.switching_frequency_hz),
            ("efficiency", m.efficiency),
            ("inductor_current_peak_a", m.inductor_current_peak_a),
        ] {
            assert_relative_eq!(row.metric(name).unwrap(), v, max_relative = rel);
        }
    }
}

#[test]
fn warm_sweep_points_equal_single_runs_within_tolerance() {
    // A linear (knee-model) load: the only difference a warm start makes
    // is where the steady-state test stops (a scaled change of 1e-9 per
    // cycle), far inside 1e-6 of every figure.
    check_warm(
        &knee_string_with_output_capacitor(),
        "supply.voltage_v=20:28:8",
        1e-6,
    );
    // Exponential LEDs: each run also fits its own straight-segment curve
    // over the currents it visits, so warm and cold runs differ within
    // the fit (1 mV of a 10.8 V string, about 1e-4).
    check_warm(
        &lamp_12v_with_output_cap(),
        "supply.voltage_v=12:14:8",
        1e-3,
    );
}

/// With shooting (the default) a sweep drops warm-start chains: every
/// point starts from its own averaged operating point, so it is exactly
/// its single run, and it settles in a handful of cycles.
#[test]
fn shooting_sweep_points_are_their_single_runs() {
    for s in [
        knee_string_with_output_capacitor(),
        lamp_12v_with_output_cap(),
    ] {
        let spec = if s.name.starts_with("knee") {
            "supply.voltage_v=20:28:8"
        } else {
            "supply.voltage_v=12:14:8"
        };
        let grid = supply_sweep(&s, spec);
        let t = sweep(&s, &grid, &RunSettings::default(), None, &nothing());
        assert!(!t.manifest.warm_start, "{}", s.name);
        for (k, row) in t.rows.iter().enumerate() {
            assert_eq!(row.warm_start(), Some(false));
            let mut one = s.clone();
            one.supply.voltage_v = grid.axes[0].values[k];
            let r = simulate(&one, &RunOptions::default()).unwrap();
            assert!(
                r.steady.cycles_to_settle <= 12,
                "{}: {}",
                s.name,
                r.steady.cycles_to_settle
            );
            assert_eq!(
                row.to_value()["metrics"],
                Value::Object(flat_metrics(&r.metrics)),
                "{} point {k}",
                s.name
            );
        }
    }
}

#[test]
fn failed_points_keep_their_rows() {
    let s = lamp_12v();
    // 5 V is below the three-LED string: invalid there, fine elsewhere.
    let grid = supply_sweep(&s, "supply.voltage_v=5,12,13");
    let t = sweep(&s, &grid, &RunSettings::default(), None, &nothing());
    assert_eq!(t.failed(), 1);
    assert!(!t.rows[0].ok());
    assert!(t.rows[0].error().unwrap().contains("supply.voltage_v"));
    assert!(t.rows[1].ok() && t.rows[2].ok());
    let csv = t.to_csv_text();
    assert_eq!(csv.lines().count(), 4);
    assert!(csv.lines().nth(1).unwrap().contains("failed"));
}

/// The 12 V lamp with tolerances on its main parts and the supply over
/// 10.5–14 V (illustrative tolerances).
fn toleranced_lamp() -> Scenario {
    let mut s = lamp_12v();
    s.supply.input_range_v = Some(VoltageRange {
        min_v: 10.5,
        max_v: 14.0,
    });
    s.tolerances = Some(Tolerances {
        parts: vec![
            PartTolerance {
                path: "inductor.inductance_h".into(),
                tolerance_pct: 20.0,
                distribution: Distribution::Normal,
            },
            PartTolerance {
                path: "controller.off_time_s".into(),
                tolerance_pct: 5.0,
                distribution: Distribution::Uniform,
            },
        ],
        led_forward_voltage: Some(LedVoltageTolerance {
            tolerance_pct: 3.0,
            distribution: Distribution::Normal,
            at_current_a: None,
        }),
        supply_over_range: true,
    });
    s.spec = Some(SpecLimits {
        current_within_pct: Some(3.0),
        max_ripple_pct: Some(60.0),
        no_dcm: true,
        ..SpecLimits::default()
    });
    s.validate().unwrap();
    s
}

#[test]
fn spread_is_the_same_on_one_and_two_threads() {
    let s = toleranced_lamp();
    let set = SpreadSettings {
        samples: 24,
        seed: 7,
        run: RunSettings::default(),
    };
    let limits = s.spec.unwrap();
    let run = |threads| {
        rayon::ThreadPoolBuilder::new()
            .num_threads(threads)
            .build()
            .unwrap()
            .install(|| spread(&s, &limits, &set, None, &nothing()).unwrap())
    };
    let (one, two) = (run(1), run(2));
    assert_eq!(one.to_json_text(), two.to_json_text());
    assert_eq!(one.failed(), 0);
    // A different seed gives different samples.
    let other = spread(
        &s,
        &limits,
        &SpreadSettings { seed: 8, ..set },
        None,
        &nothing(),
    )
    .unwrap();
    assert_ne!(one.rows[0].inputs, other.rows[0].inputs);
    // The summary judges every limit; inputs stay in their ranges.
    let sum = summarize(&one);
    assert_eq!(sum.limits.len(), 3);
    for r in &one.rows {
        assert!((10.5..=14.0).contains(&r.input(3)));
        assert!((0.95 * 2e-6..=1.05 * 2e-6).contains(&r.input(1)));
    }
}

#[test]
fn normal_generator_matches_the_normal_quantiles() {
    // Standard normal quantiles z(0.01) = −2.326348, z(0.5) = 0,
    // z(0.99) = 2.326348 (Abramowitz & Stegun, Handbook of Mathematical
    // Functions, table 26.5); 3σ is set at the 30 % tolerance, σ = 10 %.
    let p = Param {
        name: "x".into(),
        kind: ParamKind::Field {
            path: "x".into(),
            nominal: 1.0,
        },
        tolerance: 0.3,
        distribution: Distribution::Normal,
    };
    let mut v: Vec<f64> = (0..200_000)
        .map(|k| sample_inputs(std::slice::from_ref(&p), 3, k)[0])
        .collect();
    v.sort_by(f64::total_cmp);
    let q = |f: f64| sim_core::study::spread::quantile_sorted(&v, f);
    for (f, z) in [(0.01, -2.326_348), (0.5, 0.0), (0.99, 2.326_348)] {
        assert!((q(f) - (1.0 + 0.1 * z)).abs() < 2.5e-3, "p = {f}: {}", q(f));
    }
    assert!((normal_quantile(0.99) - 2.326_348).abs() < 1e-6);
}

#[test]
fn spread_percentiles_converge_to_the_analytic_ones() {
    // Ideal constant off-time buck, normal tolerance on L only: the
    // ripple is ΔI = V_out·t_off/L (Erickson & Maksimovic, Fundamentals of
    // Power Electronics, 3rd ed., ch. 2), monotone in L, so its
    // percentiles are those of L mapped through it: the 1st percentile of
    // ΔI comes from the 99th of L, L_nom·(1 + σ·2.326348).
    let (n, knee, peak, t_off, l) = (3, 3.0, 1.0, 2e-6, 40e-6);
    let v_out = f64::from(n) * knee;
    let mut s = ideal_constant_off_time(24.0, n, knee, l, peak, t_off);
    s.tolerances = Some(Tolerances {
        parts: vec![PartTolerance {
            path: "inductor.inductance_h".into(),
            tolerance_pct: 15.0,
            distribution: Distribution::Normal,
        }],
        ..Tolerances::default()
    });
    s.validate().unwrap();
    let t = spread(
        &s,
        &SpecLimits::default(),
        &SpreadSettings {
            samples: 3000,
            seed: 11,
            run: RunSettings::default(),
        },
        None,
        &nothing(),
    )
    .unwrap();
    let sum = summarize(&t);
    let x = sum
        .metrics
        .iter()
        .find(|m| m.metric == "inductor_ripple_pp_a")
        .unwrap();
    let sigma = 0.05;
    let di = |z: f64| v_out * t_off / (l * (1.0 + sigma * z));
    // Sampling error of a 1 % quantile from 3000 samples is about
    // 0.07 σ (binomial standard error over the normal density).
    assert_relative_eq!(x.p50, di(0.0), max_relative = 3e-3);
    assert_relative_eq!(x.p01, di(2.326_348), max_relative = 1e-2);
    assert_relative_eq!(x.p99, di(-2.326_348), max_relative = 1e-2);
}

#[test]
fn shards_merge_to_the_unsharded_bytes() {
    let s = lamp_12v();
    let grid = supply_sweep(&s, "supply.voltage_v=10.5:14:19");
    let rs = RunSettings::default();
    let whole = sweep(&s, &grid, &rs, None, &nothing());
    let shards: Vec<StudyTable> = (1..=3)
        .map(|k| {
            let t = sweep(
                &s,
                &grid,
                &rs,
                Some(Shard { index: k, count: 3 }),
                &nothing(),
            );
            // Through the file text, as `chopwave merge` reads them.
            StudyTable::from_json_text(&t.to_json_text()).unwrap()
        })
        .rev()
        .collect();
    let merged = StudyTable::merge(shards.clone()).unwrap();
    assert_eq!(merged.to_json_text(), whole.to_json_text());
    assert_eq!(merged.to_csv_text(), whole.to_csv_text());
    // A missing shard is refused.
    assert!(StudyTable::merge(shards[..2].to_vec()).is_err());

    let s = toleranced_lamp();
    let limits = s.spec.unwrap();
    let set = SpreadSettings {
        samples: 10,
        seed: 5,
        run: rs,
    };
    let whole = spread(&s, &limits, &set, None, &nothing()).unwrap();
    let parts: Vec<StudyTable> = (1..=4)
        .map(|k| {
            spread(
                &s,
                &limits,
                &set,
                Some(Shard { index: k, count: 4 }),
                &nothing(),
            )
            .unwrap()
        })
        .collect();
    let merged = StudyTable::merge(parts).unwrap();
    assert_eq!(merged.to_json_text(), whole.to_json_text());
    assert_eq!(summarize(&merged), summarize(&whole));
}

#[test]
fn corners_name_the_worst_corner() {
    let mut s = toleranced_lamp();
    if let Some(t) = &mut s.tolerances {
        t.parts.truncate(1);
        t.led_forward_voltage = None;
    }
    s.validate().unwrap();
    let t = corners(
        &s,
        &s.spec.unwrap(),
        &RunSettings::default(),
        None,
        &nothing(),
    )
    .unwrap();
    assert_eq!(t.rows.len(), 4);
    let sum = summarize(&t);
    let ripple = sum
        .metrics
        .iter()
        .find(|m| m.metric == "inductor_ripple_pp_a")
        .unwrap();
    // Constant off-time: ΔI ≈ V_out·t_off/L, largest with the smallest L
    // (Erickson & Maksimovic, ch. 2); the supply hardly matters.
    assert!(
        ripple.max_at.starts_with("inductor.inductance_h low"),
        "{}",
        ripple.max_at
    );
    assert!(
        ripple.min_at.starts_with("inductor.inductance_h high"),
        "{}",
        ripple.min_at
    );
}

#[test]
fn bad_tolerances_name_every_field() {
    let mut v = scenario_json(&lamp_12v());
    v["tolerances"] = serde_json::json!({
        "parts": [
            {"path": "inductor.inductanse_h", "tolerance_pct": 20},
            {"path": "controller.off_time_s", "tolerance_pct": 0, "distribution": "normal"}
        ],
        "led_forward_voltage": {"tolerance_pct": 80},
        "supply_over_range": true
    });
    v["spec"] = serde_json::json!({"min_efficiency": 85, "current_within_pct": -1});
    v["supply"]["input_range_v"] = Value::Null;
    let e = Scenario::from_json_str(&v.to_string()).unwrap_err();
    let paths: Vec<String> = e.problems().into_iter().map(|p| p.path).collect();
    for want in [
        "tolerances.parts[0].path",
        "tolerances.parts[1].tolerance_pct",
        "tolerances.led_forward_voltage.tolerance_pct",
        "tolerances.supply_over_range",
        "spec.current_within_pct",
        "spec.min_efficiency",
    ] {
        assert!(
            paths.iter().any(|p| p == want),
            "{want} missing from {paths:?}"
        );
    }
    // An unknown distribution is a syntax error naming the field.
    v["tolerances"] = serde_json::json!({"parts": [
        {"path": "inductor.inductance_h", "tolerance_pct": 20, "distribution": "triangular"}]});
    let e = Scenario::from_json_str(&v.to_string()).unwrap_err();
    assert!(e.to_string().contains("tolerances"), "{e}");
}

#[test]
fn led_voltage_factor_moves_the_forward_voltage() {
    // The exponential model's saturation current is solved so the string
    // voltage at the target current moves by exactly the factor.
    let s = lamp_12v();
    let i = s.target_current_a().unwrap();
    let mut t = s.clone();
    sim_core::study::spread::scale_led_voltage(&mut t, 1.03, i).unwrap();
    assert_relative_eq!(
        t.load_voltage_v(i),
        1.03 * s.load_voltage_v(i),
        max_relative = 1e-9
    );
    let mut k = ideal_constant_off_time(24.0, 3, 3.0, 40e-6, 1.0, 2e-6);
    sim_core::study::spread::scale_led_voltage(&mut k, 0.97, 1.0).unwrap();
    assert_relative_eq!(k.load_voltage_v(1.0), 0.97 * 9.0, max_relative = 1e-12);
}

#[test]
fn points_apply_values_exactly() {
    let s = lamp_12v();
    let base = scenario_json(&s);
    let x = 0.1 + 0.2; // not a short decimal
    let t = scenario_with(&base, &[("controller.off_time_s".into(), x * 1e-5)]).unwrap();
    match t.controller {
        ControllerSpec::ConstantOffTime { off_time_s, .. } => {
            assert_eq!(off_time_s.to_bits(), (x * 1e-5).to_bits());
        }
        _ => unreachable!(),
    }
}

#[test]
fn a_resumed_sweep_equals_one_run_and_a_deadline_stops_it() {
    // Issue #6: rows stream out as points finish, and a study resumed from
    // some of them (here every third point, so resumed points sit inside
    // warm-start chains, which cycling uses) writes exactly the table of
    // one uninterrupted run.
    let mut s = lamp_12v_with_output_cap();
    s.simulation.steady_state_method = SteadyMethod::Cycling;
    let grid = supply_sweep(&s, "supply.voltage_v=12:14:20");
    let settings = RunSettings::default();
    let seen = std::sync::Mutex::new(Vec::new());
    let keep = |f: &Finished| seen.lock().unwrap().push(f.clone());
    let whole = sweep(
        &s,
        &grid,
        &settings,
        None,
        &Hooks {
            on_finish: Some(&keep),
            resume: None,
        },
    );
    let seen = seen.into_inner().unwrap();
    assert_eq!(seen.len(), 20, "every point is streamed once");
    let kept: BTreeMap<usize, Finished> = seen
        .into_iter()
        .filter(|f| f.row.index % 3 == 1)
        .map(|f| (f.row.index, f))
        .collect();
    let count = std::sync::atomic::AtomicUsize::new(0);
    let tally = |_: &Finished| {
        count.fetch_add(1, std::sync::atomic::Ordering::Relaxed);
    };
    let resumed = sweep(
        &s,
        &grid,
        &settings,
        None,
        &Hooks {
            on_finish: Some(&tally),
            resume: Some(&kept),
        },
    );
    assert_eq!(
        count.into_inner(),
        20 - kept.len(),
        "kept points do not run"
    );
    assert_eq!(resumed.to_json_text(), whole.to_json_text());
    assert_eq!(resumed.to_csv_text(), whole.to_csv_text());
    assert!(whole.manifest.incomplete.is_none());

    // A deadline already past: no point starts, and the table says so.
    let late = RunSettings {
        deadline: Some(std::time::Instant::now()),
        ..settings
    };
    let t = sweep(&s, &grid, &late, None, &nothing());
    assert!(t.rows.is_empty());
    let inc = t.manifest.incomplete.expect("marked incomplete");
    assert_eq!((inc.ran, inc.of), (0, 20));
}

/// A corner puts every toleranced input at its extreme: a part field at
/// nominal·(1 ± tolerance), the LED forward-voltage factor at 1 ± its
/// tolerance, the supply at the ends of its declared range (the definition
/// of a worst-case corner; common practice).
#[test]
fn corner_extremes_are_the_tolerance_limits() {
    let s = toleranced_lamp();
    let params = sim_core::study::spread::params(&s).unwrap();
    let mut kinds = 0;
    for p in &params {
        let (lo, hi) = (p.extreme(false), p.extreme(true));
        match &p.kind {
            ParamKind::Field { path, nominal } => {
                let tol = if path == "inductor.inductance_h" {
                    0.20
                } else {
                    0.05
                };
                assert_relative_eq!(lo, nominal * (1.0 - tol), max_relative = 1e-12);
                assert_relative_eq!(hi, nominal * (1.0 + tol), max_relative = 1e-12);
                kinds |= 1;
            }
            ParamKind::LedVoltage { .. } => {
                assert_relative_eq!(lo, 0.97, max_relative = 1e-12);
                assert_relative_eq!(hi, 1.03, max_relative = 1e-12);
                kinds |= 2;
            }
            ParamKind::Supply { .. } => {
                assert_relative_eq!(lo, 10.5);
                assert_relative_eq!(hi, 14.0);
                kinds |= 4;
            }
        }
    }
    assert_eq!(kinds, 7, "every kind of input is probed");
}
