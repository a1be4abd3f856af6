//! Unit tests of propagation and event location.

use super::scan::{hermite_may_cross, may_reach_zero_within, predict_zero};
use super::*;
use approx::assert_relative_eq;

/// The convex-hull shortcut never hides a crossing: over a grid of
/// cubic Hermite pieces negative at both ends, whenever dense sampling
/// of the piece finds it at or above zero, `hermite_may_cross` says a
/// crossing may hide inside.
#[test]
fn hermite_test_never_misses_a_sampled_crossing() {
    let vals = [-3.0, -1.0, -0.3, -1e-3, 0.0, 1e-3, 0.3, 1.0, 3.0, 10.0];
    let ends = [-1.0, -0.3, -1e-2, -1e-6];
    let mut crossings = 0;
    for &h0 in &ends {
        for &h1 in &ends {
            for &d0 in &vals {
                for &d1 in &vals {
                    let step = 0.7;
                    let (m0, m1) = (d0 * step, d1 * step);
                    let peak = (0..=400)
                        .map(|k| {
                            let s = f64::from(k) / 400.0;
                            let (s2, s3) = (s * s, s * s * s);
                            (2.0 * s3 - 3.0 * s2 + 1.0) * h0
                                + (s3 - 2.0 * s2 + s) * m0
                                + (-2.0 * s3 + 3.0 * s2) * h1
                                + (s3 - s2) * m1
                        })
                        .fold(f64::NEG_INFINITY, f64::max);
                    if peak >= 0.0 {
                        crossings += 1;
                        assert!(
                            hermite_may_cross(h0, d0, h1, d1, step),
                            "h0 {h0} d0 {d0} h1 {h1} d1 {d1}: peak {peak}"
                        );
                    }
                }
            }
        }
    }
    assert!(
        crossings > 20,
        "only {crossings} crossing pieces in the grid"
    );
}

/// The one-division root picks the same root as taking both roots and
/// the smallest positive one.
#[test]
fn predicted_zero_is_the_smallest_positive_root() {
    let both = |h: f64, d: f64, c: f64| -> Option<f64> {
        let a = 0.5 * c;
        if a.abs() * h.abs() <= 1e-12 * d * d {
            return (d > 0.0).then(|| -h / d);
        }
        let disc = d * d - 4.0 * a * h;
        if disc < 0.0 {
            return None;
        }
        let q = -0.5 * (d + d.signum() * disc.sqrt());
        let (r1, r2) = (q / a, if q != 0.0 { h / q } else { f64::NAN });
        let best = [r1, r2]
            .into_iter()
            .filter(|r| *r > 0.0)
            .fold(f64::INFINITY, f64::min);
        best.is_finite().then_some(best)
    };
    let vals = [-3.0, -1.0, -1e-3, -1e-9, 0.0, 1e-9, 1e-3, 1.0, 3.0];
    for &h in &[-1.0, -1e-3, -1e-9, -7.5] {
        for &d in &vals {
            for &c in &vals {
                assert_eq!(predict_zero(h, d, c), both(h, d, c), "h {h} d {d} c {c}");
            }
        }
    }
}

/// The cheap pre-check never hides a prediction inside the step: over
/// a grid of quadratics, whenever `predict_zero` gives a root at or
/// below the bound, `may_reach_zero_within` says so.
#[test]
fn zero_precheck_never_misses_a_predicted_root() {
    let vals = [-3.0, -1.0, -1e-3, -1e-9, 0.0, 1e-9, 1e-3, 1.0, 3.0];
    let mut checked = 0;
    for &h in &[-1.0, -1e-3, -1e-9] {
        for &d in &vals {
            for &c in &vals {
                for &bound in &[1e-6, 1e-3, 0.5, 1.0, 2.0, 10.0] {
                    if let Some(tau) = predict_zero(h, d, c) {
                        if tau <= bound {
                            checked += 1;
                            assert!(
                                may_reach_zero_within(h, d, c, bound * (1.0 + 1e-6)),
                                "h {h} d {d} c {c} bound {bound}: root {tau}"
                            );
                        }
                    }
                }
            }
        }
    }
    assert!(checked > 50, "{checked} cases");
}

#[test]
fn own_exponential_matches_pade() {
    // nalgebra's Padé exponential (Higham 2005) as the reference.
    let mut m = AugMatrix::zeros();
    let vals = [
        [-3.1e3, -1.47e4, 0.0, 1.76e5],
        [4.5e5, -9.0e5, 0.0, 0.0],
        [-1.0e5, 0.0, -2.0e7, 2.4e8],
    ];
    for i in 0..3 {
        for j in 0..4 {
            m[(i, j)] = vals[i][j];
        }
    }
    let z = Aug::new(0.7, 9.1, 11.9, 1.0);
    let mut w = WorkCounts::default();
    for &t in &[1e-9, 1e-7, 3e-6, 2e-5] {
        let want = (m * t).exp() * z;
        let got = advance(&m, t, &z, &mut w);
        for i in 0..4 {
            assert_relative_eq!(got[i], want[i], max_relative = 1e-12, epsilon = 1e-12);
        }
    }
}

#[test]
fn gramian_of_a_ramp() {
    // x' = 1 (i_L ramps at 1 A/s), z = [t, 0, 0, 1]:
    // ∫ t² = h³/3, ∫ t = h²/2, ∫ 1 = h.
    let mut m = AugMatrix::zeros();
    m[(0, 3)] = 1.0;
    let z0 = Aug::new(0.0, 0.0, 0.0, 1.0);
    let mut w = WorkCounts::default();
    let h = 3.0;
    let (g, phi) = gramian(&m, &z0, h, &mut w);
    assert_relative_eq!(g[(0, 0)], h * h * h / 3.0, max_relative = 1e-13);
    assert_relative_eq!(g[(0, 3)], h * h / 2.0, max_relative = 1e-13);
    assert_relative_eq!(g[(3, 3)], h, max_relative = 1e-13);
    assert_relative_eq!(phi[(0, 3)], h, max_relative = 1e-13);
}

#[test]
fn gramian_of_a_stiff_decay() {
    // x' = -a x, x0 = 1: ∫ x² = (1 - e^{-2ah}) / 2a, with a·h = 2000.
    let a = 1e8;
    let h = 2e-5;
    let mut m = AugMatrix::zeros();
    m[(0, 0)] = -a;
    let z0 = Aug::new(1.0, 0.0, 0.0, 1.0);
    let mut w = WorkCounts::default();
    let (g, _) = gramian(&m, &z0, h, &mut w);
    assert_relative_eq!(
        g[(0, 0)],
        (1.0 - (-2.0 * a * h).exp()) / (2.0 * a),
        max_relative = 1e-12
    );
    assert_relative_eq!(g[(0, 3)], (1.0 - (-a * h).exp()) / a, max_relative = 1e-12);
}

#[test]
fn finds_first_crossing_of_an_oscillation() {
    // x'' = -w² x (as i' = v, v' = -w² i), i(0) = 0, v(0) = 1:
    // i = sin(w t)/w reaches 0.5/w first at w t = π/6.
    let w_rad = 2.0e5;
    let mut m = AugMatrix::zeros();
    m[(0, 1)] = 1.0;
    m[(1, 0)] = -w_rad * w_rad;
    let z0 = Aug::new(0.0, 1.0, 0.0, 1.0);
    let mut row = Row::zeros();
    row[0] = 1.0;
    row[3] = -0.5 / w_rad;
    let ev = EventFn::new(row, &m);
    let mut work = WorkCounts::default();
    let flow = Flow {
        timer: None,
        m: &m,
        spectral: None,
    };
    let r = first_event(
        &flow,
        &z0,
        &[ev],
        ScanStart::default(),
        1.0,
        0.25 / w_rad,
        &mut work,
    );
    assert_eq!(r.event, Some(0));
    assert!(
        (r.t - std::f64::consts::FRAC_PI_6 / w_rad).abs() < 1e-13,
        "{}",
        r.t
    );
}

#[test]
fn a_return_through_zero_from_a_hair_above_is_found() {
    // i' = v, v' = k: i = i0 + v0·t + k·t²/2 leaves i0 falling and
    // comes back up through it at t = −2·v0/k. The event i − i0 starts
    // a round-off hair above zero (as just after the opposite event
    // on the same boundary fired) and must fire on the return, even
    // when one step spans the whole dip.
    let (i0, v0, k) = (0.5622, -2.0e3, 1.0e10);
    let mut m = AugMatrix::zeros();
    m[(0, 1)] = 1.0;
    m[(1, 3)] = k;
    let z0 = Aug::new(i0, v0, 0.0, 1.0);
    let mut row = Row::zeros();
    row[0] = 1.0;
    row[3] = -i0 * (1.0 - 4.0 * f64::EPSILON);
    assert!(row[0] * i0 + row[3] > 0.0);
    let ev = EventFn::new(row, &m);
    let mut work = WorkCounts::default();
    let flow = Flow {
        timer: None,
        m: &m,
        spectral: None,
    };
    let start = ScanStart {
        due: true,
        threshold: None,
        last_fired: &[],
    };
    let t_back = -2.0 * v0 / k;
    let r = first_event(&flow, &z0, &[ev], start, 1.0, 1.0, &mut work);
    assert_eq!(r.event, Some(0), "the return at {t_back:e} s was missed");
    // Accepted a hair past the root (within a few 1e-9 of the step).
    assert!((r.t - t_back).abs() < 1e-8 * t_back, "{} vs {t_back}", r.t);
}

#[test]
fn grazing_function_does_not_fire() {
    // i = sin(w t)/w peaks at 1/w; a threshold at 1.0001/w is never reached.
    let w_rad = 1.0e5;
    let mut m = AugMatrix::zeros();
    m[(0, 1)] = 1.0;
    m[(1, 0)] = -w_rad * w_rad;
    let z0 = Aug::new(0.0, 1.0, 0.0, 1.0);
    let mut row = Row::zeros();
    row[0] = 1.0;
    row[3] = -1.0001 / w_rad;
    let ev = EventFn::new(row, &m);
    let mut work = WorkCounts::default();
    let flow = Flow {
        timer: None,
        m: &m,
        spectral: None,
    };
    let r = first_event(
        &flow,
        &z0,
        &[ev],
        ScanStart::default(),
        5e-5,
        0.25 / w_rad,
        &mut work,
    );
    assert_eq!(r.event, None);
    // ...but one just below the peak is found.
    let mut row2 = row;
    row2[3] = -0.9999 / w_rad;
    let ev2 = EventFn::new(row2, &m);
    let r2 = first_event(
        &flow,
        &z0,
        &[ev2],
        ScanStart::default(),
        5e-5,
        0.25 / w_rad,
        &mut work,
    );
    assert_eq!(r2.event, Some(0));
}
