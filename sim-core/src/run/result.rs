//! What a run produces: the engine choice and run options, how steady
//! state was reached, the curve-fit report, the measured result and the
//! progress a display is fed with.

use crate::metrics::Metrics;
use crate::model::circuit::N_STATES;
use crate::model::seam::RunStats;
use crate::parts::advice::Warning;
use crate::record::Waveform;
use crate::scenario::{JacobianSource, SteadyMethod};
use serde::Serialize;

/// Which engine runs the circuit.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default, Serialize)]
#[serde(rename_all = "lowercase")]
pub enum EngineKind {
    /// Piecewise-linear, closed-form between events (fast, default).
    #[default]
    Exact,
    /// Full exponential LED and diode curves integrated with Dopri5.
    Reference,
}

/// Options for one run.
#[derive(Debug, Clone, Copy, PartialEq, Default)]
pub struct RunOptions {
    /// The engine.
    pub engine: EngineKind,
    /// Start from this state `[i_L, v_Co, v_Cin]` at a turn-on instead of
    /// power-on (e.g. a known steady state).
    pub initial_state: Option<[f64; N_STATES]>,
}

/// How steady state was reached.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct SteadyInfo {
    /// The method that found it (after any fallback).
    pub method: SteadyMethod,
    /// Newton iterations (0 when cycling alone found it).
    pub newton_iterations: u32,
    /// The shooting Jacobian's source, when shooting found the orbit.
    pub jacobian: Option<JacobianSource>,
    /// Why shooting was not used or gave up, if it was asked for.
    pub note: Option<String>,
    /// Cycles run before the measured ones, all methods together (each
    /// shooting trial, difference and check cycle counts as one).
    pub cycles_to_settle: u64,
    /// Simulated time until then, s.
    pub time_to_settle_s: f64,
    /// Last scaled change of the turn-on state (cycling), or the final
    /// scaled residual `max |P(x) − x| / scale` (shooting).
    pub last_change: f64,
    /// Contraction per cycle: estimated from successive changes
    /// (cycling), or the largest Floquet multiplier (shooting).
    pub contraction: f64,
    /// Cycles per repetition of the orbit (1: ordinary; >1: subharmonic).
    pub orbit_period_cycles: usize,
    /// State `[i_L (A), v_Co (V), v_Cin (V)]` at the first measured turn-on.
    pub state_at_turn_on: [f64; N_STATES],
}

/// Worst-case error of the straight-segment curves against the exact
/// exponential curves over the currents visited, down to the bottom of
/// the range each fit bounds (1 % of its top when the current falls to
/// zero: the tail segment below is fitted by its mean, see
/// [`crate::devices::PwlCurve::fit`]).
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
pub struct FitReport {
    /// LED string, V (None: the load is already linear).
    pub led_max_error_v: Option<f64>,
    /// Diode, V (None: the diode is already linear).
    pub diode_max_error_v: Option<f64>,
    /// Segments in the LED curve.
    pub led_segments: usize,
    /// Segments in the diode curve.
    pub diode_segments: usize,
    /// Currents over which the LED fit's error bound holds, A (None: the
    /// load is already linear).
    pub led_fit_range_a: Option<(f64, f64)>,
    /// Currents over which the diode fit's error bound holds, A (None:
    /// the diode is already linear).
    pub diode_fit_range_a: Option<(f64, f64)>,
}

/// Everything one run produces.
#[derive(Debug, Clone)]
pub struct SimResult {
    /// The scenario's name.
    pub scenario_name: String,
    /// The engine used.
    pub engine: EngineKind,
    /// Steady-state figures.
    pub metrics: Metrics,
    /// How steady state was reached.
    pub steady: SteadyInfo,
    /// Curve-fit errors (exact engine).
    pub fit: FitReport,
    /// The measured steady-state cycles.
    pub waveform: Waveform,
    /// The start-up transient, if asked for.
    pub startup: Option<Waveform>,
    /// Things the engineer should look at.
    pub warnings: Vec<Warning>,
    /// Work done.
    pub stats: RunStats,
}

/// Progress of a run, for a progress display.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Progress {
    /// Cycles so far.
    pub cycles: u64,
    /// The cycle limit.
    pub max_cycles: u64,
    /// Last scaled change.
    pub last_change: f64,
}
