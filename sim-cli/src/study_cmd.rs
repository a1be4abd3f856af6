//! The study commands: `sweep`, `boundary`, `spread` and `merge`.
//!
//! Each parses its arguments, loads the scenario (with `--set`
//! overrides), calls `sim_core::study`, then writes the table (CSV and
//! JSON, atomically), the plots and a summary. Shard runs write only
//! their slice of the table; `merge` joins slices and writes exactly the
//! files one run would have.

use crate::format::{eng, pct};
use crate::{load, output, parse_override, read_text_limited, study_plot, EngineArg, Failure};
use anyhow::{Context, Result};
use indicatif::{ProgressBar, ProgressStyle};
use rayon::prelude::*;
use sim_core::report::{Caution, Scope};
use sim_core::study::boundary::{boundary_curve, find_boundary, Boundary, BoundarySettings};
use sim_core::study::journal::{header_line, read_journal, row_line};
use sim_core::study::rows::{Manifest, Row, RowExt, StudyKind, StudyTable};
use sim_core::study::run::{Finished, Hooks, RunSettings, Shard};
use sim_core::study::spread::{
    corners, corners_manifest, spread, spread_manifest, summarize, SpreadSettings, SpreadSummary,
};
use sim_core::study::sweep::{point_range, sweep, sweep_manifest};
use sim_core::study::vary::{linspace, Grid, Vary};
use sim_core::study::StudyError;
use sim_core::Scenario;
use std::collections::BTreeMap;
use std::io::{IsTerminal, Write};
use std::path::{Path, PathBuf};
use std::sync::Mutex;
use std::time::{Duration, Instant};

/// Options every study shares.
#[derive(Debug, clap::Args)]
pub struct Common {
    /// The scenario file (JSON).
    file: PathBuf,
    /// Folder to write the outputs into (created if missing).
    #[arg(long, value_name = "DIR", default_value = "chopwave-study")]
    out: PathBuf,
    /// Start every point from power-on instead of a neighbour's steady
    /// state (slower; each point then equals its single run exactly).
    #[arg(long)]
    cold: bool,
    /// Engine: `exact` or `reference`.
    #[arg(long, value_enum, default_value_t = EngineArg::Exact)]
    engine: EngineArg,
    /// Override a field first, e.g. `--set supply.voltage_v=18`.
    #[arg(long = "set", value_name = "PATH=VALUE", value_parser = parse_override)]
    overrides: Vec<(String, String)>,
    /// Worker threads (default: one per core).
    #[arg(long, value_name = "N")]
    threads: Option<usize>,
    /// Write the table only, no PNG plots.
    #[arg(long)]
    no_plots: bool,
    /// Stop starting new points after this many seconds of wall-clock
    /// time; points already running finish, what finished is written
    /// (marked incomplete) and the exit code is 4.
    #[arg(long, value_name = "SECONDS")]
    stop_after: Option<f64>,
}

/// `chopwave sweep`.
#[derive(Debug, clap::Args)]
pub struct SweepArgs {
    #[command(flatten)]
    common: Common,
    /// What to vary: `PATH=START:STOP:COUNT`, `PATH=v1,v2,...` or
    /// `supply.voltage_v=range[:COUNT]` (the declared input range). Once
    /// for a 1-D sweep, twice for a 2-D grid.
    #[arg(long = "vary", value_name = "PATH=START:STOP:COUNT", required = true)]
    vary: Vec<String>,
    /// Run only the K-th of N equal slices (for a job array); join the
    /// slices with `chopwave merge`.
    #[arg(long, value_name = "K/N")]
    shard: Option<String>,
    /// Take over the points the journal in the out folder already holds
    /// (from a run that was stopped or killed) and run only the rest.
    #[arg(long)]
    resume: bool,
}

/// `chopwave boundary`.
#[derive(Debug, clap::Args)]
pub struct BoundaryArgs {
    #[command(flatten)]
    common: Common,
    /// The variable to search, `PATH=LOW:HIGH`; a second `--vary
    /// PATH=START:STOP:COUNT` traces the boundary across that variable.
    #[arg(long = "vary", value_name = "PATH=LOW:HIGH", required = true)]
    vary: Vec<String>,
    /// Width of the final bracket, % of the boundary value.
    #[arg(long, value_name = "PCT", default_value_t = 0.005)]
    tolerance_pct: f64,
    /// Points along the searched variable in the mode map behind a
    /// traced boundary (2-D only).
    #[arg(long, value_name = "N", default_value_t = 12)]
    map_points: usize,
    /// Print the result as JSON instead of text.
    #[arg(long)]
    json: bool,
}

/// `chopwave spread`.
#[derive(Debug, clap::Args)]
pub struct SpreadArgs {
    #[command(flatten)]
    common: Common,
    /// Monte Carlo samples.
    #[arg(long, value_name = "N", default_value_t = 1000)]
    samples: usize,
    /// Random seed (the same seed gives the same samples on any machine
    /// and any number of threads).
    #[arg(long, value_name = "S", default_value_t = 1)]
    seed: u64,
    /// Run every tolerance at its extremes (2^n corners) instead.
    #[arg(long)]
    corners: bool,
    /// A spec limit, added to or replacing the scenario's `spec`:
    /// `current_within_pct=5`, `target_current_a=0.7`, `max_ripple_pct=30`,
    /// `no_dcm`, `min_efficiency=0.85`.
    #[arg(long = "spec", value_name = "KEY[=VALUE]")]
    spec: Vec<String>,
    /// Run only the K-th of N equal slices; join with `chopwave merge`.
    #[arg(long, value_name = "K/N")]
    shard: Option<String>,
    /// Take over the points the journal in the out folder already holds
    /// (from a run that was stopped or killed) and run only the rest.
    #[arg(long)]
    resume: bool,
}

/// `chopwave merge`.
#[derive(Debug, clap::Args)]
pub struct MergeArgs {
    /// The shard JSON files (`…-shard-K-of-N.json`), in any order.
    #[arg(required = true)]
    files: Vec<PathBuf>,
    /// Folder to write the joined outputs into.
    #[arg(long, value_name = "DIR", default_value = "chopwave-study")]
    out: PathBuf,
    /// Write the table only, no PNG plots.
    #[arg(long)]
    no_plots: bool,
}

fn study_failure(e: StudyError) -> Failure {
    match e {
        StudyError::Nominal(_) => Failure::Run(e.to_string()),
        StudyError::TimeLimit(_) => Failure::TimeLimit(e.to_string()),
        StudyError::Boundary { ref reason, .. } if reason.contains("failed") => {
            Failure::Run(e.to_string())
        }
        other => Failure::Input(other.to_string()),
    }
}

fn io_failure(e: anyhow::Error) -> Failure {
    Failure::Run(format!("{e:#}"))
}

fn set_threads(n: Option<usize>) -> Result<(), Failure> {
    if let Some(n) = n {
        if n == 0 {
            return Err(Failure::Input("--threads must be at least 1".into()));
        }
        if n > MAX_THREADS {
            return Err(Failure::Input(format!(
                "--threads {n}: at most {MAX_THREADS} worker threads"
            )));
        }
        // The system may refuse the threads (a process or memory limit):
        // that is the user's request failing, not a crash.
        rayon::ThreadPoolBuilder::new()
            .num_threads(n)
            .build_global()
            .map_err(|e| {
                Failure::Input(format!(
                    "--threads {n}: the system could not start that many threads ({e}); \
                     give fewer"
                ))
            })?;
    }
    Ok(())
}

/// Refuses a study whose estimated points, memory or output exceed the
/// budget (exit 2), naming where its size comes from.
fn study_budget(s: &Scenario, points: usize, from: &str) -> Result<(), Failure> {
    crate::within_budget(&sim_core::budget::study_estimate(
        s,
        points as u64,
        sim_core::study::rows::metric_columns().len(),
        rayon::current_num_threads(),
        from,
    ))
}

/// The most worker threads `--threads` accepts.
const MAX_THREADS: usize = 1024;

/// Locks a study's output folder for the study's life (see
/// [`output::lock_folder`]): a second study into it is refused (exit 2).
fn lock_out(dir: &Path) -> Result<output::FolderLock, Failure> {
    output::lock_folder(dir).map_err(|e| match e {
        output::LockFailure::Busy(m) => Failure::Input(m),
        output::LockFailure::Io(e) => io_failure(e),
    })
}

/// Run settings from the common options; the `--stop-after` clock starts
/// at `started`.
fn settings(c: &Common, started: Instant) -> Result<RunSettings, Failure> {
    let deadline = match c.stop_after {
        None => None,
        Some(t) if t.is_finite() && t > 0.0 && t < 1e9 => {
            Some(started + Duration::from_secs_f64(t))
        }
        Some(t) => {
            return Err(Failure::Input(format!(
                "--stop-after {t}: give a number of seconds above 0 (and below 1e9)"
            )))
        }
    };
    Ok(RunSettings {
        engine: c.engine.into(),
        warm_start: !c.cold,
        deadline,
        ..RunSettings::default()
    })
}

/// A progress bar over points, on a terminal only.
fn progress(total: usize, quiet: bool, what: &str) -> Option<ProgressBar> {
    if quiet || !std::io::stderr().is_terminal() || total < 2 {
        return None;
    }
    let b = ProgressBar::new(total as u64);
    b.set_style(
        ProgressStyle::with_template("{bar:40} {pos}/{len} {msg} ({elapsed}, about {eta} left)")
            .unwrap_or_else(|_| ProgressStyle::default_bar()),
    );
    b.set_message(what.to_string());
    Some(b)
}

fn file_base(m: &Manifest) -> String {
    let mut s = format!("{}-{}", output::file_stem(&m.scenario), m.kind.word());
    if let Some(sh) = m.shard {
        s.push_str(&format!("-shard-{}-of-{}", sh.shard.index, sh.shard.count));
    }
    s
}

/// The summary of a spread or corners table as pretty JSON.
fn summary_json(s: &SpreadSummary) -> String {
    serde_json::to_string_pretty(s).unwrap_or_default() + "\n"
}

/// Writes a table's files: CSV and JSON always; for a whole study also
/// the spread summary; for a whole, complete study the plots.
fn write_table(t: &StudyTable, dir: &Path, plots: bool) -> Result<Vec<PathBuf>> {
    output::ensure_dir(dir)?;
    let base = file_base(&t.manifest);
    let mut written = Vec::new();
    let csv = dir.join(format!("{base}.csv"));
    output::write_pieces(&csv, t.csv_lines())?;
    written.push(csv);
    let json = dir.join(format!("{base}.json"));
    output::write_pieces(&json, t.json_pieces())?;
    written.push(json);
    if t.manifest.shard.is_some() {
        return Ok(written);
    }
    if t.manifest.kind != StudyKind::Sweep {
        let p = dir.join(format!("{base}-summary.json"));
        output::write_text(&p, &summary_json(&summarize(t)))?;
        written.push(p);
    }
    // Plots of an incomplete study would show gaps as if they were
    // results: drawn only once every point has run.
    if !plots || t.manifest.incomplete.is_some() {
        return Ok(written);
    }
    match (t.manifest.kind, t.manifest.inputs.len()) {
        (StudyKind::Sweep, 1) => {
            let a = dir.join(format!("{base}-current.png"));
            let b = dir.join(format!("{base}-operation.png"));
            study_plot::sweep_1d(t, &a, &b).context("sweep plots")?;
            written.extend([a, b]);
        }
        (StudyKind::Sweep, _) => {
            let name = &t.manifest.scenario;
            // The maps are drawn and encoded in parallel.
            let maps = [
                (
                    "mode-map",
                    study_plot::MapKind::Mode,
                    format!("{name} — conduction mode over the grid"),
                ),
                (
                    "led-current-map",
                    study_plot::MapKind::Heat("led_current_avg_a", 1.0, "LED current", "A"),
                    format!("{name} — average LED current"),
                ),
                (
                    "ripple-map",
                    study_plot::MapKind::Heat("led_current_ripple_pct", 1.0, "LED ripple", "%"),
                    format!("{name} — peak-to-peak LED ripple relative to the average"),
                ),
                (
                    "efficiency-map",
                    study_plot::MapKind::Heat("efficiency", 100.0, "Efficiency", "%"),
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
                    study_plot::grid_map(t, *kind, title, None, file)
                        .with_context(|| what.replace('-', " "))
                })
                .collect::<Result<Vec<()>>>()?;
            written.extend(files);
        }
        _ => {
            let h = dir.join(format!("{base}-histograms.png"));
            study_plot::spread_histograms(t, &h).context("histograms")?;
            written.push(h);
        }
    }
    Ok(written)
}

/// Safety cautions for a whole study, from its highest supply, losses
/// and LED power (the library's [`Caution`]s, in a study's words).
fn cautions(t: &StudyTable) -> Vec<Caution> {
    let max = |m: &str| {
        t.rows
            .iter()
            .filter_map(|r| r.metric(m))
            .fold(f64::NEG_INFINITY, f64::max)
    };
    Caution::for_figures(
        Scope::Study,
        t.manifest.max_supply_v,
        Some(max("total_loss_w")),
        Some(max("led_power_w")),
    )
}

fn print_cautions(t: &StudyTable) {
    println!("\nCautions");
    for c in cautions(t) {
        println!("  * {c}");
    }
}

fn mode_word(r: &Row) -> &str {
    match r.mode() {
        Some("ccm") => "CCM",
        Some("dcm") => "DCM",
        Some(_) => "boundary",
        None => "-",
    }
}

/// Rows printed in full before the rest is left to the CSV.
const ROWS_SHOWN: usize = 40;

fn print_sweep(t: &StudyTable) {
    let m = &t.manifest;
    println!(
        "sweep of `{}`: {} points over {} ({} start)",
        m.scenario,
        t.rows.len(),
        m.inputs.join(" × "),
        if m.warm_start { "warm" } else { "cold" }
    );
    let mut head = String::new();
    for i in &m.inputs {
        head.push_str(&format!("{i:>24} "));
    }
    println!(
        "{head}{:>10} {:>8} {:>10} {:>7} {:>9} {:>8}  verdict",
        "LED avg", "ripple", "frequency", "duty", "mode", "effic."
    );
    for r in t.rows.iter().take(ROWS_SHOWN) {
        let mut line = String::new();
        for (k, p) in m.inputs.iter().enumerate() {
            line.push_str(&format!("{:>24} ", value_of(r.input(k), p, 3)));
        }
        if r.ok() {
            let g = |n: &str| r.metric(n).unwrap_or(f64::NAN);
            line.push_str(&format!(
                "{:>10} {:>6.1} % {:>10} {:>7} {:>9} {:>8}",
                eng(g("led_current_avg_a"), "A"),
                g("led_current_ripple_pct"),
                eng(g("switching_frequency_hz"), "Hz"),
                pct(g("duty")),
                mode_word(r),
                pct(g("efficiency"))
            ));
            let c = m.check_point(r);
            line.push_str(&format!("  {}", c.verdict.word()));
            if !c.warnings.is_empty() {
                line.push_str(&format!(" ({})", c.codes().replace(';', ", ")));
            }
        } else {
            line.push_str(&format!("FAILED: {}", r.error().unwrap_or("")));
        }
        println!("{line}");
    }
    if t.rows.len() > ROWS_SHOWN {
        println!(
            "... {} more rows in the CSV and JSON",
            t.rows.len() - ROWS_SHOWN
        );
    }
    let dcm = t.rows.iter().filter(|r| r.mode() == Some("dcm")).count();
    println!(
        "\n{} of {} points in DCM, {} failed",
        dcm,
        t.rows.len(),
        t.failed()
    );
    print_point_verdicts(t);
}

/// How many points warn or fail, by warning (audible, duty near 100 %,
/// saturation, not regulating); the verdicts are in the CSV and JSON.
fn print_point_verdicts(t: &StudyTable) {
    let checks: Vec<_> = t.rows.iter().map(|r| t.manifest.check_point(r)).collect();
    let count = |code: &str| {
        checks
            .iter()
            .filter(|c| c.warnings.iter().any(|w| w.code() == code))
            .count()
    };
    let words = [
        ("audible", "switch below 20 kHz (audible)"),
        ("duty_near_full", "run at a duty above 95 %"),
        ("saturation", "exceed the inductor's saturation rating"),
        (
            "not_regulating",
            "do not regulate (inductor peak short of the threshold)",
        ),
    ];
    for (code, what) in words {
        let n = count(code);
        if n > 0 {
            println!("{n} of {} points {what}", t.rows.len());
        }
    }
}

/// A value of the field at `path` for people: engineering notation with
/// the field's unit (`68 µH`), plain figures for ratios (`0.45`, never
/// `450 m`) and degrees Celsius (`85 °C`).
fn value_of(v: f64, path: &str, sig: usize) -> String {
    use sim_core::units::{short_number, Unit};
    match sim_core::study::vary::unit_of(path) {
        Unit::Ratio => short_number(v, sig.max(3)),
        Unit::Celsius => format!("{} °C", short_number(v, sig.max(3))),
        u => crate::format::eng_sig(v, u.display_symbol(), sig),
    }
}

/// The journal beside a study's outputs: rows as they finish.
fn journal_path(m: &Manifest, dir: &Path) -> PathBuf {
    dir.join(format!("{}-journal.jsonl", file_base(m)))
}

/// Runs a sweep, spread or corners study with its journal: with
/// `--resume`, takes over the points the journal holds (if it belongs to
/// this very study); streams every finished row into it, one whole line
/// at a time, as the points finish.
fn run_journaled(
    m: &Manifest,
    dir: &Path,
    resume: bool,
    bar: Option<&ProgressBar>,
    quiet: bool,
    run: impl FnOnce(&Hooks<'_>) -> Result<StudyTable, Failure>,
) -> Result<StudyTable, Failure> {
    output::ensure_dir(dir).map_err(io_failure)?;
    let path = journal_path(m, dir);
    let mut resumed = BTreeMap::new();
    if resume {
        match read_text_limited(&path) {
            Ok(text) => {
                let j = read_journal(&text)
                    .map_err(|e| Failure::Input(format!("{}: {e}", path.display())))?;
                if let Some(j) = j {
                    if j.manifest != *m {
                        return Err(Failure::Input(format!(
                            "--resume: {} belongs to a different study (scenario, options or \
                             version differ); run the same command as before, or remove the \
                             journal to start afresh",
                            path.display()
                        )));
                    }
                    resumed = j.finished;
                }
            }
            Err(e) if e.kind() == std::io::ErrorKind::NotFound => {}
            Err(e) => {
                return Err(Failure::Input(format!(
                    "cannot read {}: {e}",
                    path.display()
                )))
            }
        }
        if !quiet {
            let _ = writeln!(
                std::io::stderr(),
                "resuming: {} points taken from {}",
                resumed.len(),
                path.display()
            );
        }
    }
    if !resume && path.exists() {
        // Only a journal of this very study is replaced; another study's
        // unfinished points are not thrown away.
        let other = read_text_limited(&path)
            .ok()
            .and_then(|t| read_journal(&t).ok().flatten())
            .is_some_and(|j| j.manifest != *m);
        if other {
            return Err(Failure::Input(format!(
                "{} holds the unfinished points of a different study (scenario, options or \
                 version differ); finish that one with its own command and --resume, give this \
                 one another --out folder, or remove the journal",
                path.display()
            )));
        }
        if !quiet {
            let _ = writeln!(
                std::io::stderr(),
                "note: replacing {} from an earlier run (--resume would take over its points)",
                path.display()
            );
        }
    }
    // A clean journal first (header and the points taken over; a partly
    // written last line is gone), then rows are appended to it.
    let head = std::iter::once(header_line(m)).chain(resumed.values().map(row_line));
    output::write_pieces(&path, head).map_err(io_failure)?;
    let file = std::fs::OpenOptions::new()
        .append(true)
        .open(&path)
        .map_err(|e| Failure::Run(format!("cannot open {}: {e}", path.display())))?;
    let file = Mutex::new(file);
    let trouble: Mutex<Option<std::io::Error>> = Mutex::new(None);
    if let Some(b) = bar {
        b.set_position(resumed.len() as u64);
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
        resume: Some(&resumed),
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
fn finish(
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
    if let Some(inc) = &t.manifest.incomplete {
        return Err(Failure::TimeLimit(format!(
            "time limit of {} s reached: {} of {} points ran; the table holds them (marked \
             incomplete, no plots) and {} keeps them; run the same command with --resume to \
             finish",
            stop_after.unwrap_or(f64::NAN),
            inc.ran,
            inc.of,
            journal.display()
        )));
    }
    if own_journal {
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
    if t.any_failed() {
        return Err(Failure::Run(format!(
            "{} of {} points failed; their rows carry the error message",
            t.failed(),
            t.rows.len()
        )));
    }
    Ok(())
}

/// A sweep, spread or corners study from its manifest to its files: the
/// progress bar, the journal, the printed summary, the files and the exit
/// status.
fn run_study(
    manifest: &Manifest,
    common: &Common,
    resume: bool,
    quiet: bool,
    what: &str,
    print: fn(&StudyTable),
    run: impl FnOnce(&Hooks<'_>) -> Result<StudyTable, Failure>,
) -> Result<(), Failure> {
    let _lock = lock_out(&common.out)?;
    let bar = progress(point_range(manifest).len(), quiet, what);
    let t = run_journaled(manifest, &common.out, resume, bar.as_ref(), quiet, run)?;
    if let Some(b) = &bar {
        b.finish_and_clear();
    }
    // The files first: a closed standard output cannot cost the tables.
    let outcome = finish(
        &t,
        &common.out,
        !common.no_plots,
        quiet,
        common.stop_after,
        true,
    );
    crate::note_outcome(&outcome);
    print(&t);
    print_incomplete(&t);
    print_cautions(&t);
    outcome
}

/// One line on stdout for a table that stopped early.
fn print_incomplete(t: &StudyTable) {
    if let Some(inc) = &t.manifest.incomplete {
        println!(
            "\nINCOMPLETE: {} — {} of {} points ran; figures above cover those only",
            inc.reason, inc.ran, inc.of
        );
    }
}

fn parse_shard(s: &Option<String>) -> Result<Option<Shard>, Failure> {
    s.as_deref()
        .map(Shard::parse)
        .transpose()
        .map_err(|e| Failure::Input(e.to_string()))
}

/// `chopwave sweep`.
pub fn run_sweep(a: &SweepArgs, quiet: bool) -> Result<(), Failure> {
    let started = Instant::now();
    set_threads(a.common.threads)?;
    let s = load(&a.common.file, &a.common.overrides)?;
    let axes = a
        .vary
        .iter()
        .map(|v| Vary::parse(v, &s))
        .collect::<Result<Vec<_>, _>>()
        .map_err(study_failure)?;
    let grid = Grid::new(axes).map_err(study_failure)?;
    let shard = parse_shard(&a.shard)?;
    let settings = settings(&a.common, started)?;
    let manifest = sweep_manifest(&s, &grid, &settings, shard);
    study_budget(
        &s,
        point_range(&manifest).len(),
        &format!(
            "{} points of --vary {}",
            point_range(&manifest).len(),
            grid.axes
                .iter()
                .map(|x| format!("{} ({} values)", x.path, x.values.len()))
                .collect::<Vec<_>>()
                .join(" × ")
        ),
    )?;
    run_study(
        &manifest,
        &a.common,
        a.resume,
        quiet,
        "points",
        print_sweep,
        |hooks| Ok(sweep(&s, &grid, &settings, shard, hooks)),
    )
}

/// `chopwave spread` (and `--corners`).
pub fn run_spread(a: &SpreadArgs, quiet: bool) -> Result<(), Failure> {
    let started = Instant::now();
    set_threads(a.common.threads)?;
    let mut overrides = a.common.overrides.clone();
    for sp in &a.spec {
        let (k, v) = match sp.split_once('=') {
            Some((k, v)) => (k.trim(), v.trim()),
            None => (sp.trim(), "true"),
        };
        if k.is_empty() {
            return Err(Failure::Input(format!(
                "--spec `{sp}`: expected KEY=VALUE or no_dcm"
            )));
        }
        overrides.push((format!("spec.{k}"), v.to_string()));
    }
    let s = load(&a.common.file, &overrides)?;
    if a.samples == 0 && !a.corners {
        return Err(Failure::Input("--samples must be at least 1".into()));
    }
    let shard = parse_shard(&a.shard)?;
    if !a.corners {
        // Checked before the nominal design runs.
        study_budget(&s, a.samples, &format!("--samples {}", a.samples))?;
    }
    let limits = s.spec.unwrap_or_default();
    let run = settings(&a.common, started)?;
    let set = SpreadSettings {
        samples: a.samples,
        seed: a.seed,
        run,
    };
    let manifest = if a.corners {
        corners_manifest(&s, &limits, &run, shard)
    } else {
        spread_manifest(&s, &limits, &set, shard)
    }
    .map_err(study_failure)?;
    run_study(
        &manifest,
        &a.common,
        a.resume,
        quiet,
        if a.corners { "corners" } else { "samples" },
        print_spread,
        |hooks| {
            if a.corners {
                corners(&s, &limits, &run, shard, hooks)
            } else {
                spread(&s, &limits, &set, shard, hooks)
            }
            .map_err(study_failure)
        },
    )
}

/// Metrics the spread summary prints (all are in the summary JSON).
const PRINTED: [(&str, &str, f64); 8] = [
    ("led_current_avg_a", "A", 1.0),
    ("led_current_ripple_pct", "%", 1.0),
    ("switching_frequency_hz", "Hz", 1.0),
    ("duty", "%", 100.0),
    ("efficiency", "%", 100.0),
    ("inductor_current_peak_a", "A", 1.0),
    ("ccm_margin", "", 1.0),
    ("total_loss_w", "W", 1.0),
];

fn show(v: f64, unit: &str, k: f64) -> String {
    match unit {
        "%" => format!("{:.2} %", v * k),
        "" => crate::format::ratio(v, 1.0),
        u => eng(v, u),
    }
}

fn print_spread(t: &StudyTable) {
    let m = &t.manifest;
    let sum = summarize(t);
    let corners = m.kind == StudyKind::Corners;
    if corners {
        println!(
            "corners of `{}`: {} corners of {} toleranced inputs, {} failed",
            m.scenario,
            sum.points,
            m.inputs.len(),
            sum.failed
        );
    } else {
        println!(
            "spread of `{}`: {} samples (seed {}), {} failed",
            m.scenario,
            sum.points,
            m.seed.unwrap_or(0),
            sum.failed
        );
    }
    println!("inputs:");
    for n in &m.input_notes {
        println!("  {n}");
    }
    if corners {
        println!(
            "\n{:<26} {:>11} {:<40} {:>11} corner",
            "metric", "lowest", "corner", "highest"
        );
    } else {
        println!(
            "\n{:<26} {:>11} {:>11} {:>11} {:>11} {:>11}",
            "metric", "min", "1st pct", "median", "99th pct", "max"
        );
    }
    for (name, unit, k) in PRINTED {
        let Some(x) = sum.metrics.iter().find(|x| x.metric == name) else {
            continue;
        };
        if corners {
            println!(
                "{name:<26} {:>11} {:<40} {:>11} {}",
                show(x.min, unit, k),
                x.min_at,
                show(x.max, unit, k),
                x.max_at
            );
        } else {
            println!(
                "{name:<26} {:>11} {:>11} {:>11} {:>11} {:>11}",
                show(x.min, unit, k),
                show(x.p01, unit, k),
                show(x.p50, unit, k),
                show(x.p99, unit, k),
                show(x.max, unit, k)
            );
        }
    }
    if sum.limits.is_empty() {
        println!(
            "\nno spec limits: add a `spec` object to the scenario or --spec (e.g. \
             --spec current_within_pct=5)"
        );
        return;
    }
    println!("\nspec limits:");
    for l in &sum.limits {
        let worst = l
            .worst_at
            .as_deref()
            .map_or(String::new(), |w| format!("   worst: {w}"));
        println!(
            "  {:<44} {:>6} of {:<6} ({}){worst}",
            l.limit,
            l.pass,
            l.of,
            pct(l.pass as f64 / l.of.max(1) as f64)
        );
    }
    if let (Some(p), Some(y), Some((lo, hi))) =
        (sum.pass, sum.yield_fraction, sum.yield_interval_95)
    {
        println!(
            "yield: {p} of {} meet every limit = {}{}",
            sum.points,
            pct(y),
            if corners {
                String::new()
            } else {
                format!(" (95 % interval {} to {})", pct(lo), pct(hi))
            }
        );
    }
}

/// `chopwave boundary`.
pub fn run_boundary(a: &BoundaryArgs, quiet: bool) -> Result<(), Failure> {
    let started = Instant::now();
    set_threads(a.common.threads)?;
    let s = load(&a.common.file, &a.common.overrides)?;
    if a.vary.len() > 2 {
        return Err(Failure::Input(
            "give one --vary PATH=LOW:HIGH, and at most one more variable to trace across".into(),
        ));
    }
    if !(a.tolerance_pct > 0.0 && a.tolerance_pct <= 0.1) {
        return Err(Failure::Input(format!(
            "--tolerance-pct {} must be above 0 and at most 0.1",
            a.tolerance_pct
        )));
    }
    let (path, lo, hi) = Vary::parse_bracket(&a.vary[0], &s).map_err(study_failure)?;
    let bs = BoundarySettings {
        run: settings(&a.common, started)?,
        rel_tol: a.tolerance_pct / 100.0,
        ..BoundarySettings::default()
    };
    if a.vary.len() == 1 {
        let b = find_boundary(&s, &path, lo, hi, &[], &bs).map_err(study_failure)?;
        if a.json {
            println!("{}", serde_json::to_string_pretty(&b).unwrap_or_default());
        } else {
            print_boundary(&s, &b);
            let top = if path == "supply.voltage_v" { hi } else { 0.0 };
            let max_v = sim_core::study::max_supply_v(&s, [top]);
            println!("\nCautions");
            for c in Caution::for_figures(Scope::Search, max_v, None, None) {
                println!("  * {c}");
            }
        }
        return Ok(());
    }
    let across = Vary::parse(&a.vary[1], &s).map_err(study_failure)?;
    // The mode map's size is checked before any search runs.
    if a.map_points > sim_core::study::vary::MAX_POINTS_PER_AXIS {
        return Err(Failure::Input(format!(
            "--map-points {}: at most {}",
            a.map_points,
            sim_core::study::vary::MAX_POINTS_PER_AXIS
        )));
    }
    study_budget(
        &s,
        a.map_points.max(2).saturating_mul(across.values.len()),
        &format!(
            "--map-points {} × {} values of {}",
            a.map_points.max(2),
            across.values.len(),
            across.path
        ),
    )?;
    let _lock = lock_out(&a.common.out)?;
    let curve = boundary_curve(&s, &path, lo, hi, &across, &bs);
    let mut failed = 0;
    let mut out_of_time = 0;
    let mut pts = Vec::new();
    // Printed once the files are written (a closed standard output
    // cannot cost them).
    let mut text = format!(
        "CCM/DCM boundary along {path} ({} to {}) across {}:\n",
        value_of(lo, &path, 3),
        value_of(hi, &path, 3),
        across.path
    );
    for (v, r) in &curve {
        match r {
            Ok(b) => {
                pts.push((b.value, *v));
                text.push_str(&format!(
                    "  {:>12}: boundary {:>12}   nominal {} on the {} side, {:.1} % away\n",
                    value_of(*v, &across.path, 3),
                    value_of(b.value, &path, 3),
                    value_of(b.nominal, &path, 3),
                    if b.nominal_ccm { "CCM" } else { "DCM" },
                    b.margin_pct
                ));
            }
            Err(e) => {
                failed += 1;
                if matches!(e, StudyError::TimeLimit(_)) {
                    out_of_time += 1;
                }
                text.push_str(&format!("  {:>12}: {e}\n", value_of(*v, &across.path, 3)));
            }
        }
    }
    // The mode map behind the curve.
    let grid = Grid::new(vec![
        Vary {
            path: path.clone(),
            values: linspace(lo, hi, a.map_points.max(2)),
            resolved: format!("{path}={lo:e}:{hi:e}:{}", a.map_points.max(2)),
        },
        across.clone(),
    ])
    .map_err(study_failure)?;
    let bar = progress(grid.len(), quiet, "map points");
    let tick = |_: &Finished| {
        if let Some(b) = &bar {
            b.inc(1);
        }
    };
    let t = sweep(
        &s,
        &grid,
        &bs.run,
        None,
        &Hooks {
            on_finish: Some(&tick),
            resume: None,
        },
    );
    if let Some(b) = &bar {
        b.finish_and_clear();
    }
    let dir = &a.common.out;
    let base = format!("{}-boundary", output::file_stem(&s.name));
    let mut written = Vec::new();
    let json = serde_json::json!({
        "path": path,
        "across": across.path,
        "points": curve.iter().map(|(v, r)| match r {
            Ok(b) => serde_json::json!({"across_value": v, "boundary": b}),
            Err(e) => serde_json::json!({"across_value": v, "error": e.to_string()}),
        }).collect::<Vec<_>>(),
    });
    (|| -> Result<()> {
        output::ensure_dir(dir)?;
        let p = dir.join(format!("{base}.json"));
        output::write_text(&p, &(serde_json::to_string_pretty(&json)? + "\n"))?;
        written.push(p);
        if !a.common.no_plots && t.manifest.incomplete.is_none() {
            let p = dir.join(format!("{base}.png"));
            study_plot::grid_map(
                &t,
                study_plot::MapKind::Mode,
                &format!("{} — CCM/DCM boundary over the mode map", s.name),
                Some(("boundary found by search", &pts)),
                &p,
            )?;
            written.push(p);
        }
        Ok(())
    })()
    .map_err(io_failure)?;
    print!("{text}");
    if a.json {
        println!(
            "{}",
            serde_json::to_string_pretty(&json).unwrap_or_default()
        );
    } else {
        print_cautions(&t);
    }
    if !quiet {
        for p in &written {
            let _ = writeln!(std::io::stderr(), "wrote {}", p.display());
        }
    }
    if out_of_time > 0 || t.manifest.incomplete.is_some() {
        return Err(Failure::TimeLimit(format!(
            "time limit of {} s reached: the boundary was found for {} of {} values{}",
            a.common.stop_after.unwrap_or(f64::NAN),
            curve.len() - failed,
            curve.len(),
            if t.manifest.incomplete.is_some() {
                "; the mode map behind it is incomplete (no plot drawn)"
            } else {
                ""
            }
        )));
    }
    if failed > 0 {
        return Err(Failure::Run(format!(
            "the boundary was not found for {failed} of {} values",
            curve.len()
        )));
    }
    Ok(())
}

fn print_boundary(s: &Scenario, b: &Boundary) {
    let u = |v: f64| value_of(v, &b.path, 5);
    println!("CCM/DCM boundary of `{}` along {}:", s.name, b.path);
    println!(
        "  boundary   {}   (bracket {} to {}, width {:.3} % of the value, {} runs)",
        u(b.value),
        u(b.bracket.0),
        u(b.bracket.1),
        100.0 * (b.bracket.1 - b.bracket.0) / b.value.abs(),
        b.runs
    );
    println!(
        "  CCM lies {} the boundary, DCM {} it",
        if b.ccm_above { "above" } else { "below" },
        if b.ccm_above { "below" } else { "above" }
    );
    println!(
        "  nominal    {} is on the {} side, {:.2} % of the nominal from the boundary",
        value_of(b.nominal, &b.path, 3),
        if b.nominal_ccm { "CCM" } else { "DCM" },
        b.margin_pct
    );
}

/// `chopwave merge`.
pub fn run_merge(a: &MergeArgs, quiet: bool) -> Result<(), Failure> {
    let mut tables = Vec::new();
    for f in &a.files {
        let text = read_text_limited(f)
            .map_err(|e| Failure::Input(format!("cannot read {}: {e}", f.display())))?;
        let t = StudyTable::from_json_text(&text)
            .map_err(|e| Failure::Input(format!("{}: {e}", f.display())))?;
        tables.push(t);
    }
    let t = StudyTable::merge(tables).map_err(|e| Failure::Input(e.to_string()))?;
    let _lock = lock_out(&a.out)?;
    let outcome = finish(&t, &a.out, !a.no_plots, quiet, None, false);
    crate::note_outcome(&outcome);
    println!(
        "merged {} shards: {} {} points of `{}`, {} failed",
        a.files.len(),
        t.rows.len(),
        t.manifest.kind.word(),
        t.manifest.scenario,
        t.failed()
    );
    outcome
}
