//! Numbers for people in the text summary and the plots: engineering
//! notation (`1.02 A`, `412 kHz`, `3.3 µs`, from `sim_core::units`),
//! round-off shown as zero, ratios, percentages and residuals.

// The one implementation of engineering notation is the library's
// (`sim_core::units`), which its notes and messages use too: `eng` gives
// three significant figures (`eng(4.12e5, "Hz")` is `412 kHz`), `eng_sig`
// as many as asked; `prefix` is the symbol for a power of ten from
// `eng_exponent`.
pub use sim_core::units::{eng, eng_exponent, eng_sig, shown_prefix as prefix};

/// `v` in engineering notation, shown as 0 when it is round-off beside
/// `scale`, the largest magnitude of the same quantity in the same output
/// (below `sim_core::units::DISPLAY_ZERO_FRACTION`, a millionth of it):
/// an LED minimum of −0.763 pA beside a 542 mA maximum is `0 A`.
pub fn eng_scaled(v: f64, unit: &str, scale: f64) -> String {
    eng(sim_core::units::zero_if_round_off(v, scale), unit)
}

/// A dimensionless number with three significant figures, round-off
/// below a millionth of `scale` shown as 0 and magnitudes below 0.001 in
/// scientific notation (`0.0641`, `2.1e-5`, `0`).
pub fn ratio(v: f64, scale: f64) -> String {
    let v = sim_core::units::zero_if_round_off(v, scale);
    if v != 0.0 && v.abs() < 1e-3 {
        format!("{v:.1e}")
    } else {
        sim_core::units::short_number(v, 3)
    }
}

/// A fraction as a percentage with one decimal: `0.912` is `91.2 %`.
pub fn pct(fraction: f64) -> String {
    if fraction.is_finite() {
        format!("{:.1} %", 100.0 * fraction)
    } else {
        "n/a".into()
    }
}

/// A small dimensionless number (a residual, a tolerance) in scientific
/// notation: `1.2e-12`.
pub fn sci(v: f64) -> String {
    if v == 0.0 {
        "0".into()
    } else {
        format!("{v:.1e}")
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn examples_from_the_issue() {
        assert_eq!(eng(1.0213, "A"), "1.02 A");
        assert_eq!(eng(412_345.0, "Hz"), "412 kHz");
        assert_eq!(eng(3.3e-6, "s"), "3.3 µs");
    }

    #[test]
    fn carries_and_edges() {
        assert_eq!(eng(999.7, "V"), "1 kV");
        assert_eq!(eng(0.0, "W"), "0 W");
        assert_eq!(eng(-0.0123, "A"), "−12.3 mA");
        assert_eq!(eng(1e-15, "A"), "0.001 pA");
        assert_eq!(eng(f64::NAN, "A"), "n/a");
        assert_eq!(eng(12.0, ""), "12");
        assert_eq!(pct(0.9123), "91.2 %");
    }

    /// Round-off beside its scale prints as 0; real small values do not.
    #[test]
    fn round_off_is_shown_as_zero() {
        assert_eq!(eng_scaled(-0.763e-12, "A", 0.542), "0 A");
        assert_eq!(eng_scaled(0.113, "A", 0.194), "113 mA");
        assert_eq!(eng_scaled(-0.4, "V", 48.0), "−400 mV");
        assert_eq!(ratio(3.1e-17, 1.0), "0");
        assert_eq!(ratio(0.0641, 1.0), "0.0641");
        assert_eq!(ratio(2.1e-5, 1.0), "2.1e-5");
        assert_eq!(ratio(0.784, 1.0), "0.784");
    }
}
