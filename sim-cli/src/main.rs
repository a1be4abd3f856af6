//! `chopwave`: simulate a buck LED driver scenario to steady state and
//! report what a hardware engineer needs before ordering parts.
//!
//! The binary is glue: it turns arguments into a validated
//! [`sim_core::Scenario`], calls [`sim_core::simulate`], and renders the
//! result as text, JSON, CSV and PNG. Exit codes: 0 success, 1 the
//! simulation failed (or an output could not be written), 2 bad input,
//! 3 a design check failed under `run --strict`.

mod bundled;
mod format;
mod output;
mod plot;
mod report;
mod study_cmd;
mod study_plot;

use anyhow::{Context, Result};
use clap::{Parser, Subcommand, ValueEnum};
use indicatif::{ProgressBar, ProgressStyle};
use report::{Render, Report};
use sim_core::parts::checks::Status;
use sim_core::run::assess::Assessment;
use sim_core::run::Progress;
use sim_core::run::{run_design, Purpose};
use sim_core::{EngineKind, RunOptions, Scenario, ScenarioError, SimError, SimResult};
use std::io::{IsTerminal, Write};
use std::path::{Path, PathBuf};
use std::process::ExitCode;
use std::sync::atomic::{AtomicBool, Ordering};
use std::time::{Duration, Instant};

/// Simulate switch-mode buck LED drivers cycle by cycle: waveforms, ripple,
/// conduction mode, losses and part stresses before you order parts.
#[derive(Debug, Parser)]
#[command(name = "chopwave", version)]
#[command(
    after_help = "Exit codes: 0 success, 1 simulation failed or an output could not be \
                        written, 2 bad input (scenario file, field or option), 3 a design check \
                        failed (only with `run --strict`)."
)]
struct Cli {
    /// No progress bar and no notes on standard error (errors still print).
    #[arg(short, long, global = true)]
    quiet: bool,
    /// Most memory a run or study may be estimated to need, bytes (e.g.
    /// `4G`, `512M`); a larger request is refused before it starts.
    #[arg(long, global = true, value_name = "BYTES", value_parser = parse_bytes)]
    memory_budget: Option<u64>,
    /// Most output a run or study may be estimated to write, bytes.
    #[arg(long, global = true, value_name = "BYTES", value_parser = parse_bytes)]
    output_budget: Option<u64>,
    /// Most points (simulations) one study may have.
    #[arg(long, global = true, value_name = "N")]
    max_points: Option<u64>,
    #[command(subcommand)]
    command: Command,
}

#[derive(Debug, Subcommand)]
enum Command {
    /// Simulate a scenario to steady state and print a summary.
    Run(RunArgs),
    /// Validate a scenario file and print every problem found.
    Check {
        /// The scenario file (JSON).
        file: PathBuf,
        /// Override a field before checking, e.g. `--set supply.voltage_v=18`.
        #[arg(long = "set", value_name = "PATH=VALUE", value_parser = parse_override)]
        overrides: Vec<(String, String)>,
    },
    /// Run every bundled example scenario and write summaries and plots.
    Demo {
        /// Folder to write into (created if missing).
        #[arg(long, default_value = "chopwave-demo")]
        out: PathBuf,
        /// Engine to use.
        #[arg(long, value_enum, default_value_t = EngineArg::Exact)]
        engine: EngineArg,
    },
    /// Print a complete, valid starter scenario with every field (including
    /// the illustrative `parts` section).
    Template,
    /// Run the scenario at every point of a 1-D or 2-D range of values,
    /// in parallel; one row per point (CSV, JSON) and plots.
    Sweep(study_cmd::SweepArgs),
    /// Find where the design crosses between CCM and DCM along a variable.
    Boundary(study_cmd::BoundaryArgs),
    /// Tolerance spread: Monte Carlo over the scenario's `tolerances`
    /// (or every corner), percentiles and yield against the spec limits.
    Spread(study_cmd::SpreadArgs),
    /// Join the shard outputs of a sweep or spread (`--shard K/N`) into
    /// the files one run would have written.
    Merge(study_cmd::MergeArgs),
    /// Fit the per-LED exponential model (Is, n, Rs) to datasheet points
    /// and print the scenario fragment to paste.
    FitLed(FitLedArgs),
}

#[derive(Debug, clap::Args)]
struct FitLedArgs {
    /// A point on one LED's forward curve, `CURRENT,VOLTAGE` (A, V;
    /// engineering notation allowed, e.g. `350m,2.95`); three or more.
    #[arg(long = "point", value_name = "I,V", value_parser = parse_point, required = true)]
    points: Vec<(f64, f64)>,
    /// Junction temperature the points were taken at, °C.
    #[arg(
        long = "temp",
        value_name = "T",
        default_value_t = 25.0,
        allow_hyphen_values = true
    )]
    temp_c: f64,
    /// Forward-voltage temperature coefficient per LED, mV/K (e.g. -2).
    #[arg(
        long = "tempco-mv",
        value_name = "MV_PER_K",
        allow_hyphen_values = true
    )]
    tempco_mv_per_k: Option<f64>,
    /// Current at which the temperature coefficient is stated, A (default:
    /// the largest current among the points it comes from).
    #[arg(long = "tempco-current", value_name = "A")]
    tempco_current_a: Option<f64>,
    /// A point at the second temperature `--hot-temp`, to fit the
    /// temperature coefficient from (repeatable).
    #[arg(long = "hot-point", value_name = "I,V", value_parser = parse_point)]
    hot_points: Vec<(f64, f64)>,
    /// Junction temperature of the `--hot-point` points, °C.
    #[arg(long = "hot-temp", value_name = "T")]
    hot_temp_c: Option<f64>,
    /// LEDs in the string, for the fragment.
    #[arg(long, default_value_t = 1)]
    count: u32,
    /// Print the fit as JSON.
    #[arg(long)]
    json: bool,
}

#[derive(Debug, clap::Args)]
struct RunArgs {
    /// The scenario file (JSON).
    file: PathBuf,
    /// Print the summary as one JSON object (SI units) instead of text.
    #[arg(long)]
    json: bool,
    /// Write steady-state and start-up PNG plots into this folder.
    #[arg(long, value_name = "DIR")]
    plot: Option<PathBuf>,
    /// Write the recorded steady-state samples to this CSV file.
    #[arg(long, value_name = "FILE")]
    csv: Option<PathBuf>,
    /// Engine: `exact` (piecewise-linear, closed form) or `reference`
    /// (full exponential curves, numerical integration; slower).
    #[arg(long, value_enum, default_value_t = EngineArg::Exact)]
    engine: EngineArg,
    /// Override a field for this run, e.g. `--set supply.voltage_v=18`
    /// (repeatable; values may use engineering notation such as `4.7u`).
    #[arg(long = "set", value_name = "PATH=VALUE", value_parser = parse_override)]
    overrides: Vec<(String, String)>,
    /// Exit with code 3 when any design check fails (the summary is still
    /// printed and the files written).
    #[arg(long)]
    strict: bool,
    /// Skip the start-up transient from power-on (no start-up plot or
    /// start-up peak): for slowly settling designs, whose steady state
    /// shooting finds in a few cycles while the start-up takes thousands.
    #[arg(long)]
    no_startup: bool,
}

#[derive(Debug, Clone, Copy, PartialEq, Eq, ValueEnum)]
enum EngineArg {
    /// Piecewise-linear circuit, exact between events.
    Exact,
    /// Exponential device curves integrated numerically.
    Reference,
}

impl From<EngineArg> for EngineKind {
    fn from(e: EngineArg) -> EngineKind {
        match e {
            EngineArg::Exact => EngineKind::Exact,
            EngineArg::Reference => EngineKind::Reference,
        }
    }
}

fn parse_point(s: &str) -> Result<(f64, f64), String> {
    let bad = || format!("`{s}` is not CURRENT,VOLTAGE (for example 350m,2.95)");
    let (i, v) = s.split_once(',').ok_or_else(bad)?;
    let i = sim_core::units::parse_quantity(i.trim(), sim_core::units::Unit::Ampere)
        .map_err(|e| format!("current in `{s}`: {e}"))?;
    let v = sim_core::units::parse_quantity(v.trim(), sim_core::units::Unit::Volt)
        .map_err(|e| format!("voltage in `{s}`: {e}"))?;
    Ok((i, v))
}

/// A byte count: a number with an optional `K`, `M`, `G` or `T`
/// (binary: 1K = 1024), e.g. `4G`.
fn parse_bytes(s: &str) -> Result<u64, String> {
    let t = s.trim().trim_end_matches(['B', 'b']).trim_end_matches('i');
    let (num, scale) = match t.chars().last().map(|c| c.to_ascii_uppercase()) {
        Some('K') => (&t[..t.len() - 1], 1u64 << 10),
        Some('M') => (&t[..t.len() - 1], 1 << 20),
        Some('G') => (&t[..t.len() - 1], 1 << 30),
        Some('T') => (&t[..t.len() - 1], 1 << 40),
        _ => (t, 1),
    };
    match num.trim().parse::<f64>() {
        Ok(v) if v.is_finite() && v > 0.0 && v * (scale as f64) < 1.8e19 => {
            Ok((v * scale as f64) as u64)
        }
        _ => Err(format!(
            "`{s}` is not a size in bytes (for example 4G, 512M or 1e9)"
        )),
    }
}

/// The resource budget of this invocation (defaults, raised by the
/// `--memory-budget`, `--output-budget` and `--max-points` options).
static BUDGET: std::sync::OnceLock<sim_core::budget::Budget> = std::sync::OnceLock::new();

/// The options that raise each budget figure (memory, output, points).
pub(crate) const RAISE_BUDGET: [&str; 3] = ["--memory-budget", "--output-budget", "--max-points"];

/// The budget requests are held to.
pub(crate) fn budget() -> sim_core::budget::Budget {
    BUDGET.get().copied().unwrap_or_default()
}

/// Refuses an estimate above the budget (bad input, exit 2).
pub(crate) fn within_budget(e: &sim_core::budget::Estimate) -> Result<(), Failure> {
    e.check(&budget(), RAISE_BUDGET)
        .map_err(|e| Failure::Input(format!("request too large: {e}")))
}

fn parse_override(s: &str) -> Result<(String, String), String> {
    match s.split_once('=') {
        Some((p, v)) if !p.trim().is_empty() => Ok((p.trim().to_string(), v.trim().to_string())),
        _ => Err(format!(
            "`{s}` is not PATH=VALUE (for example supply.voltage_v=18)"
        )),
    }
}

/// How a command failed, which decides the exit code.
#[derive(Debug)]
enum Failure {
    /// Bad input: exit 2.
    Input(String),
    /// The simulation failed or output could not be written: exit 1.
    Run(String),
    /// A design check failed under `--strict`: exit 3.
    Checks(String),
    /// A study stopped at its `--stop-after` time limit, after writing
    /// what finished: exit 4.
    TimeLimit(String),
}

impl Failure {
    fn code(&self) -> u8 {
        match self {
            Failure::Input(_) => 2,
            Failure::Run(_) => 1,
            Failure::Checks(_) => 3,
            Failure::TimeLimit(_) => 4,
        }
    }
    fn message(&self) -> &str {
        match self {
            Failure::Input(m) | Failure::Run(m) | Failure::Checks(m) | Failure::TimeLimit(m) => m,
        }
    }
}

fn io_failure(e: anyhow::Error) -> Failure {
    Failure::Run(format!("{e:#}"))
}

/// Set when printing failed because the reader of standard output (or
/// error) went away (`chopwave … | head -1`): the command then ends
/// quietly, as command-line tools do.
static OUTPUT_CLOSED: AtomicBool = AtomicBool::new(false);

/// Whether a panic message is the standard library's report of a print
/// to a closed standard output or error.
fn is_closed_output(what: &str) -> bool {
    what.starts_with("failed printing to stdout") || what.starts_with("failed printing to stderr")
}

/// The outcome a command reached before printing its summary (a study
/// whose files are written): kept so that a closed standard output while
/// printing still ends with that exit code and message.
static PENDING: std::sync::Mutex<Option<(u8, String)>> = std::sync::Mutex::new(None);

/// Records a command's outcome before it prints (see [`PENDING`]).
pub(crate) fn note_outcome(outcome: &Result<(), Failure>) {
    if let (Ok(mut p), Err(f)) = (PENDING.lock(), outcome) {
        *p = Some((f.code(), f.message().to_string()));
    }
}

/// Prints to standard output; when its reader has gone away the text is
/// dropped (and noted), and the command goes on with its files.
fn say(text: &str) {
    let mut out = std::io::stdout().lock();
    match out.write_all(text.as_bytes()).and_then(|()| out.flush()) {
        Ok(()) => {}
        Err(e) if e.kind() == std::io::ErrorKind::BrokenPipe => {
            OUTPUT_CLOSED.store(true, Ordering::SeqCst);
        }
        Err(e) => {
            let _ = writeln!(std::io::stderr(), "chopwave: cannot print: {e}");
        }
    }
}

/// Largest scenario file read, bytes (a larger one is refused unread).
pub(crate) const MAX_SCENARIO_BYTES: u64 = 16 << 20;

/// Largest study file (shard table, journal) read, bytes.
pub(crate) const MAX_STUDY_FILE_BYTES: u64 = 1 << 30;

/// Reads a text file of at most `limit` bytes without ever holding more
/// than that (a device such as `/dev/zero` or a huge file is refused
/// after `limit` bytes).
pub(crate) fn read_text_capped(path: &Path, limit: u64) -> std::io::Result<String> {
    use std::io::Read;
    let file = std::fs::File::open(path)?;
    if file.metadata()?.is_dir() {
        return Err(std::io::Error::other("it is a folder"));
    }
    let mut bytes = Vec::new();
    file.take(limit + 1).read_to_end(&mut bytes)?;
    if bytes.len() as u64 > limit {
        return Err(std::io::Error::other(format!(
            "larger than the {} MiB accepted",
            limit >> 20
        )));
    }
    String::from_utf8(bytes).map_err(|_| std::io::Error::other("not UTF-8 text"))
}

/// [`read_text_capped`] with the study-file limit.
pub(crate) fn read_text_limited(path: &Path) -> std::io::Result<String> {
    read_text_capped(path, MAX_STUDY_FILE_BYTES)
}

fn main() -> ExitCode {
    // A bug must not greet the user with a backtrace: print one line.
    std::panic::set_hook(Box::new(|info| {
        let what = info
            .payload()
            .downcast_ref::<&str>()
            .map(|s| s.to_string())
            .or_else(|| info.payload().downcast_ref::<String>().cloned())
            .unwrap_or_default();
        if is_closed_output(&what) {
            OUTPUT_CLOSED.store(true, Ordering::SeqCst);
            return;
        }
        let at = info
            .location()
            .map(|l| format!(" at {}:{}", l.file(), l.line()))
            .unwrap_or_default();
        let _ = writeln!(
            std::io::stderr(),
            "chopwave: internal error{at}: {what} (please report this)"
        );
    }));
    let cli = Cli::parse();
    let quiet = cli.quiet;
    let defaults = sim_core::budget::Budget::default();
    let _ = BUDGET.set(sim_core::budget::Budget {
        memory_bytes: cli.memory_budget.unwrap_or(defaults.memory_bytes),
        output_bytes: cli.output_budget.unwrap_or(defaults.output_bytes),
        points: cli.max_points.unwrap_or(defaults.points),
    });
    let outcome = std::panic::catch_unwind(move || dispatch(cli));
    // Standard output may be a closed pipe: nothing here may panic.
    let _ = std::io::stdout().flush();
    match outcome {
        Ok(Ok(())) => ExitCode::SUCCESS,
        Ok(Err(f)) => {
            let _ = writeln!(std::io::stderr(), "chopwave: {}", f.message());
            ExitCode::from(f.code())
        }
        // The reader of our output went away: end quietly (files were
        // written before anything was printed).
        Err(_) if OUTPUT_CLOSED.load(Ordering::SeqCst) => {
            match PENDING.lock().ok().and_then(|mut p| p.take()) {
                Some((code, message)) => {
                    let _ = writeln!(std::io::stderr(), "chopwave: {message}");
                    ExitCode::from(code)
                }
                None => ExitCode::SUCCESS,
            }
        }
        Err(_) => {
            if !quiet {
                let _ = writeln!(
                    std::io::stderr(),
                    "chopwave: the run stopped on an internal error"
                );
            }
            ExitCode::from(1)
        }
    }
}

fn dispatch(cli: Cli) -> Result<(), Failure> {
    let quiet = cli.quiet;
    match cli.command {
        Command::Run(args) => run(&args, quiet),
        Command::Check { file, overrides } => check(&file, &overrides),
        Command::Demo { out, engine } => demo(&out, engine.into(), quiet),
        Command::Sweep(a) => study_cmd::run_sweep(&a, quiet),
        Command::Boundary(a) => study_cmd::run_boundary(&a, quiet),
        Command::Spread(a) => study_cmd::run_spread(&a, quiet),
        Command::Merge(a) => study_cmd::run_merge(&a, quiet),
        Command::Template => {
            println!("{}", sim_core::scenario::template_text());
            Ok(())
        }
        Command::FitLed(args) => fit_led(&args),
    }
}

fn fit_led(a: &FitLedArgs) -> Result<(), Failure> {
    use sim_core::parts::fit::fit_led as fit;
    if !(-60.0..=250.0).contains(&a.temp_c) {
        return Err(Failure::Input(format!(
            "--temp {}: outside -60 to 250 °C",
            a.temp_c
        )));
    }
    if !(1..=1000).contains(&a.count) {
        return Err(Failure::Input(format!(
            "--count {}: give 1 to 1000 LEDs (as load.count allows)",
            a.count
        )));
    }
    let f = fit(
        &a.points,
        a.temp_c,
        a.tempco_mv_per_k.map(|t| t * 1e-3),
        &a.hot_points,
        a.hot_temp_c,
    )
    .map_err(|e| Failure::Input(format!("fit-led: {e}")))?;
    let mut load = serde_json::json!({
        "kind": "led_exponential",
        "count": a.count,
        "saturation_current_a": f.saturation_current_a,
        "emission_coefficient": f.emission_coefficient,
        "series_resistance_ohm": f.series_resistance_ohm,
        "junction_temperature_c": f.temperature_c,
        "reference_temperature_c": f.temperature_c,
    });
    // The coefficient goes into the load, stated at a current, from which
    // the model derives its junction law (band gap).
    let tempco_current = a.tempco_current_a.unwrap_or_else(|| {
        let pts = if a.tempco_mv_per_k.is_none() && !a.hot_points.is_empty() {
            &a.hot_points
        } else {
            &a.points
        };
        pts.iter().map(|p| p.0).fold(0.0, f64::max)
    });
    if let Some(tc) = f.tempco_v_per_k {
        if !(tempco_current.is_finite() && tempco_current > 0.0) {
            return Err(Failure::Input(format!(
                "--tempco-current {tempco_current}: must be a positive current"
            )));
        }
        load["forward_voltage_tempco_v_per_k"] = tc.into();
        load["tempco_current_a"] = tempco_current.into();
    }
    fragment_loads(&load, None)?;
    if a.json {
        let out = serde_json::json!({ "fit": f, "load": load });
        println!(
            "{}",
            serde_json::to_string_pretty(&out).map_err(|e| Failure::Run(e.to_string()))?
        );
        return Ok(());
    }
    println!(
        "Per-LED model v = n·Vt·ln(1 + i/Is) + Rs·i at {:.1} °C (least squares):",
        f.temperature_c
    );
    // Engineering notation down to femto; an LED's Is (1e-18 A and
    // below) lies beyond the prefixes and keeps scientific notation.
    let is = f.saturation_current_a;
    if is.abs() >= 1e-15 {
        println!("  Is = {}", format::eng_sig(is, "A", 7));
    } else {
        println!("  Is = {is:.6e} A");
    }
    println!("  n  = {:.6}", f.emission_coefficient);
    println!(
        "  Rs = {}",
        format::eng_sig(f.series_resistance_ohm, "Ω", 6)
    );
    println!(
        "\n  {:>12}{:>12}{:>12}{:>14}",
        "current", "datasheet", "model", "residual"
    );
    for (&(i, v), r) in a.points.iter().zip(&f.residuals_v) {
        println!(
            "  {:>12}{:>12}{:>12}{:>14}",
            format::eng(i, "A"),
            format!("{v:.4} V"),
            format!("{:.4} V", v + r),
            format!("{:+.2} mV", 1e3 * r)
        );
    }
    if let Some(tc) = f.tempco_v_per_k {
        let how = if a.tempco_mv_per_k.is_some() {
            "given"
        } else {
            "fitted"
        };
        println!(
            "\n  forward-voltage tempco {:+.3} mV/K per LED at {} ({how})",
            1e3 * tc,
            format::eng(tempco_current, "A")
        );
        if let Some(th) = a.hot_temp_c {
            for (&(i, v), r) in a.hot_points.iter().zip(&f.hot_residuals_v) {
                println!(
                    "  at {th:.1} °C: {} {v:.4} V, model {:.4} V ({:+.2} mV)",
                    format::eng(i, "A"),
                    v + r,
                    1e3 * r
                );
            }
        }
    }
    let mut fragment = serde_json::json!({ "load": load });
    if f.tempco_v_per_k.is_some() {
        fragment["parts"] = serde_json::json!({
            "led": {
                "resistance_c_per_w": "(your LED's junction-to-ambient °C/W)",
                "max_junction_temperature_c": "(from the datasheet)",
            }
        });
    }
    println!("\nScenario fragment to paste (fill in the thermal data where shown):");
    println!(
        "{}",
        serde_json::to_string_pretty(&fragment).map_err(|e| Failure::Run(e.to_string()))?
    );
    Ok(())
}

/// Checks that a fitted `load` (and tempco) read back through the
/// scenario loader, placed in the starter scenario: a fragment is never
/// printed that a scenario file would refuse.
fn fragment_loads(load: &serde_json::Value, tempco: Option<f64>) -> Result<(), Failure> {
    let mut v = serde_json::to_value(sim_core::scenario::template_with_parts())
        .map_err(|e| Failure::Run(e.to_string()))?;
    v["load"] = load.clone();
    if let Some(tc) = tempco {
        v["parts"]["led"]["forward_voltage_tempco_v_per_k"] = tc.into();
    }
    let problems: Vec<String> = match Scenario::from_json_value(&v) {
        Ok(_) => Vec::new(),
        Err(e) => e
            .problems()
            .into_iter()
            .filter(|p| p.path.starts_with("load") || p.path.starts_with("parts.led"))
            .map(|p| p.to_string())
            .collect(),
    };
    if problems.is_empty() {
        Ok(())
    } else {
        Err(Failure::Input(format!(
            "fit-led: the fitted model would not load in a scenario: {}",
            problems.join("; ")
        )))
    }
}

/// Reads and validates a scenario file, with overrides.
fn load(file: &Path, overrides: &[(String, String)]) -> Result<Scenario, Failure> {
    let text = read_text_capped(file, MAX_SCENARIO_BYTES)
        .map_err(|e| Failure::Input(format!("cannot read {}: {e}", file.display())))?;
    let name = file.display().to_string();
    Scenario::from_json_str_with_overrides(&text, overrides).map_err(|e| {
        // A structural problem stops the reader at the first; list them
        // all (every unknown field, each with its path).
        let all = Scenario::problems_in(&text, overrides);
        if matches!(e, ScenarioError::Syntax { .. }) && all.len() > 1 {
            let mut m = describe_scenario_error(&name, &e);
            m.push_str(&format!("\n{name}: {} problems found:", all.len()));
            for p in &all {
                m.push_str(&format!("\n  field `{}`: {}", p.path, p.reason));
            }
            Failure::Input(m)
        } else {
            Failure::Input(describe_scenario_error(&name, &e))
        }
    })
}

/// One clear message naming the file, each field, its value and the reason.
fn describe_scenario_error(file: &str, e: &ScenarioError) -> String {
    match e {
        ScenarioError::Syntax {
            path,
            message,
            line,
            column,
        } => {
            let field = if path.is_empty() {
                String::new()
            } else {
                format!(" field `{path}`:")
            };
            if *line == 0 {
                format!("{file}:{field} {message}")
            } else {
                format!("{file}:{line}:{column}:{field} {message}")
            }
        }
        ScenarioError::Invalid(problems) => {
            let mut s = format!(
                "{file}: {} problem{} found:",
                problems.len(),
                if problems.len() == 1 { "" } else { "s" }
            );
            for p in problems {
                if p.value.is_empty() {
                    s.push_str(&format!("\n  field `{}`: {}", p.path, p.reason));
                } else {
                    s.push_str(&format!(
                        "\n  field `{}` = {}: {}",
                        p.path, p.value, p.reason
                    ));
                }
            }
            s
        }
        ScenarioError::Override { path, reason } => format!("{file}: --set {path}: {reason}"),
        other => format!("{file}: {other}"),
    }
}

fn check(file: &Path, overrides: &[(String, String)]) -> Result<(), Failure> {
    let s = load(file, overrides)?;
    println!(
        "{}: valid scenario `{}` ({})",
        file.display(),
        s.name,
        summary_line(&s)
    );
    Ok(())
}

fn summary_line(s: &Scenario) -> String {
    use format::eng;
    let ctrl = match s.controller {
        sim_core::scenario::ControllerSpec::ConstantOffTime { .. } => "constant off-time",
        sim_core::scenario::ControllerSpec::Hysteretic { .. } => "hysteretic",
        sim_core::scenario::ControllerSpec::FixedDuty { .. } => "fixed duty",
    };
    format!(
        "{} supply, {} inductor, {ctrl} control",
        eng(s.supply.voltage_v, "V"),
        eng(s.inductor.inductance_h, "H")
    )
}

/// Runs the real-part simulation (bias and temperature iteration, checks,
/// alternatives) with a progress display on a terminal.
fn simulate_scenario(s: &Scenario, engine: EngineKind, quiet: bool) -> Result<Assessment, Failure> {
    let show = !quiet && std::io::stderr().is_terminal();
    let start = Instant::now();
    let mut bar: Option<ProgressBar> = None;
    let mut on_progress = |p: Progress| {
        if !show {
            return;
        }
        if bar.is_none() && start.elapsed() > Duration::from_millis(300) {
            let b = ProgressBar::new_spinner();
            b.set_style(
                ProgressStyle::with_template("{spinner} {elapsed} {msg}")
                    .unwrap_or_else(|_| ProgressStyle::default_spinner()),
            );
            b.enable_steady_tick(Duration::from_millis(120));
            bar = Some(b);
        }
        if let Some(b) = &bar {
            b.set_message(format!(
                "{}: cycle {} of at most {}, change per cycle {:.1e} (steady below {:.0e})",
                s.name, p.cycles, p.max_cycles, p.last_change, s.simulation.steady_state_tolerance
            ));
        }
    };
    let opts = RunOptions {
        engine,
        ..RunOptions::default()
    };
    let result = run_design(s, &opts, Purpose::Report, &mut on_progress);
    if let Some(b) = bar {
        b.finish_and_clear();
    }
    result.map_err(|e| Failure::Run(describe_sim_error(&s.name, &e)))
}

fn describe_sim_error(name: &str, e: &SimError) -> String {
    let hint = match e {
        SimError::NoSteadyState { .. } => {
            "\n  hint: raise simulation.max_cycles, loosen simulation.steady_state_tolerance, or \
             check for an unstable or subharmonic design"
        }
        SimError::TimeLimit { .. } => "\n  hint: raise simulation.max_time_s",
        SimError::IntervalTooLong { .. } => {
            "\n  hint: check the supply, the LED string voltage and the controller thresholds"
        }
        _ => "",
    };
    format!("simulation of `{name}` failed: {e}{hint}")
}

fn run(args: &RunArgs, quiet: bool) -> Result<(), Failure> {
    let mut s = load(&args.file, &args.overrides)?;
    // An output that cannot be written is reported before simulating.
    if let Some(path) = &args.csv {
        output::check_writable(output::parent_dir(path)).map_err(io_failure)?;
    }
    if let Some(dir) = &args.plot {
        output::check_writable(dir).map_err(io_failure)?;
    }
    // Record the start-up unless told not to: the plots need it, and the
    // summary reports its inductor peak.
    s.simulation.record_startup = !args.no_startup;
    within_budget(&sim_core::budget::run_estimate(&s, args.csv.is_some()))?;
    let a = simulate_scenario(&s, args.engine.into(), quiet)?;
    let r = &a.result;
    let report = Report::new(&s, &a);
    let mut written = Vec::new();
    if let Some(path) = &args.csv {
        output::write_csv(path, &r.waveform).map_err(io_failure)?;
        written.push(path.clone());
    }
    if let Some(dir) = &args.plot {
        written.extend(write_plots(&s, &a, dir, &output::file_stem(&s.name)).map_err(io_failure)?);
    }
    // A closed standard output does not stop the run: the files are
    // written, and --strict still decides the exit code.
    let text = if args.json {
        report.to_json() + "\n"
    } else {
        report.to_text()
    };
    say(&text);
    if !quiet {
        for p in &written {
            let _ = writeln!(std::io::stderr(), "wrote {}", p.display());
        }
    }
    if args.strict && report.design_verdict == Status::Fail {
        let failed = report.failed_checks();
        return Err(Failure::Checks(format!(
            "{} design check{} failed (--strict): {}",
            failed.len(),
            if failed.len() == 1 { "" } else { "s" },
            failed.join("; ")
        )));
    }
    Ok(())
}

fn write_plots(s: &Scenario, a: &Assessment, dir: &Path, stem: &str) -> Result<Vec<PathBuf>> {
    let r: &SimResult = &a.result;
    output::ensure_dir(dir)?;
    let steady = dir.join(format!("{stem}-steady.png"));
    let startup = r
        .startup
        .is_some()
        .then(|| dir.join(format!("{stem}-startup.png")));
    let cmp = a
        .comparison
        .is_some()
        .then(|| dir.join(format!("{stem}-alternatives.png")));
    // The plots are drawn and encoded in parallel.
    let ((st, su), al) = rayon::join(
        || {
            rayon::join(
                || plot::steady_png(s, r, &steady).context("steady-state plot"),
                || match &startup {
                    Some(p) => plot::startup_png(s, r, p).context("start-up plot"),
                    None => Ok(()),
                },
            )
        },
        || match &cmp {
            Some(p) => plot::alternatives_png(a, p).context("alternatives plot"),
            None => Ok(()),
        },
    );
    st?;
    su?;
    al?;
    Ok(std::iter::once(steady).chain(startup).chain(cmp).collect())
}

fn mode_name(m: sim_core::metrics::ConductionMode) -> &'static str {
    match m {
        sim_core::metrics::ConductionMode::Ccm => "CCM",
        sim_core::metrics::ConductionMode::Dcm => "DCM",
        sim_core::metrics::ConductionMode::Boundary => "boundary",
    }
}

fn demo(out: &Path, engine: EngineKind, quiet: bool) -> Result<(), Failure> {
    output::ensure_dir(out).map_err(io_failure)?;
    let mut failures = Vec::new();
    let mut written: Vec<PathBuf> = Vec::new();
    let mut index =
        String::from("chopwave demo: bundled example scenarios (illustrative values)\n\n");
    for b in bundled::SCENARIOS {
        let mut s = match Scenario::from_json_str(b.json) {
            Ok(s) => s,
            Err(e) => {
                failures.push(describe_scenario_error(b.file, &e));
                continue;
            }
        };
        s.simulation.record_startup = true;
        let started = Instant::now();
        let a = match simulate_scenario(&s, engine, quiet) {
            Ok(a) => a,
            Err(f) => {
                failures.push(f.message().to_string());
                continue;
            }
        };
        let elapsed = started.elapsed();
        let stem = b.stem();
        let report = Report::new(&s, &a);
        let r = &a.result;
        let files = (|| -> Result<Vec<PathBuf>> {
            let mut f = Vec::new();
            let scenario_copy = out.join(format!("{stem}.scenario.json"));
            output::write_text(&scenario_copy, b.json)?;
            f.push(scenario_copy);
            let txt = out.join(format!("{stem}.txt"));
            output::write_text(&txt, &report.to_text())?;
            f.push(txt);
            let json = out.join(format!("{stem}.json"));
            output::write_text(&json, &(report.to_json() + "\n"))?;
            f.push(json);
            f.extend(write_plots(&s, &a, out, &stem)?);
            Ok(f)
        })();
        match files {
            Ok(f) => {
                let m = &r.metrics;
                let line = format!(
                    "{:<28} {:>9} LED, {:>5.1} % ripple, {:>9}, {:<8} efficiency {:>6}  ({:.2} s)",
                    s.name,
                    format::eng(m.led_current_avg_a, "A"),
                    m.led_current_ripple_pct,
                    format::eng(m.switching_frequency_hz, "Hz"),
                    mode_name(m.conduction_mode),
                    format::pct(m.efficiency),
                    elapsed.as_secs_f64()
                );
                say(&format!("{line}\n"));
                index.push_str(&line);
                index.push('\n');
                for p in &f {
                    index.push_str(&format!("    {}\n", p.display()));
                }
                written.extend(f);
            }
            Err(e) => failures.push(format!("{}: {e:#}", b.file)),
        }
    }
    let index_path = out.join("index.txt");
    output::write_text(&index_path, &index).map_err(io_failure)?;
    written.push(index_path);
    say(&format!(
        "\nwrote {} files into {}:\n",
        written.len(),
        out.display()
    ));
    for p in &written {
        say(&format!("  {}\n", p.display()));
    }
    if failures.is_empty() {
        Ok(())
    } else {
        Err(Failure::Run(format!(
            "{} of {} demo scenarios failed:\n  {}",
            failures.len(),
            bundled::SCENARIOS.len(),
            failures.join("\n  ")
        )))
    }
}
