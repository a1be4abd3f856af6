//! Where a design crosses between CCM and DCM along one variable.
//!
//! The search runs the engine itself at each trial value and reads a
//! signed distance from the boundary off the result, continuous across
//! it: the valley current over the average (`ccm_margin`, > 0 in CCM)
//! while the current never rests, minus the idle fraction of the period
//! (`idle_time_s / period_s`, < 0 in DCM) once it does. The bracket is
//! narrowed by the Illinois variant of false position (Dowell & Jarratt,
//! BIT 11, 1971), with a closing probe just past each estimate, until it
//! is narrower than the tolerance (0.005 % of the value by default, well
//! inside 0.1 %). No formula for the boundary is used.

use super::run::RunSettings;
use super::vary::{Grid, Vary};
use super::StudyError;
use crate::metrics::Metrics;
use crate::model::circuit::N_STATES;
use crate::run::{run_point, RunOptions};
use crate::scenario::Scenario;
use rayon::prelude::*;
use serde::Serialize;
use std::time::Instant;

/// Search settings.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct BoundarySettings {
    /// Engine, warm start and starting state.
    pub run: RunSettings,
    /// Width of the final bracket relative to the boundary value.
    pub rel_tol: f64,
    /// Most simulations per search.
    pub max_runs: usize,
}

impl Default for BoundarySettings {
    fn default() -> Self {
        BoundarySettings {
            run: RunSettings::default(),
            // 5e-5: the middle is within 2.5e-5 of the engine's own
            // crossing, inside the 1e-4 the exact engine keeps to the
            // exact curves.
            rel_tol: 5e-5,
            max_runs: 80,
        }
    }
}

/// The signed distance from the CCM/DCM boundary of one steady state:
/// positive in CCM (valley over average), negative in DCM (minus the idle
/// fraction of the period), zero on the boundary.
pub(crate) fn signed_margin(m: &Metrics) -> f64 {
    if m.idle_time_s > 0.0 {
        -m.idle_time_s / m.period_s
    } else {
        m.inductor_current_valley_a.max(0.0) / m.inductor_current_avg_a.max(f64::MIN_POSITIVE)
    }
}

/// The boundary along one variable.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Boundary {
    /// The variable.
    pub path: String,
    /// The bracket searched.
    pub low: f64,
    /// The bracket searched.
    pub high: f64,
    /// The boundary value (middle of the final bracket).
    pub value: f64,
    /// The final bracket.
    pub bracket: (f64, f64),
    /// Whether the CCM side is above the boundary.
    pub ccm_above: bool,
    /// The scenario's own value of the variable.
    pub nominal: f64,
    /// Whether the nominal value is on the CCM side.
    pub nominal_ccm: bool,
    /// Distance from the nominal to the boundary, % of the nominal.
    pub margin_pct: f64,
    /// Simulations run.
    pub runs: usize,
    /// Every trial: value and signed margin.
    pub trials: Vec<(f64, f64)>,
}

struct Searcher<'a> {
    base: &'a Scenario,
    path: &'a str,
    fixed: &'a [(String, f64)],
    settings: &'a BoundarySettings,
    known: Vec<(f64, [f64; N_STATES])>,
    trials: Vec<(f64, f64)>,
    /// The bracket so far (for the time-limit message).
    bracket: Option<(f64, f64)>,
}

impl Searcher<'_> {
    fn eval(&mut self, x: f64) -> Result<f64, StudyError> {
        if self
            .settings
            .run
            .deadline
            .is_some_and(|d| Instant::now() >= d)
        {
            return Err(StudyError::TimeLimit(format!(
                "the boundary search along {} stopped after {} runs{}",
                self.path,
                self.trials.len(),
                self.bracket.map_or(String::new(), |(a, b)| format!(
                    ", bracket so far {} to {}",
                    show(a, self.path),
                    show(b, self.path)
                ))
            )));
        }
        let mut sets = self.fixed.to_vec();
        sets.push((self.path.to_string(), x));
        let s = self
            .base
            .with_values(&sets)
            .map_err(|source| StudyError::BoundaryPoint {
                path: self.path.into(),
                at: show(x, self.path),
                source,
            })?;
        let near = if self.settings.run.warm_start {
            self.known
                .iter()
                .min_by(|a, b| (a.0 - x).abs().total_cmp(&(b.0 - x).abs()))
                .map(|k| k.1)
        } else {
            None
        };
        let run = |start| {
            run_point(
                &s,
                &RunOptions {
                    engine: self.settings.run.engine,
                    initial_state: start,
                },
            )
        };
        let r = match near {
            Some(x0) => run(Some(x0)).or_else(|_| run(self.settings.run.initial_state)),
            None => run(self.settings.run.initial_state),
        }
        .map_err(|source| StudyError::BoundaryRun {
            path: self.path.into(),
            at: show(x, self.path),
            source,
        })?;
        let g = signed_margin(&r.metrics);
        self.known.push((x, r.steady.state_at_turn_on));
        self.trials.push((x, g));
        Ok(g)
    }
}

/// Finds the boundary along `path` between `low` and `high`, with the
/// fields `fixed` set first (e.g. a second variable's value).
pub fn find_boundary(
    s: &Scenario,
    path: &str,
    low: f64,
    high: f64,
    fixed: &[(String, f64)],
    settings: &BoundarySettings,
) -> Result<Boundary, StudyError> {
    let nominal = s
        .numeric_field(path)
        .map_err(|reason| StudyError::Boundary {
            path: path.into(),
            reason,
        })?;
    let mut q = Searcher {
        base: s,
        path,
        fixed,
        settings,
        known: vec![],
        trials: vec![],
        bracket: None,
    };
    let (mut a, mut b) = (low, high);
    let mut fa = q.eval(a)?;
    let mut fb = q.eval(b)?;
    if fa > 0.0 && fb > 0.0 || fa <= 0.0 && fb <= 0.0 {
        let words = |g: f64| if g > 0.0 { "CCM" } else { "DCM" };
        return Err(StudyError::Boundary {
            path: path.into(),
            reason: format!(
                "no crossing between {} and {}: both ends are {} (signed margins \
                 {} and {}); widen the bracket",
                show(low, path),
                show(high, path),
                words(fa),
                crate::units::short_number(fa, 4),
                crate::units::short_number(fb, 4)
            ),
        });
    }
    let ccm_above = fb > 0.0;
    let mut side = 0i8;
    loop {
        q.bracket = Some((a, b));
        let mid = 0.5 * (a + b);
        let tol = settings.rel_tol * mid.abs().max(f64::MIN_POSITIVE);
        if b - a <= tol {
            break;
        }
        if q.trials.len() >= settings.max_runs {
            return Err(StudyError::Boundary {
                path: path.into(),
                reason: format!(
                    "not narrowed to {} % within {} runs (bracket {} to {})",
                    crate::units::short_number(100.0 * settings.rel_tol, 3),
                    settings.max_runs,
                    show(a, path),
                    show(b, path)
                ),
            });
        }
        // Illinois false position, kept strictly inside the bracket.
        let mut c = (a * fb - b * fa) / (fb - fa);
        if !c.is_finite() || c <= a || c >= b {
            c = mid;
        }
        let fc = q.eval(c)?;
        let c_ccm = fc > 0.0;
        let a_ccm = fa > 0.0;
        if c_ccm == a_ccm {
            a = c;
            fa = fc;
            if side == 1 {
                fb *= 0.5;
            }
            side = 1;
        } else {
            b = c;
            fb = fc;
            if side == -1 {
                fa *= 0.5;
            }
            side = -1;
        }
        // Closing probe: a step of 0.4·tol past the estimate towards the
        // end that did not move; lands on the other side once the
        // estimate is that close.
        let tol = settings.rel_tol * c.abs();
        if b - a > tol && q.trials.len() < settings.max_runs {
            let d = if side == 1 {
                c + 0.4 * tol
            } else {
                c - 0.4 * tol
            };
            if d > a && d < b {
                let fd = q.eval(d)?;
                if (fd > 0.0) == (fa > 0.0) {
                    a = d;
                    fa = fd;
                } else {
                    b = d;
                    fb = fd;
                }
            }
        }
    }
    let value = 0.5 * (a + b);
    let nominal_ccm = (nominal > value) == ccm_above;
    Ok(Boundary {
        path: path.into(),
        low,
        high,
        value,
        bracket: (a, b),
        ccm_above,
        nominal,
        nominal_ccm,
        margin_pct: if nominal != 0.0 {
            100.0 * (nominal - value).abs() / nominal.abs()
        } else {
            f64::INFINITY
        },
        runs: q.trials.len(),
        trials: q.trials,
    })
}

/// The boundary along `path` for each value of a second variable, in
/// parallel; each entry is the second variable's value and the boundary
/// or why it was not found.
pub fn boundary_curve(
    s: &Scenario,
    path: &str,
    low: f64,
    high: f64,
    across: &Vary,
    settings: &BoundarySettings,
) -> Vec<(f64, Result<Boundary, StudyError>)> {
    across
        .values
        .par_iter()
        .map(|&v| {
            let fixed = [(across.path.clone(), v)];
            (v, find_boundary(s, path, low, high, &fixed, settings))
        })
        .collect()
}

/// A value of the field at `path` for a message, in engineering notation
/// with every digit (`17.060570312820633 µH`).
fn show(v: f64, path: &str) -> String {
    crate::units::eng_exact(v, super::vary::unit_of(path))
}

/// The grid of the mode map behind a traced boundary: `points` values
/// (at least 2) evenly from `low` to `high` along the searched `path`,
/// times every value of the variable the boundary is traced `across`.
pub fn mode_map_grid(
    path: &str,
    low: f64,
    high: f64,
    points: usize,
    across: &Vary,
) -> Result<Grid, StudyError> {
    let max = super::vary::MAX_POINTS_PER_AXIS;
    if points > max {
        return Err(StudyError::MapTooLarge { points, max });
    }
    let n = points.max(2);
    Grid::new(vec![
        Vary {
            path: path.into(),
            values: super::vary::linspace(low, high, n),
            resolved: format!("{path}={low:e}:{high:e}:{n}"),
        },
        across.clone(),
    ])
}

/// A traced boundary as JSON: the searched `path`, the variable it was
/// traced `across`, and per value of that variable the boundary found
/// (`boundary`) or why not (`error`).
pub fn curve_value(
    path: &str,
    across: &str,
    curve: &[(f64, Result<Boundary, StudyError>)],
) -> serde_json::Value {
    serde_json::json!({
        "path": path,
        "across": across,
        "points": curve.iter().map(|(v, r)| match r {
            Ok(b) => serde_json::json!({"across_value": v, "boundary": b}),
            Err(e) => serde_json::json!({"across_value": v, "error": e.to_string()}),
        }).collect::<Vec<_>>(),
    })
}

/// How a traced boundary went.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub struct CurveCount {
    /// Values of the traced variable.
    pub values: usize,
    /// Values where no boundary was found.
    pub failed: usize,
    /// Of those, values where the time limit stopped the search.
    pub out_of_time: usize,
}

impl CurveCount {
    /// Counts a traced boundary's outcomes.
    pub fn of(curve: &[(f64, Result<Boundary, StudyError>)]) -> CurveCount {
        let failed = curve.iter().filter(|(_, r)| r.is_err()).count();
        let out_of_time = curve
            .iter()
            .filter(|(_, r)| matches!(r, Err(StudyError::TimeLimit(_))))
            .count();
        CurveCount {
            values: curve.len(),
            failed,
            out_of_time,
        }
    }
}

#[cfg(test)]
mod tests;
