//! Numbers in engineering notation: the serde readers behind every numeric
//! field (a JSON number in SI units, or text such as `"4.7u"`).

use crate::units::{parse_quantity, Unit};
use serde::de::{self, Deserializer, Visitor};
use std::fmt;

struct QuantityVisitor(Unit);

impl<'de> Visitor<'de> for QuantityVisitor {
    type Value = f64;
    fn expecting(&self, f: &mut fmt::Formatter) -> fmt::Result {
        write!(
            f,
            "a number in {} or engineering-notation text such as \"4.7u\"",
            self.0.symbol()
        )
    }
    fn visit_f64<E: de::Error>(self, v: f64) -> Result<f64, E> {
        Ok(v)
    }
    fn visit_i64<E: de::Error>(self, v: i64) -> Result<f64, E> {
        Ok(v as f64)
    }
    fn visit_u64<E: de::Error>(self, v: u64) -> Result<f64, E> {
        Ok(v as f64)
    }
    fn visit_str<E: de::Error>(self, v: &str) -> Result<f64, E> {
        parse_quantity(v, self.0).map_err(E::custom)
    }
}

/// Reads a number or engineering-notation text in `unit` (the one reader
/// behind every numeric field, here and in the study objects).
pub(crate) fn de_quantity<'de, D: Deserializer<'de>>(d: D, unit: Unit) -> Result<f64, D::Error> {
    d.deserialize_any(QuantityVisitor(unit))
}

macro_rules! unit_de {
    ($name:ident, $opt:ident, $unit:expr) => {
        pub(super) fn $name<'de, D: Deserializer<'de>>(d: D) -> Result<f64, D::Error> {
            de_quantity(d, $unit)
        }
        #[allow(dead_code)] // Not every unit has an optional field.
        pub(super) fn $opt<'de, D: Deserializer<'de>>(d: D) -> Result<Option<f64>, D::Error> {
            de_quantity(d, $unit).map(Some)
        }
    };
}
unit_de!(de_v, de_opt_v, Unit::Volt);
unit_de!(de_a, de_opt_a, Unit::Ampere);
unit_de!(de_ohm, de_opt_ohm, Unit::Ohm);
unit_de!(de_h, de_opt_h, Unit::Henry);
unit_de!(de_f, de_opt_f, Unit::Farad);
unit_de!(de_s, de_opt_s, Unit::Second);
unit_de!(de_hz, de_opt_hz, Unit::Hertz);
unit_de!(de_c, de_opt_c, Unit::Celsius);
unit_de!(de_ratio, de_opt_ratio, Unit::Ratio);
unit_de!(de_coulomb, de_opt_coulomb, Unit::Coulomb);

pub(super) fn default_temp_c() -> f64 {
    25.0
}
