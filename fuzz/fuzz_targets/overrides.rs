//! Fuzz target: `--set` overrides and the full run assessment.
//!
//! The input is `PATH=VALUE` lines (the overrides), a blank line, then a
//! scenario's text. The loader with overrides, the every-problem listing
//! and the resource estimate must never panic; whatever loads and fits
//! the default budget is assessed in full (the bias/temperature loop,
//! the checks, the alternatives) with short settings, and its figures
//! must be finite.
#![no_main]

use libfuzzer_sys::fuzz_target;
use sim_core::run::assess::{assess, AssessOptions};

fuzz_target!(|data: &[u8]| {
    let Ok(text) = std::str::from_utf8(data) else {
        return;
    };
    let (head, body) = text.split_once("\n\n").unwrap_or(("", text));
    let overrides: Vec<(String, String)> = head
        .lines()
        .filter_map(|l| l.split_once('='))
        .map(|(p, v)| (p.trim().to_string(), v.trim().to_string()))
        .collect();
    let loaded = sim_core::Scenario::from_json_str_with_overrides(body, &overrides);
    let problems = sim_core::Scenario::problems_in(body, &overrides);
    // The listing agrees with the loader on whether there is a problem.
    assert_eq!(loaded.is_ok(), problems.is_empty(), "{problems:?}");
    let Ok(mut s) = loaded else {
        return;
    };
    let estimate = sim_core::study::budget::run_estimate(&s, true);
    if estimate
        .check(&sim_core::study::budget::Budget::default(), ["m", "o", "p"])
        .is_err()
    {
        return;
    }
    // Keep each execution short: a few thousand cycles at most.
    let sim = &mut s.simulation;
    sim.max_cycles = sim.max_cycles.min(2_000);
    sim.max_time_s = sim.max_time_s.min(1e-2);
    sim.record_cycles = sim.record_cycles.min(4);
    sim.samples_per_interval = sim.samples_per_interval.min(8);
    sim.record_startup = false;
    let opts = AssessOptions {
        run: sim_core::RunOptions::default(),
        alternatives: true,
    };
    if let Ok(a) = assess(&s, &opts) {
        assert!(a.result.metrics.led_current_avg_a.is_finite());
        assert!(a.result.metrics.efficiency.is_finite());
    }
});
