//! The one entry point of a design run: `chopwave run`, every sweep,
//! spread and boundary point, and a library user all call
//! [`run_design`], so a study point at a value gives the same figures, to
//! the bit, as a run of the scenario set to that value.
//!
//! The run is the full assessment ([`fn@super::assess`]): with DC-bias
//! capacitors or LED temperature feedback the circuit is simulated again
//! at the capacitances and junction temperature the last run produced,
//! until they settle. A plain [`super::simulate`] of the nominal element
//! values would give other figures (a derated ceramic has less
//! capacitance than its label, a warm LED string a lower voltage).

use super::assess::{assess_once, assess_with_progress, AssessOptions, Assessment};
use super::result::{Progress, RunOptions, SimResult};
use crate::error::SimError;
use crate::scenario::{Load, Scenario};

/// What a run of a design is for; the steady-state figures are the same
/// for both, only the extras differ.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default)]
pub enum Purpose {
    /// A full report: the start-up transient when the scenario asks for
    /// it (`simulation.record_startup`) and for the inductor's saturation
    /// check, the ends of a declared supply range, and — for an LED
    /// string — the resistor and linear alternatives (a resistor load has
    /// no LED string to compare).
    #[default]
    Report,
    /// One point of a study: the figures, capacitors, temperatures and
    /// checks at the scenario's own supply, without the start-up, the
    /// range ends and the alternatives (a study row holds none of them).
    StudyPoint,
}

/// Whether the resistor and linear alternatives apply: they are for LED
/// strings.
pub(crate) fn alternatives_apply(s: &Scenario) -> bool {
    !matches!(s.load, Load::Resistor { .. })
}

/// Runs a validated scenario for `purpose`: the full assessment (bias and
/// temperature loop) with `opts`' engine and start state, calling
/// `progress` during each simulation.
pub fn run_design(
    s: &Scenario,
    opts: &RunOptions,
    purpose: Purpose,
    progress: &mut dyn FnMut(Progress),
) -> Result<Assessment, SimError> {
    match purpose {
        Purpose::Report => {
            let a = AssessOptions {
                run: *opts,
                alternatives: alternatives_apply(s),
            };
            assess_with_progress(s, &a, progress)
        }
        Purpose::StudyPoint => {
            let a = AssessOptions {
                run: *opts,
                alternatives: false,
            };
            if s.simulation.record_startup {
                let mut own = s.clone();
                own.simulation.record_startup = false;
                assess_once(&own, &a, false, progress)
            } else {
                assess_once(s, &a, false, progress)
            }
        }
    }
}

/// One study point: [`run_design`] for [`Purpose::StudyPoint`], its final
/// run (the figures of the settled effective circuit).
pub fn run_point(s: &Scenario, opts: &RunOptions) -> Result<SimResult, SimError> {
    run_design(s, opts, Purpose::StudyPoint, &mut |_| {}).map(|a| a.result)
}
