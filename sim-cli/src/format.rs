//! Engineering notation for people: `1.02 A`, `412 kHz`, `3.3 µs`.

/// SI prefixes from pico to giga, with their powers of ten.
const PREFIXES: [(i32, &str); 8] = [
    (-12, "p"),
    (-9, "n"),
    (-6, "µ"),
    (-3, "m"),
    (0, ""),
    (3, "k"),
    (6, "M"),
    (9, "G"),
];

/// The power of ten (a multiple of three, from −12 to 9) that puts `v`
/// between 1 and 1000 once divided by it.
pub fn eng_exponent(v: f64) -> i32 {
    if v == 0.0 || !v.is_finite() {
        return 0;
    }
    let e = (v.abs().log10() / 3.0).floor() as i32 * 3;
    e.clamp(-12, 9)
}

/// The prefix symbol for a power of ten from [`eng_exponent`].
pub fn prefix(exp: i32) -> &'static str {
    PREFIXES
        .iter()
        .find(|(e, _)| *e == exp)
        .map_or("", |(_, p)| p)
}

/// `v` in engineering notation with three significant figures (trailing
/// zeros dropped) and the unit, e.g. `eng(4.12e5, "Hz")` is `412 kHz`.
pub fn eng(v: f64, unit: &str) -> String {
    eng_sig(v, unit, 3)
}

/// As [`eng`] with `sig` significant figures.
pub fn eng_sig(v: f64, unit: &str, sig: usize) -> String {
    if v.is_nan() {
        return "n/a".to_string();
    }
    if v.is_infinite() {
        return format!("{}∞ {unit}", if v < 0.0 { "−" } else { "" });
    }
    if v == 0.0 {
        return format!("0 {unit}").trim_end().to_string();
    }
    let mut exp = eng_exponent(v);
    let mut mant = v / 10f64.powi(exp);
    // Decimals for `sig` significant figures (more below 1, at the
    // clamped ends of the prefix range).
    let decimals_for = |m: f64| (sig as i32 - 1 - m.abs().log10().floor() as i32).max(0) as usize;
    let decimals = decimals_for(mant);
    // Rounding can carry into the next prefix (999.7 → 1000 → 1 k).
    let rounded: f64 = format!("{mant:.decimals$}").parse().unwrap_or(mant);
    if rounded.abs() >= 1000.0 && exp < 9 {
        exp += 3;
        mant = v / 10f64.powi(exp);
    }
    let decimals = decimals_for(mant);
    let mut s = format!("{mant:.decimals$}");
    if s.contains('.') {
        s = s.trim_end_matches('0').trim_end_matches('.').to_string();
    }
    if s == "-0" {
        s = "0".into();
    }
    let s = s.replace('-', "−");
    format!("{s} {}{unit}", prefix(exp)).trim_end().to_string()
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
}
