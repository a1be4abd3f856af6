//! The simpler alternatives for the same LED string and supply range: a
//! series-resistor ballast and a linear current regulator.
//!
//! - **Resistor**: sized for the target current at the nominal supply,
//!   R = (V_nom − V_LED(I_target))/I_target; at another supply the current
//!   solves V = V_LED(I) + R·I. A small supply change ΔV moves the current
//!   by ΔI = ΔV/(R + r_d), r_d = dV_LED/dI the string's dynamic resistance
//!   (small-signal: the resistor and the string divide the change).
//! - **Linear regulator**: holds the target current while the supply
//!   exceeds V_LED + headroom; its pass element drops the rest, so its
//!   efficiency is V_LED/V_in and it dissipates (V_in − V_LED)·I (the
//!   controller's own current neglected; common practice). Below that it
//!   is in dropout and the current follows V_LED(I) = V_in − headroom.

use serde::Serialize;

use crate::scenario::Scenario;

/// Headroom a linear LED current regulator needs across its pass element
/// and sense resistor, V (**common practice**: about a volt for the usual
/// integrated parts; check the chosen part's dropout).
pub(crate) const LINEAR_HEADROOM_V: f64 = 1.0;

/// The supply span either side of nominal compared when the scenario
/// declares no input range: ±10 % (common practice for a regulated
/// supply's tolerance).
pub const ASSUMED_SPAN: f64 = 0.1;

/// One operating point of a driver at one supply voltage.
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
pub struct OperatingPoint {
    /// Supply voltage, V.
    pub supply_v: f64,
    /// Average LED current, A.
    pub led_current_a: f64,
    /// LED string voltage, V.
    pub led_voltage_v: f64,
    /// LED power over input power.
    pub efficiency: f64,
    /// Power lost in the driver, W.
    pub dissipation_w: f64,
}

/// A driver's points across the supply range.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct DriverSweep {
    /// `switching`, `resistor` or `linear`.
    pub driver: &'static str,
    /// One point per supply voltage (None: the design does not run there).
    pub points: Vec<Option<OperatingPoint>>,
    /// (highest − lowest LED current)/nominal-supply current over the
    /// points, %.
    pub current_variation_pct: Option<f64>,
}

/// The side-by-side comparison.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Comparison {
    /// Supply voltages compared (lowest, nominal, highest), V.
    pub supply_v: Vec<f64>,
    /// The target current the alternatives are sized for, A.
    pub target_current_a: f64,
    /// Ballast resistance (None: the supply is below the string voltage), Ω.
    pub resistor_ohm: Option<f64>,
    /// LED string dynamic resistance at the target current, Ω.
    pub led_dynamic_resistance_ohm: f64,
    /// Resistor ballast current change per volt of supply, A/V.
    pub resistor_sensitivity_a_per_v: Option<f64>,
    /// Headroom assumed for the linear regulator, V.
    pub linear_headroom_v: f64,
    /// The switching design, the resistor and the linear regulator.
    pub drivers: Vec<DriverSweep>,
    /// The relative span either side of the nominal supply used because
    /// the scenario declares no `supply.input_range_v` (e.g. 0.1: ±10 %);
    /// `None` when the declared range was used.
    pub assumed_span: Option<f64>,
}

/// Finds the current where `f(i) = 0` for an increasing `f` on `[0, hi]`.
fn solve_current(f: impl Fn(f64) -> f64, hi: f64) -> f64 {
    let (mut lo, mut hi) = (0.0_f64, hi.max(1e-12));
    if f(lo) >= 0.0 {
        return 0.0;
    }
    for _ in 0..200 {
        let mid = 0.5 * (lo + hi);
        if f(mid) < 0.0 {
            lo = mid;
        } else {
            hi = mid;
        }
    }
    0.5 * (lo + hi)
}

/// LED string dynamic resistance dV/dI at `i`, Ω (central difference).
pub fn dynamic_resistance_ohm(s: &Scenario, i: f64) -> f64 {
    let h = 1e-4 * i.max(1e-6);
    (s.load_voltage_v(i + h) - s.load_voltage_v(i - h)) / (2.0 * h)
}

/// The resistor ballast's point at supply `v` with resistance `r`.
pub fn resistor_point(s: &Scenario, r: f64, v: f64) -> OperatingPoint {
    let i = solve_current(|i| s.load_voltage_v(i) + r * i - v, v / r);
    let vl = s.load_voltage_v(i);
    OperatingPoint {
        supply_v: v,
        led_current_a: i,
        led_voltage_v: vl,
        efficiency: if v > 0.0 && i > 0.0 { vl / v } else { 0.0 },
        dissipation_w: r * i * i,
    }
}

/// The linear regulator's point at supply `v` for target current `target`.
pub fn linear_point(s: &Scenario, target: f64, headroom_v: f64, v: f64) -> OperatingPoint {
    let v_avail = v - headroom_v;
    let i = if s.load_voltage_v(target) <= v_avail {
        target
    } else {
        solve_current(|i| s.load_voltage_v(i) - v_avail, target)
    };
    let vl = s.load_voltage_v(i);
    OperatingPoint {
        supply_v: v,
        led_current_a: i,
        led_voltage_v: vl,
        efficiency: if v > 0.0 && i > 0.0 { vl / v } else { 0.0 },
        dissipation_w: (v - vl) * i,
    }
}

fn variation(points: &[Option<OperatingPoint>], nominal: usize) -> Option<f64> {
    let nom = points.get(nominal).copied().flatten()?.led_current_a;
    if nom <= 0.0 || points.iter().any(Option::is_none) {
        return None;
    }
    let cur = points.iter().flatten().map(|p| p.led_current_a);
    let hi = cur.clone().fold(f64::NEG_INFINITY, f64::max);
    let lo = cur.fold(f64::INFINITY, f64::min);
    Some(100.0 * (hi - lo) / nom)
}

/// The comparison for scenario `s` (its LED model as simulated), with the
/// switching design's points already simulated at `supply_v` (the nominal
/// supply at index `nominal`).
pub fn compare(
    s: &Scenario,
    target: f64,
    supply_v: &[f64],
    nominal: usize,
    switching: Vec<Option<OperatingPoint>>,
) -> Comparison {
    let v_nom = supply_v[nominal];
    let v_led = s.load_voltage_v(target);
    let rd = dynamic_resistance_ohm(s, target);
    let r = (v_nom > v_led).then(|| (v_nom - v_led) / target);
    let resistor: Vec<Option<OperatingPoint>> = supply_v
        .iter()
        .map(|&v| r.map(|r| resistor_point(s, r, v)))
        .collect();
    let linear: Vec<Option<OperatingPoint>> = supply_v
        .iter()
        .map(|&v| Some(linear_point(s, target, LINEAR_HEADROOM_V, v)))
        .collect();
    Comparison {
        supply_v: supply_v.to_vec(),
        target_current_a: target,
        resistor_ohm: r,
        led_dynamic_resistance_ohm: rd,
        resistor_sensitivity_a_per_v: r.map(|r| 1.0 / (r + rd)),
        linear_headroom_v: LINEAR_HEADROOM_V,
        assumed_span: None,
        drivers: vec![
            DriverSweep {
                driver: "switching",
                current_variation_pct: variation(&switching, nominal),
                points: switching,
            },
            DriverSweep {
                driver: "resistor",
                current_variation_pct: variation(&resistor, nominal),
                points: resistor,
            },
            DriverSweep {
                driver: "linear",
                current_variation_pct: variation(&linear, nominal),
                points: linear,
            },
        ],
    }
}
