//! The verdict on each point of a study (ok, warn, fail, not run) and
//! its warnings with the numbers behind them, from the row's metrics and
//! the manifest's ratings alone.

use super::{Manifest, Metric, Row, RowExt};
use serde::Serialize;

/// Switching below this frequency can be heard, Hz (the upper limit of
/// hearing, about 20 kHz; common practice).
pub const AUDIBLE_LIMIT_HZ: f64 = 20e3;

/// Duty above which a point has almost no room left to regulate (the same
/// limit the run's own warning uses; common practice).
pub const DUTY_NEAR_FULL: f64 = 0.95;

/// Relative shortfall of the inductor peak from the controller's
/// switch-off threshold beyond which a point is called not regulating: a
/// current-mode controller turns off only at its threshold (delays only
/// add overshoot), so a peak short of it means the supply could not
/// drive the current there and the switch was ended by something else
/// (a maximum on-time, the supply running out). 2 %: common practice.
pub const REGULATION_TOLERANCE: f64 = 0.02;

/// A warning about one point of a study, with the numbers behind it.
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
#[serde(tag = "kind", rename_all = "snake_case")]
pub enum PointWarning {
    /// Switching frequency below [`AUDIBLE_LIMIT_HZ`].
    Audible {
        /// The point's switching frequency, Hz.
        frequency_hz: f64,
    },
    /// Duty above [`DUTY_NEAR_FULL`].
    DutyNearFull {
        /// The point's duty (0–1).
        duty: f64,
    },
    /// Inductor peak current above its saturation rating.
    Saturation {
        /// The point's inductor peak current, A.
        peak_a: f64,
        /// The rating, A.
        rating_a: f64,
    },
    /// Inductor peak short of the controller's switch-off threshold by
    /// more than [`REGULATION_TOLERANCE`]: the driver has run out of
    /// supply headroom and no longer sets the current.
    NotRegulating {
        /// The point's inductor peak current, A.
        peak_a: f64,
        /// The switch-off threshold, A.
        threshold_a: f64,
    },
}

impl PointWarning {
    /// A short code for tables (`audible`, `duty_near_full`,
    /// `saturation`, `not_regulating`).
    pub fn code(&self) -> &'static str {
        match self {
            PointWarning::Audible { .. } => "audible",
            PointWarning::DutyNearFull { .. } => "duty_near_full",
            PointWarning::Saturation { .. } => "saturation",
            PointWarning::NotRegulating { .. } => "not_regulating",
        }
    }
    /// Whether this warning makes the point fail (saturation, not
    /// regulating) rather than only warn.
    pub fn fails(&self) -> bool {
        matches!(
            self,
            PointWarning::Saturation { .. } | PointWarning::NotRegulating { .. }
        )
    }
}

/// The verdict on one point.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize)]
#[serde(rename_all = "snake_case")]
pub enum PointVerdict {
    /// Ran, nothing to flag.
    Ok,
    /// Ran with a warning (audible, duty near 100 %).
    Warn,
    /// Ran but fails (saturation, not regulating).
    Fail,
    /// Did not run.
    NotRun,
}

impl PointVerdict {
    /// The verdict as a word.
    pub fn word(self) -> &'static str {
        match self {
            PointVerdict::Ok => "ok",
            PointVerdict::Warn => "warn",
            PointVerdict::Fail => "fail",
            PointVerdict::NotRun => "not_run",
        }
    }
}

/// A point's verdict and its warnings.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct PointCheck {
    /// The verdict.
    pub verdict: PointVerdict,
    /// Every warning, in a fixed order.
    pub warnings: Vec<PointWarning>,
}

impl PointCheck {
    /// The warnings' codes joined by `;` (empty when none).
    pub fn codes(&self) -> String {
        self.warnings
            .iter()
            .map(PointWarning::code)
            .collect::<Vec<_>>()
            .join(";")
    }
}

impl Manifest {
    /// The verdict on one row of this study, from its metrics and the
    /// manifest's ratings alone (so a table read from a file gets the
    /// same verdicts). The threshold test is left out when an input
    /// changes a controller setting (a swept threshold moves it).
    pub fn check_point(&self, r: &Row) -> PointCheck {
        if !r.ok() {
            return PointCheck {
                verdict: PointVerdict::NotRun,
                warnings: vec![],
            };
        }
        let mut w = Vec::new();
        if let Some(f) = r.value(Metric::SwitchingFrequencyHz) {
            if f < AUDIBLE_LIMIT_HZ {
                w.push(PointWarning::Audible { frequency_hz: f });
            }
        }
        let duty = r.value(Metric::Duty);
        if let Some(d) = duty {
            if d > DUTY_NEAR_FULL {
                w.push(PointWarning::DutyNearFull { duty: d });
            }
        }
        if let (Some(p), Some(rating)) = (
            r.value(Metric::InductorCurrentPeakA),
            self.inductor_saturation_a,
        ) {
            if p > rating {
                w.push(PointWarning::Saturation {
                    peak_a: p,
                    rating_a: rating,
                });
            }
        }
        let swept_controller = self.inputs.iter().any(|p| p.starts_with("controller."));
        if let (Some(p), Some(th)) = (
            r.value(Metric::InductorCurrentPeakA),
            self.switch_off_current_a,
        ) {
            if !swept_controller && th > 0.0 && p < (1.0 - REGULATION_TOLERANCE) * th {
                w.push(PointWarning::NotRegulating {
                    peak_a: p,
                    threshold_a: th,
                });
            }
        }
        let verdict = if w.iter().any(PointWarning::fails) {
            PointVerdict::Fail
        } else if w.is_empty() {
            PointVerdict::Ok
        } else {
            PointVerdict::Warn
        };
        PointCheck {
            verdict,
            warnings: w,
        }
    }
}
