//! The study table: a manifest describing the study and one row per
//! point, with deterministic text forms and the merge of shards.
//!
//! A row is held compactly ([`Row`]: its metric values as [`Cell`]s
//! aligned with the manifest's `metric_columns`, names shared by every
//! row) and written as a JSON object (`index`, `inputs`, `status`,
//! `error`, `label`, `cycles_to_settle`, `warm_start`, `metrics`), whose
//! keys are in sorted order and whose numbers are in the shortest form
//! that reads back to the same `f64`. The CSV is made from the rows
//! alone, so a table read back from its JSON (e.g. shard files to merge)
//! writes exactly the same bytes as the run that made it.
//!
//! The jobs are split: [`metric`] (the typed metric columns and the
//! by-name lookup), [`verdict`] (each point's verdict and warnings),
//! [`text`] (the CSV and JSON writers, reading a table back, the merge
//! of shards).

pub mod metric;
pub mod text;
pub mod verdict;

pub use metric::{flat_metrics, metric_columns, Columns, Metric, UnknownMetric};
pub use verdict::{
    PointCheck, PointVerdict, PointWarning, AUDIBLE_LIMIT_HZ, DUTY_NEAR_FULL, REGULATION_TOLERANCE,
};

use super::run::{PointResult, Shard};
use super::StudyError;
use crate::scenario::SpecLimits;
use serde::{Deserialize, Serialize};
use serde_json::{Map, Value};
use std::sync::Arc;

/// Layout version of study outputs.
pub const STUDY_FORMAT: &str = "chopwave-study-1";

/// What kind of study a table holds.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize, Deserialize)]
#[serde(rename_all = "lowercase")]
pub enum StudyKind {
    /// A 1-D or 2-D grid of values.
    Sweep,
    /// Monte Carlo samples of the tolerances.
    Spread,
    /// Every tolerance at its extremes.
    Corners,
}

impl StudyKind {
    /// The word used in file names.
    pub fn word(self) -> &'static str {
        match self {
            StudyKind::Sweep => "sweep",
            StudyKind::Spread => "spread",
            StudyKind::Corners => "corners",
        }
    }
}

/// Which slice of the study a file holds.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize, Deserialize)]
pub struct ShardInfo {
    /// The shard.
    #[serde(flatten)]
    pub shard: Shard,
    /// First point index in this file.
    pub first: usize,
    /// One past the last point index.
    pub end: usize,
}

/// Describes a study: enough to check that shards belong together and to
/// render the outputs from the rows.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct Manifest {
    /// [`STUDY_FORMAT`].
    pub format: String,
    /// Sweep, spread or corners.
    pub kind: StudyKind,
    /// The scenario's name.
    pub scenario: String,
    /// FNV-1a 64-bit digest of the scenario as JSON (hex).
    pub scenario_digest: String,
    /// Names of the input columns (field paths, or
    /// `led_forward_voltage_factor`).
    pub inputs: Vec<String>,
    /// Points along each input (sweeps); `[points]` otherwise.
    pub shape: Vec<usize>,
    /// Points in the whole study.
    pub points: usize,
    /// The sweep specifications, resolved to numbers.
    pub vary: Vec<String>,
    /// The Monte Carlo seed.
    pub seed: Option<u64>,
    /// Whether points were warm-started.
    pub warm_start: bool,
    /// Points per warm-start chain.
    pub chain_len: usize,
    /// `exact` or `reference`.
    pub engine: String,
    /// Nominal value, tolerance and distribution of each input, in words.
    pub input_notes: Vec<String>,
    /// The spec limits the yield is judged against (spread, corners).
    pub spec: Option<SpecLimits>,
    /// Inductor saturation rating, A (for the peak-current plot).
    pub inductor_saturation_a: Option<f64>,
    /// The controller's highest switching frequency, Hz, when the
    /// scenario gives it (`parts.controller.max_frequency_hz`; for the
    /// frequency plot).
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub controller_max_frequency_hz: Option<f64>,
    /// The controller's shortest on-time, s, when the scenario gives it
    /// (`parts.controller.min_on_time_s`; for the frequency plot).
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub controller_min_on_time_s: Option<f64>,
    /// The inductor current at which the controller turns the switch
    /// off, A (the peak threshold, or the upper one of a hysteretic
    /// controller; absent for fixed duty): for the per-point "not
    /// regulating" verdict.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub switch_off_current_a: Option<f64>,
    /// The nominal design's value of each input (`null` where an input
    /// is not a plain scenario number), to mark it on maps; empty when
    /// none is.
    #[serde(default, skip_serializing_if = "Vec::is_empty")]
    pub nominal_inputs: Vec<Option<f64>>,
    /// Highest supply voltage any point may apply, V (for cautions).
    pub max_supply_v: f64,
    /// The metric columns of every row, in order (written by name).
    pub metric_columns: Vec<Metric>,
    /// Which slice this file holds (None: the whole study).
    pub shard: Option<ShardInfo>,
    /// Set when the study stopped before every point ran (absent from
    /// the file otherwise).
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub incomplete: Option<Incomplete>,
}

impl Manifest {
    /// Checks the counts a manifest read from a file states against each
    /// other before anything is sized by them: the shape's product (no
    /// overflow) is the point count, one shape entry per input for a
    /// sweep, a shard's range lies inside the study and its index inside
    /// its count.
    pub fn check_counts(&self) -> Result<(), StudyError> {
        let bad = |what: String| Err(StudyError::Format(format!("manifest: {what}")));
        let product = self
            .shape
            .iter()
            .try_fold(1usize, |acc, &n| acc.checked_mul(n));
        if product != Some(self.points) {
            return bad(format!(
                "the shape {:?} does not multiply to its {} points",
                self.shape, self.points
            ));
        }
        if self.kind == StudyKind::Sweep && self.shape.len() != self.inputs.len() {
            return bad(format!(
                "{} sweep axes for {} inputs",
                self.shape.len(),
                self.inputs.len()
            ));
        }
        if let Some(sh) = self.shard {
            if sh.shard.index == 0
                || sh.shard.index > sh.shard.count
                || sh.first > sh.end
                || sh.end > self.points
            {
                return bad(format!(
                    "shard {}/{} covers points {}..{} of {}",
                    sh.shard.index, sh.shard.count, sh.first, sh.end, self.points
                ));
            }
        }
        Ok(())
    }
}

/// Why a table holds fewer rows than its study has points.
#[derive(Debug, Clone, PartialEq, Eq, Serialize, Deserialize)]
pub struct Incomplete {
    /// In words, e.g. `time limit of 30 s reached`.
    pub reason: String,
    /// Points that ran (rows in the table).
    pub ran: usize,
    /// Points the study (or its shard) has.
    pub of: usize,
}

/// FNV-1a, 64 bits, as 16 hex digits.
pub(crate) fn digest(text: &str) -> String {
    let mut h: u64 = 0xcbf2_9ce4_8422_2325;
    for b in text.bytes() {
        h ^= u64::from(b);
        h = h.wrapping_mul(0x0000_0100_0000_01b3);
    }
    format!("{h:016x}")
}

/// One metric value of a row, held without its name: the row's cells are
/// aligned with the manifest's `metric_columns`. Each kind writes back as
/// the JSON it was made from, so tables read from files write the same
/// bytes.
#[derive(Debug, Clone, PartialEq)]
pub enum Cell {
    /// No value (JSON `null`: a non-finite number or a missing figure).
    Empty,
    /// A finite real number.
    Real(f64),
    /// A whole number ≥ 0 (e.g. `cycles_measured`).
    Count(u64),
    /// A negative whole number.
    Signed(i64),
    /// A yes/no figure.
    Flag(bool),
    /// A word (e.g. `conduction_mode`).
    Text(Box<str>),
}

impl Cell {
    /// The cell for a JSON value (`None` for arrays and objects, which a
    /// flat metric never is).
    pub fn from_value(v: &Value) -> Option<Cell> {
        Some(match v {
            Value::Null => Cell::Empty,
            Value::Bool(b) => Cell::Flag(*b),
            Value::Number(n) => {
                if let Some(u) = n.as_u64() {
                    Cell::Count(u)
                } else if let Some(i) = n.as_i64() {
                    Cell::Signed(i)
                } else {
                    n.as_f64().map_or(Cell::Empty, Cell::Real)
                }
            }
            Value::String(s) => Cell::Text(s.as_str().into()),
            Value::Array(_) | Value::Object(_) => return None,
        })
    }

    /// The cell as JSON.
    pub fn to_value(&self) -> Value {
        match self {
            Cell::Empty => Value::Null,
            Cell::Real(x) => Value::from(*x),
            Cell::Count(u) => Value::from(*u),
            Cell::Signed(i) => Value::from(*i),
            Cell::Flag(b) => Value::Bool(*b),
            Cell::Text(s) => Value::from(&**s),
        }
    }

    /// The value as a number, if it is one.
    pub fn as_f64(&self) -> Option<f64> {
        match self {
            Cell::Real(x) => Some(*x),
            Cell::Count(u) => Some(*u as f64),
            Cell::Signed(i) => Some(*i as f64),
            _ => None,
        }
    }
}

/// What became of a point.
#[derive(Debug, Clone, PartialEq)]
pub enum RowOutcome {
    /// It ran to steady state.
    Ran {
        /// Cycles run until steady state.
        cycles_to_settle: u64,
        /// Whether it started from a neighbour's steady state.
        warm_start: bool,
        /// One cell per metric column.
        metrics: Box<[Cell]>,
    },
    /// It did not run; why, in words.
    Failed(String),
}

/// One point of a study table, held compactly: metric values without
/// their names, aligned with the table's `metric_columns` (shared by all
/// rows of the table). [`Row::to_value`] gives the JSON object that the
/// table files hold.
#[derive(Debug, Clone, PartialEq)]
pub struct Row {
    /// The point index.
    pub index: usize,
    /// The values of the study's inputs (NaN for a missing one).
    pub inputs: Box<[f64]>,
    /// The row's label (corners).
    pub label: Option<Box<str>>,
    /// Its outcome.
    pub outcome: RowOutcome,
    columns: Columns,
}

impl Row {
    /// A point's row: its metrics laid out along `columns`, each read by
    /// its accessor ([`Metric::cell`]).
    pub fn from_point(p: &PointResult, label: Option<&str>, columns: &Columns) -> Row {
        let outcome = match &p.outcome {
            Ok(s) => RowOutcome::Ran {
                cycles_to_settle: s.cycles_to_settle,
                warm_start: s.warm_start,
                metrics: columns.iter().map(|c| c.cell(&s.metrics)).collect(),
            },
            Err(e) => RowOutcome::Failed(e.to_string()),
        };
        Row {
            index: p.index,
            inputs: p.inputs.as_slice().into(),
            label: label.map(Into::into),
            outcome,
            columns: Arc::clone(columns),
        }
    }

    /// The row as the JSON object the table files hold (keys sorted:
    /// `cycles_to_settle`, `error`, `index`, `inputs`, `label`, `metrics`,
    /// `status`, `warm_start`).
    pub fn to_value(&self) -> Value {
        let mut r = Map::new();
        r.insert("index".into(), self.index.into());
        r.insert(
            "inputs".into(),
            Value::Array(self.inputs.iter().map(|&x| Value::from(x)).collect()),
        );
        r.insert(
            "label".into(),
            self.label.as_deref().map_or(Value::Null, Value::from),
        );
        match &self.outcome {
            RowOutcome::Ran {
                cycles_to_settle,
                warm_start,
                metrics,
            } => {
                r.insert("status".into(), "ok".into());
                r.insert("error".into(), Value::Null);
                r.insert("cycles_to_settle".into(), (*cycles_to_settle).into());
                r.insert("warm_start".into(), (*warm_start).into());
                let m: Map<String, Value> = self
                    .columns
                    .iter()
                    .zip(metrics.iter())
                    .map(|(c, v)| (c.name().to_string(), v.to_value()))
                    .collect();
                r.insert("metrics".into(), Value::Object(m));
            }
            RowOutcome::Failed(e) => {
                r.insert("status".into(), "failed".into());
                r.insert("error".into(), e.as_str().into());
                r.insert("cycles_to_settle".into(), Value::Null);
                r.insert("warm_start".into(), Value::Null);
                r.insert("metrics".into(), Value::Object(Map::new()));
            }
        }
        Value::Object(r)
    }

    /// Reads a row back from [`Row::to_value`]'s form, its metrics laid
    /// out along `columns`.
    pub fn from_value(v: &Value, columns: &Columns) -> Result<Row, StudyError> {
        let bad = |what: &str| StudyError::Format(format!("row {}: {what}", v["index"]));
        let index = v["index"]
            .as_u64()
            .ok_or_else(|| bad("`index` is not a whole number"))? as usize;
        let inputs = v["inputs"]
            .as_array()
            .ok_or_else(|| bad("`inputs` is not a list"))?
            .iter()
            .map(|x| match x {
                Value::Null => Ok(f64::NAN),
                x => x.as_f64().ok_or_else(|| bad("an input is not a number")),
            })
            .collect::<Result<Box<[f64]>, _>>()?;
        let label = match &v["label"] {
            Value::Null => None,
            Value::String(s) => Some(s.as_str().into()),
            _ => return Err(bad("`label` is not text")),
        };
        let outcome = match v["status"].as_str() {
            Some("ok") => {
                let m = v["metrics"]
                    .as_object()
                    .ok_or_else(|| bad("`metrics` is not an object"))?;
                if let Some(k) = m.keys().find(|k| !columns.iter().any(|c| c.name() == *k)) {
                    return Err(bad(&format!(
                        "metric `{k}` is not among the manifest's columns"
                    )));
                }
                let metrics = columns
                    .iter()
                    .map(|c| match m.get(c.name()) {
                        None => Ok(Cell::Empty),
                        Some(x) => Cell::from_value(x)
                            .ok_or_else(|| bad(&format!("metric `{c}` is not a plain value"))),
                    })
                    .collect::<Result<Box<[Cell]>, _>>()?;
                RowOutcome::Ran {
                    cycles_to_settle: v["cycles_to_settle"]
                        .as_u64()
                        .ok_or_else(|| bad("`cycles_to_settle` is not a whole number"))?,
                    warm_start: v["warm_start"]
                        .as_bool()
                        .ok_or_else(|| bad("`warm_start` is not true or false"))?,
                    metrics,
                }
            }
            Some("failed") => RowOutcome::Failed(
                v["error"]
                    .as_str()
                    .ok_or_else(|| bad("a failed row has no `error` text"))?
                    .to_string(),
            ),
            _ => return Err(bad("`status` is neither ok nor failed")),
        };
        Ok(Row {
            index,
            inputs,
            label,
            outcome,
            columns: Arc::clone(columns),
        })
    }

    /// The row's metric cells (empty for a failed point).
    pub fn cells(&self) -> &[Cell] {
        match &self.outcome {
            RowOutcome::Ran { metrics, .. } => metrics,
            RowOutcome::Failed(_) => &[],
        }
    }

    /// The `k`-th metric column's value as a number.
    pub fn metric_at(&self, k: usize) -> Option<f64> {
        self.cells().get(k).and_then(Cell::as_f64)
    }

    /// Cycles run until steady state (None for a failed point).
    pub fn cycles_to_settle(&self) -> Option<u64> {
        match &self.outcome {
            RowOutcome::Ran {
                cycles_to_settle, ..
            } => Some(*cycles_to_settle),
            RowOutcome::Failed(_) => None,
        }
    }

    /// Whether the point started warm (None for a failed point).
    pub fn warm_start(&self) -> Option<bool> {
        match &self.outcome {
            RowOutcome::Ran { warm_start, .. } => Some(*warm_start),
            RowOutcome::Failed(_) => None,
        }
    }

    /// The cell of metric `m` (None for a failed point or a metric the
    /// table does not hold).
    pub fn get(&self, m: Metric) -> Option<&Cell> {
        let k = self.columns.iter().position(|&c| c == m)?;
        self.cells().get(k)
    }

    /// Metric `m`'s value as a number (None for a failed point, a
    /// missing value or a metric that is not a number).
    pub fn value(&self, m: Metric) -> Option<f64> {
        self.get(m).and_then(Cell::as_f64)
    }

    /// The metric columns this row is laid out along.
    pub fn columns(&self) -> &Columns {
        &self.columns
    }
}

/// A study's manifest and rows.
#[derive(Debug, Clone, PartialEq)]
pub struct StudyTable {
    /// What the study is.
    pub manifest: Manifest,
    /// One row per point, in index order.
    pub rows: Vec<Row>,
}

/// Reading rows back.
pub trait RowExt {
    /// The point index.
    fn index(&self) -> usize;
    /// Whether the point ran.
    fn ok(&self) -> bool;
    /// A metric's value by its column name (None for a failed point, a
    /// missing value or a name that is no metric): the lookup for names
    /// people type; code uses [`Row::value`] with a [`Metric`].
    fn metric(&self, name: &str) -> Option<f64>;
    /// The conduction mode word (`ccm`, `dcm`, `boundary`).
    fn mode(&self) -> Option<&str>;
    /// The `k`-th input value.
    fn input(&self, k: usize) -> f64;
    /// The failure message, if the point failed.
    fn error(&self) -> Option<&str>;
    /// The row's label (corners).
    fn label(&self) -> Option<&str>;
}

impl RowExt for Row {
    fn index(&self) -> usize {
        self.index
    }
    fn ok(&self) -> bool {
        matches!(self.outcome, RowOutcome::Ran { .. })
    }
    fn metric(&self, name: &str) -> Option<f64> {
        self.value(Metric::from_name(name)?)
    }
    fn mode(&self) -> Option<&str> {
        match self.get(Metric::ConductionMode) {
            Some(Cell::Text(s)) => Some(s),
            _ => None,
        }
    }
    fn input(&self, k: usize) -> f64 {
        self.inputs.get(k).copied().unwrap_or(f64::NAN)
    }
    fn error(&self) -> Option<&str> {
        match &self.outcome {
            RowOutcome::Failed(e) => Some(e),
            RowOutcome::Ran { .. } => None,
        }
    }
    fn label(&self) -> Option<&str> {
        self.label.as_deref()
    }
}

#[cfg(test)]
mod tests;
