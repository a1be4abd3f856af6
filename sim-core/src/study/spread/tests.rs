//! Unit tests of the spread statistics and sampling.

use super::*;

#[test]
fn normal_quantiles_match_the_tables() {
    // Standard normal quantiles, e.g. Abramowitz & Stegun, Handbook of
    // Mathematical Functions, table 26.5 (z for upper-tail 0.025, 0.01,
    // 0.001): 1.959964, 2.326348, 3.090232.
    for (p, z) in [
        (0.975, 1.959_964),
        (0.99, 2.326_348),
        (0.001, -3.090_232),
        (0.5, 0.0),
    ] {
        assert!((normal_quantile(p) - z).abs() < 2e-6, "p = {p}");
    }
}

#[test]
fn quantiles_interpolate() {
    let v = [1.0, 2.0, 3.0, 4.0, 5.0];
    assert!((quantile_sorted(&v, 0.5) - 3.0).abs() < 1e-12);
    assert!((quantile_sorted(&v, 0.01) - 1.04).abs() < 1e-12);
}

#[test]
fn wilson_interval_known_value() {
    // Wilson (1927) for 8 of 10 at z = 1.96: about 0.490 to 0.943
    // (a worked example common in statistics texts; from memory).
    let (lo, hi) = wilson(8, 10, 1.96);
    assert!(
        (lo - 0.490).abs() < 1e-3 && (hi - 0.943).abs() < 1e-3,
        "{lo} {hi}"
    );
}
