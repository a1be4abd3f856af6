//! Development aid: a long unrecorded run of one design, for a profiler.
use sim_core::exact::engine::ExactEngine;
use sim_core::scenario::{template, Capacitor};

fn main() {
    let which = std::env::args().nth(1).unwrap_or_default();
    let mut s = template();
    if which == "hyst" {
        s.controller = sim_core::scenario::ControllerSpec::Hysteretic {
            upper_current_a: 0.8,
            lower_current_a: 0.6,
            turn_off_delay_s: 60e-9,
            turn_on_delay_s: 60e-9,
        };
    }
    if which == "cout" || which == "hyst" {
        s.output_capacitor = Some(Capacitor {
            capacitance_f: 2.2e-6,
            esr_ohm: 0.01,
        });
    }
    let mut e = ExactEngine::new(&s);
    let n = 2_000_000;
    for _ in 0..1000 {
        e.run_cycle(None, None).unwrap();
    }
    let w0 = e.work;
    let t = std::time::Instant::now();
    for _ in 0..n {
        e.run_cycle(None, None).unwrap();
    }
    let w = e.work;
    println!(
        "{which}: {:.1} ns/cycle, {:.2} exponentials and {:.2} timer updates per cycle",
        t.elapsed().as_secs_f64() * 1e9 / n as f64,
        (w.exponentials - w0.exponentials) as f64 / n as f64,
        (w.timer_updates - w0.timer_updates) as f64 / n as f64
    );
}
