//! Development aid: a long unrecorded run of one design, for a profiler.
use sim_core::engine::ExactEngine;
use sim_core::scenario::{template, Capacitor};

fn main() {
    let which = std::env::args().nth(1).unwrap_or_default();
    let mut s = template();
    if which == "cout" {
        s.output_capacitor = Some(Capacitor {
            capacitance_f: 2.2e-6,
            esr_ohm: 0.01,
        });
    }
    let mut e = ExactEngine::new(&s);
    let n = 2_000_000;
    let t = std::time::Instant::now();
    for _ in 0..n {
        e.run_cycle(None, None).unwrap();
    }
    println!(
        "{which}: {:.1} ns/cycle",
        t.elapsed().as_secs_f64() * 1e9 / n as f64
    );
}
