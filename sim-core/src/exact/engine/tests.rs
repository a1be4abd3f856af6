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

/// Scenarios for the stepping tests: the starter design (constant
/// off-time with a delay), the one with every part (output capacitor,
/// saturating inductor), a hysteretic one and a deep-DCM one.
fn stepping_scenarios() -> Vec<Scenario> {
    let mut hyst = template();
    hyst.controller = crate::scenario::ControllerSpec::Hysteretic {
        lower_current_a: 0.5,
        upper_current_a: 0.8,
        turn_off_delay_s: 0.0,
        turn_on_delay_s: 0.0,
    };
    let mut dcm = template();
    if let crate::scenario::ControllerSpec::ConstantOffTime { off_time_s, .. } = &mut dcm.controller
    {
        *off_time_s = 20e-6;
    }
    vec![
        template(),
        crate::scenario::template_with_parts(),
        hyst,
        dcm,
    ]
}

/// Steps with no end time until `cycles` turn-ons; returns the reasons
/// seen in the last cycle.
fn step_cycles(e: &mut ExactEngine, cycles: usize) -> Vec<StopReason> {
    let mut last = Vec::new();
    for _ in 0..cycles {
        last.clear();
        loop {
            let step = e.step(f64::INFINITY).unwrap();
            last.push(step.reason);
            assert!(step.time_s.to_bits() == e.t.to_bits());
            if step.turned_on {
                assert!(step.switch_on);
                break;
            }
        }
    }
    last
}

#[test]
fn stepping_event_by_event_is_the_whole_cycle_to_the_bit() {
    for s in stepping_scenarios() {
        let mut stepped = ExactEngine::new(&s);
        let mut whole = ExactEngine::new(&s);
        for _ in 0..200 {
            whole.run_cycle(None, None).unwrap();
        }
        step_cycles(&mut stepped, 200);
        let bits = |e: &ExactEngine| e.state_array().map(f64::to_bits);
        assert_eq!(bits(&stepped), bits(&whole), "{}", s.name);
        assert_eq!(stepped.t.to_bits(), whole.t.to_bits(), "{}", s.name);
        assert_eq!(
            (stepped.cycles, stepped.intervals, stepped.refits),
            (whole.cycles, whole.intervals, whole.refits),
            "{}",
            s.name
        );
    }
}

#[test]
fn stepping_with_end_times_stops_there_and_rejoins_the_orbit() {
    for s in stepping_scenarios() {
        let mut cut = ExactEngine::new(&s);
        let mut whole = ExactEngine::new(&s);
        for _ in 0..300 {
            whole.run_cycle(None, None).unwrap();
        }
        // End times every 0.37 µs, off any event: most intervals are cut
        // once or more.
        let (mut turn_ons, mut ends, mut until) = (0, 0, 0.37e-6);
        while turn_ons < 300 {
            let step = cut.step(until).unwrap();
            match step.reason {
                StopReason::EndTime => {
                    ends += 1;
                    assert_eq!(step.time_s.to_bits(), until.to_bits());
                    until += 0.37e-6;
                }
                _ => assert!(step.time_s <= until),
            }
            if step.turned_on {
                turn_ons += 1;
            }
        }
        assert!(ends > 300, "{}: only {ends} end-time stops", s.name);
        // A stop at or before the present time moves nothing.
        let (x, t) = (cut.state_array(), cut.t);
        let step = cut.step(t).unwrap();
        assert_eq!(step.reason, StopReason::EndTime);
        assert_eq!(cut.state_array().map(f64::to_bits), x.map(f64::to_bits));
        assert!(cut.step(f64::NAN).unwrap().reason == StopReason::EndTime);
        // Cut intervals are advanced in pieces (e^{M a}·e^{M b} for
        // e^{M(a+b)}, equal to rounding), so the states agree to rounding
        // carried through a contracting orbit, not to the bit. The time
        // differs by where the events fall, each located to
        // EVENT_TIME_TOL_S (1e-14 s) on slightly different states: within
        // a hundred of those.
        let (a, b) = (cut.state_array(), whole.state_array());
        let scale = crate::model::seam::state_scales(&s);
        for k in 0..3 {
            assert!(
                (a[k] - b[k]).abs() <= 1e-9 * scale[k],
                "{}: state {k}: {} vs {}",
                s.name,
                a[k],
                b[k]
            );
        }
        assert!(
            (cut.t - whole.t).abs() <= 100.0 * crate::exact::propagate::EVENT_TIME_TOL_S,
            "{}: t {} vs {} ({:e})",
            s.name,
            cut.t,
            whole.t,
            cut.t - whole.t
        );
    }
}

#[test]
fn steps_say_why_they_stopped() {
    let s = stepping_scenarios();
    // Constant off-time with a turn-off delay: the peak threshold (switch
    // still on, delay timer set), the delay's end (off), the off-time's
    // end (on), in that order each cycle.
    // Between them the exponential string's current crosses the
    // boundaries of its fitted chords, as often up as down in a periodic
    // orbit.
    let mut e = ExactEngine::new(&s[0]);
    let reasons = step_cycles(&mut e, 50);
    let controller: Vec<_> = reasons
        .iter()
        .copied()
        .filter(|r| !matches!(r, StopReason::Device(_)))
        .collect();
    assert_eq!(
        controller,
        vec![
            StopReason::ControllerTimer, // the minimum on-time ends
            StopReason::ControllerThreshold,
            StopReason::ControllerTimer,
            StopReason::ControllerTimer
        ],
        "{reasons:?}"
    );
    let led = StopReason::Device(DeviceBoundary::LedSegment);
    let chords = reasons.iter().filter(|r| **r == led).count();
    assert!(chords > 0 && chords % 2 == 0, "{reasons:?}");
    // Hysteretic with no delay: both edges are thresholds.
    let mut e = ExactEngine::new(&s[2]);
    let reasons = step_cycles(&mut e, 50);
    let controller: Vec<_> = reasons
        .iter()
        .filter(|r| !matches!(r, StopReason::Device(_)))
        .collect();
    assert_eq!(
        controller,
        vec![
            &StopReason::ControllerThreshold,
            &StopReason::ControllerThreshold
        ],
        "{reasons:?}"
    );
    // A 20 µs off-time is far longer than L·I_pk/V_LED (68 µH · 0.8 A /
    // ~20 V ≈ 3 µs): the diode current reaches zero inside the off time
    // (discontinuous conduction; Erickson & Maksimovic, Fundamentals of
    // Power Electronics, 3rd ed., ch. 5), once a cycle, before the timer
    // turns the switch back on.
    let mut e = ExactEngine::new(&s[3]);
    let reasons = step_cycles(&mut e, 50);
    let zero = StopReason::Device(DeviceBoundary::DiodeCurrentZero);
    assert_eq!(
        reasons.iter().filter(|r| **r == zero).count(),
        1,
        "{reasons:?}"
    );
    assert_eq!(reasons.last(), Some(&StopReason::ControllerTimer));
}
