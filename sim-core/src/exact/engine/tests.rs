//! Unit tests of the exact engine's event handling and caching.

use super::*;
use crate::scenario::template;

/// Builds an event `±i_L + c` on a toy region matrix.
fn il_event(sign: f64, c: f64, m: &AugMatrix) -> EventFn {
    let mut row = Row::zeros();
    row[X_IL] = sign;
    row[X_ONE] = c;
    EventFn::new(row, m)
}

#[test]
fn an_event_another_always_precedes_is_dropped() {
    let mut m = AugMatrix::zeros();
    m[(X_IL, X_IL)] = -1e3;
    m[(X_IL, X_ONE)] = 5e3;
    m[(X_VCIN, X_IL)] = 2.0;
    let mut evs = [EventFn::new(Row::zeros(), &m); MAX_EVENTS];
    let mut acts = [Action::Controller; MAX_EVENTS];
    // Falling to 0 A (Block), falling to 0.2 A (LedDown), rising to
    // 0.5 A (LedUp), a second falling one tying LedDown (DiodeDown), and
    // one on another state (kept whatever its constant).
    evs[1] = il_event(-1.0, 0.0, &m);
    evs[2] = il_event(-1.0, 0.2, &m);
    evs[3] = il_event(1.0, -0.5, &m);
    evs[4] = il_event(-1.0, 0.2, &m);
    let mut other = Row::zeros();
    other[X_VCIN] = 1.0;
    other[X_ONE] = -100.0;
    evs[5] = EventFn::new(other, &m);
    acts[1..6].copy_from_slice(&[
        Action::Block,
        Action::LedDown,
        Action::LedUp,
        Action::DiodeDown,
        Action::SatUp,
    ]);
    let n = drop_dominated(&mut evs, &mut acts, 6);
    assert_eq!(n, 4);
    assert!(matches!(
        acts[..n],
        [
            Action::Controller,
            Action::LedDown,
            Action::LedUp,
            Action::SatUp
        ]
    ));
    assert_eq!(evs[3].row, other);
}

/// Remembered event times change the cycles by no more than their
/// acceptance window (1e-12 of a step in event time) and save
/// exponentials: the same designs run side by side with and without.
#[test]
fn remembered_event_times_save_work_and_change_nothing() {
    let mut hyst = template();
    hyst.controller = crate::scenario::ControllerSpec::Hysteretic {
        upper_current_a: 0.8,
        lower_current_a: 0.6,
        turn_off_delay_s: 60e-9,
        turn_on_delay_s: 60e-9,
    };
    for mut s in [template(), hyst] {
        // The 1 mV fit: at the 0.5 mV default a chord boundary of the
        // hysteretic variant lies within round-off of a turning point
        // during the start-up, where a step landing 1e-12 late sees a
        // touch of it the other does not (4 intervals more in 400
        // cycles); that is the touch's own sensitivity, not the
        // remembered times'.
        s.simulation.curve_tolerance_v = 1e-3;
        let mut with = ExactEngine::new(&s);
        let mut without = ExactEngine::new(&s);
        without.remember_event_times = false;
        let scale = [1.0, 1.0, s.supply.voltage_v];
        let mut worst: f64 = 0.0;
        for k in 0..400 {
            if k == 200 {
                with.work = WorkCounts::default();
                without.work = WorkCounts::default();
            }
            with.run_cycle(None, None).expect("cycle");
            without.run_cycle(None, None).expect("cycle");
            let (a, b) = (with.state_array(), without.state_array());
            for i in 0..N_STATES {
                worst = worst.max(((a[i] - b[i]) / scale[i]).abs());
            }
        }
        // Each event lands at most 1e-12 of its step late, which moves
        // the state by about 1e-13 of its scale.
        assert!(worst <= 1e-12, "{}: states differ by {worst:.1e}", s.name);
        // Each event at most 1e-12 of its step late: the clocks agree
        // to that share of the time run.
        let dt = (with.t - without.t).abs();
        assert!(
            dt <= 1e-12 * with.t,
            "{}: times differ by {dt:.1e} s",
            s.name
        );
        assert_eq!(with.intervals, without.intervals, "{}", s.name);
        let (a, b) = (with.work.exponentials, without.work.exponentials);
        assert!(
            2 * a < b,
            "{}: {a} exponentials remembering, {b} not",
            s.name
        );
    }
}

/// In every region the template's cycles visit, an event marked as the
/// threshold's partner sits in the last slot (so the scan can be
/// shortened past it) and watches the inductor current itself.
#[test]
fn the_watch_partner_sits_last_on_the_watched_current() {
    let s = template();
    let mut e = ExactEngine::new(&s);
    for _ in 0..50 {
        e.run_cycle(None, None).expect("cycle");
    }
    let mut checked = 0;
    for entry in e.cache.iter().flatten() {
        let set = &entry.events;
        if set.watch_partner != 0 {
            checked += 1;
            assert_eq!(set.watch_partner, set.n - 1);
            let mut probe = set.il_event;
            if !set.evs[set.n - 1].row[X_IL].is_sign_positive() {
                probe.row = -probe.row;
            }
            assert!(same_state_part(&set.evs[set.n - 1], &probe));
        }
    }
    assert!(checked > 0, "no region had a partner event");
}
