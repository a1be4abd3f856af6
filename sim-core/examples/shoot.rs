//! Development aid: shooting against cycling on the bundled scenarios.
use sim_core::scenario::Scenario;
use sim_core::scenario::SteadyMethod;
use sim_core::{run::drive::simulate, run::RunOptions};

fn main() {
    for path in std::env::args().skip(1) {
        let text = std::fs::read_to_string(&path).unwrap();
        let s = Scenario::from_json_str(&text).unwrap();
        for method in [SteadyMethod::Shooting, SteadyMethod::Cycling] {
            let mut s = s.clone();
            s.simulation.steady_state_method = method;
            let t = std::time::Instant::now();
            match simulate(&s, &RunOptions::default()) {
                Ok(r) => println!(
                    "{path} {method:?}: {:.3} ms cycles {} newton {} res {:.2e} mult {:.4} note {:?} x {:?} iavg {:.9}",
                    t.elapsed().as_secs_f64() * 1e3,
                    r.steady.cycles_to_settle,
                    r.steady.newton_iterations,
                    r.steady.last_change,
                    r.steady.contraction,
                    r.steady.note,
                    r.steady.state_at_turn_on,
                    r.metrics.led_current_avg_a
                ),
                Err(e) => println!("{path} {method:?}: error {e}"),
            }
        }
    }
}
