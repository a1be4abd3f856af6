//! Fuzz target: arbitrary bytes into the scenario loader; whatever loads is
//! simulated briefly. Nothing may panic, hang or overflow.
#![no_main]

use libfuzzer_sys::fuzz_target;

fuzz_target!(|data: &[u8]| {
    let Ok(text) = std::str::from_utf8(data) else {
        return;
    };
    if let Ok(mut s) = sim_core::Scenario::from_json_str(text) {
        // Keep each execution short: a few thousand cycles at most.
        let sim = &mut s.simulation;
        sim.max_cycles = sim.max_cycles.min(2_000);
        sim.max_time_s = sim.max_time_s.min(1e-2);
        sim.record_cycles = sim.record_cycles.min(4);
        sim.samples_per_interval = sim.samples_per_interval.min(8);
        sim.record_startup = false;
        if let Ok(r) = sim_core::simulate(&s, &sim_core::RunOptions::default()) {
            assert!(r.metrics.led_current_avg_a.is_finite());
            assert!(r.metrics.efficiency.is_finite());
        }
    }
});
