//! Event location and extremes on the reference engine's integrated
//! intervals: the integration of one interval with its event bracketing,
//! the Illinois refinement of a crossing on the dense output, and the
//! golden-section refinement of interior extremes.

use super::*;

impl ReferenceEngine {
    /// Integrates from the present state for at most `tau_end` (scaled),
    /// stopping at the first event.
    pub(super) fn integrate(
        &mut self,
        events: &[Event],
        tau_end: f64,
    ) -> Result<Segment, SimError> {
        let ctx = self.ctx;
        let mode = self.mode;
        let y0 = self.scaled_state();
        let mut prev = [0.0; MAX_EVENTS];
        for (j, ev) in events.iter().enumerate() {
            prev[j] = ctx.value(ev, mode, &y0);
        }
        let rhs = Rhs {
            ctx: &ctx,
            mode,
            events,
            prev,
        };
        let mut dense = ContinuousOutputModel::default();
        // Default step control (safety 0.9, β 0.04, step ratio 0.2..10),
        // stiffness detection off: the circuit is stiff only transiently,
        // near zero LED or diode current where the exponential curve's
        // slope n·Vt/(Is + i) is huge, and there stability bounds the step
        // while the current grows (or decays to the floor) geometrically fast.
        let mut stepper = Dopri5::from_param(
            rhs,
            0.0,
            tau_end,
            tau_end,
            y0,
            RTOL,
            ATOL,
            0.9,
            0.04,
            0.2,
            10.0,
            tau_end,
            0.0,
            MAX_STEPS_PER_INTERVAL,
            u32::MAX,
            OutputType::Continuous,
        );
        let res = stepper.integrate_with_continuous_output_model(&mut dense);
        let stats = res.map_err(|e| SimError::Integrator {
            time_s: self.t
                + ctx.t_s
                    * match e {
                        IntegrationError::MaxNumStepReached { x, .. }
                        | IntegrationError::StepSizeUnderflow { x }
                        | IntegrationError::StiffnessDetected { x } => x,
                    },
            reason: format!(
                "{e} (topology {}, time in units of {:.3e} s)",
                mode.name(),
                ctx.t_s
            ),
        })?;
        self.steps += u64::from(stats.accepted_steps);
        let xs = stepper.x_out();
        let ys = stepper.y_out();
        let mut points: Vec<(f64, Y)> = Vec::with_capacity(xs.len() + 1);
        points.push((0.0, y0));
        points.extend(xs.iter().copied().zip(ys.iter().copied()));
        let n = points.len();
        if n < 2 {
            return Err(SimError::Integrator {
                time_s: self.t,
                reason: "no step was taken".into(),
            });
        }
        // The last step holds any crossing (solout stops right after it).
        let (ta, ya) = points[n - 2];
        let (tb, yb) = points[n - 1];
        let mut best: Option<(usize, f64)> = None;
        for (j, ev) in events.iter().enumerate() {
            let ga = ctx.value(ev, mode, &ya);
            let gb = ctx.value(ev, mode, &yb);
            if gb > 0.0 && ga <= 0.0 {
                let tr = locate(&ctx, ev, mode, &dense, ta, ga, tb, gb, &yb);
                if !matches!(best, Some((_, t)) if t <= tr) {
                    best = Some((j, tr));
                }
            }
        }
        let (tau, y, fired) = match best {
            Some((j, tr)) => {
                let y = dense_at(&dense, tr, &yb);
                points.retain(|p| p.0 < tr);
                points.push((tr, y));
                (tr, y, Some(j))
            }
            None => {
                let last = points.len() - 1;
                points[last].0 = tau_end;
                (tau_end, yb, None)
            }
        };
        Ok(Segment {
            tau,
            y,
            fired,
            points,
            dense,
        })
    }
}

/// The dense output at a scaled time (or `fallback` outside its range).
pub(super) fn dense_at(dense: &ContinuousOutputModel<f64, Y>, tau: f64, fallback: &Y) -> Y {
    dense.evaluate(tau).unwrap_or(*fallback)
}

/// Locates the crossing of an event function in `[ta, tb]` (g(ta) ≤ 0 <
/// g(tb)) on the dense output with the Illinois variant of regula falsi;
/// returns the time on the positive side of the final bracket, iterated
/// until the bracket cannot shrink in f64 (far below 1e-12 s).
#[allow(clippy::too_many_arguments)]
pub(super) fn locate(
    ctx: &Ctx,
    ev: &Event,
    mode: Mode,
    dense: &ContinuousOutputModel<f64, Y>,
    mut ta: f64,
    mut ga: f64,
    mut tb: f64,
    mut gb: f64,
    fallback: &Y,
) -> f64 {
    // Iterate to the resolution of f64 (Illinois converges superlinearly,
    // so this costs a few evaluations more than a fixed tolerance); the
    // cycle-start state then repeats to round-off in steady state.
    let mut side = 0i8;
    for _ in 0..200 {
        let tc = (ta * gb - tb * ga) / (gb - ga);
        let tc = if tc > ta && tc < tb {
            tc
        } else {
            0.5 * (ta + tb)
        };
        if tc <= ta || tc >= tb {
            break;
        }
        let gc = ctx.value(ev, mode, &dense_at(dense, tc, fallback));
        if gc > 0.0 {
            tb = tc;
            gb = gc;
            if side == 1 {
                ga *= 0.5;
            }
            side = 1;
        } else {
            ta = tc;
            ga = gc;
            if side == -1 {
                gb *= 0.5;
            }
            side = -1;
        }
    }
    tb
}

/// Largest (or smallest) value of a signal over an interval: the sampled
/// extreme at the accepted steps, refined by golden-section search on the
/// dense output over the two steps around it when it lies inside.
pub(super) fn extreme(
    points: &[(f64, Y)],
    sigs: &[Sig],
    f: fn(&Sig) -> f64,
    maximize: bool,
    at: &dyn Fn(f64) -> Sig,
    t_s: f64,
) -> f64 {
    let sgn = if maximize { 1.0 } else { -1.0 };
    let mut k = 0;
    let mut best = f64::NEG_INFINITY;
    for (j, s) in sigs.iter().enumerate() {
        let v = sgn * f(s);
        if v > best {
            best = v;
            k = j;
        }
    }
    if k > 0 && k + 1 < points.len() {
        let (mut a, mut b) = (points[k - 1].0, points[k + 1].0);
        let g = |tau: f64| sgn * f(&at(tau));
        let r = 0.5 * (5f64.sqrt() - 1.0);
        let mut c = b - r * (b - a);
        let mut d = a + r * (b - a);
        let (mut fc, mut fd) = (g(c), g(d));
        let tol = EXTREME_TIME_TOL_S / t_s;
        for _ in 0..80 {
            if b - a <= tol {
                break;
            }
            if fc > fd {
                b = d;
                d = c;
                fd = fc;
                c = b - r * (b - a);
                fc = g(c);
            } else {
                a = c;
                c = d;
                fc = fd;
                d = a + r * (b - a);
                fd = g(d);
            }
        }
        best = best.max(fc).max(fd);
    }
    sgn * best
}
