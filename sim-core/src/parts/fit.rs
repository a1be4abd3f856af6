//! The per-LED exponential model fitted to datasheet points.
//!
//! The model is v = n·Vt·ln(1 + i/Is) + Rs·i (Shockley's diode equation
//! with a series resistance; Vt = kT/q from the CODATA constants in
//! [`crate::units`]). For i ≫ Is it is linear in (n·Vt, −n·Vt·ln Is, Rs):
//! v ≈ a·ln i + c + Rs·i, so a linear least-squares solve gives the start,
//! and Gauss–Newton on the exact model (in a, ln Is, Rs; steps halved until
//! the squared residual falls) polishes it. A negative Rs (noisy points)
//! is not physical: the fit is then repeated with Rs = 0. The forward-
//! voltage temperature coefficient is either given or taken from points at
//! a second temperature, as the mean of (v_hot − v_model(i_hot))/(T_hot − T).

use crate::units::thermal_voltage_v;
use nalgebra::{Matrix3, Vector3};
use serde::Serialize;

/// Why a fit could not be made.
#[derive(Debug, Clone, PartialEq, thiserror::Error)]
#[non_exhaustive]
pub enum FitError {
    /// Fewer than three points at the fitting temperature.
    #[error("{given} point(s) given: the fit needs at least three (current, voltage) points")]
    TooFewPoints {
        /// Points given.
        given: usize,
    },
    /// A point that cannot be on an LED's forward curve.
    #[error("point {index} ({current_a} A, {voltage_v} V): {reason}")]
    BadPoint {
        /// Index among the points (0-based).
        index: usize,
        /// Its current, A.
        current_a: f64,
        /// Its voltage, V.
        voltage_v: f64,
        /// Why.
        reason: String,
    },
    /// The points do not determine the model.
    #[error("the points do not determine the model: {reason}")]
    Degenerate {
        /// Why.
        reason: String,
    },
}

/// The fitted model and how well it fits.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct LedFit {
    /// Saturation current Is, A.
    pub saturation_current_a: f64,
    /// Emission coefficient n.
    pub emission_coefficient: f64,
    /// Series resistance Rs, Ω.
    pub series_resistance_ohm: f64,
    /// Temperature the points (and so the model) hold at, °C.
    pub temperature_c: f64,
    /// Model minus point voltage at each point, V.
    pub residuals_v: Vec<f64>,
    /// Forward-voltage temperature coefficient, V/K (given or fitted).
    pub tempco_v_per_k: Option<f64>,
    /// For a fitted tempco: model (shifted by the tempco) minus point at
    /// each second-temperature point, V.
    pub hot_residuals_v: Vec<f64>,
}

impl LedFit {
    /// The model's voltage at a current, V.
    pub fn voltage_v(&self, i: f64) -> f64 {
        let a = self.emission_coefficient * thermal_voltage_v(self.temperature_c);
        a * (i / self.saturation_current_a).ln_1p() + self.series_resistance_ohm * i
    }
}

fn check_points(points: &[(f64, f64)], offset: usize) -> Result<(), FitError> {
    for (k, &(i, v)) in points.iter().enumerate() {
        let bad = |reason: &str| FitError::BadPoint {
            index: k + offset,
            current_a: i,
            voltage_v: v,
            reason: reason.to_string(),
        };
        if !(i.is_finite() && v.is_finite()) {
            return Err(bad("must be finite numbers"));
        }
        if i <= 0.0 {
            return Err(bad("the current must be positive"));
        }
        if v <= 0.0 {
            return Err(bad("the forward voltage must be positive"));
        }
        if i > MAX_POINT_CURRENT_A {
            return Err(bad(&format!(
                "above {MAX_POINT_CURRENT_A} A: not one LED's datasheet point"
            )));
        }
        if v > MAX_POINT_VOLTAGE_V {
            return Err(bad(&format!(
                "above {MAX_POINT_VOLTAGE_V} V: not one LED's forward voltage"
            )));
        }
    }
    Ok(())
}

/// Largest current and voltage of a datasheet point (one LED), A and V.
pub(crate) const MAX_POINT_CURRENT_A: f64 = 1e3;
/// Largest forward voltage of one LED at a datasheet point, V.
pub(crate) const MAX_POINT_VOLTAGE_V: f64 = 100.0;
/// Junction temperatures the fit accepts, °C (the loader's range of
/// `load.junction_temperature_c`).
pub(crate) const TEMPERATURE_RANGE_C: (f64, f64) = (-60.0, 250.0);
/// Largest forward-voltage tempco, V/K (the loader's range of
/// `parts.led.forward_voltage_tempco_v_per_k`).
pub(crate) const TEMPCO_LIMIT_V_PER_K: f64 = 0.05;

/// The temperatures and a given tempco: finite and inside the ranges a
/// scenario accepts.
fn check_inputs(t: f64, tempco: Option<f64>, hot_t: Option<f64>) -> Result<(), FitError> {
    let (lo, hi) = TEMPERATURE_RANGE_C;
    for (what, v) in [("temperature", Some(t)), ("second temperature", hot_t)] {
        if let Some(v) = v.filter(|v| !(v.is_finite() && (lo..=hi).contains(v))) {
            return Err(FitError::Degenerate {
                reason: format!("the {what} {v} °C is outside {lo} to {hi} °C"),
            });
        }
    }
    if let Some(tc) = tempco.filter(|tc| {
        !(tc.is_finite() && (-TEMPCO_LIMIT_V_PER_K..=TEMPCO_LIMIT_V_PER_K).contains(tc))
    }) {
        return Err(FitError::Degenerate {
            reason: format!("the tempco {tc} V/K is outside ±{TEMPCO_LIMIT_V_PER_K} V/K"),
        });
    }
    Ok(())
}

/// Points that can lie on one exponential forward curve: at least three
/// distinct currents, and the voltage rising strictly with the current.
fn check_curve(points: &[(f64, f64)]) -> Result<(), FitError> {
    let mut sorted: Vec<(usize, f64, f64)> = points
        .iter()
        .enumerate()
        .map(|(k, &(i, v))| (k, i, v))
        .collect();
    sorted.sort_by(|a, b| a.1.total_cmp(&b.1));
    let same = |a: f64, b: f64| (a - b).abs() <= 1e-9 * a.abs().max(b.abs());
    let distinct = 1 + sorted.windows(2).filter(|w| !same(w[0].1, w[1].1)).count();
    if distinct < 3 {
        return Err(FitError::Degenerate {
            reason: format!(
                "{distinct} distinct current(s): an exponential curve with a series resistance \
                 needs at least three"
            ),
        });
    }
    for w in sorted.windows(2) {
        let ((_, i0, v0), (k, i1, v1)) = (w[0], w[1]);
        if !same(i0, i1) && v1 <= v0 {
            return Err(FitError::BadPoint {
                index: k,
                current_a: i1,
                voltage_v: v1,
                reason: format!(
                    "the voltage must rise with the current, but it is not above {v0} V at \
                     the lower current {i0} A"
                ),
            });
        }
    }
    Ok(())
}

/// The fitted model is one a scenario file accepts: finite, inside the
/// loader's ranges for `load.saturation_current_a` (1e-45 to 1e-3 A),
/// `load.emission_coefficient` (0.5 to 20) and
/// `load.series_resistance_ohm` (0 to 1000 Ω).
fn check_model(f: &LedFit) -> Result<(), FitError> {
    let checks = [
        (
            "saturation current Is",
            f.saturation_current_a,
            1e-45,
            1e-3,
            "A",
        ),
        (
            "emission coefficient n",
            f.emission_coefficient,
            0.5,
            20.0,
            "",
        ),
        (
            "series resistance Rs",
            f.series_resistance_ohm,
            0.0,
            1e3,
            "Ω",
        ),
    ];
    for (what, v, lo, hi, unit) in checks {
        if !(v.is_finite() && (lo..=hi).contains(&v)) {
            return Err(FitError::Degenerate {
                reason: format!(
                    "the fitted {what} = {v:e} {unit} is outside what a scenario accepts \
                     ({lo:e} to {hi:e} {unit}): the points do not describe an LED's forward \
                     curve"
                ),
            });
        }
    }
    if f.residuals_v.iter().any(|r| !r.is_finite()) {
        return Err(FitError::Degenerate {
            reason: "the model does not reach every point".into(),
        });
    }
    Ok(())
}

fn sse(points: &[(f64, f64)], a: f64, ln_is: f64, rs: f64) -> f64 {
    points
        .iter()
        .map(|&(i, v)| {
            let r = a * (i * (-ln_is).exp()).ln_1p() + rs * i - v;
            r * r
        })
        .sum()
}

/// Least squares for (a, ln Is, Rs), with Rs held at 0 when `free_rs` is false.
fn fit_params(points: &[(f64, f64)], free_rs: bool) -> Option<(f64, f64, f64)> {
    // Linear start: v = a·ln i + c + Rs·i.
    let mut n = Matrix3::<f64>::zeros();
    let mut b = Vector3::<f64>::zeros();
    for &(i, v) in points {
        let row = Vector3::new(i.ln(), 1.0, if free_rs { i } else { 0.0 });
        n += row * row.transpose();
        b += row * v;
    }
    if !free_rs {
        n[(2, 2)] = 1.0;
    }
    let x = n.lu().solve(&b)?;
    let (mut a, c, mut rs) = (x[0], x[1], x[2]);
    if a.is_nan() || a <= 0.0 {
        return None;
    }
    let mut ln_is = -c / a;
    // Gauss–Newton on the exact model.
    let mut cost = sse(points, a, ln_is, rs);
    for _ in 0..50 {
        let mut jtj = Matrix3::<f64>::zeros();
        let mut jtr = Vector3::<f64>::zeros();
        for &(i, v) in points {
            let u = i * (-ln_is).exp();
            let r = a * u.ln_1p() + rs * i - v;
            let j = Vector3::new(u.ln_1p(), -a * u / (1.0 + u), if free_rs { i } else { 0.0 });
            jtj += j * j.transpose();
            jtr += j * r;
        }
        if !free_rs {
            jtj[(2, 2)] = 1.0;
        }
        let Some(step) = jtj.lu().solve(&(-jtr)) else {
            break;
        };
        let mut k = 1.0;
        let mut improved = false;
        for _ in 0..30 {
            let (a2, l2, r2) = (a + k * step[0], ln_is + k * step[1], rs + k * step[2]);
            let c2 = sse(points, a2, l2, r2);
            if a2 > 0.0 && c2 < cost {
                (a, ln_is, rs, cost) = (a2, l2, r2, c2);
                improved = true;
                break;
            }
            k *= 0.5;
        }
        if !improved || cost == 0.0 {
            break;
        }
    }
    Some((a, ln_is, rs))
}

/// Fits one LED's model to `points` (current A, voltage V) at
/// `temperature_c`. The temperature coefficient is `tempco_v_per_k` if
/// given, else fitted from `hot_points` at `hot_temperature_c`, else None.
pub fn fit_led(
    points: &[(f64, f64)],
    temperature_c: f64,
    tempco_v_per_k: Option<f64>,
    hot_points: &[(f64, f64)],
    hot_temperature_c: Option<f64>,
) -> Result<LedFit, FitError> {
    if points.len() < 3 {
        return Err(FitError::TooFewPoints {
            given: points.len(),
        });
    }
    check_points(points, 0)?;
    check_points(hot_points, points.len())?;
    check_inputs(temperature_c, tempco_v_per_k, hot_temperature_c)?;
    check_curve(points)?;
    let mut fit = fit_params(points, true);
    if !matches!(fit, Some((_, _, rs)) if rs >= 0.0) {
        fit = fit_params(points, false);
    }
    let Some((a, ln_is, rs)) = fit else {
        return Err(FitError::Degenerate {
            reason: "the voltage does not rise with the current as an LED's does".into(),
        });
    };
    let vt = thermal_voltage_v(temperature_c);
    let mut out = LedFit {
        saturation_current_a: ln_is.exp(),
        emission_coefficient: a / vt,
        series_resistance_ohm: rs,
        temperature_c,
        residuals_v: Vec::new(),
        tempco_v_per_k,
        hot_residuals_v: Vec::new(),
    };
    out.residuals_v = points.iter().map(|&(i, v)| out.voltage_v(i) - v).collect();
    check_model(&out)?;
    if tempco_v_per_k.is_none() && !hot_points.is_empty() {
        let Some(th) = hot_temperature_c.filter(|&t| (t - temperature_c).abs() > 1e-9) else {
            return Err(FitError::Degenerate {
                reason: "points at a second temperature need that temperature, different from \
                         the first"
                    .into(),
            });
        };
        let dt = th - temperature_c;
        let tc = hot_points
            .iter()
            .map(|&(i, v)| (v - out.voltage_v(i)) / dt)
            .sum::<f64>()
            / hot_points.len() as f64;
        if !(tc.is_finite() && (-TEMPCO_LIMIT_V_PER_K..=TEMPCO_LIMIT_V_PER_K).contains(&tc)) {
            return Err(FitError::Degenerate {
                reason: format!(
                    "the second-temperature points give a tempco of {tc:e} V/K, outside \
                     ±{TEMPCO_LIMIT_V_PER_K} V/K"
                ),
            });
        }
        out.tempco_v_per_k = Some(tc);
        out.hot_residuals_v = hot_points
            .iter()
            .map(|&(i, v)| out.voltage_v(i) + tc * dt - v)
            .collect();
    }
    Ok(out)
}

#[cfg(test)]
mod tests {
    use super::*;

    fn model(is: f64, n: f64, rs: f64, t: f64, i: f64) -> f64 {
        n * thermal_voltage_v(t) * (i / is).ln_1p() + rs * i
    }

    #[test]
    fn recovers_known_parameters() {
        let (is, n, rs) = (2e-18, 2.4, 0.4);
        let pts: Vec<(f64, f64)> = [0.05, 0.2, 0.5, 1.0]
            .iter()
            .map(|&i| (i, model(is, n, rs, 25.0, i)))
            .collect();
        let f = fit_led(&pts, 25.0, None, &[], None).unwrap();
        assert!((f.saturation_current_a / is - 1.0).abs() < 1e-6, "{f:?}");
        assert!((f.emission_coefficient / n - 1.0).abs() < 1e-6, "{f:?}");
        assert!((f.series_resistance_ohm / rs - 1.0).abs() < 1e-6, "{f:?}");
        assert!(f.residuals_v.iter().all(|r| r.abs() < 1e-9));
    }

    #[test]
    fn too_few_and_bad_points_are_named() {
        assert!(matches!(
            fit_led(&[(0.1, 2.8), (0.2, 2.9)], 25.0, None, &[], None),
            Err(FitError::TooFewPoints { given: 2 })
        ));
        let e = fit_led(
            &[(0.1, 2.8), (-0.2, 2.9), (0.3, 3.0)],
            25.0,
            None,
            &[],
            None,
        );
        assert!(
            matches!(e, Err(FitError::BadPoint { index: 1, .. })),
            "{e:?}"
        );
    }
}
