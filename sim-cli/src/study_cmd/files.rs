//! The study's files: the table (CSV, JSON, summary, plots) written
//! atomically, and the journal's file I/O — reading the journal found,
//! writing the fresh one and appending a line per finished row, removing
//! it when the study's ending says so (the rules are
//! `sim_core::study::session`'s).

use super::*;
use crate::{output, plots, read_text_limited, Failure};
use anyhow::{Context, Result};
use indicatif::ProgressBar;
use rayon::prelude::*;
use sim_core::study::journal::row_line;
use sim_core::study::rows::{Manifest, StudyKind, StudyTable};
use sim_core::study::run::{Finished, Hooks};
use sim_core::study::session::{self, Ending, Found, SessionError};
use sim_core::study::spread::{summarize, SpreadSummary};
use std::io::Write;
use std::path::{Path, PathBuf};
use std::sync::Mutex;

pub(super) fn file_base(m: &Manifest) -> String {
    let mut s = format!("{}-{}", output::file_stem(&m.scenario), m.kind.word());
    if let Some(sh) = m.shard {
        s.push_str(&format!("-shard-{}-of-{}", sh.shard.index, sh.shard.count));
    }
    s
}

/// The summary of a spread or corners table as pretty JSON.
pub(super) fn summary_json(s: &SpreadSummary) -> String {
    serde_json::to_string_pretty(s).unwrap_or_default() + "\n"
}

/// Writes a table's files: CSV and JSON always; for a whole study also
/// the spread summary; for a whole, complete study the plots.
pub(super) fn write_table(t: &StudyTable, dir: &Path, plots: bool) -> Result<Vec<PathBuf>> {
    output::ensure_dir(dir)?;
    let base = file_base(&t.manifest);
    // Plots of an incomplete study would show gaps as if they were
    // results: drawn only once every point has run.
    let draw = plots && t.manifest.shard.is_none() && t.manifest.incomplete.is_none();
    // The tables and the plots are written side by side, the CSV beside
    // the JSON too: each file waits on its flush to disk, which the
    // other files' work can overlap (on one thread, one after another).
    let (tables, pngs) = rayon::join(
        || write_tables(t, dir, &base),
        || {
            if draw {
                write_plots(t, dir, &base)
            } else {
                Ok(vec![])
            }
        },
    );
    let mut written = tables?;
    written.extend(pngs?);
    Ok(written)
}

/// The table's CSV and JSON and, for a whole study, the spread summary.
fn write_tables(t: &StudyTable, dir: &Path, base: &str) -> Result<Vec<PathBuf>> {
    let csv = dir.join(format!("{base}.csv"));
    let json = dir.join(format!("{base}.json"));
    let (a, b) = rayon::join(
        || output::write_pieces(&csv, t.csv_lines()),
        || output::write_pieces(&json, t.json_pieces()),
    );
    a?;
    b?;
    let mut written = vec![csv, json];
    if t.manifest.shard.is_none() && t.manifest.kind != StudyKind::Sweep {
        let p = dir.join(format!("{base}-summary.json"));
        output::write_text(&p, &summary_json(&summarize(t)))?;
        written.push(p);
    }
    Ok(written)
}

/// The plots of a whole, complete study.
fn write_plots(t: &StudyTable, dir: &Path, base: &str) -> Result<Vec<PathBuf>> {
    let mut written = Vec::new();
    match (t.manifest.kind, t.manifest.inputs.len()) {
        (StudyKind::Sweep, 1) => {
            let a = dir.join(format!("{base}-current.png"));
            let b = dir.join(format!("{base}-operation.png"));
            plots::sweep_1d(t, &a, &b).context("sweep plots")?;
            written.extend([a, b]);
        }
        (StudyKind::Sweep, _) => {
            let name = &t.manifest.scenario;
            // The maps are drawn and encoded in parallel.
            let maps = [
                (
                    "mode-map",
                    plots::MapKind::Mode,
                    format!("{name} — conduction mode over the grid"),
                ),
                (
                    "led-current-map",
                    plots::MapKind::Heat("led_current_avg_a", 1.0, "LED current", "A"),
                    format!("{name} — average LED current"),
                ),
                (
                    "ripple-map",
                    plots::MapKind::Heat("led_current_ripple_pct", 1.0, "LED ripple", "%"),
                    format!("{name} — peak-to-peak LED ripple relative to the average"),
                ),
                (
                    "efficiency-map",
                    plots::MapKind::Heat("efficiency", 100.0, "Efficiency", "%"),
                    format!("{name} — efficiency (LED power over input power)"),
                ),
            ];
            let files: Vec<PathBuf> = maps
                .iter()
                .map(|(what, _, _)| dir.join(format!("{base}-{what}.png")))
                .collect();
            maps.par_iter()
                .zip(files.par_iter())
                .map(|((what, kind, title), file)| {
                    plots::grid_map(t, *kind, title, None, file)
                        .with_context(|| what.replace('-', " "))
                })
                .collect::<Result<Vec<()>>>()?;
            written.extend(files);
        }
        _ => {
            let h = dir.join(format!("{base}-histograms.png"));
            plots::spread_histograms(t, &h).context("histograms")?;
            written.push(h);
        }
    }
    Ok(written)
}

/// The journal beside a study's outputs: rows as they finish.
pub(super) fn journal_path(m: &Manifest, dir: &Path) -> PathBuf {
    dir.join(format!("{}-journal.jsonl", file_base(m)))
}

/// Runs a sweep, spread or corners study with its journal: with
/// `--resume`, takes over the points the journal holds (if it belongs to
/// this very study); streams every finished row into it, one whole line
/// at a time, as the points finish.
pub(super) fn run_journaled(
    m: &Manifest,
    dir: &Path,
    resume: bool,
    bar: Option<&ProgressBar>,
    quiet: bool,
    run: impl FnOnce(&Hooks<'_>) -> Result<StudyTable, Failure>,
) -> Result<StudyTable, Failure> {
    output::ensure_dir(dir).map_err(io_failure)?;
    let path = journal_path(m, dir);
    // The file is read here; whether it belongs to this study and which
    // points are taken over is the library's rule (`session::open`).
    let text = match read_text_limited(&path) {
        Ok(text) => Some(text),
        Err(e) if e.kind() == std::io::ErrorKind::NotFound => None,
        Err(e) if resume => {
            return Err(Failure::Input(format!(
                "cannot read {}: {e}",
                path.display()
            )))
        }
        Err(_) => None,
    };
    let found = match &text {
        Some(t) => Found::Text(t),
        None if path.exists() => Found::Unreadable,
        None => Found::Nothing,
    };
    let opening = session::open(m, found, resume).map_err(|e| match e {
        SessionError::OtherStudy { resuming: true } => Failure::Input(format!(
            "--resume: {} belongs to a different study (scenario, options or \
             version differ); run the same command as before, or remove the \
             journal to start afresh",
            path.display()
        )),
        SessionError::OtherStudy { resuming: false } => Failure::Input(format!(
            "{} holds the unfinished points of a different study (scenario, options or \
             version differ); finish that one with its own command and --resume, give this \
             one another --out folder, or remove the journal",
            path.display()
        )),
        e => Failure::Input(format!("{}: {e}", path.display())),
    })?;
    if !quiet {
        if resume {
            let _ = writeln!(
                std::io::stderr(),
                "resuming: {} points taken from {}",
                opening.taken_over.len(),
                path.display()
            );
        } else if opening.replaces_earlier {
            let _ = writeln!(
                std::io::stderr(),
                "note: replacing {} from an earlier run (--resume would take over its points)",
                path.display()
            );
        }
    }
    // A clean journal first (header and the points taken over; a partly
    // written last line is gone), then rows are appended to it.
    output::write_pieces(&path, opening.journal_head(m)).map_err(io_failure)?;
    let file = std::fs::OpenOptions::new()
        .append(true)
        .open(&path)
        .map_err(|e| Failure::Run(format!("cannot open {}: {e}", path.display())))?;
    let file = Mutex::new(file);
    let trouble: Mutex<Option<std::io::Error>> = Mutex::new(None);
    if let Some(b) = bar {
        b.set_position(opening.taken_over.len() as u64);
    }
    let sink = |f: &Finished| {
        let line = row_line(f);
        let written = match file.lock() {
            Ok(mut w) => w.write_all(line.as_bytes()),
            Err(_) => Ok(()),
        };
        if let Err(e) = written {
            if let Ok(mut t) = trouble.lock() {
                t.get_or_insert(e);
            }
        }
        if let Some(b) = bar {
            b.inc(1);
        }
    };
    let t = run(&Hooks {
        on_finish: Some(&sink),
        resume: Some(&opening.taken_over),
    })?;
    if let Some(e) = trouble.into_inner().ok().flatten() {
        let _ = writeln!(
            std::io::stderr(),
            "chopwave: warning: rows could not be added to {} ({e}); the study went on",
            path.display()
        );
    }
    Ok(t)
}

/// Writes the table, then removes the journal of a complete study (the
/// table holds every row) or keeps it for `--resume` when the time limit
/// stopped it; the exit status says which.
pub(super) fn finish(
    t: &StudyTable,
    dir: &Path,
    plots: bool,
    quiet: bool,
    stop_after: Option<f64>,
    own_journal: bool,
) -> Result<(), Failure> {
    let written = write_table(t, dir, plots).map_err(io_failure)?;
    if !quiet {
        for p in &written {
            // A closed standard error must not stop the journal's removal.
            let _ = writeln!(std::io::stderr(), "wrote {}", p.display());
        }
    }
    let journal = journal_path(&t.manifest, dir);
    let ending = Ending::of(t);
    if let Ending::Stopped { ran, of } = ending {
        return Err(Failure::TimeLimit(format!(
            "time limit of {} s reached: {ran} of {of} points ran; the table holds them (marked \
             incomplete, no plots) and {} keeps them; run the same command with --resume to \
             finish",
            stop_after.unwrap_or(f64::NAN),
            journal.display()
        )));
    }
    if own_journal && !ending.keeps_journal() {
        match std::fs::remove_file(&journal) {
            Ok(()) => {}
            Err(e) if e.kind() == std::io::ErrorKind::NotFound => {}
            Err(e) => {
                return Err(Failure::Run(format!(
                    "cannot remove {}: {e}",
                    journal.display()
                )))
            }
        }
    }
    if let Ending::SomeFailed { failed, of } = ending {
        return Err(Failure::Run(format!(
            "{failed} of {of} points failed; their rows carry the error message"
        )));
    }
    Ok(())
}
