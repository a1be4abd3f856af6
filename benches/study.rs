//! Study benchmark (plain main, `harness = false`): a 200-point
//! input-voltage sweep of the bundled cabin-light scenario on one and two
//! threads — steady state by shooting (the default, points independent),
//! and by cycling cold and with warm-start chains — and a 10,000-sample
//! spread; wall times, points
//! per second, the speed-up, and the process's peak resident memory after
//! each stage (Linux `VmHWM`). Sweep times are the best of five runs,
//! spread times of three; the ceiling (the same number of independent
//! runs with no study machinery, 2 vs 1 thread) says what two threads can
//! gain on the machine at that moment.
//!
//! The per-point overhead comes first: a point's time in a one-thread
//! sweep (spread) minus the engine's own time for the same points, run
//! one after another from scenarios made beforehand
//! ([`sim_core::run::run_point`], as a study point runs); and the point
//! set-up alone, by the JSON route (`study::scenario_with`, and for a
//! spread sample the LED factor applied and validated a second time, as
//! before 2026-12-04) and by the route the studies take now
//! (`Scenario::with_values`, `spread::scenario_at`).
//!
//! `cargo bench --bench study`; `STUDY_BENCH_SAMPLES=N` changes the spread
//! size, `STUDY_BENCH_POINTS=N` the sweep's; `STUDY_BENCH_OVERHEAD_ONLY=1`
//! stops after the overhead figures.

use rayon::prelude::*;
use sim_core::run::run_point;
use sim_core::scenario::SteadyMethod;
use sim_core::study::run::{Hooks, RunSettings};
use sim_core::study::spread::{
    params, sample_inputs, scale_led_voltage, spread, Param, ParamKind, SpreadSettings,
};
use sim_core::study::sweep::sweep;
use sim_core::study::vary::{Grid, Vary};
use sim_core::study::{scenario_json, scenario_with};
use sim_core::Scenario;
use sim_core::{run::drive::simulate, run::RunOptions};
use std::time::Instant;

const SCENARIO: &str = include_str!("../scenarios/cabin-light-9-32v.json");

fn peak_rss_kib() -> Option<u64> {
    let s = std::fs::read_to_string("/proc/self/status").ok()?;
    let line = s.lines().find(|l| l.starts_with("VmHWM:"))?;
    line.split_whitespace().nth(1)?.parse().ok()
}

/// CPU time of the whole process so far (user + system), s, from
/// `/proc/self/stat` (clock ticks, taken as 100 per second).
fn cpu_s() -> f64 {
    let s = std::fs::read_to_string("/proc/self/stat").unwrap_or_default();
    let after = s.rsplit(')').next().unwrap_or("");
    let f: Vec<&str> = after.split_whitespace().collect();
    let tick = |k: usize| f.get(k).and_then(|v| v.parse::<f64>().ok()).unwrap_or(0.0);
    // Fields 14 and 15 of the file are the 12th and 13th after the name.
    (tick(11) + tick(12)) / 100.0
}

fn pool(n: usize) -> rayon::ThreadPool {
    rayon::ThreadPoolBuilder::new()
        .num_threads(n)
        .build()
        .expect("thread pool")
}

/// Best of `reps` wall times of `f`, s.
fn best_of(reps: usize, mut f: impl FnMut()) -> f64 {
    (0..reps)
        .map(|_| {
            let t0 = Instant::now();
            f();
            t0.elapsed().as_secs_f64()
        })
        .fold(f64::INFINITY, f64::min)
}

/// A spread sample by the JSON route (what `spread::scenario_at` did
/// before it took the `Scenario`): the fields written as exact text,
/// loaded and validated, the LED factor applied and validated again.
fn sample_by_json(base: &serde_json::Value, params: &[Param], x: &[f64]) -> Option<Scenario> {
    let mut sets = Vec::new();
    let mut led = None;
    for (p, &v) in params.iter().zip(x) {
        match &p.kind {
            ParamKind::Field { path, .. } => sets.push((path.clone(), v)),
            ParamKind::Supply { .. } => sets.push(("supply.voltage_v".to_string(), v)),
            ParamKind::LedVoltage { at_current_a } => led = Some((v, *at_current_a)),
        }
    }
    let mut s = scenario_with(base, &sets).ok()?;
    if let Some((f, i)) = led {
        scale_led_voltage(&mut s, f, i).ok()?;
        s.validate().ok()?;
    }
    Some(s)
}

/// The per-point overhead outside the engine, on one thread.
fn overhead(s: &Scenario, grid: &Grid) {
    let n = grid.len();
    let p1 = pool(1);
    let reps = 5;
    // Sweep points: the study, and the engine alone on the same scenarios.
    let settings = RunSettings::default();
    let study = p1.install(|| {
        best_of(reps, || {
            let t = sweep(s, grid, &settings, None, &Hooks::default());
            assert_eq!(t.failed(), 0);
        })
    });
    let json = scenario_json(s);
    let points: Vec<Scenario> = (0..n)
        .map(|k| scenario_with(&json, &grid.point(k)).expect("valid point"))
        .collect();
    let engine = best_of(reps, || {
        for p in &points {
            run_point(p, &RunOptions::default()).expect("runs");
        }
    });
    let by_json = best_of(reps, || {
        for k in 0..n {
            std::hint::black_box(scenario_with(&json, &grid.point(k)).ok());
        }
    });
    let typed = best_of(reps, || {
        for k in 0..n {
            std::hint::black_box(s.with_values(&grid.point(k)).ok());
        }
    });
    let us = |t: f64, m: usize| t / m as f64 * 1e6;
    println!(
        "sweep point, 1 thread: {:.1} us in the study, {:.1} us in the engine alone: \
         overhead {:.1} us ({:.0} % of the point); set-up alone {:.1} us by JSON, \
         {:.1} us by with_values",
        us(study, n),
        us(engine, n),
        us(study - engine, n),
        100.0 * (study - engine) / study,
        us(by_json, n),
        us(typed, n)
    );
    // Spread samples (warm from the nominal, as the spread runs them).
    let m: usize = 1000;
    let limits = s.spec.unwrap_or_default();
    let set = SpreadSettings {
        samples: m,
        seed: 1,
        run: RunSettings::default(),
    };
    let study = p1.install(|| {
        best_of(reps, || {
            let t = spread(s, &limits, &set, None, &Hooks::default()).unwrap();
            assert_eq!(t.failed(), 0);
        })
    });
    let params = params(s).unwrap();
    let nominal = run_point(s, &RunOptions::default()).expect("nominal runs");
    let warm = RunOptions {
        initial_state: Some(nominal.steady.state_at_turn_on),
        ..RunOptions::default()
    };
    let inputs: Vec<Vec<f64>> = (0..m).map(|k| sample_inputs(&params, 1, k)).collect();
    let samples: Vec<Scenario> = inputs
        .iter()
        .map(|x| sample_by_json(&json, &params, x).expect("valid sample"))
        .collect();
    // The spread's own nominal run, counted in its time: added here too.
    let engine = best_of(reps, || {
        run_point(s, &RunOptions::default()).expect("runs");
        for p in &samples {
            run_point(p, &warm).expect("runs");
        }
    });
    let by_json = best_of(reps, || {
        for x in &inputs {
            std::hint::black_box(sample_by_json(&json, &params, x));
        }
    });
    let typed = best_of(reps, || {
        for x in &inputs {
            std::hint::black_box(typed_sample(s, &json, &params, x));
        }
    });
    println!(
        "spread sample, 1 thread: {:.1} us in the study, {:.1} us in the engine alone: \
         overhead {:.1} us ({:.0} % of the sample); set-up alone {:.1} us by JSON, \
         {:.1} us as the spread sets it now",
        us(study, m),
        us(engine, m),
        us(study - engine, m),
        100.0 * (study - engine) / study,
        us(by_json, m),
        us(typed, m)
    );
}

fn main() {
    // `cargo bench` passes `--bench`; nothing to parse.
    let s = Scenario::from_json_str(SCENARIO).expect("bundled scenario");
    let points: usize = std::env::var("STUDY_BENCH_POINTS")
        .ok()
        .and_then(|v| v.parse().ok())
        .unwrap_or(200);
    let grid = Grid::new(vec![Vary::parse(
        &format!("supply.voltage_v=9:32:{points}"),
        &s,
    )
    .unwrap()])
    .unwrap();
    let n = grid.len();
    println!("study benchmark: {} ({n}-point supply sweep)", s.name);
    println!("peak RSS at start: {:?} KiB", peak_rss_kib());
    overhead(&s, &grid);
    if std::env::var_os("STUDY_BENCH_OVERHEAD_ONLY").is_some() {
        return;
    }
    let mut times = std::collections::BTreeMap::new();
    // Shooting (the default: every point on its own from its averaged
    // operating point), and cycling cold and with warm-start chains.
    let modes = [
        ("shooting", SteadyMethod::Shooting, true),
        ("cycling, cold", SteadyMethod::Cycling, false),
        ("cycling, warm chains", SteadyMethod::Cycling, true),
    ];
    for (mode, method, warm) in modes {
        let mut s = s.clone();
        s.simulation.steady_state_method = method;
        for threads in [1, 2] {
            let settings = RunSettings {
                warm_start: warm,
                ..RunSettings::default()
            };
            let p = pool(threads);
            // Best of five: the machine may be shared.
            let mut dt = f64::INFINITY;
            let mut t = None;
            let c0 = cpu_s();
            for _ in 0..5 {
                let t0 = Instant::now();
                let r = p.install(|| sweep(&s, &grid, &settings, None, &Hooks::default()));
                dt = dt.min(t0.elapsed().as_secs_f64());
                t = Some(r);
            }
            let t = t.expect("ran");
            let cpu_per_point_ms = (cpu_s() - c0) / 5.0 / n as f64 * 1e3;
            assert_eq!(t.failed(), 0);
            let cycles: u64 = t.rows.iter().filter_map(|r| r.cycles_to_settle()).sum();
            println!(
                "sweep, {mode}, {threads} thread(s): {dt:8.3} s, {:8.1} points/s, \
                 CPU {cpu_per_point_ms:.3} ms per point, {:.0} cycles to settle per point, \
                 peak RSS {:?} KiB",
                n as f64 / dt,
                cycles as f64 / n as f64,
                peak_rss_kib()
            );
            times.insert((mode, threads), dt);
        }
    }
    for (mode, _, _) in modes {
        println!(
            "speed-up 2 vs 1 thread (sweep, {mode}): {:.2}x",
            times[&(mode, 1)] / times[&(mode, 2)]
        );
    }
    println!(
        "shooting vs cycling with warm chains (2 threads): {:.2}x faster",
        times[&("cycling, warm chains", 2)] / times[&("shooting", 2)]
    );
    // The ceiling: the same number of independent cold runs of the
    // nominal design with no study machinery at all (no scenario set-up,
    // no rows), on one and two threads. What two threads can gain on this
    // machine at this moment; the study ratios above are to be read
    // against it.
    let mut ceiling = [f64::INFINITY; 2];
    for (k, threads) in [1, 2].into_iter().enumerate() {
        let p = pool(threads);
        for _ in 0..5 {
            let t0 = Instant::now();
            let ok = p.install(|| {
                (0..n)
                    .into_par_iter()
                    .filter(|_| simulate(&s, &RunOptions::default()).is_ok())
                    .count()
            });
            ceiling[k] = ceiling[k].min(t0.elapsed().as_secs_f64());
            assert_eq!(ok, n);
        }
    }
    println!(
        "independent runs, no study machinery: {:.3} s on 1 thread, {:.3} s on 2: \
         ceiling 2 vs 1 thread {:.2}x",
        ceiling[0],
        ceiling[1],
        ceiling[0] / ceiling[1]
    );
    let samples: usize = std::env::var("STUDY_BENCH_SAMPLES")
        .ok()
        .and_then(|v| v.parse().ok())
        .unwrap_or(10_000);
    let limits = s.spec.unwrap_or_default();
    let set = SpreadSettings {
        samples,
        seed: 1,
        run: RunSettings::default(),
    };
    // A longer parallel measurement than the sweep: 2000 samples on one
    // and on two threads.
    let small = SpreadSettings {
        samples: 2000.min(samples),
        ..set
    };
    let mut wall = [f64::INFINITY; 2];
    for (k, threads) in [1, 2].into_iter().enumerate() {
        let p = pool(threads);
        // Best of three: the machine may be shared.
        let mut t = None;
        for _ in 0..3 {
            let t0 = Instant::now();
            t = Some(p.install(|| spread(&s, &limits, &small, None, &Hooks::default()).unwrap()));
            wall[k] = wall[k].min(t0.elapsed().as_secs_f64());
        }
        let t = t.expect("ran");
        println!(
            "spread: {} samples on {threads} thread(s): {:.2} s, {:.1} samples/s",
            small.samples,
            wall[k],
            small.samples as f64 / wall[k]
        );
        assert_eq!(t.failed(), 0);
    }
    println!("speed-up 2 vs 1 thread (spread): {:.2}x", wall[0] / wall[1]);
    let p = pool(2);
    let t0 = Instant::now();
    let t = p.install(|| spread(&s, &limits, &set, None, &Hooks::default()).unwrap());
    let dt = t0.elapsed().as_secs_f64();
    println!(
        "spread: {samples} samples on 2 threads: {dt:.2} s, {:.1} samples/s, {} failed, \
         peak RSS {:?} KiB",
        samples as f64 / dt,
        t.failed(),
        peak_rss_kib()
    );
}

/// A spread sample as the spread sets it now.
fn typed_sample(
    s: &Scenario,
    _json: &serde_json::Value,
    params: &[Param],
    x: &[f64],
) -> Option<Scenario> {
    sim_core::study::spread::scenario_at(s, params, x).ok()
}
