//! The safety cautions, defined once: for a run, a study (sweep or
//! spread) and a boundary search, each with its own wording of the same
//! facts and the same thresholds.

use crate::metrics::Metrics;
use crate::parts::advice::SELV_LIMIT_V;
use crate::scenario::Scenario;
use crate::units::eng;
use serde::{Serialize, Serializer};
use std::fmt;

/// LED power above which an eye-safety caution is added, W (common
/// practice: a few hundred milliwatts of white LED light at close range
/// is already uncomfortably bright; no published limit is applied).
pub const BRIGHT_LED_POWER_W: f64 = 0.5;

/// Total loss above which a hot-parts caution is added, W (common
/// practice: a watt in small SMD parts heats them well above ambient
/// without copper area or airflow).
pub const HOT_PARTS_LOSS_W: f64 = 1.0;

/// What the cautions speak about (the wording follows it).
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Scope {
    /// One run of one design.
    Run,
    /// A study over many points (sweep, spread, corners).
    Study,
    /// A boundary search.
    Search,
}

/// One safety caution for building and testing a design.
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum Caution {
    /// The supply passes the usual safety-extra-low-voltage limit
    /// ([`SELV_LIMIT_V`]).
    HighVoltage {
        /// Highest supply applied, V.
        supply_v: f64,
        /// What the caution speaks about.
        scope: Scope,
    },
    /// The losses are enough to make parts hot ([`HOT_PARTS_LOSS_W`]).
    HotParts {
        /// Highest total loss, W.
        loss_w: f64,
        /// What the caution speaks about.
        scope: Scope,
    },
    /// The LEDs are bright enough to hurt the eyes ([`BRIGHT_LED_POWER_W`]).
    BrightLight {
        /// Highest LED power, W.
        led_power_w: f64,
        /// What the caution speaks about.
        scope: Scope,
    },
    /// Always: a simulation is no substitute for the bench and for
    /// certification.
    General {
        /// What the caution speaks about.
        scope: Scope,
    },
}

impl Caution {
    /// The cautions for a set of highest figures: the supply, the total
    /// loss and the LED power (None: not known, e.g. a boundary search),
    /// in the order voltage, heat, light, general.
    pub fn for_figures(
        scope: Scope,
        max_supply_v: f64,
        max_loss_w: Option<f64>,
        max_led_power_w: Option<f64>,
    ) -> Vec<Caution> {
        let mut c = Vec::new();
        if max_supply_v > SELV_LIMIT_V {
            c.push(Caution::HighVoltage {
                supply_v: max_supply_v,
                scope,
            });
        }
        if let Some(w) = max_loss_w.filter(|w| *w > HOT_PARTS_LOSS_W) {
            c.push(Caution::HotParts { loss_w: w, scope });
        }
        if let Some(w) = max_led_power_w.filter(|w| *w > BRIGHT_LED_POWER_W) {
            c.push(Caution::BrightLight {
                led_power_w: w,
                scope,
            });
        }
        c.push(Caution::General { scope });
        c
    }

    /// The cautions of one run: the highest supply (of a declared range
    /// too), the run's losses and LED power.
    pub fn for_run(s: &Scenario, m: &Metrics) -> Vec<Caution> {
        let v_max = s
            .supply
            .input_range_v
            .map_or(s.supply.voltage_v, |r| r.max_v.max(s.supply.voltage_v));
        Caution::for_figures(Scope::Run, v_max, Some(m.total_loss_w), Some(m.led_power_w))
    }
}

impl fmt::Display for Caution {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        match *self {
            Caution::HighVoltage {
                supply_v,
                scope: Scope::Run,
            } => write!(
                f,
                "HIGH VOLTAGE: the supply reaches {}, above the usual {} DC \
                 safety-extra-low-voltage limit (from memory). Contact can injure or kill: work \
                 de-energised, insulate, use an isolated supply, and have the design built and \
                 checked by qualified people under local electrical codes.",
                eng(supply_v, "V"),
                eng(SELV_LIMIT_V, "V")
            ),
            Caution::HighVoltage {
                supply_v,
                scope: Scope::Study,
            } => write!(
                f,
                "this study applies supplies up to {} — above the usual 60 V DC \
                 extra-low-voltage limit: such a driver can injure or kill; touch-safe \
                 construction, insulation and creepage rules apply; follow local codes and \
                 licensed practice",
                eng(supply_v, "V")
            ),
            Caution::HighVoltage {
                supply_v,
                scope: Scope::Search,
            } => write!(
                f,
                "this search applies supplies up to {} — above the usual 60 V DC \
                 extra-low-voltage limit: such a driver can injure or kill; follow local codes \
                 and licensed practice",
                eng(supply_v, "V")
            ),
            Caution::HotParts {
                loss_w,
                scope: Scope::Run,
            } => write!(
                f,
                "HOT PARTS: {} is lost as heat in the driver; the switch, diode and inductor can \
                 get hot enough to burn. Check their temperatures on the bench.",
                eng(loss_w, "W")
            ),
            Caution::HotParts { loss_w, .. } => write!(
                f,
                "losses reach {} at some points: parts can get hot enough to burn; check \
                 temperatures on the bench",
                eng(loss_w, "W")
            ),
            Caution::BrightLight {
                led_power_w,
                scope: Scope::Run,
            } => write!(
                f,
                "BRIGHT LIGHT: {} into the LEDs. Do not look into them at close range; use a \
                 diffuser or filter when testing.",
                eng(led_power_w, "W")
            ),
            Caution::BrightLight { led_power_w, .. } => write!(
                f,
                "LED power reaches {}: do not look into the LEDs at close range; test with a \
                 diffuser",
                eng(led_power_w, "W")
            ),
            Caution::General { scope: Scope::Run } => f.write_str(
                "A simulation is no substitute for bench measurement and certification. Follow \
                 local codes and licensed practice.",
            ),
            Caution::General { .. } => f.write_str(
                "a simulation is no substitute for bench measurement and certification; follow \
                 local codes and licensed practice",
            ),
        }
    }
}

/// A caution is written as its words.
impl Serialize for Caution {
    fn serialize<S: Serializer>(&self, s: S) -> Result<S::Ok, S::Error> {
        s.collect_str(self)
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    /// The extra-low-voltage line: 60 V DC (from memory, as
    /// [`SELV_LIMIT_V`] says); just above it every scope gets the
    /// high-voltage caution, at it none does; the general caution always
    /// comes last.
    #[test]
    fn high_voltage_caution_starts_above_60_volts_in_every_scope() {
        for scope in [Scope::Run, Scope::Study, Scope::Search] {
            let above = Caution::for_figures(scope, 60.5, None, None);
            assert!(matches!(above[0], Caution::HighVoltage { .. }), "{scope:?}");
            assert!(above[0].to_string().contains("60"), "{}", above[0]);
            let at = Caution::for_figures(scope, 60.0, None, None);
            assert_eq!(at, vec![Caution::General { scope }]);
        }
    }

    /// Heat above 1 W and light above 0.5 W (common practice), in the
    /// order voltage, heat, light, general; unknown figures add nothing.
    #[test]
    fn heat_and_light_cautions_follow_their_thresholds() {
        let c = Caution::for_figures(Scope::Study, 12.0, Some(1.5), Some(0.7));
        assert!(matches!(c[0], Caution::HotParts { loss_w, .. } if (loss_w - 1.5).abs() < 1e-12));
        assert!(matches!(c[1], Caution::BrightLight { .. }));
        assert!(matches!(c[2], Caution::General { .. }));
        assert_eq!(c.len(), 3);
        let quiet = Caution::for_figures(Scope::Run, 12.0, Some(0.9), Some(0.4));
        assert_eq!(quiet.len(), 1);
        assert!(c[0].to_string().contains("1.5 W"), "{}", c[0]);
        // Serialised as its words.
        let json = serde_json::to_string(&c[2]).unwrap();
        assert_eq!(json, format!("\"{}\"", c[2]));
    }
}
