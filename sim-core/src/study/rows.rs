//! The study table: a manifest describing the study and one row per
//! point, with deterministic text forms and the merge of shards.
//!
//! A row is kept as a JSON object (`index`, `inputs`, `status`, `error`,
//! `label`, `cycles_to_settle`, `warm_start`, `metrics`), whose keys are
//! written in sorted order and whose numbers are written in the shortest
//! form that reads back to the same `f64`. The CSV is made from the rows
//! alone, so a table read back from its JSON (e.g. shard files to merge)
//! writes exactly the same bytes as the run that made it.

use super::run::{PointResult, Shard};
use super::spread::SpecLimits;
use super::StudyError;
use crate::metrics::{Metrics, Totals};
use serde::{Deserialize, Serialize};
use serde_json::{Map, Value};

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
    /// Highest supply voltage any point may apply, V (for cautions).
    pub max_supply_v: f64,
    /// The metric columns of every row, in order.
    pub metric_columns: Vec<String>,
    /// Which slice this file holds (None: the whole study).
    pub shard: Option<ShardInfo>,
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

/// A point's row as a JSON object.
pub fn row_value(p: &PointResult, label: Option<&str>) -> Value {
    let mut r = Map::new();
    r.insert("index".into(), p.index.into());
    r.insert(
        "inputs".into(),
        Value::Array(p.inputs.iter().map(|&x| Value::from(x)).collect()),
    );
    r.insert("label".into(), label.map_or(Value::Null, Value::from));
    match &p.outcome {
        Ok(s) => {
            r.insert("status".into(), "ok".into());
            r.insert("error".into(), Value::Null);
            r.insert("cycles_to_settle".into(), s.cycles_to_settle.into());
            r.insert("warm_start".into(), s.warm_start.into());
            r.insert("metrics".into(), Value::Object(flat_metrics(&s.metrics)));
        }
        Err(e) => {
            r.insert("status".into(), "failed".into());
            r.insert("error".into(), e.as_str().into());
            r.insert("cycles_to_settle".into(), Value::Null);
            r.insert("warm_start".into(), Value::Null);
            r.insert("metrics".into(), Value::Object(Map::new()));
        }
    }
    Value::Object(r)
}

/// A study's manifest and rows.
#[derive(Debug, Clone, PartialEq)]
pub struct StudyTable {
    /// What the study is.
    pub manifest: Manifest,
    /// One row per point, in index order.
    pub rows: Vec<Value>,
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

impl RowExt for Value {
    fn index(&self) -> usize {
        self["index"].as_u64().unwrap_or(u64::MAX) as usize
    }
    fn ok(&self) -> bool {
        self["status"] == "ok"
    }
    fn metric(&self, name: &str) -> Option<f64> {
        self["metrics"].get(name).and_then(Value::as_f64)
    }
    fn mode(&self) -> Option<&str> {
        self["metrics"]
            .get("conduction_mode")
            .and_then(Value::as_str)
    }
    fn input(&self, k: usize) -> f64 {
        self["inputs"]
            .get(k)
            .and_then(Value::as_f64)
            .unwrap_or(f64::NAN)
    }
    fn error(&self) -> Option<&str> {
        self["error"].as_str()
    }
    fn label(&self) -> Option<&str> {
        self["label"].as_str()
    }
}

fn csv_cell(v: &Value) -> String {
    match v {
        Value::Null => String::new(),
        Value::String(s) => {
            if s.contains([',', '"', '\n', '\r']) {
                format!("\"{}\"", s.replace('"', "\"\""))
            } else {
                s.clone()
            }
        }
        other => other.to_string(),
    }
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
        let manifest = serde_json::to_string(&self.manifest).unwrap_or_default();
        let mut s = format!("{{\"manifest\":{manifest},\"rows\":[");
        for (k, r) in self.rows.iter().enumerate() {
            s.push_str(if k == 0 { "\n" } else { ",\n" });
            s.push_str(&r.to_string());
        }
        s.push_str("\n]}\n");
        s
    }

    /// The table as CSV: a header naming every column (inputs, then
    /// status and metrics, then run details), one line per point. Values
    /// are SI, written so they read back exactly; a failed point keeps its
    /// row with empty metrics and its error message.
    pub fn to_csv_text(&self) -> String {
        let m = &self.manifest;
        let labelled = m.kind == StudyKind::Corners;
        let mut head: Vec<String> = vec!["index".into()];
        head.extend(m.inputs.iter().cloned());
        if labelled {
            head.push("corner".into());
        }
        head.push("status".into());
        head.extend(m.metric_columns.iter().cloned());
        head.extend(["cycles_to_settle", "warm_start", "error"].map(String::from));
        let mut s = head
            .iter()
            .map(|h| csv_cell(&Value::from(h.as_str())))
            .collect::<Vec<_>>()
            .join(",");
        s.push('\n');
        for r in &self.rows {
            let mut cells: Vec<String> = vec![r["index"].to_string()];
            for k in 0..m.inputs.len() {
                cells.push(csv_cell(r["inputs"].get(k).unwrap_or(&Value::Null)));
            }
            if labelled {
                cells.push(csv_cell(&r["label"]));
            }
            cells.push(csv_cell(&r["status"]));
            for c in &m.metric_columns {
                cells.push(csv_cell(r["metrics"].get(c).unwrap_or(&Value::Null)));
            }
            for c in ["cycles_to_settle", "warm_start", "error"] {
                cells.push(csv_cell(&r[c]));
            }
            s.push_str(&cells.join(","));
            s.push('\n');
        }
        s
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
        Ok(StudyTable {
            manifest: f.manifest,
            rows: f.rows,
        })
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
        let mut rows = Vec::with_capacity(base.points);
        for (k, t) in shards.into_iter().enumerate() {
            let Some(info) = t.manifest.shard else {
                return err("a whole study was given among the shards".into());
            };
            if info.shard.index != k + 1 || info.shard.count != n {
                return err(format!("shard {}/{} is missing or given twice", k + 1, n));
            }
            let mut m = t.manifest.clone();
            m.shard = None;
            if m != base {
                return err(format!(
                    "shard {}/{n} is from a different study (scenario, settings or version differ)",
                    k + 1
                ));
            }
            if t.rows.len() != info.end - info.first
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
        assert_eq!(csv_cell(&Value::from("a,b \"c\"")), "\"a,b \"\"c\"\"\"");
        assert_eq!(csv_cell(&Value::Null), "");
        for x in [1e-5_f64, 0.1 + 0.2, 4.7e-6, 123_456.789] {
            let back: f64 = csv_cell(&Value::from(x)).parse().unwrap();
            assert_eq!(back.to_bits(), x.to_bits());
        }
    }

    #[test]
    fn metric_columns_flatten_losses() {
        let c = metric_columns();
        assert!(c.iter().any(|n| n == "losses_w.inductor_dcr"));
        assert!(c.iter().any(|n| n == "led_current_avg_a"));
    }
}
