//! Engineering notation and physical constants.
//!
//! Scenario files accept every numeric field either as a JSON number in SI
//! units or as a string in engineering notation: a number, an optional SI
//! prefix and an optional unit symbol that must match the field's unit
//! (`"4.7u"`, `"47uH"`, `"100m"`, `"2.2k"`, `"400kHz"`, `"45%"` for a
//! fraction). This module parses those strings and provides the CODATA
//! constants used for the thermal voltage.

/// Boltzmann constant, J/K (CODATA 2018, exact by the 2019 SI definition).
pub(crate) const BOLTZMANN_J_PER_K: f64 = 1.380_649e-23;
/// Elementary charge, C (CODATA 2018, exact by the 2019 SI definition).
pub(crate) const ELEMENTARY_CHARGE_C: f64 = 1.602_176_634e-19;
/// Offset between degrees Celsius and kelvin.
pub(crate) const ZERO_CELSIUS_K: f64 = 273.15;

/// Thermal voltage kT/q in volts at a temperature in degrees Celsius.
pub fn thermal_voltage_v(temperature_c: f64) -> f64 {
    BOLTZMANN_J_PER_K * (temperature_c + ZERO_CELSIUS_K) / ELEMENTARY_CHARGE_C
}

/// The unit a numeric field is measured in, used to check unit suffixes.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Unit {
    /// Volts.
    Volt,
    /// Amperes.
    Ampere,
    /// Ohms.
    Ohm,
    /// Henries.
    Henry,
    /// Farads.
    Farad,
    /// Seconds.
    Second,
    /// Hertz.
    Hertz,
    /// Degrees Celsius.
    Celsius,
    /// Coulombs (gate and recovery charge).
    Coulomb,
    /// A dimensionless number (a `%` suffix divides by 100).
    Ratio,
}

impl Unit {
    /// The symbols accepted after the number (and prefix) for this unit.
    pub fn symbols(self) -> &'static [&'static str] {
        match self {
            Unit::Volt => &["V"],
            Unit::Ampere => &["A"],
            // GREEK CAPITAL LETTER OMEGA (U+03A9) and OHM SIGN (U+2126).
            Unit::Ohm => &["ohm", "Ohm", "\u{3a9}", "\u{2126}"],
            Unit::Henry => &["H"],
            Unit::Farad => &["F"],
            Unit::Second => &["s"],
            Unit::Hertz => &["Hz"],
            Unit::Celsius => &["degC", "°C"],
            Unit::Coulomb => &["C"],
            Unit::Ratio => &[],
        }
    }

    /// The main symbol, for messages.
    pub fn symbol(self) -> &'static str {
        match self {
            Unit::Ratio => "(no unit)",
            u => u.symbols()[0],
        }
    }
}

/// The power of ten an SI prefix stands for (the prefixes the loader
/// accepts: f p n u/µ/μ m k M G).
fn prefix_exponent(c: char) -> Option<i32> {
    Some(match c {
        'f' => -15,
        'p' => -12,
        'n' => -9,
        // `u`, MICRO SIGN (U+00B5) and GREEK SMALL LETTER MU (U+03BC).
        'u' | '\u{b5}' | '\u{3bc}' => -6,
        'm' => -3,
        'k' => 3,
        'M' => 6,
        'G' => 9,
        _ => return None,
    })
}

/// Parses a value in engineering notation for a field measured in `unit`.
///
/// Returns the value in SI units, or a reason the text is not a number of
/// that unit. Non-finite results are rejected here too.
///
/// The decimal mantissa, its exponent and the prefix are read together as
/// one decimal number (`"10u"` is read as the text `10e-6`) and rounded to
/// the nearest `f64` once, so `"10u"` is exactly the same number as `1e-5`
/// (multiplying 10 by 1e-6 would round twice and give 9.999999999999999e-6).
pub fn parse_quantity(text: &str, unit: Unit) -> Result<f64, String> {
    let s = text.trim();
    if s.is_empty() {
        return Err("empty text where a number was expected".into());
    }
    // Longest leading part that is a decimal floating-point number.
    let bytes = s.as_bytes();
    let mut end = 0;
    if end < bytes.len() && (bytes[end] == b'+' || bytes[end] == b'-') {
        end += 1;
    }
    let digits_start = end;
    while end < bytes.len() && (bytes[end].is_ascii_digit() || bytes[end] == b'.') {
        end += 1;
    }
    if end == digits_start {
        return Err(format!("`{s}` does not start with a number"));
    }
    let mantissa = &s[..end];
    // The mantissa alone must be a number (`1.2.3` is not).
    mantissa
        .parse::<f64>()
        .map_err(|_| format!("`{mantissa}` is not a number"))?;
    // Exponent only if followed by digits.
    let mut exponent: i64 = 0;
    if end < bytes.len() && (bytes[end] == b'e' || bytes[end] == b'E') {
        let mut k = end + 1;
        if k < bytes.len() && (bytes[k] == b'+' || bytes[k] == b'-') {
            k += 1;
        }
        let exp_digits = k;
        while k < bytes.len() && bytes[k].is_ascii_digit() {
            k += 1;
        }
        if k > exp_digits {
            let text = &s[end + 1..k];
            // A huge exponent saturates: the value is then 0 or infinite.
            exponent = text.parse::<i64>().unwrap_or(if text.starts_with('-') {
                -1_000_000
            } else {
                1_000_000
            });
            end = k;
        } else {
            return Err(format!("`{s}` has an exponent with no digits"));
        }
    }
    let suffix = s[end..].trim_start();
    let (scale_exp, percent) = suffix_exponent(suffix, unit).ok_or_else(|| {
        let expected = if unit == Unit::Ratio {
            "no unit, or `%`".to_string()
        } else {
            format!(
                "an optional SI prefix (f p n u µ m k M G) and optionally `{}`",
                unit.symbol()
            )
        };
        format!("`{s}`: unknown suffix `{suffix}` (expected {expected})")
    })?;
    let total = exponent
        .saturating_add(i64::from(scale_exp))
        .saturating_sub(if percent { 2 } else { 0 })
        .clamp(-1_000_000, 1_000_000);
    // One correctly rounded conversion of the whole decimal number.
    let value: f64 = format!("{mantissa}e{total}")
        .parse()
        .map_err(|_| format!("`{s}` is not a number"))?;
    if !value.is_finite() {
        return Err(format!("`{s}` is not a finite number"));
    }
    Ok(value)
}

/// The decimal exponent a suffix (prefix and unit symbol) stands for, and
/// whether it is a percent sign.
fn suffix_exponent(suffix: &str, unit: Unit) -> Option<(i32, bool)> {
    if suffix.is_empty() {
        return Some((0, false));
    }
    if unit == Unit::Ratio {
        return (suffix == "%").then_some((0, true));
    }
    if unit.symbols().contains(&suffix) {
        return Some((0, false));
    }
    let mut chars = suffix.chars();
    let first = chars.next()?;
    let exp = prefix_exponent(first)?;
    let rest = chars.as_str();
    if rest.is_empty() || unit.symbols().contains(&rest) {
        Some((exp, false))
    } else {
        None
    }
}

/// `v` as engineering-notation text that [`parse_quantity`] reads back as
/// exactly `v`: the shortest decimal that round-trips, its point moved to
/// a power of ten that is a multiple of three, the SI prefix for that
/// power and then `symbol` (`6.8e-5` with `"H"` is `68uH`, `0.12` with
/// `"Ohm"` is `120mOhm`; micro is written `u`).
///
/// `None` for zero, non-finite values and values outside the prefixes the
/// loader accepts (femto to giga): those read better as plain numbers.
pub(crate) fn exact_engineering_text(v: f64, symbol: &str) -> Option<String> {
    if v == 0.0 || !v.is_finite() {
        return None;
    }
    // Shortest round-trip digits: `d.ddde±x`.
    let sci = format!("{:e}", v.abs());
    let (mantissa, exp) = sci.split_once('e')?;
    let exp: i32 = exp.parse().ok()?;
    let digits: String = mantissa.chars().filter(char::is_ascii_digit).collect();
    let power = exp.div_euclid(3) * 3;
    let prefix = match power {
        -15 => "f",
        -12 => "p",
        -9 => "n",
        -6 => "u",
        -3 => "m",
        0 => "",
        3 => "k",
        6 => "M",
        9 => "G",
        _ => return None,
    };
    // Digits before the point: 1 to 3.
    let whole = (exp - power + 1) as usize;
    let number = if digits.len() <= whole {
        format!("{digits:0<whole$}")
    } else {
        format!("{}.{}", &digits[..whole], &digits[whole..])
    };
    let sign = if v < 0.0 { "-" } else { "" };
    Some(format!("{sign}{number}{prefix}{symbol}"))
}

// ---------------------------------------------------------------------------
// Numbers for people.

impl Unit {
    /// The symbol shown to people after a number (`Ω`, `°C`; nothing for
    /// a ratio).
    pub fn display_symbol(self) -> &'static str {
        match self {
            Unit::Volt => "V",
            Unit::Ampere => "A",
            Unit::Ohm => "Ω",
            Unit::Henry => "H",
            Unit::Farad => "F",
            Unit::Second => "s",
            Unit::Hertz => "Hz",
            Unit::Celsius => "°C",
            Unit::Coulomb => "C",
            Unit::Ratio => "",
        }
    }

    /// Whether numbers in this unit take SI prefixes when shown (not
    /// degrees Celsius, not plain ratios).
    pub fn takes_prefix(self) -> bool {
        !matches!(self, Unit::Celsius | Unit::Ratio)
    }
}

/// SI prefixes from femto to giga, with their powers of ten.
const SHOWN_PREFIXES: [(i32, &str); 9] = [
    (-15, "f"),
    (-12, "p"),
    (-9, "n"),
    (-6, "µ"),
    (-3, "m"),
    (0, ""),
    (3, "k"),
    (6, "M"),
    (9, "G"),
];

/// The SI prefix symbol for a power of ten that is a multiple of three
/// from −15 to 9 (`""` for any other).
pub fn shown_prefix(exp: i32) -> &'static str {
    SHOWN_PREFIXES
        .iter()
        .find(|(e, _)| *e == exp)
        .map_or("", |(_, p)| p)
}

/// The power of ten (a multiple of three, from −12 to 9) that puts `v`
/// between 1 and 1000 once divided by it (0 for zero and non-finite `v`).
pub fn eng_exponent(v: f64) -> i32 {
    if v == 0.0 || !v.is_finite() {
        return 0;
    }
    ((v.abs().log10() / 3.0).floor() as i32 * 3).clamp(-12, 9)
}

/// `v` in engineering notation with `sig` significant figures (trailing
/// zeros dropped), a space and the unit with its SI prefix:
/// `eng_sig(4.12e5, "Hz", 3)` is `412 kHz`. Negative numbers take a
/// minus sign (U+2212); prefixes run from pico to giga.
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
    format!("{s} {}{unit}", shown_prefix(exp))
        .trim_end()
        .to_string()
}

/// [`eng_sig`] with three significant figures.
pub fn eng(v: f64, unit: &str) -> String {
    eng_sig(v, unit, 3)
}

/// `v` in engineering notation with every digit it needs to read back
/// exactly (`1.7060570312820633e-5` with `H` is `17.060570312820633 µH`),
/// for messages that quote a value. Beyond femto to giga, and without a
/// unit that takes prefixes, the plain shortest form (`1e-18 A`).
pub(crate) fn eng_exact(v: f64, unit: Unit) -> String {
    let symbol = unit.display_symbol();
    let text = if unit.takes_prefix() {
        exact_engineering_text(v, "")
    } else {
        None
    };
    let number = match text {
        Some(t) => {
            // Split the trailing prefix letter (if any) off the digits.
            let cut = t
                .char_indices()
                .rev()
                .find(|(_, c)| c.is_ascii_digit() || *c == '.')
                .map_or(0, |(i, c)| i + c.len_utf8());
            let (digits, prefix) = t.split_at(cut);
            let prefix = if prefix == "u" { "µ" } else { prefix };
            format!("{digits} {prefix}{symbol}")
        }
        None => format!("{} {symbol}", plain_number(v)),
    };
    let number = number.trim_end();
    match number.strip_prefix('-') {
        Some(rest) => format!("−{rest}"),
        None => number.to_string(),
    }
}

/// A number without a prefix in its shortest exact form: decimal between
/// 1e-4 and 1e6, else scientific (`1e-18`).
pub(crate) fn plain_number(v: f64) -> String {
    if v == 0.0 {
        return "0".into();
    }
    if (1e-4..1e6).contains(&v.abs()) {
        format!("{v}")
    } else {
        format!("{v:e}")
    }
}

/// A number with at most `sig` significant figures, trailing zeros
/// dropped, no prefix (`7.000000000000001` with 4 is `7`; 0.0123 is
/// `0.0123`): for percentages and ratios shown to people.
pub fn short_number(v: f64, sig: usize) -> String {
    if !v.is_finite() {
        return "n/a".into();
    }
    if v == 0.0 {
        return "0".into();
    }
    let mag = v.abs().log10().floor() as i32;
    if !(-4..=9).contains(&mag) {
        return format!("{:.*e}", sig.saturating_sub(1), v);
    }
    let decimals = (sig as i32 - 1 - mag).max(0) as usize;
    let mut s = format!("{v:.decimals$}");
    if s.contains('.') {
        s = s.trim_end_matches('0').trim_end_matches('.').to_string();
    }
    s
}

/// Relative size below which a value shown beside others of the same
/// quantity is round-off and is shown as 0: one millionth of the
/// quantity's scale (the largest magnitude of that quantity in the same
/// output: the LED current's maximum for its minimum, the inductor peak for
/// its valley, 1 for a contraction factor).
pub const DISPLAY_ZERO_FRACTION: f64 = 1e-6;

/// `v`, or 0 when its magnitude is below [`DISPLAY_ZERO_FRACTION`] of
/// `scale` (for display only; results keep every digit).
pub fn zero_if_round_off(v: f64, scale: f64) -> f64 {
    if v.is_finite() && v.abs() < DISPLAY_ZERO_FRACTION * scale.abs() {
        0.0
    } else {
        v
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use approx::assert_relative_eq;

    #[test]
    fn parses_prefixes_and_units() {
        let cases = [
            ("4.7u", Unit::Henry, 4.7e-6),
            ("47uH", Unit::Henry, 47e-6),
            ("100m", Unit::Ohm, 0.1),
            ("2.2k", Unit::Ohm, 2200.0),
            ("2.2kΩ", Unit::Ohm, 2200.0),
            ("400kHz", Unit::Hertz, 4e5),
            ("1e-6", Unit::Second, 1e-6),
            ("1.5e3 n", Unit::Second, 1.5e-6),
            ("12V", Unit::Volt, 12.0),
            ("2F", Unit::Farad, 2.0),
            ("10fF", Unit::Farad, 1e-14),
            ("45%", Unit::Ratio, 0.45),
            ("-3", Unit::Celsius, -3.0),
            ("3M", Unit::Hertz, 3e6),
        ];
        for (text, unit, want) in cases {
            let got = parse_quantity(text, unit).unwrap();
            assert_relative_eq!(got, want, max_relative = 1e-15);
        }
    }

    /// Every prefix the parser accepts, with mantissas engineers write,
    /// read back bit for bit as the literal decimal value (Rust's float
    /// literals are correctly rounded; IEEE 754-2008 §5.12.2).
    #[test]
    fn prefixes_read_back_as_the_exact_decimal() {
        let cases: &[(&str, f64)] = &[
            ("10u", 1e-5),
            ("10u", 10e-6),
            ("10µ", 1e-5),
            ("10μ", 1e-5),
            ("4.7u", 4.7e-6),
            ("4.7µ", 4.7e-6),
            ("4.7μ", 4.7e-6),
            ("68u", 68e-6),
            ("68u", 6.8e-5),
            ("3.3u", 3.3e-6),
            ("2.2u", 2.2e-6),
            ("0.1u", 1e-7),
            ("100u", 1e-4),
            ("470u", 4.7e-4),
            ("1f", 1e-15),
            ("10f", 1e-14),
            ("4.7f", 4.7e-15),
            ("50p", 5e-11),
            ("1p", 1e-12),
            ("3.3p", 3.3e-12),
            ("680p", 6.8e-10),
            ("1n", 1e-9),
            ("2.2n", 2.2e-9),
            ("80n", 8e-8),
            ("150n", 1.5e-7),
            ("10n", 1e-8),
            ("1m", 1e-3),
            ("3m", 0.003),
            ("7m", 0.007),
            ("10m", 0.01),
            ("30m", 0.03),
            ("50m", 0.05),
            ("120m", 0.12),
            ("350m", 0.35),
            ("700m", 0.7),
            ("0.3m", 3e-4),
            ("1k", 1e3),
            ("2.2k", 2200.0),
            ("4.7k", 4700.0),
            ("0.1k", 100.0),
            ("400k", 4e5),
            ("1.3k", 1300.0),
            ("1M", 1e6),
            ("2.2M", 2.2e6),
            ("0.33M", 3.3e5),
            ("1G", 1e9),
            ("1.5G", 1.5e9),
            ("0.7G", 7e8),
            ("1.5e3n", 1.5e-6),
            ("1.5e3 n", 1.5e-6),
            ("12e-3k", 12.0),
            ("-4.7u", -4.7e-6),
            ("+10u", 1e-5),
            (".1u", 1e-7),
            ("10.u", 1e-5),
            ("0.0001G", 1e5),
        ];
        for &(text, want) in cases {
            let got = parse_quantity(text, Unit::Farad).unwrap();
            assert_eq!(got.to_bits(), want.to_bits(), "{text}: {got:e} != {want:e}");
        }
        for &(text, want) in &[
            ("45%", 0.45_f64),
            ("0.1%", 0.001),
            ("7%", 0.07),
            ("33%", 0.33),
            ("1e1%", 0.1),
        ] {
            let got = parse_quantity(text, Unit::Ratio).unwrap();
            assert_eq!(got.to_bits(), want.to_bits(), "{text}: {got:e} != {want:e}");
        }
    }

    /// Every unit symbol the parser accepts, bare and after a prefix.
    #[test]
    fn every_unit_symbol_reads_back_exactly() {
        let units = [
            Unit::Volt,
            Unit::Ampere,
            Unit::Ohm,
            Unit::Henry,
            Unit::Farad,
            Unit::Second,
            Unit::Hertz,
            Unit::Celsius,
            Unit::Coulomb,
        ];
        let mut seen = 0;
        for unit in units {
            for sym in unit.symbols() {
                for (text, want) in [
                    (format!("10u{sym}"), 1e-5_f64),
                    (format!("10µ{sym}"), 1e-5),
                    (format!("10μ{sym}"), 1e-5),
                    (format!("68 u{sym}"), 6.8e-5),
                    (format!("120m{sym}"), 0.12),
                    (format!("4.7k{sym}"), 4700.0),
                    (format!("3.3M{sym}"), 3.3e6),
                    (format!("1G{sym}"), 1e9),
                    (format!("5n{sym}"), 5e-9),
                    (format!("50p{sym}"), 5e-11),
                    (format!("10f{sym}"), 1e-14),
                    (format!("0.7{sym}"), 0.7),
                    (format!("12 {sym}"), 12.0),
                ] {
                    let got = parse_quantity(&text, unit)
                        .unwrap_or_else(|e| panic!("{text} for {unit:?}: {e}"));
                    assert_eq!(got.to_bits(), want.to_bits(), "{text}: {got:e} != {want:e}");
                    seen += 1;
                }
                // A symbol of another unit is refused.
                let other = if unit == Unit::Volt { "A" } else { "V" };
                assert!(parse_quantity(&format!("1{other}"), unit).is_err());
            }
        }
        // V, A, four ohm spellings, H, F, s, Hz, two Celsius spellings, C.
        assert_eq!(seen, 13 * 13);
    }

    /// Written values read back bit for bit, in the form engineers write.
    #[test]
    fn engineering_text_reads_back_exactly() {
        for (v, sym, want) in [
            (68e-6, "H", "68uH"),
            (4.7e-6, "F", "4.7uF"),
            (0.12, "Ohm", "120mOhm"),
            (12.0, "V", "12V"),
            (10.5, "V", "10.5V"),
            (400e3, "Hz", "400kHz"),
            (1e6, "Hz", "1MHz"),
            (80e-9, "s", "80ns"),
            (50e-12, "F", "50pF"),
            (5e-9, "C", "5nC"),
            (2.5e9, "Hz", "2.5GHz"),
            (1e-15, "F", "1fF"),
            (-0.0123, "A", "-12.3mA"),
            (150.0, "V", "150V"),
            (1234.5, "Ohm", "1.2345kOhm"),
        ] {
            assert_eq!(exact_engineering_text(v, sym).as_deref(), Some(want));
        }
        for v in [0.0, f64::NAN, f64::INFINITY, 1e-18, 1e13] {
            assert_eq!(exact_engineering_text(v, "V"), None, "{v:e}");
        }
        // Any value in range, however many digits, reads back exactly.
        let mut x = 1.234_567_890_123_456_7e-15_f64;
        while x < 1e12 {
            for v in [x, -x, x * 0.987_654_321, 1.0 / x.recip()] {
                let t = exact_engineering_text(v, "F").unwrap();
                let back = parse_quantity(&t, Unit::Farad).unwrap();
                assert_eq!(back.to_bits(), v.to_bits(), "{v:e} -> {t}");
            }
            x *= 3.7;
        }
    }

    #[test]
    fn numbers_for_people() {
        assert_eq!(eng(1.0213, "A"), "1.02 A");
        assert_eq!(eng(-0.0123, "A"), "−12.3 mA");
        assert_eq!(eng_sig(1.7060570312820633e-5, "H", 5), "17.061 µH");
        assert_eq!(
            eng_exact(1.7060570312820633e-5, Unit::Henry),
            "17.060570312820633 µH"
        );
        assert_eq!(eng_exact(6.8e-5, Unit::Henry), "68 µH");
        assert_eq!(eng_exact(-0.5, Unit::Ohm), "−500 mΩ");
        assert_eq!(eng_exact(1e-18, Unit::Ampere), "1e-18 A");
        assert_eq!(eng_exact(85.0, Unit::Celsius), "85 °C");
        assert_eq!(eng_exact(0.45, Unit::Ratio), "0.45");
        assert_eq!(short_number(100.0 * 0.07, 4), "7");
        assert_eq!(short_number(2.7001860, 3), "2.7");
        assert_eq!(short_number(0.012345, 3), "0.0123");
        // Round-off next to its scale is zero; a real small value is kept.
        assert!(zero_if_round_off(-0.763e-12, 0.542).abs() < f64::MIN_POSITIVE);
        assert!((zero_if_round_off(2e-6, 1.0) - 2e-6).abs() < 1e-20);
    }

    #[test]
    fn rejects_bad_text() {
        for (text, unit) in [
            ("4.7uu", Unit::Henry),
            ("1e", Unit::Second),
            ("47uF", Unit::Henry),
            ("abc", Unit::Volt),
            ("", Unit::Volt),
            ("5%", Unit::Volt),
            ("1e999", Unit::Volt),
            ("1e99999999999999999999999", Unit::Volt),
            ("1.2.3", Unit::Volt),
            ("1e3e3", Unit::Volt),
            ("10x", Unit::Volt),
            ("10uu", Unit::Volt),
            ("1T", Unit::Volt),
            ("1kV", Unit::Ampere),
        ] {
            assert!(parse_quantity(text, unit).is_err(), "{text} accepted");
        }
    }

    /// The writers at the edges of each of their ranges (the prefix range
    /// pico to giga and its carry, the plain and scientific forms, the
    /// display-zero threshold), and every display symbol.
    #[test]
    fn writers_at_their_edges() {
        // Rounding carries into the next prefix, except past giga.
        assert_eq!(eng(999.7, "V"), "1 kV");
        assert_eq!(eng(0.9997, "V"), "1 V");
        assert_eq!(eng(999.7e9, "Hz"), "1000 GHz");
        assert_eq!(eng(5e12, "Hz"), "5000 GHz");
        assert_eq!(eng(1e-15, "A"), "0.001 pA");
        assert_eq!(eng(4.7e-12, "F"), "4.7 pF");
        assert_eq!(eng(4.7e-9, "F"), "4.7 nF");
        assert_eq!(eng(2.2e6, "Hz"), "2.2 MHz");
        assert_eq!(eng(1.0, ""), "1");
        assert_eq!(eng(0.0, "A"), "0 A");
        assert_eq!(eng(0.0, ""), "0");
        assert_eq!(eng(f64::NAN, "A"), "n/a");
        assert_eq!(eng(f64::INFINITY, "A"), "∞ A");
        assert_eq!(eng(f64::NEG_INFINITY, "A"), "−∞ A");
        assert_eq!(eng_sig(123_456.0, "Hz", 4), "123.5 kHz");
        assert_eq!(eng_sig(123_456.0, "Hz", 6), "123.456 kHz");
        // Exact text: prefixes split from the digits, `u` shown as µ.
        assert_eq!(eng_exact(4.7e-9, Unit::Farad), "4.7 nF");
        assert_eq!(eng_exact(2200.0, Unit::Ohm), "2.2 kΩ");
        assert_eq!(eng_exact(12.0, Unit::Volt), "12 V");
        assert_eq!(eng_exact(0.0, Unit::Volt), "0 V");
        assert_eq!(eng_exact(-1e-18, Unit::Ampere), "−1e-18 A");
        assert_eq!(eng_exact(1500.0, Unit::Celsius), "1500 °C");
        assert_eq!(eng_exact(2500.0, Unit::Ratio), "2500");
        // Plain numbers: decimal from 1e-4 up to (not including) 1e6.
        assert_eq!(plain_number(0.0), "0");
        assert_eq!(plain_number(1e-4), "0.0001");
        assert_eq!(plain_number(9.5e-5), "9.5e-5");
        assert_eq!(plain_number(999_999.0), "999999");
        assert_eq!(plain_number(1e6), "1e6");
        assert_eq!(plain_number(-2.5), "-2.5");
        // Short numbers: fixed from 1e-4 to 1e9 magnitudes, else scientific.
        assert_eq!(short_number(f64::NAN, 3), "n/a");
        assert_eq!(short_number(f64::INFINITY, 3), "n/a");
        assert_eq!(short_number(0.0, 3), "0");
        assert_eq!(short_number(1.234e-4, 3), "0.000123");
        assert_eq!(short_number(1.234e-5, 3), "1.23e-5");
        assert_eq!(short_number(1.234e9, 3), "1234000000");
        assert_eq!(short_number(1.234e10, 3), "1.23e10");
        assert_eq!(short_number(-45.678, 3), "-45.7");
        assert_eq!(short_number(1.5, 1), "2");
        // Display zero: strictly below a millionth of the scale, finite only.
        assert!((zero_if_round_off(1e-6, 1.0) - 1e-6).abs() < 1e-22);
        assert!(zero_if_round_off(0.999e-6, 1.0) == 0.0);
        assert!(zero_if_round_off(-0.999e-6, -1.0) == 0.0);
        assert!(zero_if_round_off(f64::NAN, 1.0).is_nan());
        assert!(zero_if_round_off(f64::INFINITY, f64::INFINITY) == f64::INFINITY);
        assert!((zero_if_round_off(0.5, 0.0) - 0.5).abs() < 1e-16);
        // Symbols.
        let shown = [
            (Unit::Volt, "V", "V"),
            (Unit::Ampere, "A", "A"),
            (Unit::Ohm, "Ω", "ohm"),
            (Unit::Henry, "H", "H"),
            (Unit::Farad, "F", "F"),
            (Unit::Second, "s", "s"),
            (Unit::Hertz, "Hz", "Hz"),
            (Unit::Celsius, "°C", "degC"),
            (Unit::Coulomb, "C", "C"),
            (Unit::Ratio, "", "(no unit)"),
        ];
        for (unit, display, main) in shown {
            assert_eq!(unit.display_symbol(), display);
            assert_eq!(unit.symbol(), main);
            assert_eq!(
                unit.takes_prefix(),
                !matches!(unit, Unit::Celsius | Unit::Ratio)
            );
        }
        // The refusal names what was expected.
        let e = parse_quantity("3x", Unit::Henry).unwrap_err();
        assert!(e.contains("`H`") && e.contains("`x`"), "{e}");
        let e = parse_quantity("3x", Unit::Ratio).unwrap_err();
        assert!(e.contains("no unit, or `%`"), "{e}");
    }

    /// Exponents beyond any `f64` saturate: a huge negative one reads as
    /// zero (finite), a huge positive one is refused as not finite.
    #[test]
    fn huge_exponents_saturate() {
        for text in ["1e-99999999999999999999", "1e-400", "5e-1000000u"] {
            let v = parse_quantity(text, Unit::Volt).unwrap();
            assert!(v == 0.0, "{text}: {v:e}");
        }
        assert!(parse_quantity("1e400", Unit::Volt).is_err());
        assert_eq!(
            parse_quantity("1e+5k", Unit::Volt).unwrap().to_bits(),
            1e8_f64.to_bits()
        );
        assert_eq!(
            parse_quantity("  2.5e-3 kV ", Unit::Volt)
                .unwrap()
                .to_bits(),
            2.5_f64.to_bits()
        );
    }

    #[test]
    fn thermal_voltage_at_room_temperature() {
        // kT/q at 300 K = 25.852 mV (CODATA 2018 constants).
        let vt = thermal_voltage_v(300.0 - ZERO_CELSIUS_K);
        assert_relative_eq!(vt, 0.025_852_0, max_relative = 1e-5);
    }
}
