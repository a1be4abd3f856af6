//! The study objects a scenario may carry: `tolerances` (part tolerances
//! for spread studies) and `spec` (acceptance limits), with their
//! validation. What a spread study does with them is the study layer's
//! business (its `spread` module).

use super::de::{de_opt_a, de_opt_ratio, de_quantity};
use super::{Load, Scenario};
use crate::error::FieldProblem;
use crate::units::Unit;
use serde::de::Deserializer;
use serde::{Deserialize, Serialize};
use std::fmt;

/// How a toleranced value is distributed between its limits.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default, Serialize, Deserialize)]
#[serde(rename_all = "lowercase")]
pub enum Distribution {
    /// Equally likely anywhere within ±tolerance.
    #[default]
    Uniform,
    /// Gaussian about the nominal with 3σ at the tolerance (not cut off).
    Normal,
}

/// One toleranced scenario field.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct PartTolerance {
    /// Dotted path of a numeric field, e.g. `inductor.inductance_h`.
    pub path: String,
    /// ± tolerance, % of the nominal value (above 0, at most 50).
    #[serde(deserialize_with = "de_pct")]
    pub tolerance_pct: f64,
    /// The distribution (default uniform).
    #[serde(default)]
    pub distribution: Distribution,
}

/// The spread of the LED string's forward voltage: the whole V(I) curve
/// scaled by (1 + δ) (knee model), or the exponential model's saturation
/// current changed so the forward voltage at `at_current_a` moves by δ.
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct LedVoltageTolerance {
    /// ± tolerance, % of the forward voltage (above 0, at most 50).
    #[serde(deserialize_with = "de_pct")]
    pub tolerance_pct: f64,
    /// The distribution (default uniform).
    #[serde(default)]
    pub distribution: Distribution,
    /// Current at which the tolerance holds, A (default: the controller's
    /// target current; needed for the exponential model).
    #[serde(
        default,
        deserialize_with = "de_opt_a",
        skip_serializing_if = "Option::is_none"
    )]
    pub at_current_a: Option<f64>,
}

/// The scenario's `tolerances` object.
#[derive(Debug, Clone, PartialEq, Default, Serialize, Deserialize)]
#[serde(default, deny_unknown_fields)]
pub struct Tolerances {
    /// Toleranced fields.
    pub parts: Vec<PartTolerance>,
    /// LED forward-voltage spread.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub led_forward_voltage: Option<LedVoltageTolerance>,
    /// The supply takes any value of `supply.input_range_v` (uniformly in
    /// Monte Carlo, both ends as corners).
    pub supply_over_range: bool,
}

/// The scenario's `spec` object: acceptance limits for a build.
#[derive(Debug, Clone, Copy, PartialEq, Default, Serialize, Deserialize)]
#[serde(default, deny_unknown_fields)]
pub struct SpecLimits {
    /// Target LED current, A (default: the nominal design's simulated
    /// average LED current).
    #[serde(deserialize_with = "de_opt_a", skip_serializing_if = "Option::is_none")]
    pub target_current_a: Option<f64>,
    /// The average LED current must be within ± this % of the target.
    #[serde(
        deserialize_with = "de_opt_pct",
        skip_serializing_if = "Option::is_none"
    )]
    pub current_within_pct: Option<f64>,
    /// Peak-to-peak LED ripple at most this % of the average.
    #[serde(
        deserialize_with = "de_opt_pct",
        skip_serializing_if = "Option::is_none"
    )]
    pub max_ripple_pct: Option<f64>,
    /// The inductor current must not rest at zero (DCM fails; the
    /// boundary passes).
    pub no_dcm: bool,
    /// Efficiency at least this (a fraction, e.g. 0.85 or `85%`).
    #[serde(
        deserialize_with = "de_opt_ratio",
        skip_serializing_if = "Option::is_none"
    )]
    pub min_efficiency: Option<f64>,
}

// ---------------------------------------------------------------------------
// Engineering notation for the new fields.

/// A percentage: a plain number of percent (`20`), `"20%"` is not used
/// here to avoid reading 20 % as 0.2 %.
fn de_pct<'de, D: Deserializer<'de>>(d: D) -> Result<f64, D::Error> {
    de_quantity(d, Unit::Ratio)
}
fn de_opt_pct<'de, D: Deserializer<'de>>(d: D) -> Result<Option<f64>, D::Error> {
    de_pct(d).map(Some)
}

// ---------------------------------------------------------------------------
// Validation (called from `Scenario::validate`).

fn problem(path: &str, value: impl fmt::Display, reason: &str) -> FieldProblem {
    FieldProblem {
        path: path.into(),
        value: value.to_string(),
        reason: reason.into(),
    }
}

fn pct_range(out: &mut Vec<FieldProblem>, path: &str, v: f64, hi: f64) {
    if !(v.is_finite() && v > 0.0 && v <= hi) {
        out.push(problem(
            path,
            v,
            &format!("must be above 0 and at most {hi} (%)"),
        ));
    }
}

/// Every problem with the scenario's `tolerances` and `spec` objects.
pub(super) fn check(s: &Scenario) -> Vec<FieldProblem> {
    let mut out = Vec::new();
    if let Some(t) = &s.tolerances {
        // The scenario as JSON only for a path the numeric field table
        // does not know (its message quotes the JSON found there).
        let mut json = None;
        for (k, p) in t.parts.iter().enumerate() {
            let at = format!("tolerances.parts[{k}]");
            let root = p.path.split('.').next().unwrap_or("");
            if ["tolerances", "spec", "simulation", "name", "description"].contains(&root) {
                out.push(problem(
                    &format!("{at}.path"),
                    &p.path,
                    "must name a part's numeric field (supply, capacitors, switch, diode, \
                     inductor, load, controller)",
                ));
            } else if s.numeric_value(&p.path).is_none() {
                let json = json.get_or_insert_with(|| {
                    serde_json::to_value(s).unwrap_or(serde_json::Value::Null)
                });
                if let Err(r) = super::paths::numeric_field(json, &p.path) {
                    out.push(problem(&format!("{at}.path"), &p.path, &r));
                }
            }
            if t.parts[..k].iter().any(|q| q.path == p.path) {
                out.push(problem(&format!("{at}.path"), &p.path, "listed twice"));
            }
            if t.supply_over_range && p.path == "supply.voltage_v" {
                out.push(problem(
                    &format!("{at}.path"),
                    &p.path,
                    "the supply already varies over its range (tolerances.supply_over_range)",
                ));
            }
            pct_range(
                &mut out,
                &format!("{at}.tolerance_pct"),
                p.tolerance_pct,
                50.0,
            );
        }
        if let Some(vf) = &t.led_forward_voltage {
            pct_range(
                &mut out,
                "tolerances.led_forward_voltage.tolerance_pct",
                vf.tolerance_pct,
                50.0,
            );
            if let Some(i) = vf.at_current_a {
                if !(i.is_finite() && i > 0.0) {
                    out.push(problem(
                        "tolerances.led_forward_voltage.at_current_a",
                        i,
                        "must be a positive current",
                    ));
                }
            }
            match s.load {
                Load::Resistor { .. } => out.push(problem(
                    "tolerances.led_forward_voltage",
                    "",
                    "the load is a resistor, which has no LED forward voltage",
                )),
                Load::LedExponential { .. }
                    if vf.at_current_a.is_none() && s.target_current_a().is_none() =>
                {
                    out.push(problem(
                        "tolerances.led_forward_voltage.at_current_a",
                        "",
                        "the controller has no target current: give the current at which the \
                         forward-voltage tolerance holds",
                    ))
                }
                _ => {}
            }
        }
        if t.supply_over_range && s.supply.input_range_v.is_none() {
            out.push(problem(
                "tolerances.supply_over_range",
                "true",
                "needs supply.input_range_v (the range the supply may take)",
            ));
        }
    }
    if let Some(l) = &s.spec {
        if let Some(t) = l.target_current_a {
            if !(t.is_finite() && t > 0.0) {
                out.push(problem(
                    "spec.target_current_a",
                    t,
                    "must be a positive current",
                ));
            }
        }
        if let Some(p) = l.current_within_pct {
            pct_range(&mut out, "spec.current_within_pct", p, 100.0);
        }
        if let Some(p) = l.max_ripple_pct {
            pct_range(&mut out, "spec.max_ripple_pct", p, 1000.0);
        }
        if let Some(e) = l.min_efficiency {
            if !(e.is_finite() && e > 0.0 && e <= 1.0) {
                out.push(problem(
                    "spec.min_efficiency",
                    e,
                    "must be a fraction above 0 and at most 1 (e.g. 0.85)",
                ));
            }
        }
    }
    out
}
