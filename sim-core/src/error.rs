//! Typed errors of the library: scenario problems and simulation failures.
//!
//! Every error carries the numbers a user needs to act on it: a scenario
//! problem names the field path, the offending value and the reason; a
//! simulation failure says what was reached before it stopped.

use std::fmt;

/// One problem with one scenario field.
#[derive(Debug, Clone, PartialEq, serde::Serialize)]
pub struct FieldProblem {
    /// Dotted path of the field, e.g. `inductor.inductance_h`.
    pub path: String,
    /// The offending value as text (empty when the field is missing).
    pub value: String,
    /// Why it is a problem and, where possible, what is allowed.
    pub reason: String,
}

impl fmt::Display for FieldProblem {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        if self.value.is_empty() {
            write!(f, "{}: {}", self.path, self.reason)
        } else {
            write!(f, "{} = {}: {}", self.path, self.value, self.reason)
        }
    }
}

/// Why a scenario could not be loaded.
#[derive(Debug, Clone, thiserror::Error)]
#[non_exhaustive]
pub enum ScenarioError {
    /// The text is not valid JSON, or its structure does not match the
    /// scenario format (unknown or missing field, wrong type).
    #[error("{path}: {message} (line {line}, column {column})")]
    Syntax {
        /// Dotted path of the field where reading stopped (may be empty).
        path: String,
        /// What the reader expected.
        message: String,
        /// Line, 1-based.
        line: usize,
        /// Column, 1-based.
        column: usize,
    },
    /// The scenario parsed but one or more values are not acceptable.
    #[error("{} problem(s): {}", .0.len(), join_problems(.0))]
    Invalid(Vec<FieldProblem>),
    /// A `PATH=VALUE` override could not be applied.
    #[error("override `{path}`: {reason}")]
    Override {
        /// The path given.
        path: String,
        /// Why it could not be applied.
        reason: String,
    },
}

fn join_problems(p: &[FieldProblem]) -> String {
    p.iter()
        .map(|x| x.to_string())
        .collect::<Vec<_>>()
        .join("; ")
}

impl ScenarioError {
    /// Every field problem this error reports (one for syntax errors).
    pub fn problems(&self) -> Vec<FieldProblem> {
        match self {
            ScenarioError::Invalid(p) => p.clone(),
            ScenarioError::Syntax { path, message, .. } => vec![FieldProblem {
                path: path.clone(),
                value: String::new(),
                reason: message.clone(),
            }],
            ScenarioError::Override { path, reason } => vec![FieldProblem {
                path: path.clone(),
                value: String::new(),
                reason: reason.clone(),
            }],
        }
    }
}

/// Why a simulation stopped without a result.
#[derive(Debug, Clone, thiserror::Error)]
#[non_exhaustive]
pub enum SimError {
    /// No periodic steady state within the cycle limit.
    #[error(
        "no steady state after {cycles} cycles ({time_s:.6e} s simulated): \
         last cycle-to-cycle change {last_change:.3e} (scaled), tolerance {tolerance:.1e}, \
         estimated contraction per cycle {contraction:.4}"
    )]
    NoSteadyState {
        /// Cycles simulated.
        cycles: u64,
        /// Simulated time reached, s.
        time_s: f64,
        /// Last scaled change of the cycle-start state.
        last_change: f64,
        /// The tolerance asked for.
        tolerance: f64,
        /// Estimated ratio of successive changes (>= 1 means not settling).
        contraction: f64,
    },
    /// One switching interval ran longer than the allowed maximum: the
    /// controller's threshold was never reached.
    #[error(
        "the switch stayed {switch} for longer than {limit_s:.3e} s without reaching \
         the {what} (inductor current {current_a:.4} A, LED voltage {led_voltage_v:.4} V at t = {time_s:.6e} s)"
    )]
    IntervalTooLong {
        /// `on` or `off`.
        switch: &'static str,
        /// What the controller was waiting for.
        what: String,
        /// The limit, s.
        limit_s: f64,
        /// Inductor current at the limit, A.
        current_a: f64,
        /// LED string voltage at the limit, V.
        led_voltage_v: f64,
        /// Simulated time, s.
        time_s: f64,
    },
    /// The state stopped being finite.
    #[error(
        "state became non-finite at t = {time_s:.6e} s in topology {topology}: state {state:?}"
    )]
    NonFinite {
        /// Simulated time, s.
        time_s: f64,
        /// Topology name.
        topology: String,
        /// The state at that moment.
        state: Vec<f64>,
    },
    /// Events followed one another with no time between them.
    #[error(
        "{count} events at t = {time_s:.6e} s with no time between them (topology {topology})"
    )]
    Chattering {
        /// Number of zero-length intervals in a row.
        count: u32,
        /// Simulated time, s.
        time_s: f64,
        /// Topology name.
        topology: String,
    },
    /// The simulated time cap was reached.
    #[error("simulated time limit {limit_s:.3e} s reached after {cycles} cycles")]
    TimeLimit {
        /// Cycles simulated.
        cycles: u64,
        /// The limit, s.
        limit_s: f64,
    },
    /// The reference integrator failed.
    #[error("reference integrator failed at t = {time_s:.6e} s: {reason}")]
    Integrator {
        /// Simulated time, s.
        time_s: f64,
        /// The integrator's message.
        reason: String,
    },
}
