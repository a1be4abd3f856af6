//! `chopwave run` and `chopwave demo`: a scenario through the library's
//! one entry point ([`sim_core::run::run_design`]) with a progress display,
//! its [`sim_core::report::Report`] rendered as text or JSON, and the CSV
//! and plots written.

use crate::report::{Render, Report};
use crate::{
    bundled, describe_scenario_error, format, io_failure, load, output, parse_override, plots, say,
    within_budget, EngineArg, Failure,
};
use anyhow::{Context, Result};
use indicatif::{ProgressBar, ProgressStyle};
use sim_core::parts::checks::Status;
use sim_core::run::assess::Assessment;
use sim_core::run::Progress;
use sim_core::run::{run_design, Purpose};
use sim_core::{EngineKind, RunOptions, Scenario, SimError, SimResult};
use std::io::{IsTerminal, Write};
use std::path::{Path, PathBuf};
use std::time::{Duration, Instant};

#[derive(Debug, clap::Args)]
pub(crate) struct RunArgs {
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

pub(crate) fn run(args: &RunArgs, quiet: bool) -> Result<(), Failure> {
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
    within_budget(&sim_core::study::budget::run_estimate(
        &s,
        args.csv.is_some(),
    ))?;
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
                || plots::steady_png(s, r, &steady).context("steady-state plot"),
                || match &startup {
                    Some(p) => plots::startup_png(s, r, p).context("start-up plot"),
                    None => Ok(()),
                },
            )
        },
        || match &cmp {
            Some(p) => plots::alternatives_png(a, p).context("alternatives plot"),
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

pub(crate) fn demo(out: &Path, engine: EngineKind, quiet: bool) -> Result<(), Failure> {
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
