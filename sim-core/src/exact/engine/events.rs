//! The exact engine's events: what each can do when it fires
//! ([`Action`]), each region's event functions built once per cached
//! region ([`EventSet`]), and the pruning of events that cannot come
//! first.

use super::*;

/// What an event does when it fires.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub(super) enum Action {
    Controller,
    DiodeOff,
    DiodeDown,
    DiodeUp,
    Block,
    Unblock,
    LedDown,
    LedUp,
    LedOff,
    LedOn,
    SatDown,
    SatUp,
}

impl Action {
    /// Why an interval ended by this action stopped (`threshold`: a
    /// controller action fired by its watched threshold, not its timer).
    pub(super) fn reason(self, threshold: bool) -> StopReason {
        use DeviceBoundary as D;
        match self {
            Action::Controller if threshold => StopReason::ControllerThreshold,
            Action::Controller => StopReason::ControllerTimer,
            Action::DiodeOff => StopReason::Device(D::DiodeCurrentZero),
            Action::DiodeDown | Action::DiodeUp => StopReason::Device(D::DiodeSegment),
            Action::Block => StopReason::Device(D::InductorBlocked),
            Action::Unblock => StopReason::Device(D::InductorUnblocked),
            Action::LedDown | Action::LedUp => StopReason::Device(D::LedSegment),
            Action::LedOff => StopReason::Device(D::LedOff),
            Action::LedOn => StopReason::Device(D::LedOn),
            Action::SatDown | Action::SatUp => StopReason::Device(D::InductanceSegment),
        }
    }
}

/// A region's own events (everything but the controller's threshold),
/// with slot 0 left for the threshold, and the inductor-current event the
/// threshold is made from. Built once per cached region.
#[derive(Debug, Clone, Copy)]
pub(super) struct EventSet {
    pub(super) evs: [EventFn; MAX_EVENTS],
    pub(super) acts: [Action; MAX_EVENTS],
    /// Slots in use, counting the reserved slot 0.
    pub(super) n: usize,
    /// The last slot when it holds an event on the inductor current in
    /// the direction a controller watches it in this region (rising while
    /// on, falling while off), else 0.
    pub(super) watch_partner: usize,
    /// `i_L` rising through zero.
    pub(super) il_event: EventFn,
    /// The LED current (its value and slope rows), for the visited range.
    pub(super) i_led: EventFn,
    /// Per slot, how long after its interval's start the event last fired
    /// (NaN: not yet), the first guess of the next scan.
    pub(super) last_fired: [f64; MAX_EVENTS],
    /// `(t, e^{M t})` for the last few timer lengths spent in this region
    /// (a fixed off-time, delay or blanking time: one region can see
    /// several), replaced oldest first.
    pub(super) timers: [Option<(f64, AugMatrix)>; TIMERS_PER_REGION],
    pub(super) timer_next: usize,
}

/// Timer lengths remembered per region.
pub(super) const TIMERS_PER_REGION: usize = 3;

pub(super) fn region_events(circuit: &Circuit, region: Region, lin: &Linear) -> EventSet {
    let one = {
        let mut r = Row::zeros();
        r[X_ONE] = 1.0;
        r
    };
    let il_row = lin.row(Signal::InductorCurrent);
    let i_led_row = lin.row(Signal::LedCurrent);
    let mut evs = [EventFn::new(Row::zeros(), &lin.m); MAX_EVENTS];
    let mut acts = [Action::Controller; MAX_EVENTS];
    let mut n = 1;
    let has_co = circuit.el.output_cap.is_some();
    let led = circuit.led;
    let diode = circuit.diode;
    if region.conducting {
        if !region.switch_on {
            ExactEngine::push_event(&mut evs, &mut acts, &mut n, -il_row, lin, Action::DiodeOff);
            let k = region.diode_segment as usize;
            if k > 0 {
                let row = one * diode.upper_a[k - 1] - il_row;
                ExactEngine::push_event(&mut evs, &mut acts, &mut n, row, lin, Action::DiodeDown);
            }
            if k + 1 < diode.segments {
                let row = il_row - one * diode.upper_a[k];
                ExactEngine::push_event(&mut evs, &mut acts, &mut n, row, lin, Action::DiodeUp);
            }
        } else if !has_co {
            ExactEngine::push_event(&mut evs, &mut acts, &mut n, -il_row, lin, Action::Block);
        }
    } else if region.switch_on && !has_co {
        let cond = Region {
            conducting: true,
            led_segment: Some(0),
            ..region
        };
        let lc = circuit.linearize(cond);
        let mut row = Row::zeros();
        for j in 0..4 {
            row[j] = lc.m[(X_IL, j)];
        }
        row[X_IL] = 0.0;
        ExactEngine::push_event(&mut evs, &mut acts, &mut n, row, lin, Action::Unblock);
    }
    // A saturating inductor: the current crossing a segment boundary.
    if let (Some(sat), true) = (circuit.el.saturation.as_ref(), region.conducting) {
        let k = region.l_segment as usize;
        if k > 0 {
            let row = one * sat.upper_a[k - 1] - il_row;
            ExactEngine::push_event(&mut evs, &mut acts, &mut n, row, lin, Action::SatDown);
        }
        if k + 1 < sat.segments {
            let row = il_row - one * sat.upper_a[k];
            ExactEngine::push_event(&mut evs, &mut acts, &mut n, row, lin, Action::SatUp);
        }
    }
    match (has_co, region.led_segment) {
        (false, Some(k)) if region.conducting => {
            let k = k as usize;
            if k > 0 {
                let row = one * led.upper_a[k - 1] - il_row;
                ExactEngine::push_event(&mut evs, &mut acts, &mut n, row, lin, Action::LedDown);
            }
            if k + 1 < led.segments {
                let row = il_row - one * led.upper_a[k];
                ExactEngine::push_event(&mut evs, &mut acts, &mut n, row, lin, Action::LedUp);
            }
        }
        (true, None) => {
            let row = lin.row(Signal::LedVoltage) - one * led.knee_v();
            ExactEngine::push_event(&mut evs, &mut acts, &mut n, row, lin, Action::LedOn);
        }
        (true, Some(k)) => {
            let k = k as usize;
            if k > 0 {
                let row = one * led.upper_a[k - 1] - i_led_row;
                ExactEngine::push_event(&mut evs, &mut acts, &mut n, row, lin, Action::LedDown);
            } else {
                ExactEngine::push_event(
                    &mut evs,
                    &mut acts,
                    &mut n,
                    -i_led_row,
                    lin,
                    Action::LedOff,
                );
            }
            if k + 1 < led.segments {
                let row = i_led_row - one * led.upper_a[k];
                ExactEngine::push_event(&mut evs, &mut acts, &mut n, row, lin, Action::LedUp);
            }
        }
        _ => {}
    }

    let n = drop_dominated(&mut evs, &mut acts, n);
    // The controller watches the inductor current rising while on and
    // falling while off: the region event on the same current in that
    // direction, if any, goes last, so the one of the two that cannot come
    // first can be left out of the scan by shortening it.
    let il_event = EventFn::new(il_row, &lin.m);
    let mut probe = il_event;
    if !region.switch_on {
        probe.row = -probe.row;
    }
    let mut watch_partner = 0;
    if let Some(p) = (1..n).find(|&k| same_state_part(&evs[k], &probe)) {
        evs[p..n].rotate_left(1);
        acts[p..n].rotate_left(1);
        watch_partner = n - 1;
    }
    EventSet {
        evs,
        acts,
        n,
        watch_partner,
        il_event,
        i_led: EventFn::new(i_led_row, &lin.m),
        last_fired: [f64::NAN; MAX_EVENTS],
        timers: [None; TIMERS_PER_REGION],
        timer_next: 0,
    }
}

/// The lowest and highest value of `f` over an interval of length `dt`
/// from `z0` to `z1`: the ends, and any turning point of the cubic
/// Hermite interpolant of the ends' values and slopes (exact to
/// O(dt⁴·f⁗), far inside the 5 % margin a fit adds to its range).
pub(super) fn span_estimate(f: &EventFn, z0: &Aug, z1: &Aug, dt: f64) -> (f64, f64) {
    let (a, b) = (f.value(z0), f.value(z1));
    let (mut lo, mut hi) = (a.min(b), a.max(b));
    let (sa, sb) = (f.slope(z0) * dt, f.slope(z1) * dt);
    if sa * sb >= 0.0 && (sa == 0.0 || (b - a) * sa > 0.0) {
        // Moving the same way at both ends and net that way: monotone
        // to this order (the usual interval), the ends are the extremes.
        return (lo, hi);
    }
    // p(s) on [0, 1]; p'(s) = qa·s² + qb·s + sa.
    let qa = 6.0 * (a - b) + 3.0 * (sa + sb);
    let qb = 6.0 * (b - a) - 4.0 * sa - 2.0 * sb;
    let p = |u: f64| {
        let (u2, u3) = (u * u, u * u * u);
        (2.0 * u3 - 3.0 * u2 + 1.0) * a
            + (u3 - 2.0 * u2 + u) * sa
            + (3.0 * u2 - 2.0 * u3) * b
            + (u3 - u2) * sb
    };
    let mut note = |u: f64| {
        if u > 0.0 && u < 1.0 {
            let v = p(u);
            lo = lo.min(v);
            hi = hi.max(v);
        }
    };
    if qa.abs() > 1e-12 * (qb.abs() + sa.abs()) {
        let disc = qb * qb - 4.0 * qa * sa;
        if disc >= 0.0 {
            let r = disc.sqrt();
            // The numerically stable pair of roots.
            let q = -0.5 * (qb + r.copysign(qb));
            if q != 0.0 {
                note(q / qa);
                note(sa / q);
            }
        }
    } else if qb != 0.0 {
        note(-sa / qb);
    }
    (lo, hi)
}

/// Whether two events watch the same state function, `h_a − h_b`
/// constant: their rows agree on every state column.
pub(super) fn same_state_part(a: &EventFn, b: &EventFn) -> bool {
    // `+ 0.0` makes a negative zero positive: `−0` and `0 − 0` agree.
    (0..N_STATES).all(|k| (a.row[k] + 0.0).to_bits() == (b.row[k] + 0.0).to_bits())
}

/// Drops the region events (slots `1..n`) that another one always
/// precedes, and returns the new count. Two events on the same state
/// function differ by a constant, `h_a = h_b + (c_a − c_b)`, so the one
/// with the larger constant reaches zero first (together, on a tie: the
/// earlier slot is kept, and the other is due at the start of the next
/// interval); e.g. below the top LED segment the inductor current falling
/// to the lower chord boundary always comes before it falling to zero.
pub(super) fn drop_dominated(
    evs: &mut [EventFn; MAX_EVENTS],
    acts: &mut [Action; MAX_EVENTS],
    n: usize,
) -> usize {
    let mut keep = [true; MAX_EVENTS];
    for a in 1..n {
        for b in 1..n {
            if a != b && keep[a] && keep[b] && same_state_part(&evs[a], &evs[b]) {
                let (ca, cb) = (evs[a].row[X_ONE], evs[b].row[X_ONE]);
                // `a` precedes `b`, or ties it from an earlier slot.
                if ca > cb || (ca.to_bits() == cb.to_bits() && a < b) {
                    keep[b] = false;
                }
            }
        }
    }
    let mut m = 1;
    for k in 1..n {
        if keep[k] {
            evs[m] = evs[k];
            acts[m] = acts[k];
            m += 1;
        }
    }
    m
}

impl ExactEngine {
    pub(super) fn push_event(
        evs: &mut [EventFn; MAX_EVENTS],
        acts: &mut [Action; MAX_EVENTS],
        n: &mut usize,
        row: Row,
        lin: &Linear,
        act: Action,
    ) {
        if *n < MAX_EVENTS {
            evs[*n] = EventFn::new(row, &lin.m);
            acts[*n] = act;
            *n += 1;
        }
    }
}
