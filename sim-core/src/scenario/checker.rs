//! The collector of value problems used by validation, with its range
//! checks and the number format of its messages.

use super::{Capacitor, Scenario, Thermal};
use crate::error::FieldProblem;
use crate::units::Unit;

pub(super) fn fmt_num(v: f64) -> String {
    if v == 0.0 || (1e-3..1e5).contains(&v.abs()) {
        let s = format!("{v:.6}");
        let s = s.trim_end_matches('0').trim_end_matches('.');
        s.to_string()
    } else {
        format!("{v:e}")
    }
}

#[derive(Default)]
pub(super) struct Checker {
    pub(super) problems: Vec<FieldProblem>,
}

impl Checker {
    /// `parts.led.forward_voltage_tempco_v_per_k` taken as the exponential
    /// load's datasheet coefficient at the target current (when the load
    /// gives no band gap or coefficient of its own) must imply a band gap
    /// the model can use.
    pub(super) fn led_part_tempco(
        &mut self,
        s: &Scenario,
        j: &crate::devices::JunctionInputs,
        is0: f64,
        n: f64,
    ) {
        let (Some(led), Some(target)) = (s.parts.led, s.target_current_a()) else {
            return;
        };
        let tc = led.forward_voltage_tempco_v_per_k;
        let usable = |x: f64| x.is_finite() && x > 0.0;
        if j.bandgap_ev.is_some()
            || j.tempco_v_per_k.is_some()
            || tc == 0.0
            || !(-0.05..=0.05).contains(&tc)
            || !usable(target)
            || !usable(is0)
            || !usable(n)
        {
            return;
        }
        let t0 = j
            .reference_temperature_c
            .unwrap_or(crate::devices::DEFAULT_REFERENCE_C);
        let xti = j
            .is_temp_exponent
            .unwrap_or(crate::devices::LED_IS_TEMP_EXPONENT);
        let eg = crate::devices::bandgap_from_tempco_ev(is0, n, t0, xti, tc, target);
        if !(0.1..=10.0).contains(&eg) {
            self.push(
                "parts.led.forward_voltage_tempco_v_per_k",
                &fmt_num(tc),
                &format!(
                    "taken as the LEDs' coefficient at the target current {} A, it implies a \
                     band gap of {} eV, outside 0.1 to 10 eV: the coefficient does not fit the \
                     LED model",
                    fmt_num(target),
                    fmt_num(eg)
                ),
            );
        }
    }

    /// A junction's temperature data (reference temperature, band gap,
    /// exponent, datasheet coefficient) and the saturation current they
    /// give at the operating temperature.
    pub(super) fn junction(
        &mut self,
        prefix: &str,
        j: &crate::devices::JunctionInputs,
        (is0, n): (f64, f64),
        (t_field, t_c): (&str, f64),
        law: Option<crate::devices::JunctionLaw>,
    ) {
        let before = self.problems.len();
        let p = |f: &str| format!("{prefix}.{f}");
        if let Some(t) = j.reference_temperature_c {
            self.range(&p("reference_temperature_c"), t, -60.0, 250.0, "°C");
        }
        if let Some(eg) = j.bandgap_ev {
            self.range(&p("bandgap_ev"), eg, 0.1, 10.0, "eV");
        }
        if let Some(x) = j.is_temp_exponent {
            self.range(&p("is_temp_exponent"), x, 0.0, 10.0, "");
        }
        if let Some(tc) = j.tempco_v_per_k {
            self.range(&p("forward_voltage_tempco_v_per_k"), tc, -0.05, 0.05, "V/K");
        }
        if let Some(i) = j.tempco_current_a {
            self.range(&p("tempco_current_a"), i, 1e-9, 1e4, "A");
        }
        match (j.tempco_v_per_k, j.tempco_current_a) {
            (Some(tc), None) => self.push(
                &p("tempco_current_a"),
                "(missing)",
                &format!(
                    "needed with forward_voltage_tempco_v_per_k = {}: the current the \
                     coefficient is stated at",
                    fmt_num(tc)
                ),
            ),
            (None, Some(i)) => self.push(
                &p("forward_voltage_tempco_v_per_k"),
                "(missing)",
                &format!(
                    "tempco_current_a = {} A is given without the coefficient it belongs to",
                    fmt_num(i)
                ),
            ),
            _ => {}
        }
        if let (Some(_), Some(tc)) = (j.bandgap_ev, j.tempco_v_per_k) {
            self.push(
                &p("forward_voltage_tempco_v_per_k"),
                &fmt_num(tc),
                "give either bandgap_ev or a forward-voltage coefficient, not both",
            );
        }
        if self.problems.len() > before || !(is0 > 0.0 && n > 0.0) {
            return;
        }
        let Some(law) = law else { return };
        if j.bandgap_ev.is_none() && j.tempco_v_per_k.is_some() {
            let eg = law.bandgap_ev;
            if !(0.1..=10.0).contains(&eg) {
                self.push(
                    &p("forward_voltage_tempco_v_per_k"),
                    &fmt_num(j.tempco_v_per_k.unwrap_or(0.0)),
                    &format!(
                        "implies a band gap of {} eV with this junction's Is and n, outside \
                         0.1 to 10 eV: the coefficient does not fit the model",
                        fmt_num(eg)
                    ),
                );
                return;
            }
        }
        let is_t = law.saturation_current_a(is0, n, t_c);
        if !(is_t.is_finite() && is_t > 1e-290 && is_t < 1e3) {
            self.push(
                &p(t_field),
                &fmt_num(t_c),
                &format!(
                    "moves the saturation current to {} A at this temperature (from its \
                     value at {} °C), outside what the model can use",
                    fmt_num(is_t),
                    fmt_num(law.reference_temperature_c)
                ),
            );
        }
    }

    pub(super) fn push(&mut self, path: &str, value: &str, reason: &str) {
        self.problems.push(FieldProblem {
            path: path.to_string(),
            value: value.to_string(),
            reason: reason.to_string(),
        });
    }

    pub(super) fn range(&mut self, path: &str, v: f64, lo: f64, hi: f64, unit: &str) {
        let u = if unit.is_empty() {
            String::new()
        } else {
            format!(" {unit}")
        };
        // Quantities with an SI unit are quoted in engineering notation
        // with every digit (`−4.7 µH`, `allowed 1 nH to 10 H`).
        let eng_unit = match unit {
            "V" => Some(Unit::Volt),
            "A" => Some(Unit::Ampere),
            "Ω" => Some(Unit::Ohm),
            "H" => Some(Unit::Henry),
            "F" => Some(Unit::Farad),
            "s" => Some(Unit::Second),
            "Hz" => Some(Unit::Hertz),
            "C" => Some(Unit::Coulomb),
            _ => None,
        };
        let show = |x: f64| match eng_unit {
            Some(eu) if x.is_finite() => crate::units::eng_exact(x, eu),
            _ => format!("{}{u}", fmt_num(x)),
        };
        if !v.is_finite() {
            self.push(path, &fmt_num(v), "must be a finite number");
        } else if v < lo || v > hi {
            let why = if lo > 0.0 && v <= 0.0 {
                format!("must be positive (allowed {} to {})", show(lo), show(hi))
            } else if lo == 0.0 && v < 0.0 {
                format!("must not be negative (allowed 0 to {})", show(hi))
            } else {
                format!("outside the physical range {} to {}", show(lo), show(hi))
            };
            let value = if eng_unit.is_some() {
                show(v)
            } else {
                fmt_num(v)
            };
            self.push(path, &value, &why);
        }
    }

    pub(super) fn opt_positive(&mut self, path: &str, v: Option<f64>, hi: f64, unit: &str) {
        if let Some(v) = v {
            self.range(path, v, 1e-12, hi, unit);
        }
    }

    pub(super) fn thermal(&mut self, path: &str, t: Option<Thermal>) {
        if let Some(t) = t {
            self.range(
                &format!("{path}.resistance_c_per_w"),
                t.resistance_c_per_w,
                0.0,
                1e4,
                "°C/W",
            );
            self.range(
                &format!("{path}.max_temperature_c"),
                t.max_temperature_c,
                -60.0,
                300.0,
                "°C",
            );
        }
    }

    pub(super) fn int_range(&mut self, path: &str, v: u64, lo: u64, hi: u64) {
        if v < lo || v > hi {
            self.push(path, &v.to_string(), &format!("allowed {lo} to {hi}"));
        }
    }

    pub(super) fn count(&mut self, path: &str, n: u32) {
        self.int_range(path, u64::from(n), 1, 1000);
    }

    pub(super) fn capacitor(&mut self, prefix: &str, cap: Capacitor) {
        self.range(
            &format!("{prefix}.capacitance_f"),
            cap.capacitance_f,
            1e-12,
            10.0,
            "F",
        );
        self.range(&format!("{prefix}.esr_ohm"), cap.esr_ohm, 0.0, 1e3, "Ω");
    }
}
