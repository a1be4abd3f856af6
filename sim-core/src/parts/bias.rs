//! Capacitor dielectrics: capacitance lost under DC bias, and the voltage
//! derating each class calls for.
//!
//! Class 2 ceramics (X7R, X5R, Y5V) lose much of their capacitance at a DC
//! bias; class 1 (C0G) and the electrolytic, tantalum and polymer types
//! hardly do. The engine uses the **effective capacitance at the
//! steady-state average voltage across the part**: [`fn@crate::run::assess`]
//! starts from the supply voltage (input) and the LED voltage at the target
//! current (output), simulates, re-evaluates the curve at the measured
//! averages and repeats until the capacitance changes by under 0.1 %.
//!
//! The class curves below are **typical values, from memory** (small-case
//! parts of the usual ranges; real parts vary widely with case size and
//! rating): give the part's own curve as `bias_curve` points for anything
//! that matters.

use crate::scenario::{BiasPoint, Capacitor, CapacitorData, Dielectric};

/// Typical capacitance fraction versus bias fraction of the rated voltage
/// for a class, as (bias fraction, capacitance fraction); **from memory**.
pub(crate) fn typical_curve(d: Dielectric) -> &'static [(f64, f64)] {
    match d {
        Dielectric::X7r => &[
            (0.0, 1.0),
            (0.25, 0.85),
            (0.5, 0.6),
            (0.75, 0.42),
            (1.0, 0.3),
        ],
        Dielectric::X5r => &[
            (0.0, 1.0),
            (0.25, 0.75),
            (0.5, 0.5),
            (0.75, 0.33),
            (1.0, 0.22),
        ],
        Dielectric::Y5v => &[
            (0.0, 1.0),
            (0.25, 0.5),
            (0.5, 0.28),
            (0.75, 0.18),
            (1.0, 0.12),
        ],
        Dielectric::Unspecified
        | Dielectric::C0g
        | Dielectric::AluminiumElectrolytic
        | Dielectric::Tantalum
        | Dielectric::Polymer => &[(0.0, 1.0)],
    }
}

fn interpolate(points: &[(f64, f64)], x: f64) -> f64 {
    let Some(&(x0, y0)) = points.first() else {
        return 1.0;
    };
    if x <= x0 {
        return y0;
    }
    for w in points.windows(2) {
        let ((xa, ya), (xb, yb)) = (w[0], w[1]);
        if x <= xb {
            return ya + (yb - ya) * (x - xa) / (xb - xa);
        }
    }
    points[points.len() - 1].1
}

/// Remaining capacitance fraction at a DC bias `v` (magnitude), from the
/// part's own curve if given, else the class's typical curve; 1 when the
/// rated voltage is unknown (the fraction of rating cannot be formed).
pub fn capacitance_fraction(data: &CapacitorData, v: f64) -> f64 {
    let Some(rating) = data.voltage_rating_v else {
        return 1.0;
    };
    let x = v.abs() / rating;
    if data.bias_curve.is_empty() {
        interpolate(typical_curve(data.dielectric), x)
    } else {
        let pts: Vec<(f64, f64)> = data
            .bias_curve
            .iter()
            .map(|b: &BiasPoint| (b.bias_fraction, b.capacitance_fraction))
            .collect();
        interpolate(&pts, x)
    }
}

/// Whether the capacitance of this part depends on its bias.
pub(crate) fn bias_dependent(data: &CapacitorData) -> bool {
    data.voltage_rating_v.is_some()
        && (!data.bias_curve.is_empty() || typical_curve(data.dielectric).len() > 1)
}

/// Effective capacitance at a DC bias, F.
pub(crate) fn effective_capacitance_f(cap: &Capacitor, data: &CapacitorData, v: f64) -> f64 {
    cap.capacitance_f * capacitance_fraction(data, v)
}

/// The voltage-derating rule of a class: the largest applied peak voltage
/// as a fraction of the rating, and where the rule comes from. All are
/// **common practice** (no single published standard).
pub(crate) fn voltage_derating(d: Dielectric) -> (f64, &'static str) {
    match d {
        Dielectric::Tantalum => (
            0.5,
            "common practice: solid tantalum kept at or below 50 % of its rating (it tolerates \
             no over-voltage or surge)",
        ),
        Dielectric::AluminiumElectrolytic => (
            0.8,
            "common practice: aluminium electrolytic at or below 80 % of its rating",
        ),
        Dielectric::Polymer => (
            0.8,
            "common practice: polymer at or below 80 % of its rating",
        ),
        Dielectric::C0g | Dielectric::X7r | Dielectric::X5r | Dielectric::Y5v => (
            0.8,
            "common practice: ceramic at or below 80 % of its rating (class 2 loses capacitance \
             under bias as well)",
        ),
        Dielectric::Unspecified => (0.8, "common practice: at or below 80 % of the rating"),
    }
}

/// Ripple-current margin rule of a class: the fraction of the rated ripple
/// current above which a warning is given, and why (**common practice**).
pub(crate) fn ripple_margin(d: Dielectric) -> (f64, &'static str) {
    match d {
        Dielectric::AluminiumElectrolytic => (
            0.7,
            "common practice: aluminium electrolytic ripple below 70 % of rating (its high ESR \
             heats it, and heat shortens its life)",
        ),
        _ => (0.8, "common practice: ripple below 80 % of rating"),
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    fn x7r(rating: f64) -> CapacitorData {
        CapacitorData {
            dielectric: Dielectric::X7r,
            voltage_rating_v: Some(rating),
            ..CapacitorData::default()
        }
    }

    #[test]
    fn class_curve_interpolates_and_holds_its_ends() {
        let d = x7r(50.0);
        assert!((capacitance_fraction(&d, 0.0) - 1.0).abs() < 1e-15);
        // Half way between 25 % (0.85) and 50 % (0.6) of rating.
        assert!((capacitance_fraction(&d, 18.75) - 0.725).abs() < 1e-12);
        assert!((capacitance_fraction(&d, 80.0) - 0.3).abs() < 1e-12);
        let c0g = CapacitorData {
            dielectric: Dielectric::C0g,
            voltage_rating_v: Some(50.0),
            ..CapacitorData::default()
        };
        assert!((capacitance_fraction(&c0g, 40.0) - 1.0).abs() < 1e-15);
        assert!(!bias_dependent(&c0g));
        // No rating: no fraction can be formed.
        let norating = CapacitorData {
            dielectric: Dielectric::X5r,
            ..CapacitorData::default()
        };
        assert!((capacitance_fraction(&norating, 40.0) - 1.0).abs() < 1e-15);
    }

    #[test]
    fn own_curve_replaces_the_class_curve() {
        let mut d = x7r(10.0);
        d.bias_curve = vec![
            BiasPoint {
                bias_fraction: 0.0,
                capacitance_fraction: 1.0,
            },
            BiasPoint {
                bias_fraction: 1.0,
                capacitance_fraction: 0.5,
            },
        ];
        assert!((capacitance_fraction(&d, 5.0) - 0.75).abs() < 1e-12);
    }
}
