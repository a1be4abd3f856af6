//! Studies over many operating points: sweeps, the CCM/DCM boundary and
//! tolerance spread.
//!
//! Every study is a list of *points*, each a scenario with some fields
//! set, run to steady state by [`crate::simulate`]. The modules:
//!
//! - [`vary`] — `PATH=START:STOP:COUNT` / `PATH=v1,v2` / `PATH=range`
//!   specifications and the 1-D or 2-D grid of points they span.
//! - [`run`] — runs points in parallel (rayon) in fixed chains, each point
//!   warm-started from its neighbour's steady state unless told not to.
//! - [`rows`] — the study table: a manifest describing the study and one
//!   row per point, with deterministic text (CSV, JSON), sharding and the
//!   merge of shard outputs.
//! - [`journal`] — finished rows as lines of text while a study runs, so
//!   an interrupted study keeps them and can be resumed.
//! - [`session`] — the rules around the journal: which journal belongs
//!   to a study, which points a resumed study takes over, the time limit,
//!   how a study ends and whether its journal is kept.
//! - [`budget`] — what a request will cost (memory, output, points)
//!   before it runs, and the budget it is held to.
//! - [`sweep`] — sweep tables from a grid.
//! - [`boundary`] — where the design crosses between CCM and DCM, found by
//!   bracketing on the engine's own result, traced across a second
//!   variable over the grid of its mode map.
//! - [`spread`] — part tolerances and spec limits (the scenario's
//!   `tolerances` and `spec` objects), Monte Carlo sampling, corners,
//!   percentiles and yield.
//!
//! **Invariant:** the same study gives the same rows, bit for bit, whatever
//! the number of threads or shards: points are grouped into chains by
//! index alone, each sample's random stream depends only on the seed and
//! its index, and rows are ordered by index.

pub mod boundary;
pub mod budget;
pub mod journal;
pub mod rows;
pub mod run;
pub mod session;
pub mod spread;
pub mod sweep;
pub mod vary;

use crate::error::{ScenarioError, SimError};
use crate::scenario::{apply_override, Scenario};

/// Why a study could not be set up or finished. A failure that comes
/// from a run or from the scenario keeps that error as its source.
#[derive(Debug, Clone, thiserror::Error)]
#[non_exhaustive]
pub enum StudyError {
    /// A sweep specification (`PATH=START:STOP:COUNT` and its other
    /// forms) is malformed or names no numeric field.
    #[error("`{spec}`: {reason}")]
    Vary {
        /// The specification as given.
        spec: String,
        /// What is wrong and what is expected.
        reason: String,
    },
    /// A `K/N` shard specification is malformed.
    #[error("shard `{spec}`: {reason}")]
    Shard {
        /// The specification as given.
        spec: String,
        /// What is wrong.
        reason: String,
    },
    /// The study needs something the scenario does not declare.
    #[error("{path}: {reason}")]
    Scenario {
        /// Dotted field path.
        path: String,
        /// What is missing or wrong.
        reason: String,
    },
    /// The nominal design (needed first) did not run.
    #[error("the nominal design failed: {0}")]
    Nominal(#[source] SimError),
    /// The boundary search could not bracket or finish.
    #[error("boundary along {path}: {reason}")]
    Boundary {
        /// The variable searched.
        path: String,
        /// Why it stopped.
        reason: String,
    },
    /// A run of the boundary search failed.
    #[error("boundary along {path}: the run at {at} failed: {source}")]
    BoundaryRun {
        /// The variable searched.
        path: String,
        /// The trial value, in engineering notation with its unit.
        at: String,
        /// Why the run failed.
        #[source]
        source: SimError,
    },
    /// A trial value of the boundary search makes the scenario invalid.
    #[error("boundary along {path}: at {at}: {source}")]
    BoundaryPoint {
        /// The variable searched.
        path: String,
        /// The trial value, in engineering notation with its unit.
        at: String,
        /// What the scenario check found.
        #[source]
        source: ScenarioError,
    },
    /// A mode map with more points along the searched variable than a
    /// sweep axis may have.
    #[error("{points} points along the searched variable: at most {max}")]
    MapTooLarge {
        /// The points asked for.
        points: usize,
        /// [`vary::MAX_POINTS_PER_AXIS`].
        max: usize,
    },
    /// A shard given to merge stopped before it finished (resuming it
    /// from its journal finishes it).
    #[error(
        "merge: shard {index}/{count} stopped before it finished ({}: {} of {} points ran)",
        incomplete.reason,
        incomplete.ran,
        incomplete.of
    )]
    ShardIncomplete {
        /// The shard's number (1-based).
        index: usize,
        /// Shards of the study.
        count: usize,
        /// Why it stopped and how many points ran.
        incomplete: rows::Incomplete,
    },
    /// Shard outputs could not be merged.
    #[error("merge: {0}")]
    Merge(String),
    /// A study output could not be read back.
    #[error("study output: {0}")]
    Format(String),
    /// The wall-clock time limit passed before the study finished.
    #[error("time limit reached: {0}")]
    TimeLimit(String),
}

/// The scenario as JSON, to which point values are applied.
pub fn scenario_json(s: &Scenario) -> serde_json::Value {
    serde_json::to_value(s).unwrap_or(serde_json::Value::Null)
}

/// Formats a number so that it reads back as exactly the same `f64`.
pub(crate) fn exact_text(v: f64) -> String {
    format!("{v:e}")
}

/// The scenario `base` with each `(path, value)` set, loaded and validated
/// as if the user had written those values into the file: the JSON route,
/// kept as the reference the studies' own route ([`Scenario::with_values`]
/// on the `Scenario`, no JSON) is checked against bit for bit.
pub fn scenario_with(
    base: &serde_json::Value,
    sets: &[(String, f64)],
) -> Result<Scenario, ScenarioError> {
    let mut v = base.clone();
    for (path, x) in sets {
        apply_override(&mut v, path, &exact_text(*x))?;
    }
    Scenario::from_json_value(&v)
}

/// Highest supply voltage a study will apply, V: the larger of the
/// scenario's own and any swept or toleranced supply value.
pub fn max_supply_v(s: &Scenario, extra: impl IntoIterator<Item = f64>) -> f64 {
    extra.into_iter().fold(s.supply.voltage_v, f64::max)
}
