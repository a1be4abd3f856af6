//! The session rules: which journal points a study takes over, which
//! journals it refuses, the time limit and how a study ends.

use super::*;
use crate::study::journal::{header_line, row_line};
use crate::study::rows::{Columns, Incomplete, Row};
use crate::study::run::RunSettings;
use crate::study::sweep::sweep_manifest;
use crate::study::vary::{Grid, Vary};
use serde_json::json;

fn manifest(vary: &str) -> Manifest {
    let s = crate::scenario::template();
    let grid = Grid::new(vec![Vary::parse(vary, &s).unwrap()]).unwrap();
    sweep_manifest(&s, &grid, &RunSettings::default(), None)
}

fn finished(m: &Manifest, k: usize, ok: bool) -> Finished {
    let columns: Columns = m.metric_columns.as_slice().into();
    let v = if ok {
        json!({"index": k, "inputs": [10.0 + k as f64], "label": null, "status": "ok",
            "error": null, "cycles_to_settle": 7, "warm_start": false,
            "metrics": {"duty": 0.25}})
    } else {
        json!({"index": k, "inputs": [10.0 + k as f64], "label": null, "status": "failed",
            "error": "no", "cycles_to_settle": null, "warm_start": null, "metrics": {}})
    };
    Finished {
        row: Row::from_value(&v, &columns).unwrap(),
        state_at_turn_on: ok.then_some([1.0, 2.0, 3.0]),
    }
}

/// A journal of `m` holding points `ks` (in that order), its last line
/// cut short when `cut` is set.
fn journal(m: &Manifest, ks: &[usize], cut: bool) -> String {
    let mut t = header_line(m);
    for &k in ks {
        t += &row_line(&finished(m, k, k % 2 == 0));
    }
    if cut {
        let partial = row_line(&finished(m, 1, true));
        t += &partial[..partial.len() / 2];
    }
    t
}

#[test]
fn resuming_takes_over_exactly_the_finished_points_of_the_same_study() {
    let m = manifest("supply.voltage_v=10:14:5");
    let text = journal(&m, &[3, 0, 4], true);
    let o = open(&m, Found::Text(&text), true).unwrap();
    // Points 0, 3 and 4 finished; point 1's line was cut: not taken.
    assert_eq!(o.taken_over.keys().copied().collect::<Vec<_>>(), [0, 3, 4]);
    assert_eq!(o.taken_over[&3], finished(&m, 3, false));
    assert_eq!(o.taken_over[&4], finished(&m, 4, true));
    assert!(!o.replaces_earlier);
    // The fresh journal: the header, then the points taken over in index
    // order, every line whole; it reads back to the same points.
    let head: String = o.journal_head(&m).collect();
    assert_eq!(head, journal(&m, &[0, 3, 4], false));
    let again = open(&m, Found::Text(&head), true).unwrap();
    assert_eq!(again.taken_over, o.taken_over);
}

#[test]
fn a_journal_of_another_study_is_refused_whether_resuming_or_not() {
    let m = manifest("supply.voltage_v=10:14:5");
    // The same variable over other values: another study.
    let other = manifest("supply.voltage_v=10:15:5");
    let text = journal(&other, &[0, 1], false);
    for resume in [true, false] {
        match open(&m, Found::Text(&text), resume) {
            Err(SessionError::OtherStudy { resuming }) => assert_eq!(resuming, resume),
            r => panic!("resume {resume}: {r:?}"),
        }
    }
    // The same study is accepted by both.
    let own = journal(&m, &[0, 1], false);
    assert_eq!(
        open(&m, Found::Text(&own), true).unwrap().taken_over.len(),
        2
    );
}

#[test]
fn starting_afresh_replaces_this_studys_journal_and_takes_nothing() {
    let m = manifest("supply.voltage_v=10:14:5");
    let text = journal(&m, &[0, 2], false);
    let o = open(&m, Found::Text(&text), false).unwrap();
    assert!(o.taken_over.is_empty());
    assert!(o.replaces_earlier);
    assert_eq!(o.journal_head(&m).collect::<String>(), header_line(&m));
    // Nothing there: nothing replaced.
    let o = open(&m, Found::Nothing, false).unwrap();
    assert!(!o.replaces_earlier && o.taken_over.is_empty());
}

#[test]
fn a_damaged_journal_stops_a_resume_but_not_a_fresh_start() {
    let m = manifest("supply.voltage_v=10:14:5");
    let mut text = journal(&m, &[0, 2], false);
    // Damage the first row line (a complete line: not a cut last line).
    text.insert(header_line(&m).len() + 2, '#');
    match open(&m, Found::Text(&text), true) {
        Err(SessionError::Unreadable(e)) => {
            assert!(e.to_string().contains("journal line 2"), "{e}")
        }
        r => panic!("{r:?}"),
    }
    assert!(
        open(&m, Found::Text(&text), false)
            .unwrap()
            .replaces_earlier
    );
    // A header cut short: nothing to take over.
    let cut = &header_line(&m)[..30];
    let o = open(&m, Found::Text(cut), true).unwrap();
    assert!(o.taken_over.is_empty());
    assert!(open(&m, Found::Unreadable, false).unwrap().replaces_earlier);
}

#[test]
fn the_time_limit_is_a_number_of_seconds_above_zero() {
    let t0 = Instant::now();
    assert_eq!(deadline(t0, None).unwrap(), None);
    assert_eq!(
        deadline(t0, Some(30.0)).unwrap(),
        Some(t0 + Duration::from_secs(30))
    );
    assert_eq!(
        deadline(t0, Some(0.25)).unwrap(),
        Some(t0 + Duration::from_millis(250))
    );
    for bad in [0.0, -1.0, f64::NAN, f64::INFINITY, 1e9, 2e9] {
        match deadline(t0, Some(bad)) {
            Err(SessionError::TimeLimit { seconds }) => {
                assert!(seconds.to_bits() == bad.to_bits(), "{seconds}")
            }
            r => panic!("{bad}: {r:?}"),
        }
    }
}

#[test]
fn a_stopped_study_keeps_its_journal_and_a_finished_one_does_not() {
    let m = manifest("supply.voltage_v=10:14:5");
    let rows =
        |ks: &[usize]| -> Vec<Row> { ks.iter().map(|&k| finished(&m, k, k != 1).row).collect() };
    let mut t = StudyTable {
        manifest: m.clone(),
        rows: rows(&[0, 2, 3]),
    };
    assert_eq!(Ending::of(&t), Ending::Complete);
    assert!(!Ending::of(&t).keeps_journal());
    t.rows = rows(&[0, 1, 2, 3, 4]);
    assert_eq!(Ending::of(&t), Ending::SomeFailed { failed: 1, of: 5 });
    assert!(!Ending::of(&t).keeps_journal());
    // Stopped wins over failed points: the rest has yet to run.
    t.rows = rows(&[0, 1]);
    t.manifest.incomplete = Some(Incomplete {
        reason: "time limit reached".into(),
        ran: 2,
        of: 5,
    });
    assert_eq!(Ending::of(&t), Ending::Stopped { ran: 2, of: 5 });
    assert!(Ending::of(&t).keeps_journal());
}
