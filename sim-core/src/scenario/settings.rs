//! The scenario's `simulation` section: engine settings, and how steady
//! state is found.

use super::de::*;
use serde::{Deserialize, Serialize};

/// Engine settings.
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
#[serde(default, deny_unknown_fields)]
pub struct SimSettings {
    /// Steady state is declared when the projected remaining change of the
    /// cycle-start state, scaled per state, is below this.
    #[serde(deserialize_with = "de_ratio")]
    pub steady_state_tolerance: f64,
    /// Give up after this many switching cycles.
    pub max_cycles: u64,
    /// Give up after this much simulated time, s.
    #[serde(deserialize_with = "de_s")]
    pub max_time_s: f64,
    /// Steady-state cycles recorded and measured.
    pub record_cycles: u32,
    /// Also record the start-up transient from power-on.
    pub record_startup: bool,
    /// Most straight segments used for an exponential LED or diode curve.
    pub curve_segments: u32,
    /// Largest voltage error allowed between the straight-segment fit and
    /// the exponential curve over the currents visited, V.
    #[serde(deserialize_with = "de_v")]
    pub curve_tolerance_v: f64,
    /// With an output capacitor: largest relative difference allowed
    /// between an LED chord's slope and the exponential curve's own slope
    /// (dynamic resistance) over the chord, where the LED current does not
    /// fall to zero; the LED ripple depends on it.
    #[serde(default = "default_curve_slope_tolerance")]
    pub curve_slope_tolerance: f64,
    /// Waveform samples recorded inside each interval between events.
    pub samples_per_interval: u32,
    /// Longest time one switch state may last before the run stops, s.
    #[serde(deserialize_with = "de_s")]
    pub max_interval_s: f64,
    /// How periodic steady state is found: `shooting` (Newton on the
    /// cycle map, falling back to cycling) or `cycling`.
    pub steady_state_method: SteadyMethod,
    /// Where shooting's Jacobian comes from: `analytic` or
    /// `finite-difference`.
    pub shooting_jacobian: JacobianSource,
}

/// Default `simulation.curve_slope_tolerance`: 0.5 %, which keeps an
/// output capacitor's LED ripple within 1e-4 of the exact exponential
/// curve's from 220 nF to 4.7 µF (tests/fit_accuracy.rs).
fn default_curve_slope_tolerance() -> f64 {
    5e-3
}

impl Default for SimSettings {
    fn default() -> Self {
        SimSettings {
            steady_state_tolerance: 1e-9,
            max_cycles: 200_000,
            max_time_s: 10.0,
            record_cycles: 4,
            record_startup: false,
            // Enough segments that the tolerance, not the cap, sets the
            // fit (a DCM string's range down to zero takes 20 to 50).
            curve_segments: crate::devices::MAX_SEGMENTS as u32,
            // 0.5 mV: every figure within 1e-4 of the exact exponential
            // curves on the DCM cross-checks (1 mV left a Schottky
            // diode's conduction loss 1.3e-4 off; see tests/reference.rs).
            curve_tolerance_v: 5e-4,
            curve_slope_tolerance: default_curve_slope_tolerance(),
            samples_per_interval: 24,
            max_interval_s: 10e-3,
            steady_state_method: SteadyMethod::Shooting,
            shooting_jacobian: JacobianSource::Analytic,
        }
    }
}

/// How periodic steady state is found.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default, Serialize, Deserialize)]
#[serde(rename_all = "lowercase")]
pub enum SteadyMethod {
    /// Newton on the cycle map, falling back to cycling if it fails.
    #[default]
    Shooting,
    /// Running cycle after cycle until the change per cycle has settled.
    Cycling,
}

/// Where the shooting Jacobian comes from.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default, Serialize, Deserialize)]
#[serde(rename_all = "kebab-case")]
pub enum JacobianSource {
    /// Transition matrices and event-time shifts of the exact engine.
    #[default]
    Analytic,
    /// Forward differences: one extra cycle per active state.
    FiniteDifference,
}
