//! Statistics from a spread or corners table: percentiles of every
//! metric, the yield against the spec limits with its Wilson interval,
//! and the worst point for each limit.

use crate::scenario::SpecLimits;
use crate::study::rows::{Incomplete, Metric, Row, RowExt, StudyTable};
use serde::Serialize;

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
    /// The metric (written by its column name).
    pub metric: Metric,
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
            metric: *name,
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
            r.value(Metric::LedCurrentAvgA).map(|i| (i - target).abs())
        } else if label.starts_with("LED ripple") {
            r.value(Metric::LedCurrentRipplePct)
        } else if label == "no DCM" {
            r.value(Metric::CcmMargin)
                .zip(r.value(Metric::IdleTimeS))
                .map(|(m, idle)| idle - m)
        } else {
            r.value(Metric::Efficiency).map(|e| -e)
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
