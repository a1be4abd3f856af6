//! The warnings of a run as typed values: one variant per kind, each
//! carrying its figures in SI units (the unit in the field name), and
//! `Display` giving the words a person reads (what the text summary and
//! `run --json` print).
//!
//! The enum lives here, in `parts`, because every producer can import it
//! from here without importing upwards: the run (`run::warnings`,
//! `run::drive`, `run::assess`) and the report (`report`) sit above
//! `parts`, and `parts` itself imports only `scenario`, `metrics`,
//! `model`, `record` and the ground modules. This module imports only
//! the ground (`units`, `devices`).

use crate::devices::MAX_SEGMENTS;
use crate::units::eng;
use serde::{Serialize, Serializer};
use std::fmt;

/// Idle share of the period above which DCM is called deep: the current
/// collapses early in every off-time and rests at zero most of the cycle.
pub const DEEP_DCM_IDLE: f64 = 0.5;

/// Supply voltage above which the usual safety-extra-low-voltage limit is
/// passed, V (60 V DC; from memory).
pub const SELV_LIMIT_V: f64 = 60.0;

/// Which straight-segment curve fit a [`Warning::CurveFit`] is about.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum FittedCurve {
    /// The LED string's curve.
    Led,
    /// The diode's curve.
    Diode,
}

impl fmt::Display for FittedCurve {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        f.write_str(match self {
            FittedCurve::Led => "LED",
            FittedCurve::Diode => "diode",
        })
    }
}

/// Which end of a declared input range a [`Warning::RangeEndFails`] is
/// about.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum SupplyEnd {
    /// The lowest supply of the range.
    Low,
    /// The highest supply of the range.
    High,
}

impl SupplyEnd {
    /// The end's name as written in reports (`low`, `high`).
    pub fn name(self) -> &'static str {
        match self {
            SupplyEnd::Low => "low",
            SupplyEnd::High => "high",
        }
    }
}

impl fmt::Display for SupplyEnd {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        f.write_str(self.name())
    }
}

/// Something the engineer should look at in a design.
#[derive(Debug, Clone, PartialEq)]
pub enum Warning {
    /// The supply is above the usual extra-low-voltage limit
    /// ([`SELV_LIMIT_V`]).
    SupplyAboveSelv {
        /// The supply's open-circuit voltage, V.
        supply_v: f64,
    },
    /// The steady-state inductor peak passes its rated saturation current.
    InductorSaturation {
        /// Steady-state inductor peak current, A.
        inductor_peak_a: f64,
        /// The inductor's rated saturation current, A.
        saturation_a: f64,
    },
    /// Discontinuous conduction: how deep (deep from [`DEEP_DCM_IDLE`] of
    /// the period on), whether it contradicts the stated intent, and (for
    /// constant off-time) the inductance that would just keep the current
    /// flowing.
    Dcm {
        /// Time per cycle the inductor current rests at zero, s.
        idle_time_s: f64,
        /// Switching period, s.
        period_s: f64,
        /// LED average current, A.
        led_current_avg_a: f64,
        /// Inductor peak current, A.
        inductor_peak_a: f64,
        /// Constant off-time only: the inductance at the CCM/DCM boundary,
        /// `L · t_off / (t_off − t_idle)`, H.
        ccm_inductance_h: Option<f64>,
        /// Whether the design asks for CCM (`parts.intended_mode = ccm`).
        ccm_intended: bool,
    },
    /// At the CCM/DCM boundary: the valley current touches zero.
    ModeBoundary,
    /// The waveform repeats only every few switching cycles.
    Subharmonic {
        /// Switching cycles per repetition of the waveform.
        period_cycles: usize,
    },
    /// The switching frequency is in the audible band (below 20 kHz).
    AudibleSwitching {
        /// Switching frequency, Hz.
        switching_frequency_hz: f64,
    },
    /// The duty cycle leaves little headroom (above 95 %).
    DutyHeadroom {
        /// Duty cycle, as a fraction of the period (0..1).
        duty: f64,
    },
    /// A straight-segment curve fit misses its tolerance with every
    /// segment allowed in use.
    CurveFit {
        /// Which curve.
        curve: FittedCurve,
        /// Its worst error over the visited currents, V.
        error_v: f64,
        /// The tolerance asked for (`simulation.curve_tolerance_v`), V.
        tolerance_v: f64,
        /// Segments in the fit.
        segments: usize,
    },
    /// The design does not run at one end of the declared input range.
    RangeEndFails {
        /// The supply at that end, V.
        supply_v: f64,
        /// Which end.
        end: SupplyEnd,
        /// Why: the text of the scenario or run error there (free-form:
        /// the error's own words).
        reason: String,
    },
    /// The capacitor-bias / LED-temperature iteration did not settle.
    IterationUnsettled {
        /// Runs made.
        runs: u32,
    },
    /// A part (not the LEDs) is estimated hot enough to burn a finger.
    HotPart {
        /// Which part (`switch`, `diode`, `inductor`, `input_capacitor`,
        /// `output_capacitor`).
        part: &'static str,
        /// Its estimated temperature, °C (the project's unit for
        /// temperatures, as in `thermal`).
        temperature_c: f64,
    },
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

    /// Whether this is deep DCM (idle at least [`DEEP_DCM_IDLE`] of the
    /// period); false for every other kind.
    pub fn is_deep_dcm(&self) -> bool {
        matches!(self, Warning::Dcm { idle_time_s, period_s, .. }
            if idle_time_s / period_s >= DEEP_DCM_IDLE)
    }
}

/// The DCM warning's words.
fn fmt_dcm(
    f: &mut fmt::Formatter<'_>,
    idle_time_s: f64,
    period_s: f64,
    led_current_avg_a: f64,
    inductor_peak_a: f64,
    ccm_inductance_h: Option<f64>,
    ccm_intended: bool,
) -> fmt::Result {
    let idle = idle_time_s / period_s;
    if idle >= DEEP_DCM_IDLE {
        write!(
            f,
            "deep discontinuous conduction (DCM): the inductor current collapses to zero every \
             cycle and rests there for {:.1} % of the period",
            100.0 * idle
        )?;
    } else {
        write!(
            f,
            "discontinuous conduction (DCM): the inductor current rests at zero for {:.1} % of \
             each period",
            100.0 * idle
        )?;
    }
    let led_pct = 100.0 * led_current_avg_a / inductor_peak_a;
    if ccm_intended {
        write!(
            f,
            ", but the design asks for CCM (parts.intended_mode = ccm): the LED average is \
             {led_pct:.1} % of the inductor peak"
        )?;
    } else {
        write!(
            f,
            ". This is a valid way to run, not an error: the controller still regulates, \
             and the LED average is {led_pct:.1} % of the inductor peak"
        )?;
    }
    if let Some(l_ccm) = ccm_inductance_h {
        write!(
            f,
            "; roughly {:.3} µH or more (or a proportionally shorter off-time) keeps it \
             continuous (`chopwave boundary` finds the exact value)",
            l_ccm * 1e6
        )?;
    }
    Ok(())
}

impl fmt::Display for Warning {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        match self {
            Warning::SupplyAboveSelv { supply_v } => write!(
                f,
                "supply {supply_v:.1} V is above the usual 60 V DC extra-low-voltage limit: \
                 touch-safe construction, insulation and creepage rules apply; follow local \
                 codes and licensed practice"
            ),
            Warning::InductorSaturation {
                inductor_peak_a,
                saturation_a,
            } => write!(
                f,
                "inductor peak current {inductor_peak_a:.3} A exceeds its rated saturation \
                 current {saturation_a:.3} A"
            ),
            Warning::Dcm {
                idle_time_s,
                period_s,
                led_current_avg_a,
                inductor_peak_a,
                ccm_inductance_h,
                ccm_intended,
            } => fmt_dcm(
                f,
                *idle_time_s,
                *period_s,
                *led_current_avg_a,
                *inductor_peak_a,
                *ccm_inductance_h,
                *ccm_intended,
            ),
            Warning::ModeBoundary => {
                f.write_str("at the CCM/DCM boundary: the valley current touches zero")
            }
            Warning::Subharmonic { period_cycles } => write!(
                f,
                "subharmonic operation: the waveform repeats every {period_cycles} switching cycles"
            ),
            Warning::AudibleSwitching {
                switching_frequency_hz,
            } => write!(
                f,
                "switching frequency {:.1} kHz is in the audible band (below 20 kHz)",
                switching_frequency_hz / 1e3
            ),
            Warning::DutyHeadroom { duty } => write!(
                f,
                "duty cycle {:.1} % leaves little headroom: the supply is close to the LED \
                 string voltage",
                100.0 * duty
            ),
            Warning::CurveFit {
                curve,
                error_v,
                tolerance_v,
                segments,
            } => write!(
                f,
                "the {curve} curve's straight-segment fit errs by up to {:.3} mV, more than \
                 simulation.curve_tolerance_v = {:.3} mV, with all {segments} segments allowed: \
                 raise simulation.curve_segments (at most {MAX_SEGMENTS}) or loosen the tolerance",
                error_v * 1e3,
                tolerance_v * 1e3,
            ),
            Warning::RangeEndFails {
                supply_v,
                end,
                reason,
            } => write!(
                f,
                "at {supply_v} V, the {end} end of the declared input range, the design does \
                 not run: {reason}"
            ),
            Warning::IterationUnsettled { runs } => write!(
                f,
                "the capacitor-bias / LED-temperature iteration did not settle in {runs} runs: \
                 the figures are those of the last run"
            ),
            Warning::HotPart {
                part,
                temperature_c,
            } => write!(
                f,
                "{} estimated at {temperature_c:.0} °C: hot enough to burn a finger (above \
                 about 60 °C, common practice); keep it out of reach or give it copper and \
                 airflow",
                part.replace('_', " "),
            ),
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

    /// Every kind's words, written out in full (the wording the text
    /// summary and `run --json` have always printed), against `Display`
    /// and the JSON string.
    #[test]
    fn every_variant_reads_as_its_words() {
        let table: Vec<(Warning, &str)> = vec![
            (
                Warning::SupplyAboveSelv { supply_v: 325.0 },
                "supply 325.0 V is above the usual 60 V DC extra-low-voltage limit: touch-safe \
                 construction, insulation and creepage rules apply; follow local codes and \
                 licensed practice",
            ),
            (
                Warning::InductorSaturation {
                    inductor_peak_a: 0.9375,
                    saturation_a: 0.8,
                },
                "inductor peak current 0.938 A exceeds its rated saturation current 0.800 A",
            ),
            (
                Warning::Dcm {
                    idle_time_s: 3e-6,
                    period_s: 1e-5,
                    led_current_avg_a: 0.35,
                    inductor_peak_a: 1.0,
                    ccm_inductance_h: None,
                    ccm_intended: false,
                },
                "discontinuous conduction (DCM): the inductor current rests at zero for 30.0 % \
                 of each period. This is a valid way to run, not an error: the controller still \
                 regulates, and the LED average is 35.0 % of the inductor peak",
            ),
            (
                Warning::Dcm {
                    idle_time_s: 6e-6,
                    period_s: 1e-5,
                    led_current_avg_a: 0.25,
                    inductor_peak_a: 1.0,
                    ccm_inductance_h: Some(150e-6),
                    ccm_intended: true,
                },
                "deep discontinuous conduction (DCM): the inductor current collapses to zero \
                 every cycle and rests there for 60.0 % of the period, but the design asks for \
                 CCM (parts.intended_mode = ccm): the LED average is 25.0 % of the inductor \
                 peak; roughly 150.000 µH or more (or a proportionally shorter off-time) keeps \
                 it continuous (`chopwave boundary` finds the exact value)",
            ),
            (
                // Exactly half the period idle is deep already.
                Warning::Dcm {
                    idle_time_s: 5e-6,
                    period_s: 1e-5,
                    led_current_avg_a: 0.4,
                    inductor_peak_a: 1.0,
                    ccm_inductance_h: Some(47e-6),
                    ccm_intended: false,
                },
                "deep discontinuous conduction (DCM): the inductor current collapses to zero \
                 every cycle and rests there for 50.0 % of the period. This is a valid way to \
                 run, not an error: the controller still regulates, and the LED average is \
                 40.0 % of the inductor peak; roughly 47.000 µH or more (or a proportionally \
                 shorter off-time) keeps it continuous (`chopwave boundary` finds the exact \
                 value)",
            ),
            (
                Warning::ModeBoundary,
                "at the CCM/DCM boundary: the valley current touches zero",
            ),
            (
                Warning::Subharmonic { period_cycles: 2 },
                "subharmonic operation: the waveform repeats every 2 switching cycles",
            ),
            (
                Warning::AudibleSwitching {
                    switching_frequency_hz: 12_340.0,
                },
                "switching frequency 12.3 kHz is in the audible band (below 20 kHz)",
            ),
            (
                Warning::DutyHeadroom { duty: 0.963 },
                "duty cycle 96.3 % leaves little headroom: the supply is close to the LED \
                 string voltage",
            ),
            (
                Warning::CurveFit {
                    curve: FittedCurve::Led,
                    error_v: 1.25e-3,
                    tolerance_v: 0.5e-3,
                    segments: 16,
                },
                "the LED curve's straight-segment fit errs by up to 1.250 mV, more than \
                 simulation.curve_tolerance_v = 0.500 mV, with all 16 segments allowed: raise \
                 simulation.curve_segments (at most 64) or loosen the tolerance",
            ),
            (
                Warning::CurveFit {
                    curve: FittedCurve::Diode,
                    error_v: 2e-3,
                    tolerance_v: 1e-3,
                    segments: 64,
                },
                "the diode curve's straight-segment fit errs by up to 2.000 mV, more than \
                 simulation.curve_tolerance_v = 1.000 mV, with all 64 segments allowed: raise \
                 simulation.curve_segments (at most 64) or loosen the tolerance",
            ),
            (
                Warning::RangeEndFails {
                    supply_v: 9.0,
                    end: SupplyEnd::Low,
                    reason: "the current never reaches the threshold".into(),
                },
                "at 9 V, the low end of the declared input range, the design does not run: the \
                 current never reaches the threshold",
            ),
            (
                Warning::RangeEndFails {
                    supply_v: 32.5,
                    end: SupplyEnd::High,
                    reason: "x".into(),
                },
                "at 32.5 V, the high end of the declared input range, the design does not run: x",
            ),
            (
                Warning::IterationUnsettled { runs: 8 },
                "the capacitor-bias / LED-temperature iteration did not settle in 8 runs: the \
                 figures are those of the last run",
            ),
            (
                Warning::HotPart {
                    part: "input_capacitor",
                    temperature_c: 71.6,
                },
                "input capacitor estimated at 72 °C: hot enough to burn a finger (above about \
                 60 °C, common practice); keep it out of reach or give it copper and airflow",
            ),
            (
                Warning::StartupSaturation {
                    startup_peak_a: 1.28,
                    saturation_a: 1.2,
                    steady_peak_a: 0.937,
                },
                "at start-up the inductor current reaches 1.28 A, above its rated saturation \
                 current 1.2 A (steady-state peak 937 mA): a saturating inductor lets the \
                 current rise faster still; consider a soft start or a part rated for the \
                 start-up peak",
            ),
        ];
        for (w, words) in &table {
            assert_eq!(w.to_string(), *words, "{w:?}");
            assert_eq!(
                serde_json::to_string(w).unwrap(),
                serde_json::to_string(words).unwrap()
            );
        }
    }

    /// Deep DCM from half the period idle on, and only for DCM.
    #[test]
    fn deep_dcm_from_half_the_period() {
        let dcm = |idle_time_s| Warning::Dcm {
            idle_time_s,
            period_s: 1e-5,
            led_current_avg_a: 0.3,
            inductor_peak_a: 1.0,
            ccm_inductance_h: None,
            ccm_intended: false,
        };
        assert!(dcm(5e-6).is_deep_dcm());
        assert!(!dcm(4.9e-6).is_deep_dcm());
        assert!(!Warning::ModeBoundary.is_deep_dcm());
    }

    /// The start-up saturation warning needs a start-up peak above the
    /// rating while the steady-state peak stays at or below it.
    #[test]
    fn startup_saturation_only_when_the_start_up_alone_passes_the_rating() {
        assert_eq!(
            Warning::startup_saturation(Some(1.5), Some(1.2), 0.9),
            Some(Warning::StartupSaturation {
                startup_peak_a: 1.5,
                saturation_a: 1.2,
                steady_peak_a: 0.9
            })
        );
        assert_eq!(
            Warning::startup_saturation(Some(1.5), Some(1.2), 1.2).map(|w| w.to_string()),
            Some(
                "at start-up the inductor current reaches 1.5 A, above its rated saturation \
                 current 1.2 A (steady-state peak 1.2 A): a saturating inductor lets the \
                 current rise faster still; consider a soft start or a part rated for the \
                 start-up peak"
                    .to_string()
            )
        );
        assert_eq!(Warning::startup_saturation(Some(1.1), Some(1.2), 0.9), None);
        assert_eq!(Warning::startup_saturation(Some(1.5), Some(1.2), 1.3), None);
        assert_eq!(Warning::startup_saturation(None, Some(1.2), 0.9), None);
        assert_eq!(Warning::startup_saturation(Some(1.5), None, 0.9), None);
    }
}
