//! The study commands: `sweep`, `boundary`, `spread` and `merge`.
//!
//! Each parses its arguments, loads the scenario (with `--set`
//! overrides), calls `sim_core::study`, then writes the table (CSV and
//! JSON, atomically), the plots and a summary. Shard runs write only
//! their slice of the table; `merge` joins slices and writes exactly the
//! files one run would have.

mod files;
mod text;

use crate::{load, output, parse_override, plots, read_text_limited, EngineArg, Failure};
use anyhow::Result;
use files::*;
use indicatif::{ProgressBar, ProgressStyle};
use sim_core::report::{Caution, Scope};
use sim_core::study::boundary::{
    boundary_curve, curve_value, find_boundary, mode_map_grid, BoundarySettings, CurveCount,
};
use sim_core::study::rows::{Manifest, StudyTable};
use sim_core::study::run::{Finished, Hooks, RunSettings, Shard};
use sim_core::study::session::{self};
use sim_core::study::spread::{corners, corners_manifest, spread, spread_manifest, SpreadSettings};
use sim_core::study::sweep::{point_range, sweep, sweep_manifest};
use sim_core::study::vary::{Grid, Vary};
use sim_core::study::StudyError;
use sim_core::Scenario;
use std::io::{IsTerminal, Write};
use std::path::{Path, PathBuf};
use std::time::Instant;
use text::*;

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
        StudyError::BoundaryRun { .. } => Failure::Run(e.to_string()),
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
    crate::within_budget(&sim_core::study::budget::study_estimate(
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
    let deadline = session::deadline(started, c.stop_after).map_err(|_| {
        Failure::Input(format!(
            "--stop-after {}: give a number of seconds above 0 (and below 1e9)",
            c.stop_after.unwrap_or(f64::NAN)
        ))
    })?;
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
    // The mode map's grid and size are checked before any search runs.
    let grid = mode_map_grid(&path, lo, hi, a.map_points, &across).map_err(|e| match e {
        StudyError::MapTooLarge { points, max } => {
            Failure::Input(format!("--map-points {points}: at most {max}"))
        }
        e => study_failure(e),
    })?;
    study_budget(
        &s,
        grid.len(),
        &format!(
            "--map-points {} × {} values of {}",
            a.map_points.max(2),
            across.values.len(),
            across.path
        ),
    )?;
    let _lock = lock_out(&a.common.out)?;
    let curve = boundary_curve(&s, &path, lo, hi, &across, &bs);
    let count = CurveCount::of(&curve);
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
                text.push_str(&format!("  {:>12}: {e}\n", value_of(*v, &across.path, 3)));
            }
        }
    }
    // The mode map behind the curve.
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
    let json = curve_value(&path, &across.path, &curve);
    (|| -> Result<()> {
        output::ensure_dir(dir)?;
        let p = dir.join(format!("{base}.json"));
        output::write_text(&p, &(serde_json::to_string_pretty(&json)? + "\n"))?;
        written.push(p);
        if !a.common.no_plots && t.manifest.incomplete.is_none() {
            let p = dir.join(format!("{base}.png"));
            plots::grid_map(
                &t,
                plots::MapKind::Mode,
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
    if count.out_of_time > 0 || t.manifest.incomplete.is_some() {
        return Err(Failure::TimeLimit(format!(
            "time limit of {} s reached: the boundary was found for {} of {} values{}",
            a.common.stop_after.unwrap_or(f64::NAN),
            count.values - count.failed,
            count.values,
            if t.manifest.incomplete.is_some() {
                "; the mode map behind it is incomplete (no plot drawn)"
            } else {
                ""
            }
        )));
    }
    if count.failed > 0 {
        return Err(Failure::Run(format!(
            "the boundary was not found for {} of {} values",
            count.failed, count.values
        )));
    }
    Ok(())
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
    let t = StudyTable::merge(tables).map_err(|e| match e {
        e @ StudyError::ShardIncomplete { .. } => {
            Failure::Input(format!("{e}; run it again with --resume"))
        }
        e => Failure::Input(e.to_string()),
    })?;
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
