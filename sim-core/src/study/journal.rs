//! The journal of a running study: its rows as text lines, one per
//! finished point, so that a study stopped midway (killed, or out of
//! time) keeps what it finished and can be resumed.
//!
//! The first line is a header naming the layout ([`JOURNAL_FORMAT`]) and
//! holding the study's [`Manifest`]; each further line is one finished
//! point, in the order points finished: `{"row": …, "state": …}`, the row
//! as the table files hold it and, for a point that ran, the state at its
//! first measured turn-on (which the next point of its warm-start chain
//! starts from). Lines are written whole, one at a time, each ending in a
//! newline, so after a kill every line but perhaps the last is complete;
//! [`read_journal`] drops a last line without its newline and refuses any
//! other line it cannot read.
//!
//! This module only makes and reads the text; writing it is the caller's.

use super::rows::{Columns, Manifest, Row};
use super::run::Finished;
use super::StudyError;
use crate::model::circuit::N_STATES;
use serde_json::{json, Value};
use std::collections::BTreeMap;

/// Layout version of journals.
pub const JOURNAL_FORMAT: &str = "chopwave-journal-1";

/// The header line (with its newline).
pub fn header_line(m: &Manifest) -> String {
    let v = json!({"journal": JOURNAL_FORMAT, "manifest": m});
    format!("{v}\n")
}

/// One finished point's line (with its newline).
pub fn row_line(f: &Finished) -> String {
    let state = f
        .state_at_turn_on
        .map_or(Value::Null, |x| x.iter().map(|&v| Value::from(v)).collect());
    let v = json!({"row": f.row.to_value(), "state": state});
    format!("{v}\n")
}

/// A journal read back.
#[derive(Debug, Clone, PartialEq)]
pub struct Journal {
    /// The study it belongs to.
    pub manifest: Manifest,
    /// Its finished points, by index (a later line for the same index
    /// replaces an earlier one).
    pub finished: BTreeMap<usize, Finished>,
    /// Whether a last, partly written line was dropped.
    pub dropped_partial_line: bool,
}

/// Reads a journal's text. `Ok(None)`: not even the header was written
/// in full (nothing to resume). A complete line that does not read, or a
/// row that does not fit the manifest, is an error naming its line.
pub fn read_journal(text: &str) -> Result<Option<Journal>, StudyError> {
    let (complete, dropped_partial_line) = match text.rfind('\n') {
        Some(k) => (&text[..k], k + 1 < text.len()),
        None => ("", !text.is_empty()),
    };
    if complete.is_empty() {
        return Ok(None);
    }
    let bad =
        |line: usize, what: String| StudyError::Format(format!("journal line {line}: {what}"));
    let mut lines = complete.split('\n');
    let head: Value = serde_json::from_str(lines.next().unwrap_or_default())
        .map_err(|e| bad(1, e.to_string()))?;
    if head["journal"] != JOURNAL_FORMAT {
        return Err(bad(
            1,
            format!("layout {}, expected `{JOURNAL_FORMAT}`", head["journal"]),
        ));
    }
    let manifest: Manifest =
        serde_json::from_value(head["manifest"].clone()).map_err(|e| bad(1, e.to_string()))?;
    manifest.check_counts().map_err(|e| bad(1, e.to_string()))?;
    let columns: Columns = manifest.metric_columns.as_slice().into();
    let range = super::sweep::point_range(&manifest);
    let mut finished = BTreeMap::new();
    for (k, line) in lines.enumerate() {
        let n = k + 2;
        let v: Value = serde_json::from_str(line).map_err(|e| bad(n, e.to_string()))?;
        let row = Row::from_value(&v["row"], &columns).map_err(|e| bad(n, e.to_string()))?;
        if !range.contains(&row.index) {
            return Err(bad(
                n,
                format!(
                    "point {} is outside this study's points {}..{}",
                    row.index, range.start, range.end
                ),
            ));
        }
        if row.inputs.len() != manifest.inputs.len() {
            return Err(bad(
                n,
                format!(
                    "{} input values where the study has {}",
                    row.inputs.len(),
                    manifest.inputs.len()
                ),
            ));
        }
        let state = match &v["state"] {
            Value::Null => None,
            Value::Array(a) if a.len() == N_STATES => {
                let mut x = [0.0; N_STATES];
                for (slot, v) in x.iter_mut().zip(a) {
                    *slot = v
                        .as_f64()
                        .ok_or_else(|| bad(n, "a state value is not a number".into()))?;
                }
                Some(x)
            }
            _ => return Err(bad(n, format!("the state is not {N_STATES} numbers"))),
        };
        finished.insert(
            row.index,
            Finished {
                row,
                state_at_turn_on: state,
            },
        );
    }
    Ok(Some(Journal {
        manifest,
        finished,
        dropped_partial_line,
    }))
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::study::run::RunSettings;
    use crate::study::sweep::sweep_manifest;
    use crate::study::vary::{Grid, Vary};

    fn manifest() -> Manifest {
        let s = crate::scenario::template();
        let grid = Grid::new(vec![Vary::parse("supply.voltage_v=10:14:3", &s).unwrap()]).unwrap();
        sweep_manifest(&s, &grid, &RunSettings::default(), None)
    }

    fn line(m: &Manifest, k: usize, state: Option<[f64; N_STATES]>) -> String {
        let columns: Columns = m.metric_columns.as_slice().into();
        let v = json!({"index": k, "inputs": [10.0], "label": null, "status": "failed",
            "error": "no", "cycles_to_settle": null, "warm_start": null, "metrics": {}});
        row_line(&Finished {
            row: Row::from_value(&v, &columns).unwrap(),
            state_at_turn_on: state,
        })
    }

    #[test]
    fn a_partly_written_last_line_is_dropped() {
        let m = manifest();
        let state = [0.1 + 0.2, 1e-300, -3.5];
        let mut text = header_line(&m) + &line(&m, 2, None) + &line(&m, 0, Some(state));
        let whole = read_journal(&text).unwrap().unwrap();
        assert_eq!(whole.manifest, m);
        assert_eq!(whole.finished.keys().copied().collect::<Vec<_>>(), [0, 2]);
        assert!(!whole.dropped_partial_line);
        // The state reads back bit for bit.
        let back = whole.finished[&0].state_at_turn_on.unwrap();
        assert!(back
            .iter()
            .zip(state)
            .all(|(a, b)| a.to_bits() == b.to_bits()));
        // Cut anywhere inside the next line: the same journal, flagged.
        let next = line(&m, 1, None);
        for cut in [1, next.len() / 2, next.len() - 1] {
            let t = text.clone() + &next[..cut];
            let j = read_journal(&t).unwrap().unwrap();
            assert_eq!(j.finished, whole.finished);
            assert!(j.dropped_partial_line);
        }
        // A header cut short: nothing to resume.
        assert_eq!(read_journal(&header_line(&m)[..20]).unwrap(), None);
        assert_eq!(read_journal("").unwrap(), None);
        // A damaged line in the middle is an error naming the line.
        text.insert(header_line(&m).len() + 3, '#');
        let e = read_journal(&text).unwrap_err();
        assert!(e.to_string().contains("journal line 2"), "{e}");
    }

    #[test]
    fn rows_outside_the_study_are_refused() {
        let m = manifest();
        let text = header_line(&m) + &line(&m, 3, None);
        let e = read_journal(&text).unwrap_err();
        assert!(e.to_string().contains("outside"), "{e}");
    }
}
