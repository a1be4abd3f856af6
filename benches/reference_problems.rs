//! Reference-problem benchmark (plain main, `harness = false`): the
//! problems of `chopwave_suite::reference_problems` (ideal circuits with
//! closed-form answers), each run repeatedly to steady state; time per
//! run, best of five batches. Every run's figures are checked against the
//! problem's answers first, so a fast wrong engine does not pass: any
//! mismatch is printed and the benchmark exits with status 1.
//!
//! `cargo bench --bench reference_problems`; `REFERENCE_BENCH_RUNS=N`
//! sets the runs per batch (default 50).

use chopwave_suite::reference_problems;
use std::hint::black_box;
use std::time::Instant;

fn main() {
    // `cargo bench` passes `--bench`; nothing to parse.
    let runs: u32 = std::env::var("REFERENCE_BENCH_RUNS")
        .ok()
        .and_then(|v| v.parse().ok())
        .unwrap_or(50)
        .max(1);
    let mut failed = false;
    for p in reference_problems::all() {
        let wrong = match p.run() {
            Ok(m) => p.mismatches(&m),
            Err(e) => vec![e],
        };
        if !wrong.is_empty() {
            for w in &wrong {
                eprintln!("MISMATCH {w}");
            }
            failed = true;
            continue;
        }
        let mut best = f64::INFINITY;
        for _ in 0..5 {
            let t = Instant::now();
            for _ in 0..runs {
                black_box(p.run().expect("ran once already"));
            }
            best = best.min(t.elapsed().as_secs_f64() / f64::from(runs));
        }
        println!(
            "{}: {:.1} µs per run to steady state ({} answers met)",
            p.name,
            best * 1e6,
            p.answers.len()
        );
    }
    if failed {
        std::process::exit(1);
    }
}
