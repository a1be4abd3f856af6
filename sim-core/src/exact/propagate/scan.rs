//! Event location on the closed-form trajectory of one region: the first
//! upward zero crossing of any of a few affine event functions, found by a
//! forward scan with predicted steps, a Hermite double-crossing guard and
//! bracketed Newton refinement.

use super::*;

/// An affine function of the state whose upward zero crossing is an event.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct EventFn {
    /// `h(z) = row · z`; the event fires when h rises through zero.
    pub row: Row,
    /// `row · M`, the first time-derivative row.
    pub drow: Row,
    /// `row · M²`, the second time-derivative row.
    pub d2row: Row,
}

impl EventFn {
    /// An event for `row · z` rising through zero in a region with matrix `m`.
    pub fn new(row: Row, m: &AugMatrix) -> EventFn {
        let drow = row * m;
        EventFn {
            row,
            drow,
            d2row: drow * m,
        }
    }
    /// Value at z.
    #[inline]
    pub fn value(&self, z: &Aug) -> f64 {
        dot4(&self.row, z)
    }
    /// Time derivative at z.
    #[inline]
    pub fn slope(&self, z: &Aug) -> f64 {
        dot4(&self.drow, z)
    }
    /// Second time derivative at z.
    #[inline]
    pub fn curvature(&self, z: &Aug) -> f64 {
        dot4(&self.d2row, z)
    }
    /// Scale for "is this value zero": the size of the terms making it up.
    #[inline]
    pub fn magnitude(&self, z: &Aug) -> f64 {
        let (r, z) = (&self.row, z);
        (r[0] * z[0]).abs() + (r[1] * z[1]).abs() + (r[2] * z[2]).abs() + (r[3] * z[3]).abs()
    }
    /// Values within this of zero are zero to round-off.
    #[inline]
    fn zero_tol(&self, z: &Aug) -> f64 {
        16.0 * f64::EPSILON * self.magnitude(z)
    }
}

/// A remembered firing time is tried when it is within this fraction of
/// the start's second-order prediction (which is seen to err by up to about
/// 1 %, the remembered time by round-off once the orbit is periodic).
pub(super) const REMEMBERED_AGREEMENT: f64 = 0.05;

/// How far past a remembered firing time the first step aims, relative.
pub(super) const REMEMBERED_LATE: f64 = 5e-13;

/// A step aimed at a remembered firing time lands on its event when at
/// most this fraction of the step past it.
pub(super) const REMEMBERED_ACCEPT: f64 = 1e-12;

/// Prediction-led steps in one scan before it falls back to even steps.
pub(super) const PREDICTED_STEPS: u32 = 200;

/// A function within this many round-off units of zero has reached it (an
/// asymptotic approach or a grazing touch counts as the event).
pub(super) const TOUCH_ULPS: f64 = 1e4;

/// Most events watched at once.
pub const MAX_EVENTS: usize = 8;

/// Where the scan ended.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct ScanResult {
    /// Time from the interval start, s.
    pub t: f64,
    /// The event that fired, or `None` when the time limit was reached.
    pub event: Option<usize>,
    /// State at `t`.
    pub z: Aug,
    /// Where the next scan's first step should aim for the fired event
    /// (see [`ScanStart::last_fired`]): the remembered time when a step
    /// aimed at it landed on the event, else the event's zero estimated by
    /// a Newton step from `t` (`t` itself when no event fired).
    pub t_zero: f64,
}

/// Whether `h + d·τ + c·τ²/2` (with `h < 0`) reaches zero for some
/// `τ ∈ (0, bound]`: it is non-negative at `bound`, or it peaks inside at
/// a non-negative value (`c < 0`, vertex `−d/c < bound`, `d² ≥ 2ch`).
#[inline]
pub(super) fn may_reach_zero_within(h: f64, d: f64, c: f64, bound: f64) -> bool {
    h + bound * (d + 0.5 * c * bound) >= 0.0
        || (c < 0.0 && d > 0.0 && d < -c * bound && d * d >= 2.0 * c * h)
}

/// Smallest positive root of `h + d·τ + c·τ²/2` for `h < 0`, if any: the
/// second-order prediction of when the function reaches zero.
#[inline]
pub(super) fn predict_zero(h: f64, d: f64, c: f64) -> Option<f64> {
    let a = 0.5 * c;
    if a.abs() * h.abs() <= 1e-12 * d * d {
        // Effectively linear.
        return (d > 0.0).then(|| -h / d);
    }
    let disc = d * d - 4.0 * a * h;
    if disc < 0.0 {
        return None;
    }
    // Numerically stable roots of a·τ² + d·τ + h = 0 are q/a and h/q.
    // With h < 0 only one of them is wanted: for d ≥ 0, q < 0 and h/q is
    // the smaller positive root (q/a is negative, or the larger one when
    // a < 0); for d < 0, q > 0, h/q < 0 and q/a is the root when a > 0.
    let q = -0.5 * (d + d.signum() * disc.sqrt());
    let r = if d.is_sign_positive() { h / q } else { q / a };
    (r > 0.0 && r.is_finite()).then_some(r)
}

/// How [`first_event`] starts: whether an event already at zero ends it
/// at once, and when each event fired the last time this scan ran.
#[derive(Debug, Clone, Copy, Default)]
pub struct ScanStart<'a> {
    /// An event already due at the start ends the scan there (`t = 0`):
    /// the threshold (below) when it is at or above zero, any other event
    /// when above zero by more than round-off, or at zero to round-off and
    /// rising. The first due in slot order is reported.
    pub due: bool,
    /// The slot, if any, of a threshold that fires at exactly zero.
    pub threshold: Option<usize>,
    /// Per slot, the time from the start at which that event fired the
    /// last time (NaN: none). In a periodic orbit the same event fires at
    /// the same time cycle after cycle; a remembered time that agrees with
    /// this start's second-order prediction is tried first, aimed a hair
    /// late, so the first step usually lands on the event.
    pub last_fired: &'a [f64],
}

/// Whether event `ev`, at value `h` and slope `d`, is due at the start
/// (see [`ScanStart::due`]).
#[inline]
pub(super) fn due_at_start(ev: &EventFn, z: &Aug, h: f64, d: f64, threshold: bool) -> bool {
    if threshold {
        return h >= 0.0;
    }
    let rising = d > 0.0;
    if h <= 0.0 && !rising {
        // At or below zero and not rising: not due, whatever the round-off
        // scale (the common case; skips computing it).
        return false;
    }
    let tol = 1e-12 * ev.magnitude(z);
    h > tol || (h > -tol && rising)
}

/// Finds the first upward zero crossing of any event over `(0, t_limit]`
/// from `z0`, or reports reaching `t_limit` (`start` says whether an
/// event already at zero at the start ends it there, and when each event
/// fired the last time). `max_step` bounds the scan
/// step (a fraction of the fastest natural period).
///
/// Each step goes to the earliest second-order (Taylor) prediction of a
/// zero, so a nearly straight trajectory lands on its event in two or three
/// exponentials; a function that turns back inside a step is caught by a
/// cubic Hermite test and the step is halved.
pub fn first_event(
    flow: &Flow,
    z0: &Aug,
    events: &[EventFn],
    start: ScanStart,
    t_limit: f64,
    max_step: f64,
    work: &mut WorkCounts,
) -> ScanResult {
    let n = events.len();
    let mut t_a = 0.0;
    let mut z_a = *z0;
    let mut h_a = [0.0; MAX_EVENTS];
    let mut d_a = [0.0; MAX_EVENTS];
    for j in 0..n {
        h_a[j] = events[j].value(&z_a);
        d_a[j] = events[j].slope(&z_a);
    }
    if start.due {
        let due = (0..n).position(|j| {
            due_at_start(&events[j], &z_a, h_a[j], d_a[j], start.threshold == Some(j))
        });
        if due.is_some() {
            return ScanResult {
                t: 0.0,
                event: due,
                z: z_a,
                t_zero: 0.0,
            };
        }
    }
    // An event at zero to round-off and not due (falling: typically the
    // boundary a segment event just crossed, seen from the new segment)
    // counts as a hair below zero, so that dipping below and coming back
    // up inside the first step is still a crossing. Left at its round-off
    // value, a hair above zero, neither end of that step would be below
    // zero and the return would pass unseen (found on a capacitor's LED
    // current turning just past a chord boundary).
    for j in 0..n {
        if h_a[j] >= 0.0 && h_a[j] <= 1e-12 * events[j].magnitude(&z_a) {
            h_a[j] = -f64::MIN_POSITIVE;
        }
    }
    // Step cap after a suspected double crossing, and retries at this point.
    let mut cap = f64::INFINITY;
    let mut retries = 0u32;
    // The event and remembered time the first step aimed at, if it did.
    let mut aimed_at: Option<(usize, f64)> = None;
    // Steps taken; past PREDICTED_STEPS the predictions are ignored so a
    // function creeping towards zero cannot stall the scan (Zeno steps).
    let mut steps = 0u32;
    loop {
        steps += 1;
        let remaining = t_limit - t_a;
        if remaining <= 0.0 {
            return ScanResult {
                t: t_limit,
                event: None,
                z: z_a,
                t_zero: t_limit,
            };
        }
        let mut step = remaining.min(max_step).min(cap);
        if steps > PREDICTED_STEPS {
            // Fall back to even steps over what is left (the Hermite test
            // still catches a crossing inside one).
            step = step
                .min(remaining.max(t_a) / 64.0)
                .max(remaining.min(1e-12));
        }
        if steps <= PREDICTED_STEPS {
            // The largest step allowed, and the earliest remembered firing
            // time that agrees with its event's prediction.
            let allowed = step;
            let mut remembered = f64::INFINITY;
            let mut remembered_slot = usize::MAX;
            for j in 0..n {
                if h_a[j] < 0.0 {
                    let c = events[j].curvature(&z_a);
                    // Only a prediction inside the step can shorten it: test
                    // that first, without roots or divisions.
                    let bound = step * (1.0 + 1e-6) + 1e-18;
                    if !may_reach_zero_within(h_a[j], d_a[j], c, bound) {
                        continue;
                    }
                    if let Some(tau) = predict_zero(h_a[j], d_a[j], c) {
                        // Aim a hair past the prediction so a good one brackets.
                        step = step.min(tau * (1.0 + 1e-9) + 1e-18);
                        let last = start.last_fired.get(j).copied().unwrap_or(f64::NAN);
                        if steps == 1
                            && (last - tau).abs() <= REMEMBERED_AGREEMENT * tau
                            && last < remembered
                        {
                            remembered = last;
                            remembered_slot = j;
                        }
                    }
                }
            }
            // The remembered time, a hair late (so an unchanged orbit
            // brackets its event by about 1e-12 of the step), when no other
            // event is predicted clearly earlier and the step may be that long.
            let aim = remembered * (1.0 + REMEMBERED_LATE);
            if aim < allowed && aim <= step * (1.0 + REMEMBERED_AGREEMENT) {
                step = aim;
                aimed_at = Some((remembered_slot, remembered));
            }
        }
        // Whether this step aims at a remembered firing time (only the first
        // can; a retry after a suspected double crossing does not).
        let aimed = steps == 1 && aimed_at.is_some();
        let t_b = if step >= remaining {
            t_limit
        } else {
            t_a + step
        };
        let step = t_b - t_a;
        let z_b = flow.advance(step, &z_a, work);
        let mut h_b = [0.0; MAX_EVENTS];
        let mut d_b = [0.0; MAX_EVENTS];
        let mut best: Option<(f64, usize, Aug)> = None;
        for j in 0..n {
            h_b[j] = events[j].value(&z_b);
            d_b[j] = events[j].slope(&z_b);
            if h_a[j] < 0.0 && (h_b[j] >= 0.0 || h_b[j] >= -TOUCH_ULPS * events[j].zero_tol(&z_b)) {
                // Crossed. A step aimed a hair past a good prediction lands
                // within a few 1e-9 of the step after the root: accept it
                // there (the event time is then off by well under 1e-12 s).
                // A step aimed at a remembered time is accepted only within
                // 1e-12 of the step (as refinement ends): what was remembered
                // must not move the result by more.
                let late = if aimed {
                    REMEMBERED_ACCEPT * step
                } else {
                    4e-9 * step + 1e-16
                };
                let close = h_b[j] <= events[j].zero_tol(&z_b) || h_b[j] <= d_b[j] * late;
                let (tau, z) = if close {
                    (step, z_b)
                } else {
                    refine(flow, &z_a, &events[j], step, &z_b, work)
                };
                if best.is_none_or(|b| tau < b.0) {
                    best = Some((tau, j, z));
                }
            }
        }
        if let Some((tau, j, z)) = best {
            let (h, d) = (events[j].value(&z), events[j].slope(&z));
            let hit = tau.to_bits() == step.to_bits() && h >= -events[j].zero_tol(&z);
            let t_zero = match aimed_at {
                // Landed where aimed, at zero to round-off or past it: the
                // remembered time still serves. (A fresh estimate from every
                // landing would carry the round-off of the state there into
                // the next aim, and drift.)
                Some((slot, last)) if aimed && slot == j && hit => last,
                // Else from the landing by a Newton step, either way: a
                // touch accepted just short of zero has its zero a hair
                // later, and the next aim should move there.
                _ if d > 0.0 => t_a + tau - (h / d).clamp(-tau, tau),
                _ => t_a + tau,
            };
            return ScanResult {
                t: t_a + tau,
                event: Some(j),
                z,
                t_zero,
            };
        }
        // No crossing at the step's ends: could one hide inside it?
        let suspicious = (0..n).any(|j| {
            h_a[j] < 0.0 && h_b[j] < 0.0 && hermite_may_cross(h_a[j], d_a[j], h_b[j], d_b[j], step)
        });
        if suspicious && retries < 12 && step > 1e-12 {
            retries += 1;
            cap = 0.5 * step;
            continue;
        }
        retries = 0;
        cap = f64::INFINITY;
        t_a = t_b;
        z_a = z_b;
        h_a = h_b;
        d_a = d_b;
    }
}

/// Whether the cubic Hermite interpolant of a negative-at-both-ends
/// function rises to zero inside the step.
pub(super) fn hermite_may_cross(h0: f64, d0: f64, h1: f64, d1: f64, step: f64) -> bool {
    if d0 <= 0.0 && d1 >= 0.0 {
        // Falling then rising: a minimum inside, no crossing from below.
        return false;
    }
    let (m0, m1) = (d0 * step, d1 * step);
    // The interpolant's Bernstein coefficients are h0, h0 + m0/3,
    // h1 − m1/3, h1, and it lies in their convex hull (G. Farin, *Curves
    // and Surfaces for CAGD*, 5th ed., the Bézier form of cubic Hermite
    // interpolation): all negative, it stays below zero. This settles the
    // common case, a function still rising towards its event, without
    // sampling.
    if h0 + m0 / 3.0 < 0.0 && h1 - m1 / 3.0 < 0.0 {
        return false;
    }
    // Its largest value inside: at a turning point, where the derivative
    // m0 + 2b·s + 3a·s² (the power form's coefficients below) is zero.
    let a = 2.0 * h0 + m0 - 2.0 * h1 + m1;
    let b = -3.0 * h0 - 2.0 * m0 + 3.0 * h1 - m1;
    let value = |s: f64| h0 + s * (m0 + s * (b + s * a));
    let inside = |s: f64| s > 0.0 && s < 1.0 && value(s) >= 0.0;
    if a == 0.0 {
        // A quadratic (or a line): one turning point, if any.
        return b != 0.0 && inside(-m0 / (2.0 * b));
    }
    let disc = b * b - 3.0 * a * m0;
    if disc < 0.0 {
        // Monotone: no turning point inside, and both ends are negative.
        return false;
    }
    let r = disc.sqrt();
    inside((-b + r) / (3.0 * a)) || inside((-b - r) / (3.0 * a))
}

/// Locates the crossing of `ev` in `(0, step]` given `h(0) < 0 < h(step)`
/// (state `z_step` at the end) by Newton steps kept inside the bracket;
/// returns the time and the state there, where |h| is at round-off.
pub(super) fn refine(
    flow: &Flow,
    z0: &Aug,
    ev: &EventFn,
    step: f64,
    z_step: &Aug,
    work: &mut WorkCounts,
) -> (f64, Aug) {
    let mut lo = 0.0;
    let mut hi = step;
    let mut h_lo = ev.value(z0);
    let mut z_hi = *z_step;
    let mut h_hi = ev.value(z_step);
    // Halley's step from the bracket end nearer the root (the curvature is
    // at hand), aimed a hair late so it lands just past the root: one
    // evaluation then usually ends the search (accepted below when at most
    // 1e-12 of the step late).
    let mut t = {
        let d = ev.slope(z_step);
        let c = ev.curvature(z_step);
        let denom = d * d - 0.5 * h_hi * c;
        let delta = if denom > 0.0 {
            h_hi * d / denom
        } else {
            h_hi / d
        };
        let guess = hi - delta + (1e-9 * delta.abs() + 1e-13 * step).min(0.5 * delta.abs());
        if d > 0.0 && guess > lo && guess < hi {
            guess
        } else {
            lo + (hi - lo) * (-h_lo) / (h_hi - h_lo)
        }
    };
    let late = 1e-12 * step;
    // Which bracket end the last evaluation replaced (+1 the upper, −1 the
    // lower): when the same end is replaced twice in a row the function's
    // value at the end kept is halved for the false-position step
    // (the Illinois modification; Dowell & Jarratt, BIT 11, 1971), so a
    // bracket with one flat end — an exponential settled to its asymptote
    // long before a whole-interval step ends — still closes superlinearly
    // instead of creeping a few per cent an evaluation.
    let mut replaced = 0i8;
    for _ in 0..60 {
        if hi - lo <= EVENT_TIME_TOL_S * 1e-1 {
            break;
        }
        if !(t > lo && t < hi) {
            t = 0.5 * (lo + hi);
        }
        let z = flow.advance(t, z0, work);
        let h = ev.value(&z);
        if h.abs() <= ev.zero_tol(&z) || (h >= 0.0 && h <= ev.slope(&z) * late) {
            return (t, z);
        }
        if h > 0.0 {
            hi = t;
            z_hi = z;
            h_hi = h;
            if replaced == 1 {
                h_lo *= 0.5;
            }
            replaced = 1;
        } else {
            lo = t;
            h_lo = h;
            if replaced == -1 {
                h_hi *= 0.5;
            }
            replaced = -1;
        }
        let d = ev.slope(&z);
        let newton = t - h / d;
        t = if d != 0.0 && newton > lo && newton < hi {
            newton
        } else {
            lo + (hi - lo) * (-h_lo) / (h_hi - h_lo)
        };
    }
    (hi, z_hi)
}
