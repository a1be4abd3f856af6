//! Validation of the `parts` section (called from `Scenario::validate`).

use super::checker::{fmt_num, Checker};
use super::parts::{ControllerFeed, PartData};

impl PartData {
    pub(super) fn validate_into(&self, c: &mut Checker) {
        let p = self;
        c.range(
            "parts.ambient_temperature_c",
            p.ambient_temperature_c,
            -60.0,
            150.0,
            "°C",
        );
        if let Some(a) = p.current_accuracy_pct {
            c.range("parts.current_accuracy_pct", a, 1e-3, 100.0, "%");
        }
        c.opt_positive(
            "parts.led_current_target_a",
            p.led_current_target_a,
            1e3,
            "A",
        );
        let sw = &p.switch;
        c.range("parts.switch.rise_time_s", sw.rise_time_s, 0.0, 1e-4, "s");
        c.range("parts.switch.fall_time_s", sw.fall_time_s, 0.0, 1e-4, "s");
        c.range(
            "parts.switch.gate_charge_c",
            sw.gate_charge_c,
            0.0,
            1e-5,
            "C",
        );
        c.range("parts.switch.gate_drive_v", sw.gate_drive_v, 0.0, 30.0, "V");
        c.range(
            "parts.switch.output_capacitance_f",
            sw.output_capacitance_f,
            0.0,
            1e-7,
            "F",
        );
        c.opt_positive(
            "parts.switch.voltage_rating_v",
            sw.voltage_rating_v,
            1e4,
            "V",
        );
        c.opt_positive(
            "parts.switch.peak_current_rating_a",
            sw.peak_current_rating_a,
            1e4,
            "A",
        );
        c.opt_positive(
            "parts.switch.rms_current_rating_a",
            sw.rms_current_rating_a,
            1e4,
            "A",
        );
        c.thermal("parts.switch.thermal", sw.thermal);
        let d = &p.diode;
        c.range(
            "parts.diode.reverse_recovery_charge_c",
            d.reverse_recovery_charge_c,
            0.0,
            1e-5,
            "C",
        );
        c.opt_positive("parts.diode.voltage_rating_v", d.voltage_rating_v, 1e4, "V");
        c.opt_positive(
            "parts.diode.peak_current_rating_a",
            d.peak_current_rating_a,
            1e4,
            "A",
        );
        c.opt_positive(
            "parts.diode.rms_current_rating_a",
            d.rms_current_rating_a,
            1e4,
            "A",
        );
        c.opt_positive(
            "parts.diode.average_current_rating_a",
            d.average_current_rating_a,
            1e4,
            "A",
        );
        c.range(
            "parts.diode.junction_capacitance_f",
            d.junction_capacitance_f,
            0.0,
            1e-7,
            "F",
        );
        c.thermal("parts.diode.thermal", d.thermal);
        let l = &p.inductor;
        if let Some(core) = l.core {
            c.int_range(
                "parts.inductor.core.turns",
                u64::from(core.turns),
                1,
                100_000,
            );
            c.range(
                "parts.inductor.core.area_m2",
                core.area_m2,
                1e-9,
                1e-1,
                "m²",
            );
            c.range(
                "parts.inductor.core.volume_m3",
                core.volume_m3,
                1e-12,
                1e-1,
                "m³",
            );
            c.range(
                "parts.inductor.core.steinmetz_k",
                core.steinmetz_k,
                0.0,
                1e6,
                "",
            );
            c.range(
                "parts.inductor.core.steinmetz_alpha",
                core.steinmetz_alpha,
                0.5,
                3.0,
                "",
            );
            c.range(
                "parts.inductor.core.steinmetz_beta",
                core.steinmetz_beta,
                1.0,
                4.0,
                "",
            );
        }
        c.opt_positive(
            "parts.inductor.rms_current_rating_a",
            l.rms_current_rating_a,
            1e4,
            "A",
        );
        c.thermal("parts.inductor.thermal", l.thermal);
        let curve = &l.saturation_curve;
        if !curve.is_empty() {
            if curve.len() < 2 || curve.len() > crate::devices::MAX_L_POINTS {
                c.push(
                    "parts.inductor.saturation_curve",
                    &format!("{} points", curve.len()),
                    &format!("give 2 to {} points", crate::devices::MAX_L_POINTS),
                );
            }
            let mut last = -1.0;
            for (k, pt) in curve.iter().enumerate() {
                let at = format!("parts.inductor.saturation_curve[{k}]");
                c.range(&format!("{at}.current_a"), pt.current_a, 0.0, 1e4, "A");
                c.range(
                    &format!("{at}.inductance_h"),
                    pt.inductance_h,
                    1e-9,
                    10.0,
                    "H",
                );
                if pt.current_a <= last {
                    c.push(
                        &format!("{at}.current_a"),
                        &fmt_num(pt.current_a),
                        "currents must be strictly rising",
                    );
                }
                last = pt.current_a;
            }
        }
        for (name, cap) in [
            ("input_capacitor", &p.input_capacitor),
            ("output_capacitor", &p.output_capacitor),
        ] {
            let pre = format!("parts.{name}");
            c.range(
                &format!("{pre}.tolerance_pct"),
                cap.tolerance_pct,
                0.0,
                90.0,
                "%",
            );
            c.opt_positive(
                &format!("{pre}.voltage_rating_v"),
                cap.voltage_rating_v,
                1e4,
                "V",
            );
            c.opt_positive(
                &format!("{pre}.ripple_current_rating_a"),
                cap.ripple_current_rating_a,
                1e3,
                "A",
            );
            c.thermal(&format!("{pre}.thermal"), cap.thermal);
            let mut last = -1.0;
            for (k, b) in cap.bias_curve.iter().enumerate() {
                let at = format!("{pre}.bias_curve[{k}]");
                c.range(
                    &format!("{at}.bias_fraction"),
                    b.bias_fraction,
                    0.0,
                    1.5,
                    "",
                );
                c.range(
                    &format!("{at}.capacitance_fraction"),
                    b.capacitance_fraction,
                    1e-3,
                    1.0,
                    "",
                );
                if b.bias_fraction <= last {
                    c.push(
                        &format!("{at}.bias_fraction"),
                        &fmt_num(b.bias_fraction),
                        "bias points must be in strictly rising order",
                    );
                }
                last = b.bias_fraction;
            }
            if !cap.bias_curve.is_empty() && cap.voltage_rating_v.is_none() {
                c.push(
                    &format!("{pre}.bias_curve"),
                    "",
                    "a bias curve is given as fractions of the rated voltage: give voltage_rating_v too",
                );
            }
        }
        if let Some(led) = p.led {
            c.range(
                "parts.led.resistance_c_per_w",
                led.resistance_c_per_w,
                0.0,
                1e4,
                "°C/W",
            );
            c.range(
                "parts.led.max_junction_temperature_c",
                led.max_junction_temperature_c,
                -60.0,
                300.0,
                "°C",
            );
            c.range(
                "parts.led.forward_voltage_tempco_v_per_k",
                led.forward_voltage_tempco_v_per_k,
                -0.05,
                0.05,
                "V/K",
            );
            c.range("parts.led.heat_fraction", led.heat_fraction, 0.0, 1.0, "");
        }
        let ic = &p.controller;
        c.range(
            "parts.controller.quiescent_current_a",
            ic.quiescent_current_a,
            0.0,
            1.0,
            "A",
        );
        c.opt_positive(
            "parts.controller.min_frequency_hz",
            ic.min_frequency_hz,
            1e9,
            "Hz",
        );
        c.opt_positive(
            "parts.controller.max_frequency_hz",
            ic.max_frequency_hz,
            1e9,
            "Hz",
        );
        c.opt_positive(
            "parts.controller.min_on_time_s",
            ic.min_on_time_s,
            1e-2,
            "s",
        );
        if ic.fed_from == ControllerFeed::SeparateRail
            && p.switch.gate_drive_v <= 0.0
            && (ic.quiescent_current_a > 0.0 || p.switch.gate_charge_c > 0.0)
        {
            c.push(
                "parts.controller.fed_from",
                "separate_rail",
                "the separate rail is at the gate-drive voltage: give parts.switch.gate_drive_v",
            );
        }
        if let (Some(lo), Some(hi)) = (ic.min_frequency_hz, ic.max_frequency_hz) {
            if lo >= hi {
                c.push(
                    "parts.controller.min_frequency_hz",
                    &fmt_num(lo),
                    &format!("must be below max_frequency_hz ({} Hz)", fmt_num(hi)),
                );
            }
        }
    }
}
