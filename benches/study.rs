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
//! `cargo bench --bench study`; `STUDY_BENCH_SAMPLES=N` changes the spread
//! size, `STUDY_BENCH_POINTS=N` the sweep's.

use rayon::prelude::*;
use sim_core::scenario::SteadyMethod;
use sim_core::study::run::{Hooks, RunSettings};
use sim_core::study::spread::{spread, SpreadSettings};
use sim_core::study::sweep::sweep;
use sim_core::study::vary::{Grid, Vary};
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
