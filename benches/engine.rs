//! Time per simulated switching cycle of the exact and the reference
//! engine on the same scenarios, and heap allocations per cycle.
//!
//! Run with `cargo bench --bench engine`. Each scenario is first run to
//! steady state; the benchmark then times further unrecorded cycles. A
//! counting global allocator reports allocations per cycle alongside, and
//! a one-run ratio (reference time / exact time, same binary, same
//! scenario, back to back) is printed for each scenario.

use chopwave_suite::{allocations, CountingAlloc};
use criterion::{criterion_group, criterion_main, Criterion};
use sim_core::engine::ExactEngine;
use sim_core::reference::ReferenceEngine;
use sim_core::simulate::CycleEngine;
use std::hint::black_box;
use std::time::{Duration, Instant};

#[global_allocator]
static GLOBAL: CountingAlloc = CountingAlloc;

fn settled<E: CycleEngine>(mut e: E, cycles: usize) -> E {
    for _ in 0..cycles {
        e.run_cycle(None, None).expect("cycle");
    }
    e
}

fn allocations_per_cycle<E: CycleEngine>(e: &mut E, cycles: u64) -> f64 {
    let before = allocations();
    for _ in 0..cycles {
        e.run_cycle(None, None).expect("cycle");
    }
    (allocations() - before) as f64 / cycles as f64
}

fn per_cycle(c: &mut Criterion) {
    let mut group = c.benchmark_group("cycle");
    group
        .sample_size(20)
        .warm_up_time(Duration::from_millis(500))
        .measurement_time(Duration::from_secs(2));
    for s in chopwave_suite::realistic_set() {
        let mut exact = settled(ExactEngine::new(&s), 200);
        println!(
            "{}: exact engine {:.2} heap allocations per cycle",
            s.name,
            allocations_per_cycle(&mut exact, 1000)
        );
        let mut reference = settled(ReferenceEngine::new(&s), 60);
        println!(
            "{}: reference engine {:.1} heap allocations per cycle",
            s.name,
            allocations_per_cycle(&mut reference, 20)
        );
        // One-run ratio, back to back, so machine noise cancels.
        let t = Instant::now();
        for _ in 0..2000 {
            exact.run_cycle(None, None).expect("cycle");
        }
        let t_exact = t.elapsed().as_secs_f64() / 2000.0;
        let t = Instant::now();
        for _ in 0..100 {
            reference.run_cycle(None, None).expect("cycle");
        }
        let t_ref = t.elapsed().as_secs_f64() / 100.0;
        println!(
            "{}: exact {:.2} µs/cycle ({:.0} cycles/s), reference {:.1} µs/cycle, ratio {:.0}x",
            s.name,
            t_exact * 1e6,
            1.0 / t_exact,
            t_ref * 1e6,
            t_ref / t_exact
        );
        group.bench_function(format!("exact/{}", s.name), |b| {
            b.iter(|| exact.run_cycle(None, None).expect("cycle"));
        });
        group.bench_function(format!("reference/{}", s.name), |b| {
            b.iter(|| reference.run_cycle(None, None).expect("cycle"));
        });
        black_box(&exact);
        black_box(&reference);
    }
    group.finish();
}

criterion_group!(benches, per_cycle);
criterion_main!(benches);
