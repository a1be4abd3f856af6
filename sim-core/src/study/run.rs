//! Running many points in parallel.
//!
//! Points are grouped into *chains* of consecutive indices
//! (`index / chain_len`); chains run in parallel on the rayon pool, and
//! inside a chain each point starts from the steady state of the point
//! before it (a warm start), which is usually much closer to its own
//! steady state than power-on. Chains depend on the index alone, so the
//! results do not depend on the number of threads or on sharding. A
//! warm-started point that fails is retried from the chain's own start.
//!
//! Each [`crate::SimResult`] is dropped as soon as its summary is taken,
//! so memory grows only by one small [`PointOutcome`] per point.

use crate::circuit::N_STATES;
use crate::metrics::Metrics;
use crate::scenario::Scenario;
use crate::simulate::{simulate, EngineKind, RunOptions};
use rayon::prelude::*;
use std::ops::Range;

/// How points are run.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct RunSettings {
    /// The engine.
    pub engine: EngineKind,
    /// Start each point (after the first of its chain) from the previous
    /// point's steady state.
    pub warm_start: bool,
    /// State every chain starts from (None: power-on).
    pub initial_state: Option<[f64; N_STATES]>,
    /// Points per chain (1: every point starts from `initial_state`).
    pub chain_len: usize,
}

impl Default for RunSettings {
    fn default() -> Self {
        RunSettings {
            engine: EngineKind::Exact,
            warm_start: true,
            initial_state: None,
            chain_len: DEFAULT_CHAIN_LEN,
        }
    }
}

/// Points per warm-start chain in a sweep: long enough that most points
/// start warm, short enough to give two cores many chains to share.
pub const DEFAULT_CHAIN_LEN: usize = 8;

/// What one point produced.
#[derive(Debug, Clone, PartialEq)]
pub struct PointSummary {
    /// The steady-state figures.
    pub metrics: Metrics,
    /// Cycles run until steady state.
    pub cycles_to_settle: u64,
    /// Whether the accepted run started from a neighbour's steady state.
    pub warm_start: bool,
    /// State at the first measured turn-on (for warm starts).
    pub state_at_turn_on: [f64; N_STATES],
    /// Highest supply voltage of the point, V (for cautions).
    pub supply_v: f64,
}

/// One point's outcome: its summary, or the reason it failed (a scenario
/// problem or a simulation failure, in words).
pub type PointOutcome = Result<PointSummary, String>;

/// A point's index, the input values it was given and its outcome.
#[derive(Debug, Clone, PartialEq)]
pub struct PointResult {
    /// Index in the whole study.
    pub index: usize,
    /// The values of the study's inputs at this point.
    pub inputs: Vec<f64>,
    /// Its outcome.
    pub outcome: PointOutcome,
}

fn run_one(s: &Scenario, engine: EngineKind, start: Option<[f64; N_STATES]>) -> PointOutcome {
    let r = simulate(
        s,
        &RunOptions {
            engine,
            initial_state: start,
        },
    )
    .map_err(|e| e.to_string())?;
    Ok(PointSummary {
        metrics: r.metrics,
        cycles_to_settle: r.steady.cycles_to_settle,
        warm_start: false,
        state_at_turn_on: r.steady.state_at_turn_on,
        supply_v: s.supply.voltage_v,
    })
    // `r` (with its waveforms) is dropped here.
}

/// Runs the points `range` of a study. `make(k)` gives point `k`'s input
/// values and scenario (or why it has none); `done()` is called after
/// each point, from any thread. Results come back in index order.
pub fn run_points<F>(
    range: Range<usize>,
    settings: &RunSettings,
    make: F,
    done: &(dyn Fn() + Sync),
) -> Vec<PointResult>
where
    F: Fn(usize) -> (Vec<f64>, Result<Scenario, String>) + Sync,
{
    let chain = settings.chain_len.max(1);
    let first_chain = range.start / chain;
    let last_chain = range.end.div_ceil(chain);
    let chains: Vec<Vec<PointResult>> = (first_chain..last_chain)
        .into_par_iter()
        .map(|c| {
            let lo = (c * chain).max(range.start);
            let hi = ((c + 1) * chain).min(range.end);
            let mut out = Vec::with_capacity(hi - lo);
            let mut prev: Option<[f64; N_STATES]> = None;
            for k in lo..hi {
                let (inputs, scenario) = make(k);
                let outcome = match scenario {
                    Err(e) => Err(e),
                    Ok(s) => {
                        let warm = if settings.warm_start { prev } else { None };
                        match warm {
                            Some(x) => match run_one(&s, settings.engine, Some(x)) {
                                Ok(mut p) => {
                                    p.warm_start = true;
                                    Ok(p)
                                }
                                Err(_) => run_one(&s, settings.engine, settings.initial_state),
                            },
                            None => run_one(&s, settings.engine, settings.initial_state),
                        }
                    }
                };
                if let Ok(p) = &outcome {
                    prev = Some(p.state_at_turn_on);
                }
                out.push(PointResult {
                    index: k,
                    inputs,
                    outcome,
                });
                done();
            }
            out
        })
        .collect();
    chains.into_iter().flatten().collect()
}

/// A `K/N` shard: the K-th (1-based) of N slices of a study.
#[derive(Debug, Clone, Copy, PartialEq, Eq, serde::Serialize, serde::Deserialize)]
pub struct Shard {
    /// Which slice, 1-based.
    pub index: usize,
    /// How many slices.
    pub count: usize,
}

impl Shard {
    /// Parses `K/N` with 1 ≤ K ≤ N.
    pub fn parse(spec: &str) -> Result<Shard, super::StudyError> {
        let bad = |r: &str| super::StudyError::Shard {
            spec: spec.to_string(),
            reason: r.to_string(),
        };
        let (k, n) = spec
            .split_once('/')
            .ok_or_else(|| bad("expected K/N, e.g. 3/8"))?;
        let k: usize = k
            .trim()
            .parse()
            .map_err(|_| bad("K is not a whole number"))?;
        let n: usize = n
            .trim()
            .parse()
            .map_err(|_| bad("N is not a whole number"))?;
        if n == 0 || k == 0 || k > n {
            return Err(bad("need 1 ≤ K ≤ N"));
        }
        Ok(Shard { index: k, count: n })
    }

    /// The point indices of this shard among `points`, in whole chains of
    /// `chain_len` so that warm starts are the same as in one run.
    pub fn range(&self, points: usize, chain_len: usize) -> Range<usize> {
        let chain = chain_len.max(1);
        let chains = points.div_ceil(chain);
        let c0 = (self.index - 1) * chains / self.count;
        let c1 = self.index * chains / self.count;
        (c0 * chain).min(points)..(c1 * chain).min(points)
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn shards_tile_the_points() {
        for points in [0, 1, 7, 8, 9, 100, 203] {
            for n in 1..6 {
                let mut next = 0;
                for k in 1..=n {
                    let r = Shard { index: k, count: n }.range(points, 8);
                    assert_eq!(r.start, next);
                    assert!(r.start.is_multiple_of(8) || r.start == points);
                    next = r.end;
                }
                assert_eq!(next, points);
            }
        }
        assert!(Shard::parse("0/3").is_err());
        assert!(Shard::parse("4/3").is_err());
        assert_eq!(Shard::parse("2/3").unwrap(), Shard { index: 2, count: 3 });
    }
}
