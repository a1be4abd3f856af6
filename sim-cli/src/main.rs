//! `chopwave`: simulate a buck LED driver scenario to steady state and
//! report what a hardware engineer needs before ordering parts.
//!
//! The binary is glue: it turns arguments into a validated
//! [`sim_core::Scenario`], calls [`sim_core::simulate`], and renders the
//! result as text, JSON, CSV and PNG. Exit codes: 0 success, 1 the
//! simulation failed (or an output could not be written), 2 bad input,
//! 3 a design check failed under `run --strict`.

mod bundled;
mod fit_cmd;
mod format;
mod output;
mod plots;
mod report;
mod run_cmd;
mod study_cmd;

use anyhow::Result;
use clap::{Parser, Subcommand, ValueEnum};
use sim_core::{EngineKind, Scenario, ScenarioError};
use std::io::Write;
use std::path::{Path, PathBuf};
use std::process::ExitCode;
use std::sync::atomic::{AtomicBool, Ordering};

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
    Run(run_cmd::RunArgs),
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
    FitLed(fit_cmd::FitLedArgs),
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
static BUDGET: std::sync::OnceLock<sim_core::study::budget::Budget> = std::sync::OnceLock::new();

/// The options that raise each budget figure (memory, output, points).
pub(crate) const RAISE_BUDGET: [&str; 3] = ["--memory-budget", "--output-budget", "--max-points"];

/// The budget requests are held to.
pub(crate) fn budget() -> sim_core::study::budget::Budget {
    BUDGET.get().copied().unwrap_or_default()
}

/// Refuses an estimate above the budget (bad input, exit 2).
pub(crate) fn within_budget(e: &sim_core::study::budget::Estimate) -> Result<(), Failure> {
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
    let defaults = sim_core::study::budget::Budget::default();
    let _ = BUDGET.set(sim_core::study::budget::Budget {
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
        Command::Run(args) => run_cmd::run(&args, quiet),
        Command::Check { file, overrides } => check(&file, &overrides),
        Command::Demo { out, engine } => run_cmd::demo(&out, engine.into(), quiet),
        Command::Sweep(a) => study_cmd::run_sweep(&a, quiet),
        Command::Boundary(a) => study_cmd::run_boundary(&a, quiet),
        Command::Spread(a) => study_cmd::run_spread(&a, quiet),
        Command::Merge(a) => study_cmd::run_merge(&a, quiet),
        Command::Template => {
            println!("{}", sim_core::scenario::template_text());
            Ok(())
        }
        Command::FitLed(args) => fit_cmd::fit_led(&args),
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
