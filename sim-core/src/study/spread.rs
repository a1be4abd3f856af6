//! Tolerance spread: what the parts' tolerances do to a design.
//!
//! A scenario may carry two optional objects:
//!
//! - `tolerances` ([`Tolerances`]): a list of numeric fields, each with a
//!   ± tolerance in % and a distribution (`uniform` over ±tolerance, or
//!   `normal` with 3σ at the tolerance); the LED string's forward-voltage
//!   spread; and whether the supply takes any value of its declared
//!   `supply.input_range_v`.
//! - `spec` ([`SpecLimits`]): what a build must meet — LED current within
//!   ±x % of a target, a ripple limit, no DCM, a minimum efficiency.
//!
//! [`spread`] draws Monte Carlo samples (sample `k`'s random stream is
//! ChaCha8 seeded from the seed with stream number `k`, so results do
//! not depend on threads or shards); [`corners`] runs every tolerance at
//! both extremes. [`summarize`] gives percentiles of every metric and the
//! yield against the limits, from the rows alone.

use super::rows::{Incomplete, Manifest, Row, RowExt, ShardInfo, StudyKind, StudyTable};
use super::run::{Hooks, PointInput, RunSettings, Shard};
use super::sweep::{base_manifest, run_table};
use super::{numeric_field, scenario_json, scenario_with, StudyError};
use crate::error::FieldProblem;
use crate::run::{run_point, RunOptions};
use crate::scenario::de_quantity;
use crate::scenario::{Load, Scenario};
use crate::units::{eng_exact, eng_sig, short_number, thermal_voltage_v, Unit};
use rand_chacha::rand_core::{RngCore, SeedableRng};
use rand_chacha::ChaCha8Rng;
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

/// A pass/fail test of one row.
pub type RowTest<'a> = Box<dyn Fn(&Row) -> bool + 'a>;

impl SpecLimits {
    /// Whether any limit is set.
    pub fn any(&self) -> bool {
        self.current_within_pct.is_some()
            || self.max_ripple_pct.is_some()
            || self.no_dcm
            || self.min_efficiency.is_some()
    }

    /// Each limit a row is judged against, in words, with its test.
    pub fn checks(&self) -> Vec<(String, RowTest<'_>)> {
        let mut v: Vec<(String, RowTest<'_>)> = Vec::new();
        if let (Some(pct), Some(t)) = (self.current_within_pct, self.target_current_a) {
            v.push((
                format!(
                    "LED current within ±{} % of {}",
                    short_number(pct, 4),
                    eng_sig(t, "A", 4)
                ),
                Box::new(move |r| {
                    r.metric("led_current_avg_a")
                        .is_some_and(|i| (i - t).abs() <= pct / 100.0 * t)
                }),
            ));
        }
        if let Some(max) = self.max_ripple_pct {
            v.push((
                format!("LED ripple at most {} %", short_number(max, 4)),
                Box::new(move |r| r.metric("led_current_ripple_pct").is_some_and(|x| x <= max)),
            ));
        }
        if self.no_dcm {
            v.push((
                "no DCM".into(),
                Box::new(|r| r.ok() && r.mode() != Some("dcm")),
            ));
        }
        if let Some(min) = self.min_efficiency {
            v.push((
                format!("efficiency at least {} %", short_number(100.0 * min, 4)),
                Box::new(move |r| r.metric("efficiency").is_some_and(|x| x >= min)),
            ));
        }
        v
    }
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
fn de_opt_ratio<'de, D: Deserializer<'de>>(d: D) -> Result<Option<f64>, D::Error> {
    de_quantity(d, Unit::Ratio).map(Some)
}
fn de_opt_a<'de, D: Deserializer<'de>>(d: D) -> Result<Option<f64>, D::Error> {
    de_quantity(d, Unit::Ampere).map(Some)
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
pub fn check(s: &Scenario) -> Vec<FieldProblem> {
    let mut out = Vec::new();
    if let Some(t) = &s.tolerances {
        let json = scenario_json(s);
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
            } else if let Err(r) = numeric_field(&json, &p.path) {
                out.push(problem(&format!("{at}.path"), &p.path, &r));
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

// ---------------------------------------------------------------------------
// Parameters and sampling.

/// What a parameter changes.
#[derive(Debug, Clone, PartialEq)]
pub enum ParamKind {
    /// A numeric field, from its nominal value.
    Field {
        /// Dotted path.
        path: String,
        /// Nominal value.
        nominal: f64,
    },
    /// The LED forward voltage, as a factor on the nominal (1 = nominal).
    LedVoltage {
        /// Current at which the factor holds, A.
        at_current_a: f64,
    },
    /// The supply voltage over its declared range, V.
    Supply {
        /// Lowest, V.
        min_v: f64,
        /// Highest, V.
        max_v: f64,
    },
}

/// One toleranced input of a spread study.
#[derive(Debug, Clone, PartialEq)]
pub struct Param {
    /// The input column name.
    pub name: String,
    /// What it changes.
    pub kind: ParamKind,
    /// ± tolerance as a fraction (unused for the supply range).
    pub tolerance: f64,
    /// Its distribution (the supply range is uniform).
    pub distribution: Distribution,
}

/// Name of the LED forward-voltage input column.
pub const LED_VOLTAGE_INPUT: &str = "led_forward_voltage_factor";

impl Param {
    /// The value at the standard-uniform number `u` in (0, 1).
    pub fn at(&self, u: f64) -> f64 {
        let delta = match self.distribution {
            Distribution::Uniform => self.tolerance * (2.0 * u - 1.0),
            Distribution::Normal => self.tolerance / 3.0 * normal_quantile(u),
        };
        match &self.kind {
            ParamKind::Field { nominal, .. } => nominal * (1.0 + delta),
            ParamKind::LedVoltage { .. } => 1.0 + delta,
            ParamKind::Supply { min_v, max_v } => min_v + u * (max_v - min_v),
        }
    }

    /// The value at the low (`false`) or high (`true`) extreme.
    pub fn extreme(&self, high: bool) -> f64 {
        let s = if high { 1.0 } else { -1.0 };
        match &self.kind {
            ParamKind::Field { nominal, .. } => nominal * (1.0 + s * self.tolerance),
            ParamKind::LedVoltage { .. } => 1.0 + s * self.tolerance,
            ParamKind::Supply { min_v, max_v } => {
                if high {
                    *max_v
                } else {
                    *min_v
                }
            }
        }
    }

    /// Nominal, tolerance and distribution in words.
    pub fn note(&self) -> String {
        let dist = match self.distribution {
            Distribution::Uniform => "uniform",
            Distribution::Normal => "normal, 3σ at the tolerance",
        };
        match &self.kind {
            ParamKind::Field { nominal, path } => format!(
                "{}: nominal {}, ±{} % {dist}",
                self.name,
                eng_exact(*nominal, super::vary::unit_of(path)),
                short_number(100.0 * self.tolerance, 4)
            ),
            ParamKind::LedVoltage { at_current_a } => format!(
                "{}: LED forward voltage at {}, ±{} % {dist}",
                self.name,
                eng_exact(*at_current_a, Unit::Ampere),
                short_number(100.0 * self.tolerance, 4)
            ),
            ParamKind::Supply { min_v, max_v } => {
                format!(
                    "{}: uniform over {} to {}",
                    self.name,
                    eng_exact(*min_v, Unit::Volt),
                    eng_exact(*max_v, Unit::Volt)
                )
            }
        }
    }
}

/// The toleranced inputs of a scenario, in a fixed order: the listed
/// parts, then the LED forward voltage, then the supply.
pub fn params(s: &Scenario) -> Result<Vec<Param>, StudyError> {
    let t = s.tolerances.clone().unwrap_or_default();
    let json = scenario_json(s);
    let mut v = Vec::new();
    for p in &t.parts {
        let nominal = numeric_field(&json, &p.path).map_err(|reason| StudyError::Scenario {
            path: p.path.clone(),
            reason,
        })?;
        v.push(Param {
            name: p.path.clone(),
            kind: ParamKind::Field {
                path: p.path.clone(),
                nominal,
            },
            tolerance: p.tolerance_pct / 100.0,
            distribution: p.distribution,
        });
    }
    if let Some(vf) = t.led_forward_voltage {
        v.push(Param {
            name: LED_VOLTAGE_INPUT.into(),
            kind: ParamKind::LedVoltage {
                at_current_a: vf.at_current_a.or(s.target_current_a()).unwrap_or(1.0),
            },
            tolerance: vf.tolerance_pct / 100.0,
            distribution: vf.distribution,
        });
    }
    if t.supply_over_range {
        if let Some(r) = s.supply.input_range_v {
            v.push(Param {
                name: "supply.voltage_v".into(),
                kind: ParamKind::Supply {
                    min_v: r.min_v,
                    max_v: r.max_v,
                },
                tolerance: 0.0,
                distribution: Distribution::Uniform,
            });
        }
    }
    if v.is_empty() {
        return Err(StudyError::Scenario {
            path: "tolerances".into(),
            reason: "the scenario declares no tolerances: add a `tolerances` object with \
                     `parts`, `led_forward_voltage` or `supply_over_range`"
                .into(),
        });
    }
    Ok(v)
}

/// The standard normal quantile Φ⁻¹(p), 0 < p < 1, by P. J. Acklam's
/// rational approximation (relative error below 1.2e-9 by its author's
/// account; checked against tabulated quantiles in the tests).
pub fn normal_quantile(p: f64) -> f64 {
    const A: [f64; 6] = [
        -3.969_683_028_665_376e1,
        2.209_460_984_245_205e2,
        -2.759_285_104_469_687e2,
        1.383_577_518_672_69e2,
        -3.066_479_806_614_716e1,
        2.506_628_277_459_239,
    ];
    const B: [f64; 5] = [
        -5.447_609_879_822_406e1,
        1.615_858_368_580_409e2,
        -1.556_989_798_598_866e2,
        6.680_131_188_771_972e1,
        -1.328_068_155_288_572e1,
    ];
    const C: [f64; 6] = [
        -7.784_894_002_430_293e-3,
        -3.223_964_580_411_365e-1,
        -2.400_758_277_161_838,
        -2.549_732_539_343_734,
        4.374_664_141_464_968,
        2.938_163_982_698_783,
    ];
    const D: [f64; 4] = [
        7.784_695_709_041_462e-3,
        3.224_671_290_700_398e-1,
        2.445_134_137_142_996,
        3.754_408_661_907_416,
    ];
    if p.is_nan() || p <= 0.0 {
        return f64::NEG_INFINITY;
    }
    if p >= 1.0 {
        return f64::INFINITY;
    }
    let tail = |q: f64| {
        (((((C[0] * q + C[1]) * q + C[2]) * q + C[3]) * q + C[4]) * q + C[5])
            / ((((D[0] * q + D[1]) * q + D[2]) * q + D[3]) * q + 1.0)
    };
    const P_LOW: f64 = 0.02425;
    if p < P_LOW {
        tail((-2.0 * p.ln()).sqrt())
    } else if p <= 1.0 - P_LOW {
        let q = p - 0.5;
        let r = q * q;
        (((((A[0] * r + A[1]) * r + A[2]) * r + A[3]) * r + A[4]) * r + A[5]) * q
            / (((((B[0] * r + B[1]) * r + B[2]) * r + B[3]) * r + B[4]) * r + 1.0)
    } else {
        -tail((-2.0 * (1.0 - p).ln()).sqrt())
    }
}

/// A standard-uniform number in (0, 1) from 53 random bits.
fn unit(rng: &mut ChaCha8Rng) -> f64 {
    ((rng.next_u64() >> 11) as f64 + 0.5) * (1.0 / (1u64 << 53) as f64)
}

/// The input values of Monte Carlo sample `index` (one standard-uniform
/// draw per parameter, in order, from its own ChaCha8 stream).
pub fn sample_inputs(params: &[Param], seed: u64, index: usize) -> Vec<f64> {
    let mut rng = ChaCha8Rng::seed_from_u64(seed);
    rng.set_stream(index as u64);
    params.iter().map(|p| p.at(unit(&mut rng))).collect()
}

/// The scenario with the parameters at `values`.
pub fn scenario_at(
    base: &serde_json::Value,
    params: &[Param],
    values: &[f64],
) -> Result<Scenario, String> {
    let mut sets = Vec::new();
    let mut led = None;
    for (p, &v) in params.iter().zip(values) {
        match &p.kind {
            ParamKind::Field { path, .. } => sets.push((path.clone(), v)),
            ParamKind::Supply { .. } => sets.push(("supply.voltage_v".to_string(), v)),
            ParamKind::LedVoltage { at_current_a } => led = Some((v, *at_current_a)),
        }
    }
    let mut s = scenario_with(base, &sets).map_err(|e| format!("invalid sample: {e}"))?;
    if let Some((factor, i_ref)) = led {
        scale_led_voltage(&mut s, factor, i_ref)?;
        s.validate().map_err(|e| format!("invalid sample: {e}"))?;
    }
    Ok(s)
}

/// Scales the LED string's forward voltage by `factor` (at `i_ref` for
/// the exponential model, whose saturation current is solved for).
pub fn scale_led_voltage(s: &mut Scenario, factor: f64, i_ref: f64) -> Result<(), String> {
    // The saturation current at the junction temperature (the scenario's
    // value holds at its reference temperature; the junction law scales
    // both alike).
    let is_at_junction =
        crate::devices::ExpDevice::from_load(&s.load).map(|d| d.saturation_current_a);
    match &mut s.load {
        Load::LedKnee {
            knee_voltage_v,
            dynamic_resistance_ohm,
            ..
        } => {
            *knee_voltage_v *= factor;
            *dynamic_resistance_ohm *= factor;
            Ok(())
        }
        Load::LedExponential {
            saturation_current_a,
            emission_coefficient,
            series_resistance_ohm,
            junction_temperature_c,
            ..
        } => {
            let nvt = *emission_coefficient * thermal_voltage_v(*junction_temperature_c);
            let is_t = is_at_junction.unwrap_or(*saturation_current_a);
            let v = nvt * (i_ref / is_t).ln_1p() + *series_resistance_ohm * i_ref;
            let junction = factor * v - *series_resistance_ohm * i_ref;
            if junction <= 0.0 {
                return Err(format!(
                    "an LED forward voltage {factor} times nominal is below the series-resistance \
                     drop at {i_ref} A"
                ));
            }
            *saturation_current_a *= i_ref / (junction / nvt).exp_m1() / is_t;
            Ok(())
        }
        Load::Resistor { .. } => Err("the load has no LED forward voltage".into()),
    }
}

/// What a spread or corners study needs besides the scenario.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct SpreadSettings {
    /// Monte Carlo samples.
    pub samples: usize,
    /// The seed.
    pub seed: u64,
    /// Engine and warm start (samples start from the nominal design's
    /// steady state when `warm_start` is set).
    pub run: RunSettings,
}

/// The nominal run and the limits with their target resolved.
fn nominal(
    s: &Scenario,
    limits: &SpecLimits,
    run: &RunSettings,
) -> Result<(SpecLimits, RunSettings), StudyError> {
    let r = run_point(
        s,
        &RunOptions {
            engine: run.engine,
            initial_state: run.initial_state,
        },
    )
    .map_err(|e| StudyError::Nominal(e.to_string()))?;
    let mut l = *limits;
    if l.target_current_a.is_none() {
        l.target_current_a = Some(r.metrics.led_current_avg_a);
    }
    let mut settings = *run;
    settings.chain_len = 1;
    if run.warm_start {
        settings.initial_state = Some(r.steady.state_at_turn_on);
    }
    Ok((l, settings))
}

fn table(
    s: &Scenario,
    kind: StudyKind,
    params: &[Param],
    points: usize,
    limits: SpecLimits,
    settings: &RunSettings,
    shard: Option<Shard>,
) -> Manifest {
    let mut m = base_manifest(
        s,
        kind,
        settings,
        params.iter().map(|p| p.name.clone()).collect(),
        points,
    );
    m.input_notes = params.iter().map(Param::note).collect();
    m.spec = Some(limits);
    for p in params {
        if let ParamKind::Supply { max_v, .. } = p.kind {
            m.max_supply_v = m.max_supply_v.max(max_v);
        }
        if let ParamKind::Field { path, .. } = &p.kind {
            if path == "supply.voltage_v" {
                m.max_supply_v = m.max_supply_v.max(p.extreme(true));
            }
        }
    }
    if let Some(sh) = shard {
        let range = sh.range(points, 1);
        m.shard = Some(ShardInfo {
            shard: sh,
            first: range.start,
            end: range.end,
        });
    }
    m
}

/// Everything a spread needs before its samples run: the toleranced
/// inputs, the run settings (warm start from the nominal) and the manifest.
fn spread_setup(
    s: &Scenario,
    limits: &SpecLimits,
    settings: &SpreadSettings,
    shard: Option<Shard>,
) -> Result<(Vec<Param>, RunSettings, Manifest), StudyError> {
    let params = params(s)?;
    let (limits, run) = nominal(s, limits, &settings.run)?;
    let mut m = table(
        s,
        StudyKind::Spread,
        &params,
        settings.samples,
        limits,
        &run,
        shard,
    );
    m.seed = Some(settings.seed);
    m.warm_start = settings.run.warm_start;
    Ok((params, run, m))
}

/// The manifest [`spread`] will write, known before any sample runs (it
/// runs the nominal design, which resolves the target current).
pub fn spread_manifest(
    s: &Scenario,
    limits: &SpecLimits,
    settings: &SpreadSettings,
    shard: Option<Shard>,
) -> Result<Manifest, StudyError> {
    spread_setup(s, limits, settings, shard).map(|x| x.2)
}

/// Runs a Monte Carlo spread study (or one shard of it), streaming rows
/// through `hooks`. `limits` are the spec limits to judge (usually the
/// scenario's `spec` with command-line changes); an unset target current
/// becomes the nominal's average.
pub fn spread(
    s: &Scenario,
    limits: &SpecLimits,
    settings: &SpreadSettings,
    shard: Option<Shard>,
    hooks: &Hooks<'_>,
) -> Result<StudyTable, StudyError> {
    let (params, run, manifest) = spread_setup(s, limits, settings, shard)?;
    let base = scenario_json(s);
    Ok(run_table(
        manifest,
        &run,
        |k| {
            let x = sample_inputs(&params, settings.seed, k);
            let scenario = scenario_at(&base, &params, &x);
            PointInput {
                inputs: x,
                label: None,
                scenario,
            }
        },
        hooks,
    ))
}

/// Most toleranced inputs for a corners study (2ⁿ runs).
pub const MAX_CORNER_INPUTS: usize = 12;

fn corners_setup(
    s: &Scenario,
    limits: &SpecLimits,
    run: &RunSettings,
    shard: Option<Shard>,
) -> Result<(Vec<Param>, RunSettings, Manifest), StudyError> {
    let params = params(s)?;
    if params.len() > MAX_CORNER_INPUTS {
        return Err(StudyError::Scenario {
            path: "tolerances".into(),
            reason: format!(
                "{} toleranced inputs make 2^{} corners; at most {MAX_CORNER_INPUTS} inputs \
                 (use the Monte Carlo spread for more)",
                params.len(),
                params.len()
            ),
        });
    }
    let (limits, settings) = nominal(s, limits, run)?;
    let n = 1usize << params.len();
    let mut m = table(s, StudyKind::Corners, &params, n, limits, &settings, shard);
    m.warm_start = run.warm_start;
    Ok((params, settings, m))
}

/// The manifest [`corners`] will write, known before any corner runs.
pub fn corners_manifest(
    s: &Scenario,
    limits: &SpecLimits,
    run: &RunSettings,
    shard: Option<Shard>,
) -> Result<Manifest, StudyError> {
    corners_setup(s, limits, run, shard).map(|x| x.2)
}

/// Runs every corner: each toleranced input at its low or high extreme
/// (corner `k` has input `j` high when bit `j` of `k` is set), streaming
/// rows through `hooks`.
pub fn corners(
    s: &Scenario,
    limits: &SpecLimits,
    run: &RunSettings,
    shard: Option<Shard>,
    hooks: &Hooks<'_>,
) -> Result<StudyTable, StudyError> {
    let (params, settings, manifest) = corners_setup(s, limits, run, shard)?;
    let base = scenario_json(s);
    Ok(run_table(
        manifest,
        &settings,
        |k| {
            let x: Vec<f64> = params
                .iter()
                .enumerate()
                .map(|(j, p)| p.extreme(k >> j & 1 == 1))
                .collect();
            let scenario = scenario_at(&base, &params, &x);
            PointInput {
                inputs: x,
                label: Some(corner_label(&params, k)),
                scenario,
            }
        },
        hooks,
    ))
}

/// A corner in words: `inductor.inductance_h low, supply.voltage_v high`.
pub fn corner_label(params: &[Param], k: usize) -> String {
    params
        .iter()
        .enumerate()
        .map(|(j, p)| {
            format!(
                "{} {}",
                p.name,
                if k >> j & 1 == 1 { "high" } else { "low" }
            )
        })
        .collect::<Vec<_>>()
        .join(", ")
}

// ---------------------------------------------------------------------------
// Statistics from the rows.

/// The `p`-quantile (0..1) of sorted values: linear interpolation between
/// order statistics at h = (n − 1)·p (Hyndman & Fan, "Sample quantiles in
/// statistical packages", The American Statistician 50(4), 1996: type 7).
pub fn quantile_sorted(sorted: &[f64], p: f64) -> f64 {
    if sorted.is_empty() {
        return f64::NAN;
    }
    let h = (sorted.len() - 1) as f64 * p.clamp(0.0, 1.0);
    let lo = h.floor() as usize;
    let hi = (lo + 1).min(sorted.len() - 1);
    sorted[lo] + (h - lo as f64) * (sorted[hi] - sorted[lo])
}

/// Percentiles of one metric over the points that ran.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct MetricSpread {
    /// Metric name (JSON field).
    pub metric: String,
    /// Points with a value.
    pub count: usize,
    /// Smallest.
    pub min: f64,
    /// 1st percentile.
    pub p01: f64,
    /// Median.
    pub p50: f64,
    /// 99th percentile.
    pub p99: f64,
    /// Largest.
    pub max: f64,
    /// Which row has the smallest (corners: its label).
    pub min_at: String,
    /// Which row has the largest.
    pub max_at: String,
}

/// How many points meet one limit.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct LimitYield {
    /// The limit in words.
    pub limit: String,
    /// Points meeting it.
    pub pass: usize,
    /// Points judged (failed runs count as not meeting it).
    pub of: usize,
    /// The worst point for this limit (corners: its label).
    pub worst_at: Option<String>,
}

/// Percentiles and yield of a spread or corners table.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct SpreadSummary {
    /// Points in the table.
    pub points: usize,
    /// Points whose run failed.
    pub failed: usize,
    /// Every metric's spread.
    pub metrics: Vec<MetricSpread>,
    /// Each limit's yield.
    pub limits: Vec<LimitYield>,
    /// Points meeting every limit (None when no limit is set).
    pub pass: Option<usize>,
    /// Yield, fraction.
    pub yield_fraction: Option<f64>,
    /// Wilson score 95 % interval of the yield (E. B. Wilson, "Probable
    /// inference, the law of succession, and statistical inference",
    /// JASA 22, 1927).
    pub yield_interval_95: Option<(f64, f64)>,
    /// Set when the study stopped before every point ran: why, and how
    /// many ran of how many (absent otherwise).
    #[serde(skip_serializing_if = "Option::is_none")]
    pub incomplete: Option<Incomplete>,
}

fn who(r: &Row) -> String {
    r.label()
        .map_or_else(|| format!("sample {}", r.index()), str::to_string)
}

/// The Wilson score interval for `k` successes in `n` trials at z.
pub fn wilson(k: usize, n: usize, z: f64) -> (f64, f64) {
    if n == 0 {
        return (0.0, 1.0);
    }
    let n_f = n as f64;
    let p = k as f64 / n_f;
    let z2 = z * z;
    let centre = (p + z2 / (2.0 * n_f)) / (1.0 + z2 / n_f);
    let half = z / (1.0 + z2 / n_f) * (p * (1.0 - p) / n_f + z2 / (4.0 * n_f * n_f)).sqrt();
    ((centre - half).max(0.0), (centre + half).min(1.0))
}

/// Percentiles of every metric and the yield against the manifest's
/// limits, from the rows alone (so merged shards summarize identically).
pub fn summarize(t: &StudyTable) -> SpreadSummary {
    let mut metrics = Vec::new();
    for (col, name) in t.manifest.metric_columns.iter().enumerate() {
        let mut v: Vec<(f64, usize)> = t
            .rows
            .iter()
            .enumerate()
            .filter_map(|(k, r)| r.metric_at(col).filter(|x| x.is_finite()).map(|x| (x, k)))
            .collect();
        if v.is_empty() {
            continue;
        }
        v.sort_by(|a, b| a.0.total_cmp(&b.0).then(a.1.cmp(&b.1)));
        let sorted: Vec<f64> = v.iter().map(|x| x.0).collect();
        metrics.push(MetricSpread {
            metric: name.clone(),
            count: v.len(),
            min: sorted[0],
            p01: quantile_sorted(&sorted, 0.01),
            p50: quantile_sorted(&sorted, 0.5),
            p99: quantile_sorted(&sorted, 0.99),
            max: sorted[sorted.len() - 1],
            min_at: who(&t.rows[v[0].1]),
            max_at: who(&t.rows[v[v.len() - 1].1]),
        });
    }
    let limits = t.manifest.spec.unwrap_or_default();
    let checks = limits.checks();
    let n = t.rows.len();
    let mut yields = Vec::new();
    for (label, f) in &checks {
        let pass = t.rows.iter().filter(|r| f(r)).count();
        yields.push(LimitYield {
            limit: label.clone(),
            pass,
            of: n,
            worst_at: worst_for(t, label, &limits),
        });
    }
    let pass = (!checks.is_empty()).then(|| {
        t.rows
            .iter()
            .filter(|r| checks.iter().all(|(_, f)| f(r)))
            .count()
    });
    SpreadSummary {
        points: n,
        failed: t.failed(),
        metrics,
        limits: yields,
        pass,
        yield_fraction: pass.map(|p| if n == 0 { 0.0 } else { p as f64 / n as f64 }),
        yield_interval_95: pass.map(|p| wilson(p, n, 1.959_964)),
        incomplete: t.manifest.incomplete.clone(),
    }
}

/// The row furthest on the wrong side of a limit.
fn worst_for(t: &StudyTable, label: &str, l: &SpecLimits) -> Option<String> {
    let score = |r: &Row| -> Option<f64> {
        if label.starts_with("LED current") {
            let target = l.target_current_a?;
            r.metric("led_current_avg_a").map(|i| (i - target).abs())
        } else if label.starts_with("LED ripple") {
            r.metric("led_current_ripple_pct")
        } else if label == "no DCM" {
            r.metric("ccm_margin")
                .zip(r.metric("idle_time_s"))
                .map(|(m, idle)| idle - m)
        } else {
            r.metric("efficiency").map(|e| -e)
        }
    };
    if let Some(failed) = t.rows.iter().find(|r| !r.ok()) {
        return Some(who(failed));
    }
    t.rows
        .iter()
        .filter_map(|r| score(r).map(|s| (s, r)))
        .max_by(|a, b| a.0.total_cmp(&b.0).then(b.1.index().cmp(&a.1.index())))
        .map(|(_, r)| who(r))
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn normal_quantiles_match_the_tables() {
        // Standard normal quantiles, e.g. Abramowitz & Stegun, Handbook of
        // Mathematical Functions, table 26.5 (z for upper-tail 0.025, 0.01,
        // 0.001): 1.959964, 2.326348, 3.090232.
        for (p, z) in [
            (0.975, 1.959_964),
            (0.99, 2.326_348),
            (0.001, -3.090_232),
            (0.5, 0.0),
        ] {
            assert!((normal_quantile(p) - z).abs() < 2e-6, "p = {p}");
        }
    }

    #[test]
    fn quantiles_interpolate() {
        let v = [1.0, 2.0, 3.0, 4.0, 5.0];
        assert!((quantile_sorted(&v, 0.5) - 3.0).abs() < 1e-12);
        assert!((quantile_sorted(&v, 0.01) - 1.04).abs() < 1e-12);
    }

    #[test]
    fn wilson_interval_known_value() {
        // Wilson (1927) for 8 of 10 at z = 1.96: about 0.490 to 0.943
        // (a worked example common in statistics texts; from memory).
        let (lo, hi) = wilson(8, 10, 1.96);
        assert!(
            (lo - 0.490).abs() < 1e-3 && (hi - 0.943).abs() < 1e-3,
            "{lo} {hi}"
        );
    }
}
