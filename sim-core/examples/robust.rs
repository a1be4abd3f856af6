//! Development aid: run odd corners and print the headline figures.
use sim_core::scenario::*;
use sim_core::simulate::{simulate, RunOptions};
fn main() {
    let base = template();
    let mut cases: Vec<(&str, Scenario)> = vec![];
    let mut s = base.clone();
    s.output_capacitor = Some(Capacitor {
        capacitance_f: 100e-6,
        esr_ohm: 0.02,
    });
    cases.push(("big cout", s));
    let mut s = base.clone();
    s.output_capacitor = Some(Capacitor {
        capacitance_f: 4.7e-6,
        esr_ohm: 0.0,
    });
    s.controller = ControllerSpec::Hysteretic {
        upper_current_a: 0.8,
        lower_current_a: 0.5,
        turn_off_delay_s: 50e-9,
        turn_on_delay_s: 50e-9,
    };
    cases.push(("hyst cout", s));
    let mut s = base.clone();
    s.controller = ControllerSpec::FixedDuty {
        frequency_hz: 200e3,
        duty: 0.75,
    };
    cases.push(("fixed duty led", s));
    let mut s = base.clone();
    s.inductor.inductance_h = 4.7e-6;
    s.output_capacitor = Some(Capacitor {
        capacitance_f: 1e-6,
        esr_ohm: 0.01,
    });
    cases.push(("dcm cout", s));
    let mut s = base.clone();
    s.supply.voltage_v = 320.0;
    s.load = Load::LedExponential {
        count: 80,
        saturation_current_a: 1e-18,
        emission_coefficient: 2.2,
        series_resistance_ohm: 0.35,
        junction_temperature_c: 70.0,
    };
    s.controller = ControllerSpec::ConstantOffTime {
        peak_current_a: 0.15,
        off_time_s: 5e-6,
        delay_s: 100e-9,
        min_on_time_s: 200e-9,
    };
    s.inductor.inductance_h = 2.2e-3;
    cases.push(("mains-ish", s));
    let mut s = base.clone();
    s.simulation.record_startup = true;
    s.diode = Diode::Shockley {
        saturation_current_a: 1e-6,
        emission_coefficient: 1.1,
        series_resistance_ohm: 0.05,
        temperature_c: 50.0,
    };
    cases.push(("startup shockley", s));
    let mut s = base.clone();
    s.inductor.inductance_h = 4.7e-6;
    cases.push(("dcm no cout", s));
    for (name, s) in cases {
        let t = std::time::Instant::now();
        match simulate(&s, &RunOptions::default()) {
            Ok(r) => {
                let m = &r.metrics;
                println!("{name:18} {:7.1} ms  I={:.4} A rip={:.4} A f={:.1} kHz D={:.3} eff={:.4} mode={:?} bal={:.1e} cyc={} fit={:?} startup={:?} warn={}",
                    t.elapsed().as_secs_f64()*1e3, m.led_current_avg_a, m.led_current_ripple_pp_a, m.switching_frequency_hz/1e3, m.duty, m.efficiency, m.conduction_mode, m.energy_balance_residual, r.steady.cycles_to_settle, r.fit.led_max_error_v.map(|v| (v*1e3*1000.0).round()/1000.0), r.startup.as_ref().map(|w| w.len()), r.warnings.len());
            }
            Err(e) => println!("{name:18} ERROR {e}"),
        }
    }
}
