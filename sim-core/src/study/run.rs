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
//! Every point runs through [`crate::run::run_point`], the entry point
//! `chopwave run` uses too (the full assessment: DC-bias capacitance and
//! LED temperature to convergence), so a point's figures are those of a
//! run of the scenario set to the point's values. A warm-started point's
//! first simulation starts from its neighbour's steady state, the rest of
//! its bias/temperature loop from its own previous simulation.
//!
//! Each [`crate::SimResult`] is dropped as soon as its summary is taken,
//! and the summary as soon as its compact [`Row`] is made, so memory grows
//! by one row per point. Finished rows can be streamed to the caller as
//! they come ([`Hooks::on_finish`]), an interrupted study resumed from
//! the rows it kept ([`Hooks::resume`]), and a wall-clock deadline stops
//! new points from starting ([`RunSettings::deadline`]).

use super::rows::Row;
use crate::error::{ScenarioError, SimError};
use crate::metrics::Metrics;
use crate::model::circuit::N_STATES;
use crate::run::{run_point, EngineKind, RunOptions};
use crate::scenario::Scenario;
use crate::scenario::SteadyMethod;
use rayon::prelude::*;
use std::collections::BTreeMap;
use std::ops::Range;
use std::sync::atomic::{AtomicUsize, Ordering};
use std::time::Instant;

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
    /// Wall-clock time after which no new point starts (None: no limit).
    pub deadline: Option<Instant>,
}

impl Default for RunSettings {
    fn default() -> Self {
        RunSettings {
            engine: EngineKind::Exact,
            warm_start: true,
            initial_state: None,
            chain_len: DEFAULT_CHAIN_LEN,
            deadline: None,
        }
    }
}

impl RunSettings {
    /// The settings a sweep of `s` really uses: with the exact engine
    /// shooting for steady state (the default), a neighbour's steady state
    /// is no better a start than the averaged operating point shooting
    /// starts from (both settle in a handful of cycles), so warm-start
    /// chains are dropped and every point runs on its own — scheduled one
    /// by one, which keeps both cores busy to the end.
    pub fn for_sweep_of(self, s: &Scenario) -> RunSettings {
        let shooting = self.engine == EngineKind::Exact
            && s.simulation.steady_state_method == SteadyMethod::Shooting;
        RunSettings {
            warm_start: self.warm_start && !shooting,
            ..self
        }
    }
}

/// Points per warm-start chain in a sweep: long enough that most points
/// start warm, short enough to give two cores many chains to share.
pub(crate) const DEFAULT_CHAIN_LEN: usize = 8;

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

/// Why a point has no figures. A scenario problem or a simulation
/// failure keeps its error as the source; the text (what the row's
/// `error` holds) is the same as the error's, with the prefix shown.
#[derive(Debug, Clone, thiserror::Error)]
#[non_exhaustive]
pub enum PointError {
    /// The sweep point's values make the scenario invalid.
    #[error("invalid point: {0}")]
    InvalidPoint(#[source] ScenarioError),
    /// The spread sample's (or corner's) values make the scenario invalid.
    #[error("invalid sample: {0}")]
    InvalidSample(#[source] ScenarioError),
    /// The LED forward-voltage factor cannot be applied to the load.
    #[error(transparent)]
    LedVoltage(#[from] LedVoltageError),
    /// The simulation failed.
    #[error(transparent)]
    Run(#[from] SimError),
    /// A bug: running the point panicked.
    #[error("internal error while running this point (please report it)")]
    Internal,
}

/// Why an LED forward-voltage factor cannot be applied to the load.
#[derive(Debug, Clone, PartialEq, thiserror::Error)]
#[non_exhaustive]
pub enum LedVoltageError {
    /// The scaled forward voltage is at or below the series-resistance
    /// drop, so no junction voltage is left.
    #[error(
        "an LED forward voltage {factor} times nominal is below the series-resistance \
         drop at {at_current_a} A"
    )]
    BelowSeriesDrop {
        /// The factor on the nominal forward voltage.
        factor: f64,
        /// The current the factor holds at, A.
        at_current_a: f64,
    },
    /// The load is a resistor.
    #[error("the load has no LED forward voltage")]
    NotAnLed,
}

/// One point's outcome: its summary, or why it failed.
pub type PointOutcome = Result<PointSummary, PointError>;

/// A point's index, the input values it was given and its outcome.
#[derive(Debug, Clone)]
pub struct PointResult {
    /// Index in the whole study.
    pub index: usize,
    /// The values of the study's inputs at this point.
    pub inputs: Vec<f64>,
    /// Its outcome.
    pub outcome: PointOutcome,
}

fn run_one(s: &Scenario, engine: EngineKind, start: Option<[f64; N_STATES]>) -> PointOutcome {
    // A bug in one point (a panic) becomes that point's failed row, not
    // the loss of the whole study.
    let r = std::panic::catch_unwind(std::panic::AssertUnwindSafe(|| {
        run_point(
            s,
            &RunOptions {
                engine,
                initial_state: start,
            },
        )
    }))
    .map_err(|_| PointError::Internal)??;
    Ok(PointSummary {
        metrics: r.metrics,
        cycles_to_settle: r.steady.cycles_to_settle,
        warm_start: false,
        state_at_turn_on: r.steady.state_at_turn_on,
        supply_v: s.supply.voltage_v,
    })
    // `r` (with its waveforms) is dropped here.
}

/// What a study needs to make point `k`: its input values, its label (if
/// rows are labelled) and its scenario (or why it has none).
#[derive(Debug, Clone)]
pub(crate) struct PointInput {
    /// The values of the study's inputs at this point.
    pub inputs: Vec<f64>,
    /// The row's label (corners), if any.
    pub label: Option<String>,
    /// The scenario, or why the point has none.
    pub scenario: Result<Scenario, PointError>,
}

/// A finished point as a study streams it: its row and, for a point that
/// ran, the state at its first measured turn-on (what a warm start of the
/// next point in its chain begins from).
#[derive(Debug, Clone, PartialEq)]
pub struct Finished {
    /// The point's row.
    pub row: Row,
    /// Its steady state at turn-on (None for a failed point).
    pub state_at_turn_on: Option<[f64; N_STATES]>,
}

/// Called with each point as it finishes, from any worker thread, in
/// finish order (not index order).
pub(crate) type RowSink<'a> = &'a (dyn Fn(&Finished) + Sync);

/// What a study does besides computing: stream finished rows to a caller
/// and take over points an earlier, interrupted run already finished.
#[derive(Default, Clone, Copy)]
pub struct Hooks<'a> {
    /// Receives every point run now, as it finishes (not the resumed ones).
    pub on_finish: Option<RowSink<'a>>,
    /// Points already finished, by index: they are not run again, and a
    /// resumed point's state continues its warm-start chain exactly as if
    /// it had just run, so the rows are the same as one uninterrupted run.
    pub resume: Option<&'a BTreeMap<usize, Finished>>,
}

impl std::fmt::Debug for Hooks<'_> {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        f.debug_struct("Hooks")
            .field("on_finish", &self.on_finish.is_some())
            .field("resume", &self.resume.map(BTreeMap::len))
            .finish()
    }
}

/// Rows of a run, in index order, and whether it stopped at the
/// deadline before every point of its range had run.
#[derive(Debug, Clone, PartialEq)]
pub(crate) struct RunRows {
    /// Finished rows (resumed ones included), in index order.
    pub rows: Vec<Row>,
    /// Whether [`RunSettings::deadline`] passed with points left unstarted.
    pub stopped: bool,
}

/// Runs the points `range` of a study. `make(k)` gives point `k`'s inputs,
/// label and scenario; rows are laid out along `columns`. Each finished
/// point goes to `hooks.on_finish` at once; points in `hooks.resume` are
/// taken as they are. Once `settings.deadline` has passed, no new point
/// starts (points already running finish). Rows come back in index order.
pub(crate) fn run_points<F>(
    range: Range<usize>,
    settings: &RunSettings,
    columns: &super::rows::Columns,
    make: F,
    hooks: &Hooks<'_>,
) -> RunRows
where
    F: Fn(usize) -> PointInput + Sync,
{
    // Cold points do not depend on their neighbours: scheduled one by one
    // (the same rows), so two threads do not wait on a last long chain.
    let chain = if settings.warm_start {
        settings.chain_len.max(1)
    } else {
        1
    };
    let first_chain = range.start / chain;
    let last_chain = range.end.div_ceil(chain);
    let past_deadline = || settings.deadline.is_some_and(|d| Instant::now() >= d);
    let run_chain = |c: usize| -> (Vec<Row>, bool) {
        let lo = (c * chain).max(range.start);
        let hi = ((c + 1) * chain).min(range.end);
        let mut out = Vec::with_capacity(hi - lo);
        let mut prev: Option<[f64; N_STATES]> = None;
        for k in lo..hi {
            if let Some(f) = hooks.resume.and_then(|r| r.get(&k)) {
                if f.state_at_turn_on.is_some() {
                    prev = f.state_at_turn_on;
                }
                out.push(f.row.clone());
                continue;
            }
            if past_deadline() {
                return (out, true);
            }
            let p = make(k);
            let outcome = match p.scenario {
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
            let state = outcome.as_ref().ok().map(|p| p.state_at_turn_on);
            if state.is_some() {
                prev = state;
            }
            let result = PointResult {
                index: k,
                inputs: p.inputs,
                outcome,
            };
            let row = Row::from_point(&result, p.label.as_deref(), columns);
            if let Some(sink) = hooks.on_finish {
                let f = Finished {
                    row,
                    state_at_turn_on: state,
                };
                sink(&f);
                out.push(f.row);
            } else {
                out.push(row);
            }
        }
        (out, false)
    };
    // One job per worker thread, each taking the next chain from a shared
    // counter until none is left: chains are handed out one at a time as
    // threads become free (points differ in cost, e.g. along a supply
    // sweep), with no task per chain to split, steal or wake a thread for;
    // a worker that starts late simply finds fewer chains left.
    let next = AtomicUsize::new(first_chain);
    let workers = rayon::current_num_threads()
        .min(last_chain.saturating_sub(first_chain))
        .max(1);
    let mut chains: Vec<(usize, (Vec<Row>, bool))> = (0..workers)
        .into_par_iter()
        .flat_map_iter(|_| {
            let mut mine = Vec::new();
            loop {
                let c = next.fetch_add(1, Ordering::Relaxed);
                if c >= last_chain {
                    break mine;
                }
                mine.push((c, run_chain(c)));
            }
        })
        .collect();
    chains.sort_unstable_by_key(|c| c.0);
    let stopped = chains.iter().any(|c| c.1 .1);
    RunRows {
        rows: chains.into_iter().flat_map(|c| c.1 .0).collect(),
        stopped,
    }
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
