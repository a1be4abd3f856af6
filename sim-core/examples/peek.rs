//! Development aid: per-cycle cost of the exact engine on a few designs.
use sim_core::exact::engine::ExactEngine;
use sim_core::scenario::{template, Capacitor, ControllerSpec};

fn main() {
    let s = template();
    let mut variants = vec![("template", s.clone())];
    let mut co = s.clone();
    co.output_capacitor = Some(Capacitor {
        capacitance_f: 2.2e-6,
        esr_ohm: 0.01,
    });
    variants.push(("with cout", co.clone()));
    let mut small = co.clone();
    small.output_capacitor = Some(Capacitor {
        capacitance_f: 2.2e-7,
        esr_ohm: 0.02,
    });
    variants.push(("with 220 nF", small.clone()));
    // The capacitor designs with the slope bound relaxed to its loosest
    // (voltage tolerance and tangent-point alignment only), for a ratio.
    let mut loose = co;
    loose.simulation.curve_slope_tolerance = 1.0;
    variants.push(("with cout, slope 1", loose));
    small.simulation.curve_slope_tolerance = 1.0;
    variants.push(("with 220 nF, slope 1", small));
    let mut dcm = s.clone();
    dcm.inductor.inductance_h = 6.8e-6;
    dcm.controller = ControllerSpec::ConstantOffTime {
        peak_current_a: 0.8,
        off_time_s: 3e-6,
        delay_s: 0.0,
        min_on_time_s: 0.0,
    };
    variants.push(("dcm", dcm));
    // Each design also at the earlier defaults (1 mV, at most 24
    // segments), in the same run, for a before/after ratio.
    let variants: Vec<_> = variants
        .into_iter()
        .flat_map(|(name, s)| {
            let mut before = s.clone();
            before.simulation.curve_tolerance_v = 1e-3;
            before.simulation.curve_segments = 24;
            [(name.to_string(), s), (format!("{name} @1mV/24"), before)]
        })
        .collect();
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
            "{name}: {:.2} us/cycle, {:.1} exps/cycle, {:.1} intervals/cycle, {} segments, {} refits",
            dt * 1e6,
            (e.work.exponentials - x0) as f64 / n as f64,
            (e.intervals - i0) as f64 / n as f64,
            e.circuit.led.segments,
            e.refits
        );
    }
}
