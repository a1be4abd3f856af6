//! The toleranced inputs of a spread ([`Param`]), their Monte Carlo
//! draws (sample `k` from ChaCha8 stream `k`) and extremes, and a
//! sample applied to the scenario.

use crate::scenario::Distribution;
use crate::scenario::{Load, Scenario};
use crate::study::run::{LedVoltageError, PointError};
use crate::study::StudyError;
use crate::units::{eng_exact, short_number, thermal_voltage_v, Unit};
use rand_chacha::rand_core::{RngCore, SeedableRng};
use rand_chacha::ChaCha8Rng;

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
                eng_exact(*nominal, crate::study::vary::unit_of(path)),
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
    let mut v = Vec::new();
    for p in &t.parts {
        let nominal = s
            .numeric_field(&p.path)
            .map_err(|reason| StudyError::Scenario {
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

/// The scenario `base` with the parameters at `values`, validated once.
///
/// The fields are set in place ([`Scenario::with_values`]) and the LED
/// forward-voltage factor applied to the result before its one
/// validation, so the sample is checked as the design it is (a sample
/// whose fields alone, before the factor, would not pass is judged with
/// the factor applied). Bit for bit the scenario the JSON route gives.
pub fn scenario_at(
    base: &Scenario,
    params: &[Param],
    values: &[f64],
) -> Result<Scenario, PointError> {
    let mut sets = Vec::with_capacity(params.len());
    let mut led = None;
    for (p, &v) in params.iter().zip(values) {
        match &p.kind {
            ParamKind::Field { path, .. } => sets.push((path.clone(), v)),
            ParamKind::Supply { .. } => sets.push(("supply.voltage_v".to_string(), v)),
            ParamKind::LedVoltage { at_current_a } => led = Some((v, *at_current_a)),
        }
    }
    let Some((factor, i_ref)) = led else {
        return base.with_values(&sets).map_err(PointError::InvalidSample);
    };
    let mut s = match base.with_values_unvalidated(&sets) {
        Some(s) => s,
        // A value only the JSON route takes: loaded (and checked) that way.
        None => base.with_values(&sets).map_err(PointError::InvalidSample)?,
    };
    scale_led_voltage(&mut s, factor, i_ref)?;
    s.validate().map_err(PointError::InvalidSample)?;
    Ok(s)
}

/// Scales the LED string's forward voltage by `factor` (at `i_ref` for
/// the exponential model, whose saturation current is solved for).
pub fn scale_led_voltage(s: &mut Scenario, factor: f64, i_ref: f64) -> Result<(), LedVoltageError> {
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
                return Err(LedVoltageError::BelowSeriesDrop {
                    factor,
                    at_current_a: i_ref,
                });
            }
            *saturation_current_a *= i_ref / (junction / nvt).exp_m1() / is_t;
            Ok(())
        }
        Load::Resistor { .. } => Err(LedVoltageError::NotAnLed),
    }
}
