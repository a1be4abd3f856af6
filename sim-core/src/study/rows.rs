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

use super::run::{PointResult, Shard};
use super::spread::SpecLimits;
use super::StudyError;
use crate::metrics::{Metrics, Totals};
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
        if let Some(f) = r.metric("switching_frequency_hz") {
            if f < AUDIBLE_LIMIT_HZ {
                w.push(PointWarning::Audible { frequency_hz: f });
            }
        }
        let duty = r.metric("duty");
        if let Some(d) = duty {
            if d > DUTY_NEAR_FULL {
                w.push(PointWarning::DutyNearFull { duty: d });
            }
        }
        if let (Some(p), Some(rating)) = (
            r.metric("inductor_current_peak_a"),
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
            r.metric("inductor_current_peak_a"),
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
    /// The metric columns of every row, in order.
    pub metric_columns: Vec<String>,
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
pub fn digest(text: &str) -> String {
    let mut h: u64 = 0xcbf2_9ce4_8422_2325;
    for b in text.bytes() {
        h ^= u64::from(b);
        h = h.wrapping_mul(0x0000_0100_0000_01b3);
    }
    format!("{h:016x}")
}

fn flatten_into(prefix: &str, v: Value, out: &mut Map<String, Value>) {
    match v {
        Value::Object(m) => {
            for (k, x) in m {
                let key = if prefix.is_empty() {
                    k
                } else {
                    format!("{prefix}.{k}")
                };
                flatten_into(&key, x, out);
            }
        }
        other => {
            out.insert(prefix.to_string(), other);
        }
    }
}

/// Every metric as `name → value`, nested objects flattened to dotted
/// names (`losses_w.inductor_dcr`).
pub fn flat_metrics(m: &Metrics) -> Map<String, Value> {
    let mut out = Map::new();
    flatten_into("", serde_json::to_value(m).unwrap_or(Value::Null), &mut out);
    out
}

/// The metric column names, in the order rows hold them.
pub fn metric_columns() -> Vec<String> {
    flat_metrics(&Metrics::from_totals(&Totals::new()))
        .keys()
        .cloned()
        .collect()
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
    columns: Arc<Vec<String>>,
}

impl Row {
    /// A point's row: its metrics laid out along `columns` (which must be
    /// [`metric_columns`] for rows the engine made).
    pub fn from_point(p: &PointResult, label: Option<&str>, columns: &Arc<Vec<String>>) -> Row {
        let outcome = match &p.outcome {
            Ok(s) => {
                let flat = flat_metrics(&s.metrics);
                RowOutcome::Ran {
                    cycles_to_settle: s.cycles_to_settle,
                    warm_start: s.warm_start,
                    metrics: columns
                        .iter()
                        .map(|c| {
                            flat.get(c)
                                .and_then(Cell::from_value)
                                .unwrap_or(Cell::Empty)
                        })
                        .collect(),
                }
            }
            Err(e) => RowOutcome::Failed(e.clone()),
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
                    .map(|(c, v)| (c.clone(), v.to_value()))
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
    pub fn from_value(v: &Value, columns: &Arc<Vec<String>>) -> Result<Row, StudyError> {
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
                if let Some(k) = m.keys().find(|k| !columns.contains(k)) {
                    return Err(bad(&format!(
                        "metric `{k}` is not among the manifest's columns"
                    )));
                }
                let metrics = columns
                    .iter()
                    .map(|c| match m.get(c) {
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

    fn cell(&self, name: &str) -> Option<&Cell> {
        let k = self.columns.iter().position(|c| c == name)?;
        self.cells().get(k)
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
    /// A metric's value (None for a failed point or a missing value).
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
        self.cell(name).and_then(Cell::as_f64)
    }
    fn mode(&self) -> Option<&str> {
        match self.cell("conduction_mode") {
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

/// A cell's text before quoting: empty for null, numbers in the shortest
/// form that reads back exactly.
fn csv_cell(v: &Value) -> String {
    match v {
        Value::Null => String::new(),
        Value::String(s) => s.clone(),
        other => other.to_string(),
    }
}

/// One CSV line (with its newline), quoted where needed by the `csv`
/// crate (a field holding a comma, quote or line break).
fn csv_line(cells: &[String]) -> String {
    let mut w = csv::WriterBuilder::new()
        .terminator(csv::Terminator::Any(b'\n'))
        .from_writer(Vec::new());
    // Writing into memory cannot fail.
    if w.write_record(cells).is_err() {
        return String::from("\n");
    }
    w.into_inner()
        .ok()
        .and_then(|b| String::from_utf8(b).ok())
        .unwrap_or_else(|| String::from("\n"))
}

impl StudyTable {
    /// Whether any point failed.
    pub fn any_failed(&self) -> bool {
        self.rows.iter().any(|r| !r.ok())
    }

    /// Number of failed points.
    pub fn failed(&self) -> usize {
        self.rows.iter().filter(|r| !r.ok()).count()
    }

    /// The table as JSON text: the manifest, then one row per line.
    pub fn to_json_text(&self) -> String {
        self.json_pieces().collect()
    }

    /// [`StudyTable::to_json_text`] in pieces (the manifest, then one row
    /// at a time), so a caller can write a large table without holding
    /// all its text at once.
    pub fn json_pieces(&self) -> impl Iterator<Item = String> + '_ {
        let manifest = serde_json::to_string(&self.manifest).unwrap_or_default();
        let head = format!("{{\"manifest\":{manifest},\"rows\":[");
        let rows = self.rows.iter().enumerate().map(|(k, r)| {
            let sep = if k == 0 { "\n" } else { ",\n" };
            let mut v = r.to_value();
            let c = self.manifest.check_point(r);
            if let Value::Object(o) = &mut v {
                o.insert("verdict".into(), c.verdict.word().into());
                o.insert(
                    "warnings".into(),
                    serde_json::to_value(&c.warnings).unwrap_or(Value::Null),
                );
            }
            format!("{sep}{v}")
        });
        std::iter::once(head)
            .chain(rows)
            .chain(std::iter::once("\n]}\n".to_string()))
    }

    /// The table as CSV: a header naming every column (inputs, then
    /// status and metrics, then run details), one line per point. Values
    /// are SI, written so they read back exactly; a failed point keeps its
    /// row with empty metrics and its error message.
    pub fn to_csv_text(&self) -> String {
        self.csv_lines().collect()
    }

    /// [`StudyTable::to_csv_text`] one line at a time (each with its
    /// newline).
    pub fn csv_lines(&self) -> impl Iterator<Item = String> + '_ {
        let m = &self.manifest;
        let labelled = m.kind == StudyKind::Corners;
        let mut head: Vec<String> = vec!["index".into()];
        head.extend(m.inputs.iter().cloned());
        if labelled {
            head.push("corner".into());
        }
        head.push("status".into());
        head.extend(m.metric_columns.iter().cloned());
        head.extend(
            [
                "cycles_to_settle",
                "warm_start",
                "error",
                "verdict",
                "warnings",
            ]
            .map(String::from),
        );
        let head = csv_line(&head);
        let rows = self.rows.iter().map(move |r| {
            let mut cells: Vec<String> = vec![r.index.to_string()];
            for k in 0..m.inputs.len() {
                cells.push(csv_cell(&Value::from(r.input(k))));
            }
            if labelled {
                cells.push(csv_cell(&r.label().map_or(Value::Null, Value::from)));
            }
            cells.push(if r.ok() { "ok" } else { "failed" }.into());
            let row_cells = r.cells();
            for k in 0..m.metric_columns.len() {
                cells.push(csv_cell(
                    &row_cells.get(k).map_or(Value::Null, Cell::to_value),
                ));
            }
            cells.push(
                r.cycles_to_settle()
                    .map_or(String::new(), |c| c.to_string()),
            );
            cells.push(r.warm_start().map_or(String::new(), |w| w.to_string()));
            cells.push(csv_cell(&r.error().map_or(Value::Null, Value::from)));
            let c = m.check_point(r);
            cells.push(c.verdict.word().into());
            cells.push(c.codes());
            csv_line(&cells)
        });
        std::iter::once(head).chain(rows)
    }

    /// Reads a table back from [`StudyTable::to_json_text`] output.
    pub fn from_json_text(text: &str) -> Result<StudyTable, StudyError> {
        #[derive(Deserialize)]
        struct File {
            manifest: Manifest,
            rows: Vec<Value>,
        }
        let f: File = serde_json::from_str(text)
            .map_err(|e| StudyError::Format(format!("not a chopwave study file: {e}")))?;
        if f.manifest.format != STUDY_FORMAT {
            return Err(StudyError::Format(format!(
                "layout `{}`, expected `{STUDY_FORMAT}`",
                f.manifest.format
            )));
        }
        f.manifest.check_counts()?;
        let range = super::sweep::point_range(&f.manifest);
        let expected = match &f.manifest.incomplete {
            Some(inc) if inc.of != range.len() || inc.ran > inc.of => {
                return Err(StudyError::Format(format!(
                    "the manifest says {} of {} points ran, but the file covers {} points",
                    inc.ran,
                    inc.of,
                    range.len()
                )))
            }
            Some(inc) => inc.ran,
            None => range.len(),
        };
        if f.rows.len() != expected {
            return Err(StudyError::Format(format!(
                "the manifest counts {expected} rows, the file holds {}",
                f.rows.len()
            )));
        }
        let columns = Arc::new(f.manifest.metric_columns.clone());
        let rows = f
            .rows
            .iter()
            .map(|r| Row::from_value(r, &columns))
            .collect::<Result<Vec<_>, _>>()?;
        Ok(StudyTable {
            manifest: f.manifest,
            rows,
        })
    }

    /// The rows' shared metric column list (the manifest's), for building
    /// rows of this table.
    pub fn columns(&self) -> Arc<Vec<String>> {
        self.rows
            .first()
            .map(|r| Arc::clone(&r.columns))
            .unwrap_or_else(|| Arc::new(self.manifest.metric_columns.clone()))
    }

    /// Joins the shards of one study into the table one run would have
    /// made: every shard exactly once, the same manifest otherwise.
    pub fn merge(mut shards: Vec<StudyTable>) -> Result<StudyTable, StudyError> {
        let err = |s: String| Err(StudyError::Merge(s));
        if shards.is_empty() {
            return err("no shard files given".into());
        }
        shards.sort_by_key(|t| t.manifest.shard.map_or(0, |s| s.shard.index));
        let mut base = shards[0].manifest.clone();
        let Some(first) = base.shard else {
            return err("the first file is a whole study, not a shard".into());
        };
        base.shard = None;
        let n = first.shard.count;
        if shards.len() != n {
            return err(format!(
                "the study was cut into {n} shards but {} files were given",
                shards.len()
            ));
        }
        // Sized by the rows really held, never by a count read from a file.
        let mut rows = Vec::with_capacity(shards.iter().map(|t| t.rows.len()).sum());
        for (k, t) in shards.into_iter().enumerate() {
            let Some(info) = t.manifest.shard else {
                return err("a whole study was given among the shards".into());
            };
            if info.shard.index != k + 1 || info.shard.count != n {
                return err(format!("shard {}/{} is missing or given twice", k + 1, n));
            }
            if let Some(inc) = &t.manifest.incomplete {
                return err(format!(
                    "shard {}/{n} stopped before it finished ({}: {} of {} points ran); \
                     run it again with --resume",
                    k + 1,
                    inc.reason,
                    inc.ran,
                    inc.of
                ));
            }
            let mut m = t.manifest.clone();
            m.shard = None;
            if m != base {
                return err(format!(
                    "shard {}/{n} is from a different study (scenario, settings or version differ)",
                    k + 1
                ));
            }
            if Some(t.rows.len()) != info.end.checked_sub(info.first)
                || t.rows
                    .iter()
                    .enumerate()
                    .any(|(j, r)| r.index() != info.first + j)
            {
                return err(format!("shard {}/{n} is incomplete", k + 1));
            }
            rows.extend(t.rows);
        }
        if rows.len() != base.points || rows.iter().enumerate().any(|(j, r)| r.index() != j) {
            return err("the shards do not cover the study exactly once".into());
        }
        Ok(StudyTable {
            manifest: base,
            rows,
        })
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn digest_is_fnv1a() {
        // FNV-1a 64 test vectors (Fowler, Noll, Vo: the FNV reference
        // page's test suite): "" and "a".
        assert_eq!(digest(""), "cbf29ce484222325");
        assert_eq!(digest("a"), "af63dc4c8601ec8c");
    }

    #[test]
    fn csv_quotes_what_needs_it() {
        let cells = [
            "a,b \"c\"".to_string(),
            String::new(),
            "x\ny".into(),
            "7".into(),
        ];
        assert_eq!(csv_line(&cells), "\"a,b \"\"c\"\"\",,\"x\ny\",7\n");
        assert_eq!(csv_cell(&Value::Null), "");
        for x in [1e-5_f64, 0.1 + 0.2, 4.7e-6, 123_456.789] {
            let back: f64 = csv_cell(&Value::from(x)).parse().unwrap();
            assert_eq!(back.to_bits(), x.to_bits());
        }
    }

    #[test]
    fn rows_read_back_write_the_same_text() {
        let columns = Arc::new(vec![
            "conduction_mode".to_string(),
            "cycles_measured".to_string(),
            "duty".to_string(),
            "ripple".to_string(),
        ]);
        let text = r#"{"cycles_to_settle":12,"error":null,"index":3,"inputs":[9.0,0.00001],"label":null,"metrics":{"conduction_mode":"dcm","cycles_measured":8,"duty":0.30000000000000004,"ripple":null},"status":"ok","warm_start":true}"#;
        let v: Value = serde_json::from_str(text).unwrap();
        let r = Row::from_value(&v, &columns).unwrap();
        assert_eq!(r.to_value().to_string(), text);
        assert_eq!(r.mode(), Some("dcm"));
        assert_eq!(r.metric("cycles_measured"), Some(8.0));
        assert_eq!(r.metric("ripple"), None);
        let failed = r#"{"cycles_to_settle":null,"error":"no, \"quoted\"","index":0,"inputs":[null],"label":"a low","metrics":{},"status":"failed","warm_start":null}"#;
        let v: Value = serde_json::from_str(failed).unwrap();
        let r = Row::from_value(&v, &columns).unwrap();
        assert_eq!(r.to_value().to_string(), failed);
        assert!(r.input(0).is_nan());
        // A metric the manifest does not list is refused, naming it.
        let odd: Value = serde_json::from_str(&text.replace("\"duty\"", "\"dutty\"")).unwrap();
        let e = Row::from_value(&odd, &columns).unwrap_err();
        assert!(e.to_string().contains("dutty"), "{e}");
    }

    #[test]
    fn metric_columns_flatten_losses() {
        let c = metric_columns();
        assert!(c.iter().any(|n| n == "losses_w.inductor_dcr"));
        assert!(c.iter().any(|n| n == "led_current_avg_a"));
    }
}
