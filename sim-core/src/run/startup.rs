//! The start-up transient: a recorded run from power-on towards the
//! steady orbit a run has found, stopped once it has settled to the eye.

use super::result::{EngineKind, Progress, SimResult};
use super::steady::scaled_change;
use crate::error::SimError;
use crate::exact::engine::ExactEngine;
use crate::model::circuit::N_STATES;
use crate::model::seam::{state_scales, CycleEngine};
use crate::record::{Recorder, Waveform};
use crate::scenario::Scenario;

/// The start-up transient from power-on, recorded by a fresh engine
/// until it has settled onto `steady`'s orbit (see [`record_startup`]) or
/// the scenario's caps.
pub(crate) fn startup_transient(
    s: &Scenario,
    engine: EngineKind,
    steady: &SimResult,
    progress: &mut dyn FnMut(Progress),
) -> Result<Waveform, SimError> {
    let target = StartupTarget {
        state: steady.steady.state_at_turn_on,
        turn_on: steady.waveform.turn_on_samples(),
        current_ref_a: steady.metrics.led_current_avg_a,
    };
    match engine {
        EngineKind::Exact => record_startup(&mut ExactEngine::new(s), s, &target, progress),
        EngineKind::Reference => record_startup(
            &mut crate::reference::ReferenceEngine::new(s),
            s,
            &target,
            progress,
        ),
    }
}

/// The steady orbit a recorded start-up runs towards.
struct StartupTarget {
    /// A turn-on state on the orbit.
    state: [f64; N_STATES],
    /// The orbit's recorded turn-on samples.
    turn_on: Vec<crate::record::Sample>,
    /// The current the currents' distance is relative to, A.
    current_ref_a: f64,
}

/// The start-up recorder: four samples inside each interval, thinned to
/// stay under 400 000 samples.
pub(crate) fn startup_recorder() -> Recorder {
    Recorder::new(4, 400_000)
}

/// Scaled distance from the steady state at which a recorded start-up
/// has settled to the eye (a thousandth of the scale).
pub(crate) const STARTUP_SETTLED: f64 = 1e-3;

/// Records the start-up transient from power-on by cycling a fresh
/// engine until, for two recorded cycles in a row, its turn-on state is
/// within [`STARTUP_SETTLED`] (scaled) of the steady state and its
/// recorded turn-on sample within a tenth of
/// [`crate::record::SETTLED_FRACTION`] of the orbit's (currents against
/// the LED average, voltages against their own values), or until the
/// cycle and time caps. The state test alone let a stiff LED string stop
/// several per cent short of its current (1e-3 of the supply voltage on
/// the output capacitor is tens of milliamperes through a few LEDs).
fn record_startup<E: CycleEngine>(
    e: &mut E,
    s: &Scenario,
    target: &StartupTarget,
    progress: &mut dyn FnMut(Progress),
) -> Result<Waveform, SimError> {
    let sim = &s.simulation;
    let scale = state_scales(s);
    let mut rec = startup_recorder();
    let mut near = 0;
    let mut cycles = 0u64;
    let mut samples_near = false;
    let close = 0.1 * crate::record::SETTLED_FRACTION;
    // A run that has settled onto its own orbit (its turn-on state moving
    // by under 1e-12 of the scales per cycle: round-off) stops too, should
    // its fitted curves leave it a hair off the measured orbit.
    let mut still = 0;
    let mut last = e.state();
    while near < 2 && still < 2 && cycles < sim.max_cycles && e.time_s() < sim.max_time_s {
        e.run_cycle(None, Some(&mut rec))?;
        cycles += 1;
        let now = e.state();
        still = if scaled_change(&now, &last, &scale) <= 1e-12 {
            still + 1
        } else {
            0
        };
        last = now;
        if let Some((0, on)) = rec.latest_turn_on() {
            samples_near = target.turn_on.is_empty()
                || crate::record::distance_from_steady(&on, &target.turn_on, target.current_ref_a)
                    <= close;
        }
        let d = scaled_change(&now, &target.state, &scale);
        near = if d <= STARTUP_SETTLED && samples_near {
            near + 1
        } else {
            0
        };
        if cycles.is_multiple_of(256) {
            progress(Progress {
                cycles,
                max_cycles: sim.max_cycles,
                last_change: d,
            });
        }
    }
    Ok(rec.finish())
}
