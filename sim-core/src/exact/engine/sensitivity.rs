//! Sensitivities of the cycle map (the Jacobian `∂x₁/∂x₀` shooting
//! uses), carried interval by interval through a cycle.

use super::*;

/// Sensitivities carried through one cycle for the cycle map's Jacobian:
/// `j = ∂x/∂x₀` and `tau = ∂t/∂x₀` (time since the cycle's turn-on), with
/// `deadline_tau` the time sensitivity of the controller's pending
/// deadline (that of the event that set it).
#[derive(Debug, Clone, Copy)]
pub(super) struct Sensitivity {
    pub(super) j: Matrix3<f64>,
    pub(super) tau: RowVector3<f64>,
    pub(super) deadline_tau: RowVector3<f64>,
    /// False once an event was met at a grazing angle (the map is not
    /// differentiable there).
    pub(super) valid: bool,
}

impl Sensitivity {
    pub(super) fn start() -> Sensitivity {
        Sensitivity {
            j: Matrix3::identity(),
            tau: RowVector3::zeros(),
            deadline_tau: RowVector3::zeros(),
            valid: true,
        }
    }
}

/// How an interval ended, for the sensitivities.
pub(super) enum End<'a> {
    /// A state function `row · z` reached zero.
    State(&'a Row),
    /// The controller's timer ran out.
    Deadline,
    /// Nothing happened over a zero-length interval.
    Immediate,
}

/// Carries the cycle-map sensitivities across one interval of length `dt`
/// ending in state `z1` (see [`ExactEngine::run_cycle_with_jacobian`]).
pub(super) fn propagate_sensitivity(
    sens: &mut Sensitivity,
    flow: &Flow,
    z1: &Aug,
    dt: f64,
    ended: End,
    work: &mut WorkCounts,
) {
    if dt > 0.0 {
        // Φ: the state block of the transition (the forcing column is not
        // needed for the sensitivities).
        let phi: Matrix3<f64> = flow
            .transition_matrix(dt, work)
            .fixed_view::<N_STATES, N_STATES>(0, 0)
            .into_owned();
        sens.j = phi * sens.j;
    }
    let fz = flow.m * z1;
    let f = Vector3::new(fz[0], fz[1], fz[2]);
    let shift = match ended {
        End::State(row) => {
            if dt == 0.0 {
                // Due at the start: fired by the previous event's state.
                return;
            }
            let g = RowVector3::new(row[0], row[1], row[2]);
            let rate = (g * f)[0];
            let size = g.abs().dot(&f.abs().transpose());
            if size == 0.0 || !rate.is_finite() || rate.abs() <= 1e-9 * size {
                sens.valid = false;
                return;
            }
            -(g * sens.j) / rate
        }
        End::Deadline => sens.deadline_tau - sens.tau,
        End::Immediate => return,
    };
    sens.j += f * shift;
    sens.tau += shift;
}
