//! Engineering notation and physical constants.
//!
//! Scenario files accept every numeric field either as a JSON number in SI
//! units or as a string in engineering notation: a number, an optional SI
//! prefix and an optional unit symbol that must match the field's unit
//! (`"4.7u"`, `"47uH"`, `"100m"`, `"2.2k"`, `"400kHz"`, `"45%"` for a
//! fraction). This module parses those strings and provides the CODATA
//! constants used for the thermal voltage.

/// Boltzmann constant, J/K (CODATA 2018, exact by the 2019 SI definition).
pub const BOLTZMANN_J_PER_K: f64 = 1.380_649e-23;
/// Elementary charge, C (CODATA 2018, exact by the 2019 SI definition).
pub const ELEMENTARY_CHARGE_C: f64 = 1.602_176_634e-19;
/// Offset between degrees Celsius and kelvin.
pub const ZERO_CELSIUS_K: f64 = 273.15;

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
            Unit::Ohm => &["ohm", "Ohm", "Ω"],
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

fn prefix_scale(c: char) -> Option<f64> {
    Some(match c {
        'f' => 1e-15,
        'p' => 1e-12,
        'n' => 1e-9,
        'u' | 'µ' | 'μ' => 1e-6,
        'm' => 1e-3,
        'k' => 1e3,
        'M' => 1e6,
        'G' => 1e9,
        _ => return None,
    })
}

/// Parses a value in engineering notation for a field measured in `unit`.
///
/// Returns the value in SI units, or a reason the text is not a number of
/// that unit. Non-finite results are rejected here too.
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
    // Exponent only if followed by digits.
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
            end = k;
        } else {
            return Err(format!("`{s}` has an exponent with no digits"));
        }
    }
    let number: f64 = s[..end]
        .parse()
        .map_err(|_| format!("`{}` is not a number", &s[..end]))?;
    let suffix = s[end..].trim_start();
    let scale = suffix_scale(suffix, unit).ok_or_else(|| {
        let expected = if unit == Unit::Ratio {
            "no unit, or `%`".to_string()
        } else {
            format!(
                "an optional SI prefix (f p n u m k M G) and optionally `{}`",
                unit.symbol()
            )
        };
        format!("`{s}`: unknown suffix `{suffix}` (expected {expected})")
    })?;
    let value = number * scale;
    if !value.is_finite() {
        return Err(format!("`{s}` is not a finite number"));
    }
    Ok(value)
}

fn suffix_scale(suffix: &str, unit: Unit) -> Option<f64> {
    if suffix.is_empty() {
        return Some(1.0);
    }
    if unit == Unit::Ratio {
        return (suffix == "%").then_some(0.01);
    }
    if unit.symbols().contains(&suffix) {
        return Some(1.0);
    }
    let mut chars = suffix.chars();
    let first = chars.next()?;
    let scale = prefix_scale(first)?;
    let rest = chars.as_str();
    if rest.is_empty() || unit.symbols().contains(&rest) {
        Some(scale)
    } else {
        None
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
        ] {
            assert!(parse_quantity(text, unit).is_err(), "{text} accepted");
        }
    }

    #[test]
    fn thermal_voltage_at_room_temperature() {
        // kT/q at 300 K = 25.852 mV (CODATA 2018 constants).
        let vt = thermal_voltage_v(300.0 - ZERO_CELSIUS_K);
        assert_relative_eq!(vt, 0.025_852_0, max_relative = 1e-5);
    }
}
