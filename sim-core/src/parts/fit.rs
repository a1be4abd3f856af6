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
    let distinct = points
        .iter()
        .filter(|p| (p.0 - points[0].0).abs() > 1e-12 * points[0].0)
        .count();
    if distinct < 2 {
        return Err(FitError::Degenerate {
            reason: "all points are at the same current".into(),
        });
    }
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
