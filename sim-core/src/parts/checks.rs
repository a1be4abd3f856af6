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
    /// The supply voltage of the run this row comes from, V: with a
    /// declared input range, the end (or the nominal supply) where the
    /// row's worst case occurred.
    pub supply_v: f64,
    /// How close to or past its limit the row is, for picking the worst
    /// row over the supply range (larger is worse; compared only between
    /// rows of the same check): value/limit against an upper limit,
    /// limit/value against a lower one.
    #[serde(skip)]
    pub severity: f64,
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
    /// RMS ripple current, A (for an input capacitor fed by an ideal
    /// source, the textbook estimate: see `ripple_estimated`).
    pub ripple_rms_a: f64,
    /// True when `ripple_rms_a` is the textbook worst case
    /// I_out·√(D(1−D)) rather than the simulated value (an input
    /// capacitor with an ideal, zero-resistance source carries no ripple
    /// in the simulation).
    pub ripple_estimated: bool,
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
        supply_v: 0.0,
        severity: value / limit,
    });
}

/// A row from its parts; `severity` as in [`Check::severity`].
fn row(
    check: &str,
    status: Status,
    value: f64,
    limit: Option<f64>,
    unit: &'static str,
    source: &str,
    severity: f64,
) -> Check {
    Check {
        check: check.to_string(),
        status,
        value,
        limit,
        unit,
        source: source.to_string(),
        supply_v: 0.0,
        severity,
    }
}

/// Margin below a part's maximum temperature inside which a temperature
/// check warns, K (**common practice**).
pub(crate) const TEMPERATURE_MARGIN_K: f64 = 10.0;

/// The status of a temperature against its maximum: fail above it, warn
/// within [`TEMPERATURE_MARGIN_K`] kelvin below it (a difference of
/// temperatures, never a fraction of a Celsius value).
pub(crate) fn temperature_status(t_c: f64, max_c: f64) -> Status {
    if t_c > max_c {
        Status::Fail
    } else if t_c > max_c - TEMPERATURE_MARGIN_K {
        Status::Warn
    } else {
        Status::Ok
    }
}

/// The textbook RMS current of a buck's input capacitor, A:
/// I_out·√(D(1−D)), the switch current's AC part with a flat inductor
/// current (Erickson & Maksimovic, Fundamentals of Power Electronics,
/// 3rd ed., ch. 2, capacitor charge balance applied to the input
/// capacitor).
pub(crate) fn buck_input_ripple_rms_a(i_out_a: f64, duty: f64) -> f64 {
    let d = duty.clamp(0.0, 1.0);
    i_out_a.abs() * (d * (1.0 - d)).sqrt()
}

/// The highest supply voltage the design sees, V.
pub fn max_supply_v(s: &Scenario) -> f64 {
    s.supply
        .input_range_v
        .map_or(s.supply.voltage_v, |r| r.max_v.max(s.supply.voltage_v))
}

/// Every applicable design check for a run of scenario `s` with metrics `m`.
///
/// `startup_peak_a` is the highest inductor current from power-on (None
/// when the start-up was not run). Every row carries `s.supply.voltage_v`
/// as its supply.
pub fn design_checks(
    s: &Scenario,
    m: &Metrics,
    temps: &[PartTemperature],
    caps: &[CapacitorState],
    startup_peak_a: Option<f64>,
) -> Vec<Check> {
    let mut c = design_checks_at(s, m, temps, caps, startup_peak_a);
    for r in &mut c {
        r.supply_v = s.supply.voltage_v;
    }
    c
}

fn design_checks_at(
    s: &Scenario,
    m: &Metrics,
    temps: &[PartTemperature],
    caps: &[CapacitorState],
    startup_peak_a: Option<f64>,
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
        if let Some(peak) = startup_peak_a {
            upper(
                &mut c,
                "inductor start-up peak vs saturation current",
                peak,
                isat,
                0.9,
                "A",
                &format!(
                    "part rating inductor.saturation_current_a against the highest inductor \
                     current from power-on to steady state; {MARGIN}"
                ),
            );
        }
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
    if let Some(r) = d.average_current_rating_a {
        upper(
            &mut c,
            "diode average current vs rating",
            m.diode_current_avg_a,
            r,
            0.9,
            "A",
            &format!("part rating parts.diode.average_current_rating_a (I_F(AV)); {MARGIN}"),
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
            c.push(row(
                &format!("{name} peak voltage vs rating"),
                status,
                cs.peak_v,
                Some(r),
                "V",
                &format!(
                    "part rating; fail above the rating, warn above {:.0} % of it ({why})",
                    100.0 * frac
                ),
                cs.peak_v / r,
            ));
        }
        if let Some(r) = data.ripple_current_rating_a {
            let (frac, why) = bias::ripple_margin(data.dielectric);
            let how = if cs.ripple_estimated {
                "source resistance 0 (an ideal source): the simulated capacitor carries no \
                 ripple, so the textbook worst case I_out·√(D(1−D)) is used (Erickson & \
                 Maksimovic, Fundamentals of Power Electronics, 3rd ed., ch. 2, charge balance) \
                 until the supply path has an inductance; "
            } else {
                ""
            };
            upper(
                &mut c,
                &format!("{name} RMS ripple current vs rating"),
                cs.ripple_rms_a,
                r,
                frac,
                "A",
                &format!("{how}part rating ripple_current_rating_a; {why}"),
            );
        }
        if bias::bias_dependent(data) {
            let frac = cs.effective_f / cs.nominal_f;
            c.push(row(
                &format!("{name} capacitance left under DC bias"),
                if frac < 0.5 { Status::Warn } else { Status::Ok },
                100.0 * frac,
                Some(50.0),
                "%",
                "bias curve (the part's own, or the class's typical curve, from memory); \
                 warn below 50 % of nominal (common practice)",
                0.5 / frac.max(1e-12),
            ));
        }
        if data.dielectric != crate::scenario::Dielectric::Unspecified
            || data.ripple_current_rating_a.is_some()
        {
            c.push(row(
                &format!("{name} ESR dissipation"),
                Status::Ok,
                cs.esr_loss_w,
                None,
                "W",
                "ESR·I_rms² from the run (reported; its heating is checked with a thermal \
                 path)",
                cs.esr_loss_w,
            ));
        }
    }
    // Temperatures.
    for t in temps {
        let name = if t.part == "led" {
            "LED junction".to_string()
        } else {
            t.part.replace('_', " ")
        };
        c.push(row(
            &format!("{name} temperature vs maximum"),
            temperature_status(t.temperature_c, t.max_temperature_c),
            t.temperature_c,
            Some(t.max_temperature_c),
            "°C",
            &format!(
                "part rating (thermal.max_temperature_c) with T = T_ambient + R_th·P; warn \
                 within {TEMPERATURE_MARGIN_K} K of it (common practice)"
            ),
            t.temperature_c - t.max_temperature_c,
        ));
        if t.part != "led" && t.temperature_c > TOUCH_HOT_C {
            c.push(row(
                &format!("{name} too hot to touch"),
                Status::Warn,
                t.temperature_c,
                Some(TOUCH_HOT_C),
                "°C",
                "common practice: above about 60 °C a surface burns a finger",
                t.temperature_c - TOUCH_HOT_C,
            ));
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
            c.push(row(
                "CCM intended: inductor valley over average",
                status,
                m.ccm_margin,
                Some(0.0),
                "",
                "parts.intended_mode = ccm; fail in DCM, warn at the boundary",
                -m.ccm_margin,
            ));
        }
        IntendedMode::Dcm => {
            c.push(row(
                "DCM intended: idle time per period",
                if m.conduction_mode == ConductionMode::Ccm {
                    Status::Fail
                } else {
                    Status::Ok
                },
                m.idle_time_s / m.period_s,
                Some(0.0),
                "",
                "parts.intended_mode = dcm; fail in CCM",
                -m.idle_time_s / m.period_s,
            ));
        }
    }
    // Frequency.
    let f = m.switching_frequency_hz;
    let ic = &p.controller;
    if let Some(lo) = ic.min_frequency_hz {
        c.push(row(
            "switching frequency vs controller minimum",
            if f < lo { Status::Fail } else { Status::Ok },
            f,
            Some(lo),
            "Hz",
            "controller data parts.controller.min_frequency_hz",
            lo / f,
        ));
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
    c.push(row(
        "switching frequency above the audible band",
        if f < 20e3 { Status::Warn } else { Status::Ok },
        f,
        Some(20e3),
        "Hz",
        "common practice: human hearing reaches about 20 kHz; inductors and ceramic \
         capacitors sing below it",
        20e3 / f,
    ));
    if let Some(ton) = ic.min_on_time_s {
        c.push(row(
            "on-time vs controller minimum",
            if m.on_time_s < ton {
                Status::Fail
            } else if m.on_time_s < 1.5 * ton {
                Status::Warn
            } else {
                Status::Ok
            },
            m.on_time_s,
            Some(ton),
            "s",
            "controller data parts.controller.min_on_time_s; warn below 1.5× it \
             (common practice: room for the controller's spread)",
            ton / m.on_time_s,
        ));
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

/// Allowed change of the average LED current over the declared input
/// range when `parts.current_accuracy_pct` is not given, % (**common
/// practice**).
pub const DEFAULT_REGULATION_PCT: f64 = 10.0;

/// One end of the declared input range, as the assessment met it.
#[derive(Debug, Clone, PartialEq)]
pub enum RangeEnd {
    /// The design ran there and delivered this average LED current.
    Ran {
        /// Supply voltage, V.
        supply_v: f64,
        /// Average LED current, A.
        led_current_avg_a: f64,
    },
    /// The design could not run there (invalid at that supply, or the
    /// simulation failed): why, with what was reached.
    Failed {
        /// Supply voltage, V.
        supply_v: f64,
        /// Which end: `low` or `high`.
        end: &'static str,
        /// The scenario or simulation error, in words.
        reason: String,
    },
}

/// The rows about the declared input range: whether the LED current
/// stays in regulation at its ends (with a regulating controller), and a
/// failing row for each end where the design does not run.
///
/// Regulation: the largest change of the average LED current at an end
/// from the nominal supply's `nominal_led_avg_a`, in %, against
/// `parts.current_accuracy_pct` (else [`DEFAULT_REGULATION_PCT`]); warn
/// above half of it (common practice).
pub fn range_checks(s: &Scenario, nominal_led_avg_a: f64, ends: &[RangeEnd]) -> Vec<Check> {
    let mut c = Vec::new();
    let regulating = s.target_current_a().is_some() || s.parts.led_current_target_a.is_some();
    let mut worst: Option<(f64, f64)> = None;
    for e in ends {
        match e {
            RangeEnd::Ran {
                supply_v,
                led_current_avg_a,
            } => {
                let dev = 100.0 * (led_current_avg_a - nominal_led_avg_a).abs()
                    / nominal_led_avg_a.abs().max(1e-30);
                if worst.is_none_or(|(d, _)| dev > d) {
                    worst = Some((dev, *supply_v));
                }
            }
            RangeEnd::Failed {
                supply_v,
                end,
                reason,
            } => {
                let mut r = row(
                    &format!("design runs at the {end} end of the input range"),
                    Status::Fail,
                    *supply_v,
                    None,
                    "V",
                    &format!(
                        "supply.input_range_v: at {supply_v} V the design does not run: {reason}"
                    ),
                    f64::INFINITY,
                );
                r.supply_v = *supply_v;
                c.push(r);
            }
        }
    }
    if let (true, Some((dev, at))) = (regulating, worst) {
        let (limit, whose) = match s.parts.current_accuracy_pct {
            Some(a) => (a, "parts.current_accuracy_pct".to_string()),
            None => (
                DEFAULT_REGULATION_PCT,
                format!("{DEFAULT_REGULATION_PCT} % (common practice)"),
            ),
        };
        let mut r = Vec::new();
        upper(
            &mut r,
            "LED current regulation over the input range",
            dev,
            limit,
            0.5,
            "%",
            &format!(
                "change of the average LED current at the ends of supply.input_range_v from its \
                 value at the nominal supply, against {whose}; warn above half of it (common \
                 practice)"
            ),
        );
        for mut x in r {
            x.supply_v = at;
            c.push(x);
        }
    }
    c
}

/// One table from the tables of runs at several supplies: for each
/// check, the row with the worst status (between equal statuses, the
/// larger severity), in the order first met; a row that appears at only
/// some supplies is kept.
pub(crate) fn worst_over_supplies(tables: &[Vec<Check>]) -> Vec<Check> {
    let mut out: Vec<Check> = Vec::new();
    for t in tables {
        for r in t {
            match out.iter_mut().find(|o| o.check == r.check) {
                Some(o) => {
                    if (r.status, r.severity) > (o.status, o.severity) {
                        *o = r.clone();
                    }
                }
                None => out.push(r.clone()),
            }
        }
    }
    out
}
