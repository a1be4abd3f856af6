//! Fuzz target: the study files read back — a journal (`read_journal`),
//! table JSON (`StudyTable::from_json_text`) and the merge of shards.
//!
//! The input is one file, or several separated by a line `---`. Nothing
//! may panic or allocate by a count the file states (a manifest claiming
//! 1e15 points must be refused, not reserved).
#![no_main]

use libfuzzer_sys::fuzz_target;
use sim_core::study::journal::read_journal;
use sim_core::study::rows::StudyTable;

fuzz_target!(|data: &[u8]| {
    let Ok(text) = std::str::from_utf8(data) else {
        return;
    };
    let _ = read_journal(text);
    let tables: Vec<StudyTable> = text
        .split("\n---\n")
        .filter_map(|part| StudyTable::from_json_text(part).ok())
        .collect();
    for t in &tables {
        // What reads writes again without a panic.
        let _ = t.csv_lines().count();
        let _ = t.json_pieces().count();
        let _ = sim_core::study::spread::summarize(t);
    }
    if !tables.is_empty() {
        if let Ok(m) = StudyTable::merge(tables) {
            assert!(m.rows.len() <= text.len());
        }
    }
});
