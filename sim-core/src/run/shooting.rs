//! Periodic steady state by shooting: Newton's method on the cycle map.
//!
//! The cycle map `P` takes the state at one turn-on to the state at the
//! next, so the unknown period drops out and a periodic orbit is a fixed
//! point `x* = P(x*)` (the shooting method for periodic steady state:
//! Aprille & Trick, "Steady-state analysis of nonlinear circuits with
//! periodic inputs", Proc. IEEE 60(1), 1972). Newton's method solves
//! `(J − I)·δ = −(P(x) − x)` with the Jacobian `J = ∂P/∂x` from the exact
//! engine's transition matrices and event-time shifts
//! ([`CycleMap::cycle_with_jacobian`], for the exact engine its
//! `run_cycle_with_jacobian`), or by forward differences
//! (one extra cycle per active state) when asked or when the analytic one
//! is not available. Steps that do not reduce the residual are cut back.
//!
//! The piecewise-linear curve fits are frozen while Newton runs; once it
//! has converged one ordinary cycle lets them follow the orbit, and if
//! they changed Newton runs again, until they stay put. The orbit's
//! largest Floquet multiplier (eigenvalue of `J`) says whether it is
//! stable: an unstable period-one orbit is not what the circuit settles
//! to, so the caller falls back to cycling, which finds the orbit it
//! really settles to (subharmonic, for instance).

use super::steady::scaled_change;
use crate::error::SimError;
use crate::model::circuit::{Circuit, N_STATES};
use crate::scenario::{ControllerSpec, JacobianSource, Scenario};
use nalgebra::Matrix3;

/// What shooting needs of an engine: the cycle map `x ↦ P(x)` from a
/// fresh turn-on, with its Jacobian `∂P/∂x` where the engine can carry it,
/// and control over its curve fits (frozen while Newton runs).
pub trait CycleMap {
    /// Which of the states `[i_L, v_Co, v_Cin]` the circuit has (a missing
    /// capacitor's voltage is not a state Newton solves for).
    fn active_states(&self) -> [bool; N_STATES];
    /// The supply voltage, V (bounds the capacitor voltages).
    fn supply_v(&self) -> f64;
    /// Puts the engine at a turn-on with state `x`, forgetting any
    /// memory of earlier cycles, so the map is a function of `x` alone.
    fn restart_at_turn_on(&mut self, x: [f64; N_STATES]);
    /// One cycle, turn-on to turn-on.
    fn cycle(&mut self) -> Result<(), SimError>;
    /// One cycle carrying `∂x/∂x₀` along (None: not available for this
    /// cycle, so shooting takes differences).
    fn cycle_with_jacobian(&mut self) -> Result<Option<Matrix3<f64>>, SimError>;
    /// The state at the present turn-on.
    fn state_array(&self) -> [f64; N_STATES];
    /// Simulated time, s.
    fn time_s(&self) -> f64;
    /// The present topology in words (for errors).
    fn topology(&self) -> String;
    /// Freezes (`true`) or frees the piecewise-linear curve fits.
    fn set_fits_frozen(&mut self, frozen: bool);
    /// How many times the fits have been re-made so far.
    fn refits(&self) -> u64;
}

/// Scaled residual `max |P(x) − x| / scale` at which the orbit is found.
pub(crate) const RESIDUAL_TARGET: f64 = 1e-12;
/// Newton iterations allowed in one round (between fit updates).
pub const MAX_ITERATIONS: u32 = 30;
/// Rounds of "converge, let the fits follow, converge again".
pub(crate) const MAX_FIT_ROUNDS: u32 = 6;
/// Ordinary cycles run before the first Newton step, so the curve fits
/// have seen the currents of a real cycle.
pub(crate) const WARM_UP_CYCLES: u64 = 2;
/// Relative size of a forward-difference step (of the state's scale).
const FD_STEP: f64 = 1e-6;
/// Step cuts tried before a Newton round gives up.
const MAX_CUTS: u32 = 6;
/// Times a stalled Newton round is followed by a few ordinary cycles and
/// tried again.
const MAX_RESTARTS: u32 = 3;
/// Ordinary cycles run after a stalled Newton round.
const RESTART_CYCLES: u64 = 8;

/// What a successful shooting solve found.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Orbit {
    /// The state at a turn-on on the orbit; the engine is left there.
    pub state: [f64; N_STATES],
    /// Newton iterations (Jacobian solves) in all rounds.
    pub iterations: u32,
    /// Cycles run, including warm-up, trial steps, difference cycles and
    /// the fit checks.
    pub cycle_evaluations: u64,
    /// Final scaled residual `max |P(x) − x| / scale`.
    pub residual: f64,
    /// Largest Floquet multiplier magnitude (the contraction per cycle).
    pub largest_multiplier: f64,
    /// Whether any iteration used the difference Jacobian.
    pub used_differences: bool,
}

/// Why shooting gave up; the caller falls back to cycling.
#[derive(Debug, Clone)]
pub struct NoOrbit {
    /// What went wrong, in words for the report.
    pub reason: String,
    /// Cycles spent before giving up.
    pub cycle_evaluations: u64,
    /// Newton iterations before giving up.
    pub iterations: u32,
    /// The best state found (smallest residual), at a turn-on.
    pub best_state: [f64; N_STATES],
    /// Set when the scenario's cycle or simulated-time cap was reached: the
    /// run must stop with this error rather than fall back.
    pub limit: Option<Box<SimError>>,
}

/// The scenario's caps on cycles and simulated time.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Limits {
    /// Most cycles, all evaluations together.
    pub max_cycles: u64,
    /// Most simulated time, s.
    pub max_time_s: f64,
}

/// One evaluation of the cycle map.
struct Eval {
    px: [f64; N_STATES],
    jac: Option<Matrix3<f64>>,
    residual: f64,
}

struct Solver<'a, E: CycleMap> {
    e: &'a mut E,
    scale: [f64; N_STATES],
    active: [bool; N_STATES],
    /// Where a turn-on state can lie: `i_L ≥ 0` (the diode blocks reverse
    /// current while the switch is off) and capacitor voltages between 0
    /// and 1.5x the supply.
    bounds: [(f64, f64); N_STATES],
    source: JacobianSource,
    evaluations: u64,
    iterations: u32,
    used_differences: bool,
    best: ([f64; N_STATES], f64),
    limits: Limits,
    /// The cap that was reached, if any.
    hit: Option<SimError>,
}

impl<E: CycleMap> Solver<'_, E> {
    /// `P(x)` (and the analytic `J` when asked), from a fresh turn-on at `x`.
    fn eval(&mut self, x: [f64; N_STATES], want_jac: bool) -> Result<Eval, SimError> {
        self.e.restart_at_turn_on(x);
        self.count_cycle()?;
        let jac = if want_jac {
            self.e.cycle_with_jacobian()?
        } else {
            self.e.cycle()?;
            None
        };
        let px = self.e.state_array();
        let residual = scaled_change(&px, &x, &self.scale);
        if !residual.is_finite() {
            return Err(SimError::NonFinite {
                time_s: self.e.time_s(),
                topology: self.e.topology(),
                state: px.to_vec(),
            });
        }
        if residual < self.best.1 {
            self.best = (x, residual);
        }
        Ok(Eval { px, jac, residual })
    }

    /// Forward-difference Jacobian at `x` with `P(x)` known.
    fn differences(
        &mut self,
        x: [f64; N_STATES],
        px: &[f64; N_STATES],
    ) -> Result<Matrix3<f64>, SimError> {
        self.used_differences = true;
        let mut j = Matrix3::zeros();
        for c in 0..N_STATES {
            if !self.active[c] {
                continue;
            }
            let h = FD_STEP * self.scale[c];
            let mut xp = x;
            xp[c] += h;
            let ev = self.eval(xp, false)?;
            for r in 0..N_STATES {
                j[(r, c)] = (ev.px[r] - px[r]) / h;
            }
        }
        Ok(j)
    }

    /// Newton from `x` with the fits frozen; returns the fixed point, its
    /// residual and the Jacobian there.
    fn newton(
        &mut self,
        mut x: [f64; N_STATES],
    ) -> Result<([f64; N_STATES], f64, Matrix3<f64>), String> {
        let analytic = self.source == JacobianSource::Analytic;
        let mut ev = self
            .eval(x, analytic)
            .map_err(|e| format!("the first trial cycle failed: {e}"))?;
        for _ in 0..MAX_ITERATIONS {
            let jac = match ev.jac {
                Some(j) => j,
                None => self
                    .differences(x, &ev.px)
                    .map_err(|e| format!("a difference cycle failed: {e}"))?,
            };
            if ev.residual <= RESIDUAL_TARGET {
                return Ok((x, ev.residual, jac));
            }
            self.iterations += 1;
            let r = nalgebra::Vector3::from(std::array::from_fn(|i| ev.px[i] - x[i]));
            let a = jac - Matrix3::identity();
            let Some(step) = a.lu().solve(&(-r)) else {
                return Err("the cycle map's Jacobian minus one is singular".into());
            };
            // Cut the step back until the residual falls.
            let mut lambda = 1.0;
            let mut accepted = None;
            for _ in 0..=MAX_CUTS {
                let trial: [f64; N_STATES] = std::array::from_fn(|i| {
                    if self.active[i] {
                        (x[i] + lambda * step[i]).clamp(self.bounds[i].0, self.bounds[i].1)
                    } else {
                        x[i]
                    }
                });
                match self.eval(trial, analytic) {
                    Ok(t) if t.residual < ev.residual || t.residual <= RESIDUAL_TARGET => {
                        accepted = Some((trial, t));
                        break;
                    }
                    _ => lambda *= 0.25,
                }
            }
            match accepted {
                Some((t, e)) => {
                    x = t;
                    ev = e;
                }
                None => {
                    // Round-off floor: no step improves a residual already
                    // far below any tolerance in use.
                    if ev.residual <= 1e3 * RESIDUAL_TARGET {
                        return Ok((x, ev.residual, jac));
                    }
                    return Err(format!(
                        "Newton stalled at a scaled residual of {:.2e}",
                        ev.residual
                    ));
                }
            }
        }
        Err(format!(
            "Newton did not converge in {MAX_ITERATIONS} iterations (scaled residual {:.2e})",
            ev.residual
        ))
    }
}

impl<E: CycleMap> Solver<'_, E> {
    /// Counts one cycle against the caps; past them, records the error
    /// the run must end with.
    fn count_cycle(&mut self) -> Result<(), SimError> {
        if self.hit.is_none() {
            if self.evaluations >= self.limits.max_cycles {
                self.hit = Some(SimError::NoSteadyState {
                    cycles: self.evaluations,
                    time_s: self.e.time_s(),
                    last_change: self.best.1,
                    tolerance: RESIDUAL_TARGET,
                    contraction: f64::NAN,
                });
            } else if self.e.time_s() >= self.limits.max_time_s {
                self.hit = Some(SimError::TimeLimit {
                    cycles: self.evaluations,
                    limit_s: self.limits.max_time_s,
                });
            }
        }
        match &self.hit {
            Some(e) => Err(e.clone()),
            None => {
                self.evaluations += 1;
                Ok(())
            }
        }
    }

    /// One ordinary cycle from where the engine is.
    fn plain_cycle(&mut self) -> Result<(), SimError> {
        self.count_cycle()?;
        self.e.cycle()
    }
}

/// Largest eigenvalue magnitude of the active block of `j`.
fn largest_multiplier(j: &Matrix3<f64>) -> f64 {
    j.complex_eigenvalues()
        .iter()
        .map(|l| l.norm())
        .fold(0.0, f64::max)
}

/// Finds the period-one orbit of the engine's circuit by shooting,
/// starting from the engine's present state (at a turn-on). On success
/// the engine is left at a turn-on on the orbit with its fits frozen; on
/// failure it is left at a turn-on at the best state found, fits free.
pub fn find_orbit<E: CycleMap>(
    e: &mut E,
    scale: [f64; N_STATES],
    source: JacobianSource,
    limits: Limits,
) -> Result<Orbit, NoOrbit> {
    let active = e.active_states();
    let v_max = 1.5 * e.supply_v();
    let start = e.state_array();
    let mut s = Solver {
        e,
        scale,
        active,
        bounds: [(0.0, f64::INFINITY), (0.0, v_max), (0.0, v_max)],
        source,
        evaluations: 0,
        iterations: 0,
        used_differences: false,
        best: (start, f64::INFINITY),
        limits,
        hit: None,
    };
    let result = solve(&mut s);
    match result {
        Ok(orbit) => Ok(orbit),
        Err(reason) => {
            let best_state = s.best.0;
            s.e.set_fits_frozen(false);
            s.e.restart_at_turn_on(best_state);
            Err(NoOrbit {
                reason,
                cycle_evaluations: s.evaluations,
                iterations: s.iterations,
                best_state,
                limit: s.hit.map(Box::new),
            })
        }
    }
}

fn solve<E: CycleMap>(s: &mut Solver<'_, E>) -> Result<Orbit, String> {
    s.e.set_fits_frozen(false);
    for _ in 0..WARM_UP_CYCLES {
        s.plain_cycle()
            .map_err(|e| format!("a warm-up cycle failed: {e}"))?;
    }
    let mut x = s.e.state_array();
    let mut restarts = 0;
    for _ in 0..MAX_FIT_ROUNDS + MAX_RESTARTS {
        s.e.set_fits_frozen(true);
        let (xs, residual, jac) = match s.newton(x) {
            Ok(found) => found,
            Err(_) if restarts < MAX_RESTARTS => {
                // Far from the orbit the cycle map bends too much for
                // Newton (an LED that only starts to conduct part-way, say):
                // let a few ordinary cycles bring the state closer.
                restarts += 1;
                s.e.set_fits_frozen(false);
                s.e.restart_at_turn_on(s.best.0);
                for _ in 0..RESTART_CYCLES {
                    s.plain_cycle()
                        .map_err(|e| format!("a cycle after a stalled Newton round failed: {e}"))?;
                }
                s.best = (s.e.state_array(), f64::INFINITY);
                x = s.e.state_array();
                continue;
            }
            Err(why) => return Err(why),
        };
        let multiplier = largest_multiplier(&jac);
        // Let the fits follow the orbit for one ordinary cycle.
        s.e.set_fits_frozen(false);
        let refits = s.e.refits();
        let check = s
            .eval(xs, false)
            .map_err(|e| format!("a cycle on the orbit failed: {e}"))?;
        if s.e.refits() == refits {
            if multiplier >= 1.0 {
                return Err(format!(
                    "the period-one orbit is unstable (Floquet multiplier {multiplier:.4}); \
                     the circuit settles elsewhere"
                ));
            }
            // The engine now sits at P(x*), a turn-on on the orbit.
            s.e.set_fits_frozen(true);
            return Ok(Orbit {
                state: check.px,
                iterations: s.iterations,
                cycle_evaluations: s.evaluations,
                residual: residual.max(check.residual),
                largest_multiplier: multiplier,
                used_differences: s.used_differences,
            });
        }
        x = check.px;
    }
    Err(format!(
        "the curve fits kept changing after {MAX_FIT_ROUNDS} rounds"
    ))
}

/// A starting point for shooting from the averaged (DC) behaviour of the
/// design, so Newton starts with the LEDs lit rather than from discharged
/// capacitors: the inductor's average current from the controller's
/// thresholds (constant off-time: the peak less half the off-time ramp
/// `(V_out + V_d)·t_off / L`, iterated; hysteretic: the middle of the
/// band), the output capacitor at the load's voltage there, the input
/// capacitor at the supply less the source resistance's drop, and the
/// turn-on current at the valley. `None` for the open-loop controller,
/// whose current the duty cycle does not pin down.
pub fn averaged_guess(s: &Scenario, c: &Circuit) -> Option<[f64; N_STATES]> {
    let (i_avg, i_valley) = match s.controller {
        ControllerSpec::ConstantOffTime {
            peak_current_a,
            off_time_s,
            ..
        } => {
            let mut i_avg = peak_current_a;
            let mut valley = 0.0;
            for _ in 0..4 {
                let v_off = c.led.voltage_v(i_avg)
                    + c.diode.voltage_v(i_avg)
                    + (c.el.dcr_ohm + c.el.sense_string_ohm) * i_avg;
                let ripple = v_off * off_time_s / c.el.inductance_h;
                valley = (peak_current_a - ripple).max(0.0);
                i_avg = if ripple < peak_current_a {
                    peak_current_a - 0.5 * ripple
                } else {
                    // DCM: about half the peak while current flows.
                    0.5 * peak_current_a
                };
            }
            (i_avg, valley)
        }
        ControllerSpec::Hysteretic {
            upper_current_a,
            lower_current_a,
            ..
        } => (
            0.5 * (upper_current_a + lower_current_a),
            lower_current_a.max(0.0),
        ),
        ControllerSpec::FixedDuty { .. } => return None,
    };
    let v_out = c.led.voltage_v(i_avg);
    let v_d = c.diode.voltage_v(i_avg);
    let duty = ((v_out + v_d) / (c.el.supply_v + v_d)).clamp(0.0, 1.0);
    let v_in = (c.el.supply_v - c.el.source_ohm * duty * i_avg).max(0.0);
    let guess = [
        i_valley,
        if c.el.output_cap.is_some() {
            v_out
        } else {
            0.0
        },
        if c.el.input_cap.is_some() { v_in } else { 0.0 },
    ];
    guess.iter().all(|v| v.is_finite()).then_some(guess)
}
