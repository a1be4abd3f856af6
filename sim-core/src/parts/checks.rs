//! The design-check table: each check with its status, the value, the
//! limit and where the rule comes from.
//!
//! A check appears only when the scenario gives what it needs (a rating, a
//! limit, an intent); the audible-band check always appears. Ratings come
//! from the scenario's part data; margins and derating fractions are
//! **common practice** and say so in `source`.

use super::bias;
use super::thermal::{PartTemperature, TOUCH_HOT_C};
use crate::metrics::{ConductionMode, Metrics};
use crate::scenario::{CapacitorData, IntendedMode, Scenario};
use serde::Serialize;

/// A check's verdict.
#[derive(Debug, Clone, Copy, PartialEq, Eq, PartialOrd, Ord, Serialize)]
#[serde(rename_all = "lowercase")]
pub enum Status {
    /// Within the limit and its margin.
    Ok,
    /// Within the limit but inside the margin, or worth a look.
    Warn,
    /// Past the limit.
    Fail,
}

/// One row of the design-check table.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Check {
    /// What is checked, e.g. `inductor peak current vs saturation`.
    pub check: String,
    /// The verdict.
    pub status: Status,
    /// The simulated (or estimated) value.
    pub value: f64,
    /// The limit it is held against (None for a reported-only value).
    pub limit: Option<f64>,
    /// Unit of value and limit.
    pub unit: &'static str,
    /// Where the limit and the rule come from.
    pub source: String,
}

/// What a capacitor saw in the run, for its checks and the report.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct CapacitorState {
    /// `input_capacitor` or `output_capacitor`.
    pub part: &'static str,
    /// Nominal capacitance, F.
    pub nominal_f: f64,
    /// Effective capacitance at the average bias, as simulated, F.
    pub effective_f: f64,
    /// Lowest effective capacitance with the tolerance, F.
    pub effective_min_f: f64,
    /// Average voltage across it, V.
    pub average_v: f64,
    /// Highest voltage applied, V.
    pub peak_v: f64,
    /// RMS ripple current, A.
    pub ripple_rms_a: f64,
    /// ESR dissipation, W.
    pub esr_loss_w: f64,
}

fn upper(
    out: &mut Vec<Check>,
    check: &str,
    value: f64,
    limit: f64,
    warn_fraction: f64,
    unit: &'static str,
    source: &str,
) {
    let status = if value > limit {
        Status::Fail
    } else if value > warn_fraction * limit {
        Status::Warn
    } else {
        Status::Ok
    };
    out.push(Check {
        check: check.to_string(),
        status,
        value,
        limit: Some(limit),
        unit,
        source: source.to_string(),
    });
}

/// The highest supply voltage the design sees, V.
pub fn max_supply_v(s: &Scenario) -> f64 {
    s.supply
        .input_range_v
        .map_or(s.supply.voltage_v, |r| r.max_v.max(s.supply.voltage_v))
}

/// Every applicable design check for a run of scenario `s` with metrics `m`.
pub fn design_checks(
    s: &Scenario,
    m: &Metrics,
    temps: &[PartTemperature],
    caps: &[CapacitorState],
) -> Vec<Check> {
    let mut c = Vec::new();
    let p = &s.parts;
    const MARGIN: &str = "warn within 10 % of it (common practice)";
    // Inductor.
    if let Some(isat) = s.inductor.saturation_current_a {
        upper(
            &mut c,
            "inductor peak current vs saturation current",
            m.inductor_current_peak_a,
            isat,
            0.9,
            "A",
            &format!("part rating inductor.saturation_current_a; {MARGIN}"),
        );
    }
    if let Some(r) = p.inductor.rms_current_rating_a {
        upper(
            &mut c,
            "inductor RMS current vs rating",
            m.inductor_current_rms_a,
            r,
            0.9,
            "A",
            &format!("part rating parts.inductor.rms_current_rating_a; {MARGIN}"),
        );
    }
    // Switch: it carries the inductor current while on and blocks the input
    // plus the diode drop while off.
    let v_top = max_supply_v(s);
    let v_switch = v_top - m.switch_node_min_v.min(0.0);
    let sw = &p.switch;
    if let Some(r) = sw.voltage_rating_v {
        upper(
            &mut c,
            "switch blocking voltage vs rating",
            v_switch,
            r,
            0.8,
            "V",
            "part rating parts.switch.voltage_rating_v at the highest supply; warn above 80 % \
             (common practice: room for ringing and spikes)",
        );
    }
    if let Some(r) = sw.peak_current_rating_a {
        upper(
            &mut c,
            "switch peak current vs rating",
            m.inductor_current_peak_a,
            r,
            0.9,
            "A",
            &format!("part rating parts.switch.peak_current_rating_a; {MARGIN}"),
        );
    }
    if let Some(r) = sw.rms_current_rating_a {
        upper(
            &mut c,
            "switch RMS current vs rating",
            m.switch_current_rms_a,
            r,
            0.9,
            "A",
            &format!("part rating parts.switch.rms_current_rating_a; {MARGIN}"),
        );
    }
    // Diode: reverse voltage is the switch node while the switch is on.
    let d = &p.diode;
    if let Some(r) = d.voltage_rating_v {
        upper(
            &mut c,
            "diode reverse voltage vs rating",
            m.switch_node_max_v.max(v_top),
            r,
            0.8,
            "V",
            "part rating parts.diode.voltage_rating_v at the highest supply; warn above 80 % \
             (common practice)",
        );
    }
    if let Some(r) = d.peak_current_rating_a {
        upper(
            &mut c,
            "diode peak current vs rating",
            m.inductor_current_peak_a,
            r,
            0.9,
            "A",
            &format!("part rating parts.diode.peak_current_rating_a; {MARGIN}"),
        );
    }
    if let Some(r) = d.rms_current_rating_a {
        upper(
            &mut c,
            "diode RMS current vs rating",
            m.diode_current_rms_a,
            r,
            0.9,
            "A",
            &format!("part rating parts.diode.rms_current_rating_a; {MARGIN}"),
        );
    }
    // Capacitors.
    for cs in caps {
        let data: &CapacitorData = if cs.part == "input_capacitor" {
            &p.input_capacitor
        } else {
            &p.output_capacitor
        };
        let name = cs.part.replace('_', " ");
        if let Some(r) = data.voltage_rating_v {
            let (frac, why) = bias::voltage_derating(data.dielectric);
            let status = if cs.peak_v > r {
                Status::Fail
            } else if cs.peak_v > frac * r {
                Status::Warn
            } else {
                Status::Ok
            };
            c.push(Check {
                check: format!("{name} peak voltage vs rating"),
                status,
                value: cs.peak_v,
                limit: Some(r),
                unit: "V",
                source: format!(
                    "part rating; fail above the rating, warn above {:.0} % of it ({why})",
                    100.0 * frac
                ),
            });
        }
        if let Some(r) = data.ripple_current_rating_a {
            let (frac, why) = bias::ripple_margin(data.dielectric);
            upper(
                &mut c,
                &format!("{name} RMS ripple current vs rating"),
                cs.ripple_rms_a,
                r,
                frac,
                "A",
                &format!("part rating ripple_current_rating_a; {why}"),
            );
        }
        if bias::bias_dependent(data) {
            let frac = cs.effective_f / cs.nominal_f;
            c.push(Check {
                check: format!("{name} capacitance left under DC bias"),
                status: if frac < 0.5 { Status::Warn } else { Status::Ok },
                value: 100.0 * frac,
                limit: Some(50.0),
                unit: "%",
                source: "bias curve (the part's own, or the class's typical curve, from memory); \
                         warn below 50 % of nominal (common practice)"
                    .into(),
            });
        }
        if data.dielectric != crate::scenario::Dielectric::Unspecified
            || data.ripple_current_rating_a.is_some()
        {
            c.push(Check {
                check: format!("{name} ESR dissipation"),
                status: Status::Ok,
                value: cs.esr_loss_w,
                limit: None,
                unit: "W",
                source: "ESR·I_rms² from the run (reported; its heating is checked with a thermal \
                         path)"
                    .into(),
            });
        }
    }
    // Temperatures.
    for t in temps {
        let name = if t.part == "led" {
            "LED junction".to_string()
        } else {
            t.part.replace('_', " ")
        };
        upper(
            &mut c,
            &format!("{name} temperature vs maximum"),
            t.temperature_c,
            t.max_temperature_c,
            0.9,
            "°C",
            "part rating (thermal.max_temperature_c) with T = T_ambient + R_th·P; warn within \
             10 % (common practice)",
        );
        if t.part != "led" && t.temperature_c > TOUCH_HOT_C {
            c.push(Check {
                check: format!("{name} too hot to touch"),
                status: Status::Warn,
                value: t.temperature_c,
                limit: Some(TOUCH_HOT_C),
                unit: "°C",
                source: "common practice: above about 60 °C a surface burns a finger".into(),
            });
        }
    }
    // Conduction mode.
    match p.intended_mode {
        IntendedMode::Either => {}
        IntendedMode::Ccm => {
            let status = match m.conduction_mode {
                ConductionMode::Ccm => Status::Ok,
                ConductionMode::Boundary => Status::Warn,
                ConductionMode::Dcm => Status::Fail,
            };
            c.push(Check {
                check: "CCM intended: inductor valley over average".into(),
                status,
                value: m.ccm_margin,
                limit: Some(0.0),
                unit: "",
                source: "parts.intended_mode = ccm; fail in DCM, warn at the boundary".into(),
            });
        }
        IntendedMode::Dcm => {
            c.push(Check {
                check: "DCM intended: idle time per period".into(),
                status: if m.conduction_mode == ConductionMode::Ccm {
                    Status::Fail
                } else {
                    Status::Ok
                },
                value: m.idle_time_s / m.period_s,
                limit: Some(0.0),
                unit: "",
                source: "parts.intended_mode = dcm; fail in CCM".into(),
            });
        }
    }
    // Frequency.
    let f = m.switching_frequency_hz;
    let ic = &p.controller;
    if let Some(lo) = ic.min_frequency_hz {
        c.push(Check {
            check: "switching frequency vs controller minimum".into(),
            status: if f < lo { Status::Fail } else { Status::Ok },
            value: f,
            limit: Some(lo),
            unit: "Hz",
            source: "controller data parts.controller.min_frequency_hz".into(),
        });
    }
    if let Some(hi) = ic.max_frequency_hz {
        upper(
            &mut c,
            "switching frequency vs controller maximum",
            f,
            hi,
            1.0,
            "Hz",
            "controller data parts.controller.max_frequency_hz",
        );
    }
    c.push(Check {
        check: "switching frequency above the audible band".into(),
        status: if f < 20e3 { Status::Warn } else { Status::Ok },
        value: f,
        limit: Some(20e3),
        unit: "Hz",
        source: "common practice: human hearing reaches about 20 kHz; inductors and ceramic \
                 capacitors sing below it"
            .into(),
    });
    if let Some(ton) = ic.min_on_time_s {
        c.push(Check {
            check: "on-time vs controller minimum".into(),
            status: if m.on_time_s < ton {
                Status::Fail
            } else if m.on_time_s < 1.5 * ton {
                Status::Warn
            } else {
                Status::Ok
            },
            value: m.on_time_s,
            limit: Some(ton),
            unit: "s",
            source: "controller data parts.controller.min_on_time_s; warn below 1.5× it \
                     (common practice: the highest supply shortens it further)"
                .into(),
        });
    }
    let target = p.led_current_target_a.or_else(|| s.target_current_a());
    if let (Some(acc), Some(target)) = (p.current_accuracy_pct, target) {
        let dev = 100.0 * (m.led_current_avg_a - target).abs() / target;
        upper(
            &mut c,
            "LED current deviation from target",
            dev,
            acc,
            1.0,
            "%",
            "parts.current_accuracy_pct around parts.led_current_target_a (else the controller's \
             target: the threshold midpoint, or the peak for peak-current control)",
        );
    }
    c
}

/// The worst status in a table (Ok for an empty one).
pub fn worst(checks: &[Check]) -> Status {
    checks.iter().map(|c| c.status).max().unwrap_or(Status::Ok)
}
