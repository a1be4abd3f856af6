//! Quick look at one run and the per-cycle cost (development aid).
use sim_core::engine::ExactEngine;
use sim_core::scenario::template;
use sim_core::simulate::{simulate, RunOptions};
fn main() {
    let mut s = template();
    s.inductor.inductance_h = 68e-6;
    let r = simulate(&s, &RunOptions::default()).unwrap();
    println!("{:#?}", r.metrics);
    println!("{:#?} {:#?} {:#?}", r.steady, r.fit, r.stats);
    {
        let mut e = ExactEngine::new(&s);
        for _ in 0..50 {
            e.run_cycle(None, None).unwrap();
        }
        let c = e.circuit.led;
        let d = e.circuit.led_exact.unwrap();
        println!(
            "segments {} v0 {:?} r {:?} up {:?}",
            c.segments,
            &c.v0_v[..c.segments],
            &c.r_ohm[..c.segments],
            &c.upper_a[..c.segments]
        );
        for k in 0..=20 {
            let i = 0.5 + 0.02 * k as f64;
            println!("  i {i:.3} err {:+.3e}", c.voltage_v(i) - d.voltage_v(i));
        }
    }
    let mut variants = vec![("template", s.clone())];
    let mut co = s.clone();
    co.output_capacitor = Some(sim_core::scenario::Capacitor {
        capacitance_f: 2.2e-6,
        esr_ohm: 0.01,
    });
    variants.push(("with cout", co));
    for (name, s) in variants {
        let mut e = ExactEngine::new(&s);
        for _ in 0..100 {
            e.run_cycle(None, None).unwrap();
        }
        let (x0, i0) = (e.work.exponentials, e.intervals);
        let t = std::time::Instant::now();
        let n = 5000;
        for _ in 0..n {
            e.run_cycle(None, None).unwrap();
        }
        let dt = t.elapsed().as_secs_f64() / n as f64;
        println!(
            "{name}: {:.2} us/cycle, {:.1} exps/cycle, {:.1} intervals/cycle",
            dt * 1e6,
            (e.work.exponentials - x0) as f64 / n as f64,
            (e.intervals - i0) as f64 / n as f64
        );
    }
}
#[allow(dead_code)]
fn debug_fit() {}
