//! A study table as text: the CSV and JSON writers (deterministic, so
//! a table read back from its JSON writes the same bytes), reading a
//! table back, and the merge of shard tables.

use super::{Cell, Columns, Manifest, Row, RowExt, StudyKind, StudyTable, STUDY_FORMAT};
use crate::study::StudyError;
use serde::Deserialize;
use serde_json::Value;

/// A cell's text before quoting: empty for null, numbers in the shortest
/// form that reads back exactly.
pub(super) fn csv_cell(v: &Value) -> String {
    match v {
        Value::Null => String::new(),
        Value::String(s) => s.clone(),
        other => other.to_string(),
    }
}

/// One CSV line (with its newline), quoted where needed by the `csv`
/// crate (a field holding a comma, quote or line break).
pub(super) fn csv_line(cells: &[String]) -> String {
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
        head.extend(m.metric_columns.iter().map(|c| c.name().to_string()));
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
        let range = crate::study::sweep::point_range(&f.manifest);
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
        let columns: Columns = f.manifest.metric_columns.as_slice().into();
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
    pub fn columns(&self) -> Columns {
        self.rows
            .first()
            .map(|r| Columns::clone(r.columns()))
            .unwrap_or_else(|| self.manifest.metric_columns.as_slice().into())
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
                return Err(StudyError::ShardIncomplete {
                    index: k + 1,
                    count: n,
                    incomplete: inc.clone(),
                });
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
