//! The run summary rendered: the library's [`Report`] (built by
//! `sim_core::report`, which owns its meaning — schema, warnings,
//! cautions, verdict) laid out as text for a person or serialised as a
//! JSON object for scripts (the field names are documented in README.md
//! and stable).

use crate::format::{eng, eng_scaled, pct, ratio, sci};
use sim_core::metrics::{ConductionMode, LossEnergies, Metrics};
use sim_core::parts::checks::Status;
pub use sim_core::report::Report;
#[allow(unused_imports)]
use sim_core::scenario::{JacobianSource, SteadyMethod};
use sim_core::EngineKind;
use std::fmt::Write as _;

/// How a front end shows a [`Report`].
pub trait Render {
    /// The report as pretty-printed JSON.
    fn to_json(&self) -> String;
    /// The report as text for a terminal, about 60 lines.
    fn to_text(&self) -> String;
}

impl Render for Report {
    fn to_json(&self) -> String {
        serde_json::to_string_pretty(self).unwrap_or_else(|e| format!("{{\"error\":\"{e}\"}}"))
    }

    fn to_text(&self) -> String {
        let m = &self.metrics;
        let mut o = String::new();
        let engine = match self.engine {
            EngineKind::Exact => "exact",
            EngineKind::Reference => "reference",
        };
        let _ = writeln!(o, "{} — steady state ({engine} engine)", self.scenario);
        let _ = writeln!(
            o,
            "supply {}, {}, LED string {} average",
            eng(self.supply_voltage_v, "V"),
            controller_words(&self.controller),
            eng(m.led_voltage_avg_v, "V")
        );
        let row = |o: &mut String, label: &str, value: String| {
            let _ = writeln!(o, "  {label:<24}{value}");
        };

        // Round-off beside the largest value of the same quantity shows
        // as 0 (see `format::eng_scaled`).
        let led_scale = m.led_current_max_a.abs().max(m.led_current_min_a.abs());
        let _ = writeln!(o, "\nLED current");
        row(&mut o, "average", eng(m.led_current_avg_a, "A"));
        row(
            &mut o,
            "ripple (peak-to-peak)",
            format!(
                "{}  ({:.1} % of average)",
                eng(m.led_current_ripple_pp_a, "A"),
                m.led_current_ripple_pct
            ),
        );
        row(&mut o, "RMS", eng(m.led_current_rms_a, "A"));
        row(
            &mut o,
            "min / max",
            format!(
                "{} / {}",
                eng_scaled(m.led_current_min_a, "A", led_scale),
                eng_scaled(m.led_current_max_a, "A", led_scale)
            ),
        );

        let _ = writeln!(o, "\nSwitching");
        row(&mut o, "frequency", eng(m.switching_frequency_hz, "Hz"));
        row(&mut o, "duty cycle", pct(m.duty));
        row(
            &mut o,
            "on / off time",
            format!("{} / {}", eng(m.on_time_s, "s"), eng(m.off_time_s, "s")),
        );
        let mode = match m.conduction_mode {
            ConductionMode::Ccm => format!(
                "CCM, valley at {} of the average inductor current",
                pct(m.ccm_margin)
            ),
            ConductionMode::Dcm => format!(
                "DCM, inductor current at zero for {} ({} of each period)",
                eng(m.idle_time_s, "s"),
                pct(m.idle_time_s / m.period_s)
            ),
            ConductionMode::Boundary => format!(
                "boundary (CCM/DCM), valley at {} of the average",
                pct(m.ccm_margin)
            ),
        };
        row(&mut o, "conduction mode", mode);
        row(
            &mut o,
            "inductor current",
            format!(
                "valley {}, peak {}, ripple {} p-p",
                eng(clean_valley(m), "A"),
                eng(m.inductor_current_peak_a, "A"),
                eng(m.inductor_ripple_pp_a, "A")
            ),
        );
        if let Some(p) = self.startup_inductor_current_peak_a {
            row(&mut o, "start-up inductor peak", eng(p, "A"));
        }

        let _ = writeln!(o, "\nPower");
        row(&mut o, "from the supply", eng(m.input_power_w, "W"));
        row(&mut o, "into the LEDs", eng(m.led_power_w, "W"));
        row(&mut o, "efficiency", pct(m.efficiency));
        let _ = writeln!(o, "\n  {:<28}{:>10}{:>12}", "losses", "W", "% of input");
        for (name, w, p) in loss_rows(&m.losses_w, &self.losses_pct) {
            let _ = writeln!(
                o,
                "  {name:<28}{:>10}{:>10.2} %",
                eng_scaled(w, "W", m.input_power_w),
                p
            );
        }
        let total_pct: f64 = loss_rows(&m.losses_w, &self.losses_pct)
            .iter()
            .map(|r| r.2)
            .sum();
        let _ = writeln!(
            o,
            "  {:<28}{:>10}{:>10.2} %",
            "total",
            eng(m.total_loss_w, "W"),
            total_pct
        );
        if self.has_part_losses {
            let _ = writeln!(
                o,
                "  (switching-edge, gate, output- and junction-capacitance, recovery, core and \
                 quiescent losses are estimates from the simulated edges and flux, drawn from \
                 the supply)"
            );
        } else {
            let _ = writeln!(
                o,
                "  (conduction losses only: give parts.switch, parts.diode, parts.inductor.core \
                 and parts.controller data for switching, recovery, core and quiescent losses)"
            );
        }

        let _ = writeln!(o, "\n  {:<24}{:>10}{:>10}", "part stresses", "peak", "RMS");
        // The table's current scale: its largest current.
        let amp_scale = m
            .inductor_current_peak_a
            .abs()
            .max(self.switch_current_peak_a.abs())
            .max(self.diode_current_peak_a.abs());
        let stress = |o: &mut String, name: &str, peak: Option<f64>, rms: f64| {
            let p = peak.map_or("—".to_string(), |p| eng_scaled(p, "A", amp_scale));
            let _ = writeln!(
                o,
                "  {name:<24}{p:>10}{:>10}",
                eng_scaled(rms, "A", amp_scale)
            );
        };
        stress(
            &mut o,
            "inductor",
            Some(m.inductor_current_peak_a),
            m.inductor_current_rms_a,
        );
        stress(
            &mut o,
            "switch",
            Some(self.switch_current_peak_a),
            m.switch_current_rms_a,
        );
        stress(
            &mut o,
            "diode",
            Some(self.diode_current_peak_a),
            m.diode_current_rms_a,
        );
        stress(
            &mut o,
            "LED string",
            Some(m.led_current_max_a),
            m.led_current_rms_a,
        );
        if self.has_input_capacitor {
            stress(
                &mut o,
                "input capacitor (AC)",
                None,
                m.input_capacitor_ripple_rms_a,
            );
        }
        if self.has_output_capacitor {
            stress(
                &mut o,
                "output capacitor (AC)",
                None,
                m.output_capacitor_ripple_rms_a,
            );
        }
        stress(&mut o, "supply", None, m.input_current_rms_a);
        let node_scale = m.switch_node_max_v.abs().max(m.switch_node_min_v.abs());
        row(
            &mut o,
            "switch node",
            format!(
                "{} to {}",
                eng_scaled(m.switch_node_min_v, "V", node_scale),
                eng_scaled(m.switch_node_max_v, "V", node_scale)
            ),
        );

        if !self.capacitors.is_empty() {
            let _ = writeln!(
                o,
                "\n  {:<24}{:>10}{:>11}{:>10}{:>10}",
                "capacitors", "nominal", "effective", "avg V", "ripple"
            );
            for c in &self.capacitors {
                let _ = writeln!(
                    o,
                    "  {:<24}{:>10}{:>11}{:>10}{:>10}",
                    c.part.replace('_', " "),
                    eng(c.nominal_f, "F"),
                    eng(c.effective_f, "F"),
                    eng(c.average_v, "V"),
                    eng_scaled(c.ripple_rms_a, "A", amp_scale)
                );
            }
        }
        if !self.temperatures.is_empty() {
            let _ = writeln!(
                o,
                "\n  {:<24}{:>10}{:>10}{:>10}",
                "temperatures", "heat", "estimate", "maximum"
            );
            for t in &self.temperatures {
                let _ = writeln!(
                    o,
                    "  {:<24}{:>10}{:>8.0} °C{:>7.0} °C",
                    if t.part == "led" {
                        "LED junction (each)".to_string()
                    } else {
                        t.part.replace('_', " ")
                    },
                    eng(t.dissipation_w, "W"),
                    t.temperature_c,
                    t.max_temperature_c
                );
            }
        }

        let _ = writeln!(o, "\nDesign checks");
        for c in &self.design_checks {
            let status = match c.status {
                Status::Ok => "ok",
                Status::Warn => "WARN",
                Status::Fail => "FAIL",
            };
            let value = check_value(c.value, c.unit);
            let limit = c.limit.map_or("—".to_string(), |l| check_value(l, c.unit));
            let at = if self.range_given {
                format!(" at {}", eng(c.supply_v, "V"))
            } else {
                String::new()
            };
            let _ = writeln!(
                o,
                "  {status:<5} {:<48}{value:>11} (limit {limit}){at}",
                c.check
            );
            let _ = writeln!(o, "        {}", c.source);
        }
        if let Some(cmp) = &self.alternatives {
            let _ = writeln!(
                o,
                "\nAlternatives for the same LEDs at {} target",
                eng(cmp.target_current_a, "A")
            );
            if let Some(span) = cmp.assumed_span {
                let _ = writeln!(
                    o,
                    "  no supply.input_range_v given: compared at ±{:.0} % of the nominal supply \
                     (as plotted)",
                    100.0 * span
                );
            }
            let head: Vec<String> = cmp.supply_v.iter().map(|v| eng(*v, "V")).collect();
            let _ = writeln!(
                o,
                "  {:<12}{:>32}  {}",
                "driver",
                "LED current / efficiency / loss at",
                head.join(", ")
            );
            for d in &cmp.drivers {
                let cells: Vec<String> = d
                    .points
                    .iter()
                    .map(|p| match p {
                        Some(p) => format!(
                            "{} {} {}",
                            eng(p.led_current_a, "A"),
                            pct(p.efficiency),
                            eng(p.dissipation_w, "W")
                        ),
                        None => "does not run".to_string(),
                    })
                    .collect();
                let var = d
                    .current_variation_pct
                    .map_or(String::new(), |v| format!("  (current varies {v:.1} %)"));
                let _ = writeln!(o, "  {:<12}{}{var}", d.driver, cells.join(" | "));
            }
            if let (Some(r), Some(k)) = (cmp.resistor_ohm, cmp.resistor_sensitivity_a_per_v) {
                let _ = writeln!(
                    o,
                    "  resistor {}: 1 V more supply gives {} more LED current \
                     (1/(R + r_d), LED dynamic resistance r_d = {})",
                    eng(r, "Ω"),
                    eng(k, "A"),
                    eng(cmp.led_dynamic_resistance_ohm, "Ω")
                );
            }
            let _ = writeln!(
                o,
                "  linear regulator assumed to need {} headroom (common practice)",
                eng(cmp.linear_headroom_v, "V")
            );
        }

        let _ = writeln!(o, "\nModel");
        let fit = |err: Option<f64>, n: usize| match err {
            Some(e) => format!(
                "within {} ({n} straight segment{})",
                eng(e, "V"),
                if n == 1 { "" } else { "s" }
            ),
            None => "exact (linear model)".to_string(),
        };
        row(
            &mut o,
            "LED curve fit error",
            fit(self.fit.led_max_error_v, self.fit.led_segments),
        );
        row(
            &mut o,
            "diode curve fit error",
            fit(self.fit.diode_max_error_v, self.fit.diode_segments),
        );
        row(
            &mut o,
            "energy balance residual",
            format!("{} of the input energy", sci(m.energy_balance_residual)),
        );
        let st = &self.steady_state;
        let found = match st.method {
            SteadyMethod::Shooting => format!(
                "by shooting: {} Newton iteration{}, {} cycles run ({} Jacobian), residual {}, {}",
                st.newton_iterations,
                if st.newton_iterations == 1 { "" } else { "s" },
                st.cycles_to_settle,
                match st.jacobian {
                    Some(JacobianSource::FiniteDifference) => "difference",
                    _ => "analytic",
                },
                sci(st.last_change),
                decay_words(st.contraction)
            ),
            SteadyMethod::Cycling => format!(
                "by cycling: {} cycles ({} simulated), last change {}",
                st.cycles_to_settle,
                eng(st.time_to_settle_s, "s"),
                sci(st.last_change)
            ),
        };
        row(&mut o, "steady state found", found);
        if let Some(note) = &st.note {
            row(&mut o, "steady-state note", note.clone());
        }
        if self.steady_state.orbit_period_cycles > 1 {
            row(
                &mut o,
                "orbit period",
                format!("{} switching cycles", self.steady_state.orbit_period_cycles),
            );
        }
        row(
            &mut o,
            "measured over",
            format!("{} cycles", m.cycles_measured),
        );

        let _ = writeln!(o, "\nWarnings");
        if self.warnings.is_empty() {
            let _ = writeln!(o, "  none");
        }
        for w in &self.warnings {
            let _ = writeln!(o, "  ! {w}");
        }
        let _ = writeln!(o, "\nCautions");
        for c in &self.cautions {
            let _ = writeln!(o, "  * {c}");
        }
        o
    }
}

/// A check's value in engineering notation (or plain for % and °C).
fn check_value(v: f64, unit: &str) -> String {
    match unit {
        "%" => format!("{v:.1} %"),
        "°C" => format!("{v:.0} °C"),
        "" => ratio(v, 1.0),
        u => eng(v, u),
    }
}

/// The inductor valley current with round-off below a millionth of the
/// peak shown as zero (in DCM the valley is zero up to round-off), A.
pub fn clean_valley(m: &Metrics) -> f64 {
    let v = m.inductor_current_valley_a;
    if v.abs() < 1e-6 * m.inductor_current_peak_a.abs() {
        0.0
    } else {
        v
    }
}

/// Loss elements with their names, W and % of input; elements that a
/// design does not have (zero loss) are left out.
fn loss_rows(w: &LossEnergies, p: &LossEnergies) -> Vec<(&'static str, f64, f64)> {
    [
        (
            "switch conduction",
            w.switch_conduction,
            p.switch_conduction,
        ),
        ("diode conduction", w.diode_conduction, p.diode_conduction),
        ("inductor winding (DCR)", w.inductor_dcr, p.inductor_dcr),
        (
            "supply resistance",
            w.source_resistance,
            p.source_resistance,
        ),
        (
            "input capacitor ESR",
            w.input_capacitor_esr,
            p.input_capacitor_esr,
        ),
        (
            "output capacitor ESR",
            w.output_capacitor_esr,
            p.output_capacitor_esr,
        ),
        (
            "reverse-current clamp",
            w.reverse_current_clamp,
            p.reverse_current_clamp,
        ),
        (
            "switch transitions",
            w.switch_transition,
            p.switch_transition,
        ),
        ("gate drive", w.switch_gate_drive, p.switch_gate_drive),
        (
            "switch output capacitance",
            w.switch_output_capacitance,
            p.switch_output_capacitance,
        ),
        (
            "diode reverse recovery",
            w.diode_reverse_recovery,
            p.diode_reverse_recovery,
        ),
        (
            "diode junction capacitance",
            w.diode_junction_capacitance,
            p.diode_junction_capacitance,
        ),
        ("inductor core", w.inductor_core, p.inductor_core),
        (
            "controller quiescent",
            w.controller_quiescent,
            p.controller_quiescent,
        ),
        ("current-sense resistor", w.current_sense, p.current_sense),
    ]
    .into_iter()
    .filter(|r| r.1 != 0.0)
    .collect()
}

/// The controller and its settings in a few words.
fn controller_words(c: &sim_core::scenario::ControllerSpec) -> String {
    use sim_core::scenario::ControllerSpec as C;
    match *c {
        C::ConstantOffTime {
            peak_current_a,
            off_time_s,
            ..
        } => format!(
            "constant off-time {} with peak threshold {}",
            eng(off_time_s, "s"),
            eng(peak_current_a, "A")
        ),
        C::Hysteretic {
            upper_current_a,
            lower_current_a,
            ..
        } => format!(
            "hysteretic between {} and {}",
            eng(lower_current_a, "A"),
            eng(upper_current_a, "A")
        ),
        C::FixedDuty { frequency_hz, duty } => {
            format!("fixed duty {} at {}", pct(duty), eng(frequency_hz, "Hz"))
        }
    }
}

/// How fast the slowest mode of the orbit decays: its Floquet multiplier
/// and, for slow ones, the cycles per factor e (−1/ln m).
fn decay_words(m: f64) -> String {
    // A contraction factor's scale is 1: round-off below a millionth of
    // it shows as 0, small ones keep three significant figures.
    if !(m > 0.0 && m < 1.0) || m < 0.5 {
        return format!("slowest mode ×{} per cycle", ratio(m, 1.0));
    }
    format!(
        "slowest mode ×{:.6} per cycle (time constant {} cycles)",
        m,
        sig(-1.0 / m.ln())
    )
}

/// Three significant figures, as a number.
fn sig(v: f64) -> f64 {
    if v == 0.0 || !v.is_finite() {
        return v;
    }
    let p = 10f64.powi(2 - v.abs().log10().floor() as i32);
    (v * p).round() / p
}

#[cfg(test)]
mod display_tests {
    use super::*;

    /// A contraction factor's scale is 1: round-off shows as 0, a small
    /// real factor keeps its significant figures (it printed `×0.000`).
    #[test]
    fn contraction_factors_show_round_off_as_zero_and_keep_small_values() {
        assert_eq!(decay_words(3e-17), "slowest mode ×0 per cycle");
        assert_eq!(decay_words(0.0), "slowest mode ×0 per cycle");
        assert_eq!(decay_words(2.1e-5), "slowest mode ×2.1e-5 per cycle");
        assert_eq!(decay_words(0.0641), "slowest mode ×0.0641 per cycle");
        assert!(decay_words(0.72006).starts_with("slowest mode ×0.720060 per cycle"));
    }

    /// A dimensionless check limit of zero reads `0`, not `0.000`.
    #[test]
    fn dimensionless_check_values() {
        assert_eq!(check_value(0.0, ""), "0");
        assert_eq!(check_value(0.784, ""), "0.784");
        assert_eq!(check_value(1e-20, ""), "0");
    }
}
