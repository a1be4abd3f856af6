//! Value checks: every field's range and the relations between fields,
//! all problems reported at once.

use super::checker::{fmt_num, Checker};
use super::{ControllerSpec, Diode, Load, Scenario};
use crate::error::ScenarioError;

impl Scenario {
    /// Checks every value and every relation between values; returns all
    /// problems found, each with its field path, value and reason.
    pub fn validate(&self) -> Result<(), ScenarioError> {
        let mut c = Checker::default();
        let s = self;
        if s.name.trim().is_empty() {
            c.push("name", "\"\"", "must not be empty");
        }
        c.range("supply.voltage_v", s.supply.voltage_v, 1e-3, 2000.0, "V");
        c.range(
            "supply.source_resistance_ohm",
            s.supply.source_resistance_ohm,
            0.0,
            1e4,
            "Ω",
        );
        if let Some(r) = s.supply.input_range_v {
            c.range("supply.input_range_v.min_v", r.min_v, 1e-3, 2000.0, "V");
            c.range("supply.input_range_v.max_v", r.max_v, 1e-3, 2000.0, "V");
            if r.min_v > r.max_v {
                c.push(
                    "supply.input_range_v",
                    &format!("{} .. {}", r.min_v, r.max_v),
                    "min_v is above max_v",
                );
            }
        }
        if let Some(cap) = s.input_capacitor {
            c.capacitor("input_capacitor", cap);
        }
        c.range(
            "switch.on_resistance_ohm",
            s.switch.on_resistance_ohm,
            0.0,
            1e3,
            "Ω",
        );
        match s.diode {
            Diode::FixedDrop {
                forward_voltage_v,
                series_resistance_ohm,
            } => {
                c.range("diode.forward_voltage_v", forward_voltage_v, 0.0, 50.0, "V");
                c.range(
                    "diode.series_resistance_ohm",
                    series_resistance_ohm,
                    0.0,
                    1e3,
                    "Ω",
                );
            }
            Diode::Shockley {
                saturation_current_a,
                emission_coefficient,
                series_resistance_ohm,
                temperature_c,
                ..
            } => {
                c.range(
                    "diode.saturation_current_a",
                    saturation_current_a,
                    1e-30,
                    1.0,
                    "A",
                );
                c.range(
                    "diode.emission_coefficient",
                    emission_coefficient,
                    0.5,
                    10.0,
                    "",
                );
                c.range(
                    "diode.series_resistance_ohm",
                    series_resistance_ohm,
                    0.0,
                    1e3,
                    "Ω",
                );
                c.range("diode.temperature_c", temperature_c, -60.0, 250.0, "°C");
                if let Some(inputs) = s.diode.junction_inputs() {
                    c.junction(
                        "diode",
                        &inputs,
                        (saturation_current_a, emission_coefficient),
                        ("temperature_c", temperature_c),
                        s.diode.junction_law(),
                    );
                }
            }
        }
        c.range(
            "inductor.inductance_h",
            s.inductor.inductance_h,
            1e-9,
            10.0,
            "H",
        );
        c.range("inductor.dcr_ohm", s.inductor.dcr_ohm, 0.0, 1e3, "Ω");
        if let Some(isat) = s.inductor.saturation_current_a {
            c.range("inductor.saturation_current_a", isat, 1e-6, 1e4, "A");
        }
        if let Some(cap) = s.output_capacitor {
            c.capacitor("output_capacitor", cap);
        }
        if let Some(r) = s.sense_resistor {
            c.range(
                "sense_resistor.resistance_ohm",
                r.resistance_ohm,
                0.0,
                1e3,
                "Ω",
            );
        }
        match s.load {
            Load::LedExponential {
                count,
                saturation_current_a,
                emission_coefficient,
                series_resistance_ohm,
                junction_temperature_c,
                ..
            } => {
                c.count("load.count", count);
                c.range(
                    "load.saturation_current_a",
                    saturation_current_a,
                    1e-45,
                    1e-3,
                    "A",
                );
                c.range(
                    "load.emission_coefficient",
                    emission_coefficient,
                    0.5,
                    20.0,
                    "",
                );
                c.range(
                    "load.series_resistance_ohm",
                    series_resistance_ohm,
                    0.0,
                    1e3,
                    "Ω",
                );
                c.range(
                    "load.junction_temperature_c",
                    junction_temperature_c,
                    -60.0,
                    250.0,
                    "°C",
                );
                if let Some(inputs) = s.load.junction_inputs() {
                    c.junction(
                        "load",
                        &inputs,
                        (saturation_current_a, emission_coefficient),
                        ("junction_temperature_c", junction_temperature_c),
                        s.load.junction_law(),
                    );
                    c.led_part_tempco(s, &inputs, saturation_current_a, emission_coefficient);
                }
            }
            Load::LedKnee {
                count,
                knee_voltage_v,
                dynamic_resistance_ohm,
            } => {
                c.count("load.count", count);
                c.range("load.knee_voltage_v", knee_voltage_v, 0.0, 1000.0, "V");
                c.range(
                    "load.dynamic_resistance_ohm",
                    dynamic_resistance_ohm,
                    0.0,
                    1e4,
                    "Ω",
                );
                if let Some(cap) = s.output_capacitor {
                    if dynamic_resistance_ohm == 0.0 && cap.esr_ohm == 0.0 {
                        c.push(
                            "output_capacitor.esr_ohm",
                            "0",
                            "an output capacitor with zero ESR across a zero-resistance LED string \
                             would carry unbounded current; give the capacitor an ESR or the LEDs \
                             a dynamic resistance",
                        );
                    }
                }
            }
            Load::Resistor { resistance_ohm } => {
                c.range("load.resistance_ohm", resistance_ohm, 1e-3, 1e7, "Ω");
            }
        }
        match s.controller {
            ControllerSpec::ConstantOffTime {
                peak_current_a,
                off_time_s,
                delay_s,
                min_on_time_s,
            } => {
                c.range("controller.peak_current_a", peak_current_a, 1e-6, 1e3, "A");
                c.range("controller.off_time_s", off_time_s, 1e-9, 1.0, "s");
                c.range("controller.delay_s", delay_s, 0.0, 1e-3, "s");
                c.range("controller.min_on_time_s", min_on_time_s, 0.0, 1e-3, "s");
            }
            ControllerSpec::Hysteretic {
                upper_current_a,
                lower_current_a,
                turn_off_delay_s,
                turn_on_delay_s,
            } => {
                c.range(
                    "controller.upper_current_a",
                    upper_current_a,
                    1e-6,
                    1e3,
                    "A",
                );
                c.range(
                    "controller.lower_current_a",
                    lower_current_a,
                    1e-7,
                    1e3,
                    "A",
                );
                if lower_current_a >= upper_current_a {
                    c.push(
                        "controller.lower_current_a",
                        &fmt_num(lower_current_a),
                        &format!(
                            "the lower threshold must be below the upper threshold ({} A)",
                            fmt_num(upper_current_a)
                        ),
                    );
                }
                c.range(
                    "controller.turn_off_delay_s",
                    turn_off_delay_s,
                    0.0,
                    1e-3,
                    "s",
                );
                c.range(
                    "controller.turn_on_delay_s",
                    turn_on_delay_s,
                    0.0,
                    1e-3,
                    "s",
                );
            }
            ControllerSpec::FixedDuty { frequency_hz, duty } => {
                c.range("controller.frequency_hz", frequency_hz, 1.0, 1e8, "Hz");
                if !(duty > 0.0 && duty < 1.0) {
                    c.push(
                        "controller.duty",
                        &fmt_num(duty),
                        "duty cycle must be strictly between 0 and 1",
                    );
                }
            }
        }
        let sim = &s.simulation;
        c.range(
            "simulation.steady_state_tolerance",
            sim.steady_state_tolerance,
            1e-14,
            1e-2,
            "",
        );
        c.int_range("simulation.max_cycles", sim.max_cycles, 1, 100_000_000);
        c.range("simulation.max_time_s", sim.max_time_s, 1e-9, 1e4, "s");
        c.int_range(
            "simulation.record_cycles",
            u64::from(sim.record_cycles),
            1,
            10_000,
        );
        c.int_range(
            "simulation.curve_segments",
            u64::from(sim.curve_segments),
            1,
            crate::devices::MAX_SEGMENTS as u64,
        );
        c.range(
            "simulation.curve_tolerance_v",
            sim.curve_tolerance_v,
            1e-6,
            1.0,
            "V",
        );
        c.range(
            "simulation.curve_slope_tolerance",
            sim.curve_slope_tolerance,
            1e-4,
            1.0,
            "",
        );
        c.int_range(
            "simulation.samples_per_interval",
            u64::from(sim.samples_per_interval),
            1,
            10_000,
        );
        c.range(
            "simulation.max_interval_s",
            sim.max_interval_s,
            1e-9,
            100.0,
            "s",
        );

        s.parts.validate_into(&mut c);

        // The study objects (tolerances, spec).
        c.problems.extend(super::tolerances::check(s));
        // Relations that need the individual values to be sound.
        if c.problems.is_empty() {
            s.check_operating_point(&mut c);
        }
        if c.problems.is_empty() {
            Ok(())
        } else {
            Err(ScenarioError::Invalid(c.problems))
        }
    }

    fn check_operating_point(&self, c: &mut Checker) {
        let vs = self.supply.voltage_v;
        // Without a regulated current (fixed duty), "lit" means 1 mA.
        let (lit_current, what) = match self.target_current_a() {
            Some(t) => (0.01 * t, "1 % of the target current"),
            None => (1e-3, "1 mA"),
        };
        let lit = self.load_voltage_v(lit_current);
        if !matches!(self.load, Load::Resistor { .. }) && vs <= lit {
            c.push(
                "supply.voltage_v",
                &fmt_num(vs),
                &format!(
                    "the supply is below the LED string's forward voltage ({} V at {what}): \
                     the LEDs never light, and a buck converter cannot raise the voltage",
                    fmt_num(lit)
                ),
            );
            return;
        }
        let Some(_) = self.target_current_a() else {
            return;
        };
        // With the switch held on, the current settles where the supply
        // equals the load voltage plus the drop across the series path.
        let r_series = self.supply.source_resistance_ohm
            + self.switch.on_resistance_ohm
            + self.inductor.dcr_ohm;
        let (path, threshold) = match self.controller {
            ControllerSpec::ConstantOffTime { peak_current_a, .. } => {
                ("controller.peak_current_a", peak_current_a)
            }
            ControllerSpec::Hysteretic {
                upper_current_a, ..
            } => ("controller.upper_current_a", upper_current_a),
            ControllerSpec::FixedDuty { .. } => return,
        };
        // The held-on current i_on is the largest current the supply still
        // drives (see `held_on_current_a`), and the load voltage plus the
        // series drop only rises with the current: i_on is above the
        // threshold exactly when the float just above the threshold is
        // still driven. One evaluation decides.
        if self.supply_drives(threshold.next_up(), r_series) {
            return;
        }
        let i_on = self.held_on_current_a(r_series);
        if i_on <= threshold {
            c.push(
                path,
                &fmt_num(threshold),
                &format!(
                    "the inductor current never reaches this threshold, so the switch never turns \
                     off: with the switch held on it settles at {} A, where the {} V supply equals \
                     the load voltage ({} V) plus the drop across the {} Ω series resistance",
                    fmt_num(i_on),
                    fmt_num(vs),
                    fmt_num(self.load_voltage_v(i_on)),
                    fmt_num(r_series)
                ),
            );
        }
    }

    /// Whether, with the switch held on, the supply still drives `i_a`
    /// through the load and the series resistance `r_series_ohm`: the load
    /// voltage plus the series drop is below the supply voltage.
    fn supply_drives(&self, i_a: f64, r_series_ohm: f64) -> bool {
        self.load_voltage_v(i_a) + r_series_ohm * i_a < self.supply.voltage_v
    }

    /// The current the inductor settles at with the switch held on, A:
    /// the largest float in [0, 1 MA) that the supply still drives (0 when
    /// it drives none), where the supply equals the load voltage plus the
    /// drop across `r_series_ohm`. Found by the Illinois variant of
    /// regula falsi on the bracket (Dowell & Jarratt, BIT 11, 1971), kept
    /// to the bracket's midpoint when a step would not shrink it enough,
    /// until the bracket's ends are neighbouring floats: a few dozen
    /// evaluations where a plain bisection to the same end takes about a
    /// hundred.
    pub(crate) fn held_on_current_a(&self, r_series_ohm: f64) -> f64 {
        let vs = self.supply.voltage_v;
        let g = |i: f64| self.load_voltage_v(i) + r_series_ohm * i - vs;
        let (mut lo, mut hi) = (0.0_f64, 1e6_f64);
        let (mut g_lo, mut g_hi) = (g(lo), g(hi));
        // Not driven even at zero current (or a curve that cannot be
        // evaluated there).
        if g_lo >= 0.0 || g_lo.is_nan() {
            return 0.0;
        }
        if g_hi < 0.0 || !g_hi.is_finite() {
            // Driven everywhere (or a curve that cannot be evaluated up
            // there): bisection on the rule itself.
            g_hi = f64::INFINITY;
        }
        // Which end was kept last (Illinois: halve the kept end's value
        // when the same end is kept twice).
        let mut kept = 0i8;
        while lo.next_up() < hi {
            let mid = 0.5 * (lo + hi);
            let secant = if g_hi.is_finite() {
                lo - g_lo * (hi - lo) / (g_hi - g_lo)
            } else {
                mid
            };
            // A secant point too close to an end shrinks the bracket too
            // little: take the midpoint then.
            let margin = 1e-3 * (hi - lo);
            let x = if secant.is_finite() && secant > lo + margin && secant < hi - margin {
                secant
            } else {
                mid
            };
            // Neighbouring floats are caught by the loop's test; any other
            // bracket has its midpoint strictly inside.
            let x = if x > lo && x < hi { x } else { mid };
            if x <= lo || x >= hi {
                break;
            }
            let gx = g(x);
            if gx < 0.0 {
                lo = x;
                g_lo = gx;
                if kept == 1 {
                    g_hi *= 0.5;
                }
                kept = 1;
            } else {
                hi = x;
                g_hi = if gx.is_finite() { gx } else { f64::INFINITY };
                if kept == -1 {
                    g_lo *= 0.5;
                }
                kept = -1;
            }
        }
        lo
    }
}
