//! Development aid: the cost of validating a scenario and of applying a
//! study point's value to one, on the bundled scenarios and the starter
//! design (`cargo run --release -p sim-core --example validate_time`).
//! Prints microseconds per call; not a test (timings vary by machine).
use sim_core::scenario::{template, Scenario};
use sim_core::study::{scenario_json, scenario_with};
use std::time::Instant;

const FILES: [(&str, &str); 6] = [
    (
        "cabin-light",
        include_str!("../../scenarios/cabin-light-9-32v.json"),
    ),
    (
        "cove-light",
        include_str!("../../scenarios/cove-light-fixed-duty.json"),
    ),
    (
        "grow-light",
        include_str!("../../scenarios/grow-light-48v.json"),
    ),
    (
        "headlamp",
        include_str!("../../scenarios/headlamp-4cell.json"),
    ),
    (
        "tube-325v",
        include_str!("../../scenarios/tube-325v-bus.json"),
    ),
    (
        "undersized",
        include_str!("../../scenarios/undersized-inductor-dcm.json"),
    ),
];

/// Mean time per call of `f`, µs, over enough calls to fill ~0.2 s.
fn per_call_us(mut f: impl FnMut()) -> f64 {
    let mut n = 16usize;
    loop {
        let t = Instant::now();
        for _ in 0..n {
            f();
        }
        let dt = t.elapsed().as_secs_f64();
        if dt > 0.2 {
            return dt / n as f64 * 1e6;
        }
        n *= 4;
    }
}

fn main() {
    let mut all: Vec<(String, Scenario)> = vec![("template".into(), template())];
    for (name, text) in FILES {
        match Scenario::from_json_str(text) {
            Ok(s) => all.push((name.into(), s)),
            Err(e) => eprintln!("{name}: {e}"),
        }
    }
    println!(
        "{:<12} {:>12} {:>15} {:>16} {:>17}",
        "scenario", "validate µs", "bisection µs", "JSON point µs", "typed point µs"
    );
    for (name, s) in &all {
        let v = per_call_us(|| {
            std::hint::black_box(std::hint::black_box(s).validate()).ok();
        });
        // The 200-step bisection validation used to find the held-on
        // current with (now one evaluation and, only for a failing
        // design, a short bracketed solve), timed for comparison.
        let r = s.supply.source_resistance_ohm + s.switch.on_resistance_ohm + s.inductor.dcr_ohm;
        let b = per_call_us(|| {
            let (mut lo, mut hi) = (0.0_f64, 1e6_f64);
            for _ in 0..200 {
                let mid = 0.5 * (lo + hi);
                if s.load_voltage_v(mid) + r * mid < s.supply.voltage_v {
                    lo = mid;
                } else {
                    hi = mid;
                }
            }
            std::hint::black_box(lo);
        });
        let base = scenario_json(s);
        let sets = vec![(
            "inductor.inductance_h".to_string(),
            s.inductor.inductance_h * 1.01,
        )];
        let j = per_call_us(|| {
            std::hint::black_box(scenario_with(&base, &sets)).ok();
        });
        let t = per_call_us(|| {
            std::hint::black_box(s.with_values(&sets)).ok();
        });
        println!("{name:<12} {v:>12.2} {b:>15.2} {j:>16.2} {t:>17.2}");
    }
}
