//! The element values of a scenario, read from it in one place.
//!
//! [`Elements::new`] is the only code that reads the circuit's element
//! values (supply, capacitors, switch, inductor with its saturation curve,
//! sense resistor, diode and load curves) out of a [`Scenario`]. The
//! exact engine's [`super::circuit::Circuit`] is built from it (adding the
//! chord fits), the reference engine integrates it directly, and the
//! post-processed core loss reads the inductor's flux from it, so the two
//! engines and the losses cannot drift apart.

#[cfg(test)]
mod tests;

use crate::devices::{ExpDevice, InductanceCurve};
use crate::scenario::{Diode, Load, Scenario, SensePosition};

/// A voltage–current curve of a two-terminal device.
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum DeviceCurve {
    /// The exact exponential curve (an LED string or a Shockley diode).
    Exp(ExpDevice),
    /// v = knee + r·i above the knee, no current below it.
    Line {
        /// Knee voltage, V.
        knee_v: f64,
        /// Slope resistance, ohms.
        r_ohm: f64,
    },
}

impl DeviceCurve {
    /// The exponential curve, when it is one.
    pub fn exp(&self) -> Option<ExpDevice> {
        match *self {
            DeviceCurve::Exp(d) => Some(d),
            DeviceCurve::Line { .. } => None,
        }
    }
}

/// Element values of the circuit, SI units.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Elements {
    /// Supply voltage, V.
    pub supply_v: f64,
    /// Source resistance, ohms.
    pub source_ohm: f64,
    /// Input capacitance, F, and ESR, ohms (None: absent, or with no ESR
    /// straight on an ideal source, where it does nothing).
    pub input_cap: Option<(f64, f64)>,
    /// Switch on-resistance, ohms.
    pub switch_ohm: f64,
    /// Inductance, H (the value at zero current with a saturation curve).
    pub inductance_h: f64,
    /// The soft-saturation curve, when the part gives one.
    pub saturation: Option<InductanceCurve>,
    /// Inductor DCR, ohms.
    pub dcr_ohm: f64,
    /// Sense resistance in series with the LED string (carrying the
    /// inductor current), ohms; 0 without one there.
    pub sense_string_ohm: f64,
    /// Sense resistance in series with the switch, ohms; 0 without one there.
    pub sense_switch_ohm: f64,
    /// Output capacitance, F, and ESR, ohms.
    pub output_cap: Option<(f64, f64)>,
    /// The load's curve (LED string or resistor).
    pub led: DeviceCurve,
    /// The freewheel diode's curve.
    pub diode: DeviceCurve,
    /// The current floor, A ([`super::DIODE_FLOOR_REL`] of the current
    /// scale): below it an exponential string without an output capacitor
    /// is taken to block, and an off-state inductor current to have
    /// reached zero.
    pub floor_a: f64,
}

/// The sense resistance `(in series with the LED string, in series with
/// the switch)` of a scenario, ohms (0 where there is none).
pub(crate) fn sense_resistances(s: &Scenario) -> (f64, f64) {
    match s.sense_position() {
        Some((SensePosition::LedString, r)) => (r, 0.0),
        Some((SensePosition::Switch, r)) => (0.0, r),
        None => (0.0, 0.0),
    }
}

/// The inductor's soft-saturation curve from the part's points, when it
/// gives some.
pub fn saturation_curve(s: &Scenario) -> Option<InductanceCurve> {
    let points = &s.parts.inductor.saturation_curve;
    (!points.is_empty()).then(|| {
        let pts: Vec<(f64, f64)> = points
            .iter()
            .map(|p| (p.current_a, p.inductance_h))
            .collect();
        InductanceCurve::new(&pts)
    })
}

impl Elements {
    /// The element values of a validated scenario.
    pub fn new(s: &Scenario) -> Elements {
        let led = match (ExpDevice::from_load(&s.load), s.load) {
            (Some(d), _) => DeviceCurve::Exp(d),
            (
                None,
                Load::LedKnee {
                    count,
                    knee_voltage_v,
                    dynamic_resistance_ohm,
                },
            ) => DeviceCurve::Line {
                knee_v: f64::from(count) * knee_voltage_v,
                r_ohm: f64::from(count) * dynamic_resistance_ohm,
            },
            (None, Load::Resistor { resistance_ohm }) => DeviceCurve::Line {
                knee_v: 0.0,
                r_ohm: resistance_ohm,
            },
            // `from_load` gives a curve for every exponential load.
            (None, Load::LedExponential { .. }) => DeviceCurve::Line {
                knee_v: 0.0,
                r_ohm: 0.0,
            },
        };
        let diode = match (ExpDevice::from_diode(&s.diode), s.diode) {
            (Some(d), _) => DeviceCurve::Exp(d),
            (
                None,
                Diode::FixedDrop {
                    forward_voltage_v,
                    series_resistance_ohm,
                },
            ) => DeviceCurve::Line {
                knee_v: forward_voltage_v,
                r_ohm: series_resistance_ohm,
            },
            // `from_diode` gives a curve for every Shockley diode.
            (None, Diode::Shockley { .. }) => DeviceCurve::Line {
                knee_v: 0.0,
                r_ohm: 0.0,
            },
        };
        let input_cap = s.input_capacitor.and_then(|c| {
            // A capacitor with no ESR straight on an ideal source does nothing.
            if s.supply.source_resistance_ohm == 0.0 && c.esr_ohm == 0.0 {
                None
            } else {
                Some((c.capacitance_f, c.esr_ohm))
            }
        });
        let saturation = saturation_curve(s);
        let (sense_string_ohm, sense_switch_ohm) = sense_resistances(s);
        Elements {
            supply_v: s.supply.voltage_v,
            source_ohm: s.supply.source_resistance_ohm,
            input_cap,
            switch_ohm: s.switch.on_resistance_ohm,
            inductance_h: saturation.map_or(s.inductor.inductance_h, |c| c.inductance_h(0.0)),
            saturation,
            dcr_ohm: s.inductor.dcr_ohm,
            sense_string_ohm,
            sense_switch_ohm,
            output_cap: s.output_capacitor.map(|c| (c.capacitance_f, c.esr_ohm)),
            led,
            diode,
            floor_a: super::DIODE_FLOOR_REL * super::seam::state_scales(s)[0],
        }
    }

    /// Voltage the LED string holds while the inductor rests with no
    /// output capacitor, V: the knee of a straight-line load; for an
    /// exponential string its voltage at the current floor, below which it
    /// is taken to block.
    pub fn led_idle_v(&self) -> f64 {
        match self.led {
            DeviceCurve::Exp(d) => d.voltage_v(self.floor_a),
            DeviceCurve::Line { knee_v, .. } => knee_v,
        }
    }

    /// The inductor's flux linkage at current `i`, Wb: L·i, or the
    /// saturation curve's ∫L(i)di.
    pub fn flux_wb(&self, i: f64) -> f64 {
        match &self.saturation {
            Some(c) => c.flux_wb(i),
            None => self.inductance_h * i,
        }
    }
}
