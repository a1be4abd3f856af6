//! The run report as a typed value: what `chopwave run --json` writes and
//! what its text summary lays out, built from a scenario and its
//! [`Assessment`] by the rules that give it its meaning — each loss as a
//! share of the input, the start-up peak and its saturation warning,
//! the safety cautions, the design verdict, whether part losses were
//! modelled. A front end only renders it.
//!
//! - [`warning`]: [`Warning`], the warnings with their words (`Display`).
//! - [`caution`]: [`Caution`], the safety cautions, defined once for a
//!   run, a study and a boundary search.

pub mod caution;
pub mod warning;

pub use caution::{Caution, Scope, BRIGHT_LED_POWER_W, HOT_PARTS_LOSS_W};
pub use warning::Warning;

use crate::metrics::{LossEnergies, Metrics};
use crate::model::seam::RunStats;
use crate::parts::alternatives::Comparison;
use crate::parts::checks::{worst, CapacitorState, Check, Status};
use crate::parts::thermal::PartTemperature;
use crate::record::{Waveform, COL_IL};
use crate::run::assess::{Assessment, IterationInfo};
use crate::run::{EngineKind, FitReport, SteadyInfo};
use crate::scenario::{ControllerSpec, Scenario};
use serde::Serialize;

/// Version of the JSON layout; bumped when a field changes meaning.
pub const JSON_SCHEMA: &str = "chopwave-run-2";

/// Everything a run reports about one design at steady state.
#[derive(Debug, Clone, Serialize)]
pub struct Report {
    /// Layout version, [`JSON_SCHEMA`].
    pub schema: &'static str,
    /// The scenario's name.
    pub scenario: String,
    /// The scenario's description.
    pub description: String,
    /// Engine used.
    pub engine: EngineKind,
    /// Supply open-circuit voltage of this run, V.
    pub supply_voltage_v: f64,
    /// The current the controller aims at, if it has one, A.
    pub target_current_a: Option<f64>,
    /// Steady-state figures (flattened into the top level).
    #[serde(flatten)]
    pub metrics: Metrics,
    /// Each loss as a percentage of the input power, %.
    pub losses_pct: LossEnergies,
    /// Switch peak current (the inductor peak: in a buck the switch carries
    /// the inductor current while on), A.
    pub switch_current_peak_a: f64,
    /// Diode peak current (the inductor current at turn-off), A.
    pub diode_current_peak_a: f64,
    /// How steady state was reached.
    pub steady_state: SteadyInfo,
    /// Straight-segment curve fit errors.
    pub fit: FitReport,
    /// Work done.
    pub stats: RunStats,
    /// Highest inductor current from power-on to steady state (None when
    /// the start-up was not recorded), A.
    pub startup_inductor_current_peak_a: Option<f64>,
    /// Samples in the recorded steady-state waveform (rows of `--csv`).
    pub recorded_samples: usize,
    /// Switching cycles in the recorded steady-state waveform.
    pub recorded_cycles: usize,
    /// Things the engineer should look at in this design.
    pub warnings: Vec<Warning>,
    /// Safety cautions for building and testing this design.
    pub cautions: Vec<Caution>,
    /// The design-check table.
    pub design_checks: Vec<Check>,
    /// The worst status in the table (`--strict` exits 3 on `fail`).
    pub design_verdict: Status,
    /// What each capacitor saw (effective capacitance under DC bias).
    pub capacitors: Vec<CapacitorState>,
    /// Estimated part temperatures.
    pub temperatures: Vec<PartTemperature>,
    /// The capacitor-bias / LED-temperature iteration.
    pub iteration: IterationInfo,
    /// The resistor and linear alternatives beside the switching design.
    pub alternatives: Option<Comparison>,
    /// Whether any part data for the post-processed losses (switching
    /// edges, gate, capacitances, recovery, core, quiescent) was given;
    /// without it the losses are conduction losses only.
    #[serde(skip)]
    pub has_part_losses: bool,
    /// The controller and its settings.
    #[serde(skip)]
    pub controller: ControllerSpec,
    /// Whether the design has an input capacitor.
    #[serde(skip)]
    pub has_input_capacitor: bool,
    /// Whether a supply range is declared: each check row then holds the
    /// supply of its worst case.
    #[serde(skip)]
    pub range_given: bool,
    /// Whether the design has an output capacitor.
    #[serde(skip)]
    pub has_output_capacitor: bool,
}

/// The highest inductor current of a recorded start-up, A.
fn startup_peak_a(w: Option<&Waveform>) -> Option<f64> {
    w.filter(|w| !w.is_empty()).map(|w| {
        w.column(COL_IL)
            .iter()
            .copied()
            .fold(f64::NEG_INFINITY, f64::max)
    })
}

/// Whether the scenario gives any part data for the post-processed
/// losses.
pub fn has_part_losses(s: &Scenario) -> bool {
    let p = &s.parts;
    p.switch.rise_time_s > 0.0
        || p.switch.fall_time_s > 0.0
        || p.switch.gate_charge_c > 0.0
        || p.switch.output_capacitance_f > 0.0
        || p.diode.reverse_recovery_charge_c > 0.0
        || p.diode.junction_capacitance_f > 0.0
        || p.inductor.core.is_some()
        || p.controller.quiescent_current_a > 0.0
}

impl Report {
    /// Builds the report of a full run ([`crate::run::run_design`]) of
    /// `scenario`.
    pub fn new(scenario: &Scenario, a: &Assessment) -> Report {
        let r = &a.result;
        let m = r.metrics;
        let input = m.input_power_w;
        let k = if input > 0.0 { 100.0 / input } else { 0.0 };
        let startup_peak = startup_peak_a(r.startup.as_ref());
        let mut warnings: Vec<Warning> = r.warnings.clone();
        warnings.extend(Warning::startup_saturation(
            startup_peak,
            scenario.inductor.saturation_current_a,
            m.inductor_current_peak_a,
        ));
        Report {
            schema: JSON_SCHEMA,
            scenario: r.scenario_name.clone(),
            description: scenario.description.clone(),
            engine: r.engine,
            supply_voltage_v: scenario.supply.voltage_v,
            target_current_a: scenario.target_current_a(),
            metrics: m,
            losses_pct: m.losses_w.scaled(k),
            switch_current_peak_a: m.inductor_current_peak_a,
            diode_current_peak_a: m.inductor_current_peak_a,
            steady_state: r.steady.clone(),
            fit: r.fit,
            stats: r.stats,
            startup_inductor_current_peak_a: startup_peak,
            recorded_samples: r.waveform.len(),
            recorded_cycles: r.waveform.cycle_starts_s.len(),
            warnings,
            cautions: Caution::for_run(scenario, &m),
            design_checks: a.checks.clone(),
            design_verdict: worst(&a.checks),
            capacitors: a.capacitors.clone(),
            temperatures: a.temperatures.clone(),
            iteration: IterationInfo {
                runs: a.iterations,
                converged: a.converged,
                led_junction_c: a
                    .temperatures
                    .iter()
                    .find(|t| t.part == "led")
                    .map(|t| t.temperature_c),
            },
            alternatives: a.comparison.clone(),
            has_part_losses: has_part_losses(scenario),
            controller: scenario.controller,
            has_input_capacitor: scenario.input_capacitor.is_some(),
            range_given: scenario.supply.input_range_v.is_some(),
            has_output_capacitor: scenario.output_capacitor.is_some(),
        }
    }

    /// The checks that failed, by name (what `--strict` names).
    pub fn failed_checks(&self) -> Vec<&str> {
        self.design_checks
            .iter()
            .filter(|c| c.status == Status::Fail)
            .map(|c| c.check.as_str())
            .collect()
    }
}
