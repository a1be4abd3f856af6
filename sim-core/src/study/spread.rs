//! Tolerance spread: what the parts' tolerances do to a design.
//!
//! A scenario may carry two optional objects:
//!
//! - `tolerances` ([`crate::scenario::Tolerances`]): a list of numeric fields, each with a
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
//!
//! The jobs are split: [`sampling`] (the toleranced inputs, Monte Carlo
//! draws, applying a sample to the scenario), [`studies`] (the spread and
//! corners studies), [`stats`] (percentiles, yield, the worst point).

pub mod sampling;
pub mod stats;
pub mod studies;

pub use sampling::{
    normal_quantile, params, sample_inputs, scale_led_voltage, scenario_at, Param, ParamKind,
    LED_VOLTAGE_INPUT,
};
pub use stats::{quantile_sorted, summarize, wilson, LimitYield, MetricSpread, SpreadSummary};
pub use studies::{
    corner_label, corners, corners_manifest, spread, spread_manifest, SpreadSettings,
    MAX_CORNER_INPUTS,
};

use super::rows::{Metric, Row, RowExt};
use crate::units::{eng_sig, short_number};

use crate::scenario::SpecLimits;

/// A pass/fail test of one row.
pub(crate) type RowTest<'a> = Box<dyn Fn(&Row) -> bool + 'a>;

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
                    r.value(Metric::LedCurrentAvgA)
                        .is_some_and(|i| (i - t).abs() <= pct / 100.0 * t)
                }),
            ));
        }
        if let Some(max) = self.max_ripple_pct {
            v.push((
                format!("LED ripple at most {} %", short_number(max, 4)),
                Box::new(move |r| {
                    r.value(Metric::LedCurrentRipplePct)
                        .is_some_and(|x| x <= max)
                }),
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
                Box::new(move |r| r.value(Metric::Efficiency).is_some_and(|x| x >= min)),
            ));
        }
        v
    }
}

#[cfg(test)]
mod tests;
#[cfg(test)]
mod tests_sample;
