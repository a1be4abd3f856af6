//! Periodic steady-state detection by brute-force cycling.
//!
//! The state at each turn-on instant is compared with the one before. A
//! circuit that contracts slowly (an output filter settling by a few % per
//! cycle) changes little per cycle long before it has settled, so the
//! detector estimates the contraction ratio ρ from successive changes and
//! requires the projected remaining change δ·ρ/(1 − ρ) to be within the
//! tolerance as well as δ itself. Changes below [`ROUND_OFF_FLOOR`] count
//! as settled whatever ρ (they are round-off). An orbit that repeats every
//! k = 2..8 cycles but not every cycle is reported as subharmonic.

use crate::model::circuit::N_STATES;

/// Scaled changes this small are round-off, not transient.
pub const ROUND_OFF_FLOOR: f64 = 1e-12;
const HISTORY: usize = 10;
/// Longest subharmonic period looked for, cycles.
pub(crate) const MAX_SUBHARMONIC: usize = 8;

/// The largest per-state difference of two states, each in units of its
/// scale: the measure of "how far apart" every steady-state test uses.
pub(crate) fn scaled_change(
    a: &[f64; N_STATES],
    b: &[f64; N_STATES],
    scale: &[f64; N_STATES],
) -> f64 {
    (0..N_STATES)
        .map(|i| (a[i] - b[i]).abs() / scale[i])
        .fold(0.0, f64::max)
}

/// What the detector concluded after a cycle.
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum Verdict {
    /// Still settling.
    Settling,
    /// Periodic with the given period in switching cycles (1: ordinary).
    Settled {
        /// Cycles per repetition of the orbit.
        order: usize,
    },
}

/// Tracks cycle-start states.
#[derive(Debug, Clone)]
pub struct SteadyDetector {
    tol: f64,
    scale: [f64; N_STATES],
    history: [[f64; N_STATES]; HISTORY],
    len: usize,
    deltas: [f64; 5],
    n_deltas: usize,
    good: u32,
    sub_good: [u32; MAX_SUBHARMONIC + 1],
    /// Last scaled change.
    pub last_change: f64,
    /// Estimated contraction ratio per cycle.
    pub contraction: f64,
}

impl SteadyDetector {
    /// A detector with a tolerance and per-state scales (A, V, V).
    pub fn new(tol: f64, scale: [f64; N_STATES]) -> SteadyDetector {
        SteadyDetector {
            tol,
            scale,
            history: [[0.0; N_STATES]; HISTORY],
            len: 0,
            deltas: [0.0; 5],
            n_deltas: 0,
            good: 0,
            sub_good: [0; MAX_SUBHARMONIC + 1],
            last_change: f64::INFINITY,
            contraction: f64::NAN,
        }
    }

    fn change(&self, a: &[f64; N_STATES], b: &[f64; N_STATES]) -> f64 {
        scaled_change(a, b, &self.scale)
    }

    /// Adds the state at a cycle start and says whether it has settled.
    pub fn push(&mut self, x: [f64; N_STATES]) -> Verdict {
        self.history.copy_within(0..HISTORY - 1, 1);
        self.history[0] = x;
        self.len = (self.len + 1).min(HISTORY);
        if self.len < 2 {
            return Verdict::Settling;
        }
        let delta = self.change(&self.history[0], &self.history[1]);
        self.deltas.copy_within(0..4, 1);
        self.deltas[0] = delta;
        self.n_deltas = (self.n_deltas + 1).min(5);
        self.last_change = delta;
        // Contraction: the largest recent ratio of successive changes.
        let mut rho: f64 = 0.0;
        for k in 0..self.n_deltas.saturating_sub(1) {
            if self.deltas[k + 1] > 0.0 {
                rho = rho.max(self.deltas[k] / self.deltas[k + 1]);
            }
        }
        self.contraction = rho;
        let remaining = if rho < 1.0 {
            delta * rho / (1.0 - rho)
        } else {
            f64::INFINITY
        };
        let ok = delta <= ROUND_OFF_FLOOR
            || (delta <= self.tol && remaining <= self.tol && self.n_deltas >= 3);
        self.good = if ok { self.good + 1 } else { 0 };
        if self.good >= 2 {
            return Verdict::Settled { order: 1 };
        }
        // Subharmonic orbits: x_k = x_{k-m} for some m > 1 while x_k != x_{k-1}.
        if delta > 100.0 * self.tol {
            for m in 2..=MAX_SUBHARMONIC {
                if self.len > m {
                    let dm = self.change(&self.history[0], &self.history[m]);
                    self.sub_good[m] = if dm <= self.tol {
                        self.sub_good[m] + 1
                    } else {
                        0
                    };
                    if self.sub_good[m] > m as u32 {
                        return Verdict::Settled { order: m };
                    }
                }
            }
        }
        Verdict::Settling
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn slow_contraction_is_not_settled_early() {
        // x_k = 0.99^k: changes fall below 1e-9 long before x does.
        let mut d = SteadyDetector::new(1e-9, [1.0; 3]);
        let mut settled_at = None;
        for k in 0..5000 {
            let x = 0.99f64.powi(k);
            if let Verdict::Settled { .. } = d.push([x, 0.0, 0.0]) {
                settled_at = Some(k);
                break;
            }
        }
        let k = settled_at.expect("settles");
        let remaining = 0.99f64.powi(k);
        assert!(remaining <= 2e-9, "declared settled with {remaining} left");
    }

    #[test]
    fn period_two_orbit_is_found() {
        let mut d = SteadyDetector::new(1e-9, [1.0; 3]);
        let mut verdict = Verdict::Settling;
        for k in 0..50 {
            let x = if k % 2 == 0 { 1.0 } else { 0.5 };
            verdict = d.push([x, 0.0, 0.0]);
            if verdict != Verdict::Settling {
                break;
            }
        }
        assert_eq!(verdict, Verdict::Settled { order: 2 });
    }
}
