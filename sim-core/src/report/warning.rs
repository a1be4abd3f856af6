//! The warnings of a run report.

use crate::units::eng;
use serde::{Serialize, Serializer};
use std::fmt;

/// Something the engineer should look at in a design.
#[derive(Debug, Clone, PartialEq)]
pub enum Warning {
    /// A warning of the run or the assessment (supply, conduction mode,
    /// curve fit, input range, temperatures, …), in words.
    Run(String),
    /// At start-up the inductor current passes its rated saturation
    /// current although the steady-state peak stays below it.
    StartupSaturation {
        /// Highest inductor current from power-on, A.
        startup_peak_a: f64,
        /// The inductor's rated saturation current, A.
        saturation_a: f64,
        /// The steady-state inductor peak, A.
        steady_peak_a: f64,
    },
}

impl Warning {
    /// The start-up saturation warning, when the start-up peak passes the
    /// rating and the steady-state peak does not (the run's own warning
    /// covers a steady-state peak above it).
    pub fn startup_saturation(
        startup_peak_a: Option<f64>,
        saturation_a: Option<f64>,
        steady_peak_a: f64,
    ) -> Option<Warning> {
        match (startup_peak_a, saturation_a) {
            (Some(peak), Some(isat)) if peak > isat && steady_peak_a <= isat => {
                Some(Warning::StartupSaturation {
                    startup_peak_a: peak,
                    saturation_a: isat,
                    steady_peak_a,
                })
            }
            _ => None,
        }
    }
}

impl fmt::Display for Warning {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        match self {
            Warning::Run(w) => f.write_str(w),
            Warning::StartupSaturation {
                startup_peak_a,
                saturation_a,
                steady_peak_a,
            } => write!(
                f,
                "at start-up the inductor current reaches {}, above its rated saturation \
                 current {} (steady-state peak {}): a saturating inductor lets the current \
                 rise faster still; consider a soft start or a part rated for the start-up peak",
                eng(*startup_peak_a, "A"),
                eng(*saturation_a, "A"),
                eng(*steady_peak_a, "A")
            ),
        }
    }
}

/// A warning is written as its words.
impl Serialize for Warning {
    fn serialize<S: Serializer>(&self, s: S) -> Result<S::Ok, S::Error> {
        s.collect_str(self)
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    /// The start-up saturation warning needs a start-up peak above the
    /// rating while the steady-state peak stays at or below it.
    #[test]
    fn startup_saturation_only_when_the_start_up_alone_passes_the_rating() {
        let w = Warning::startup_saturation(Some(1.5), Some(1.2), 0.9).expect("warns");
        let text = w.to_string();
        assert!(text.contains("1.5 A") && text.contains("1.2 A") && text.contains("900 mA"));
        assert_eq!(Warning::startup_saturation(Some(1.1), Some(1.2), 0.9), None);
        assert_eq!(Warning::startup_saturation(Some(1.5), Some(1.2), 1.3), None);
        assert_eq!(Warning::startup_saturation(None, Some(1.2), 0.9), None);
        assert_eq!(Warning::startup_saturation(Some(1.5), None, 0.9), None);
        assert_eq!(
            serde_json::to_string(&Warning::Run("x".into())).unwrap(),
            "\"x\""
        );
    }
}
