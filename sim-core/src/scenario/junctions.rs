//! From the scenario's exponential parts (LED load, Shockley diode) to the
//! device laws of [`crate::devices`], which take plain numbers: the
//! temperature data, the temperature law and the curve at the junction
//! temperature.

use super::{Diode, Load};
use crate::devices::{
    ExpDevice, JunctionInputs, JunctionLaw, JunctionString, DIODE_BANDGAP_EV,
    DIODE_IS_TEMP_EXPONENT, LED_BANDGAP_EV, LED_IS_TEMP_EXPONENT,
};

impl Load {
    /// The temperature data of an exponential LED load (None for the
    /// other loads).
    pub fn junction_inputs(&self) -> Option<JunctionInputs> {
        match *self {
            Load::LedExponential {
                reference_temperature_c,
                bandgap_ev,
                is_temp_exponent,
                forward_voltage_tempco_v_per_k,
                tempco_current_a,
                ..
            } => Some(JunctionInputs {
                reference_temperature_c,
                bandgap_ev,
                is_temp_exponent,
                tempco_v_per_k: forward_voltage_tempco_v_per_k,
                tempco_current_a,
            }),
            _ => None,
        }
    }

    /// The temperature law of an exponential LED load (defaults: GaN band
    /// gap, XTI = 3).
    pub fn junction_law(&self) -> Option<JunctionLaw> {
        let inputs = self.junction_inputs()?;
        match *self {
            Load::LedExponential {
                saturation_current_a,
                emission_coefficient,
                ..
            } => Some(JunctionLaw::resolve(
                &inputs,
                saturation_current_a,
                emission_coefficient,
                LED_BANDGAP_EV,
                LED_IS_TEMP_EXPONENT,
            )),
            _ => None,
        }
    }

    /// The LED string as plain numbers, at its junction temperature.
    pub fn junction_string(&self) -> Option<JunctionString> {
        match *self {
            Load::LedExponential {
                count,
                saturation_current_a,
                emission_coefficient,
                series_resistance_ohm,
                junction_temperature_c,
                ..
            } => Some(JunctionString {
                count,
                saturation_current_a,
                emission_coefficient,
                series_resistance_ohm,
                temperature_c: junction_temperature_c,
            }),
            _ => None,
        }
    }
}

impl Diode {
    /// The temperature data of a Shockley diode (None for a fixed drop).
    pub fn junction_inputs(&self) -> Option<JunctionInputs> {
        match *self {
            Diode::Shockley {
                reference_temperature_c,
                bandgap_ev,
                is_temp_exponent,
                forward_voltage_tempco_v_per_k,
                tempco_current_a,
                ..
            } => Some(JunctionInputs {
                reference_temperature_c,
                bandgap_ev,
                is_temp_exponent,
                tempco_v_per_k: forward_voltage_tempco_v_per_k,
                tempco_current_a,
            }),
            Diode::FixedDrop { .. } => None,
        }
    }

    /// The temperature law of a Shockley diode (defaults: Schottky
    /// barrier, XTI = 2).
    pub fn junction_law(&self) -> Option<JunctionLaw> {
        let inputs = self.junction_inputs()?;
        match *self {
            Diode::Shockley {
                saturation_current_a,
                emission_coefficient,
                ..
            } => Some(JunctionLaw::resolve(
                &inputs,
                saturation_current_a,
                emission_coefficient,
                DIODE_BANDGAP_EV,
                DIODE_IS_TEMP_EXPONENT,
            )),
            Diode::FixedDrop { .. } => None,
        }
    }

    /// The diode as plain numbers (one junction), at its temperature.
    pub fn junction_string(&self) -> Option<JunctionString> {
        match *self {
            Diode::Shockley {
                saturation_current_a,
                emission_coefficient,
                series_resistance_ohm,
                temperature_c,
                ..
            } => Some(JunctionString {
                count: 1,
                saturation_current_a,
                emission_coefficient,
                series_resistance_ohm,
                temperature_c,
            }),
            Diode::FixedDrop { .. } => None,
        }
    }
}

impl ExpDevice {
    /// The exponential model of an LED load, if the load is one, at its
    /// junction temperature: n·Vt at that temperature and the saturation
    /// current moved there from its reference temperature by the
    /// load's [`JunctionLaw`].
    pub fn from_load(load: &Load) -> Option<ExpDevice> {
        let law = load.junction_law()?;
        Some(ExpDevice::at_temperature(&load.junction_string()?, &law))
    }

    /// The Shockley model of a diode, if the diode is one, at its
    /// temperature (saturation current by the diode's [`JunctionLaw`]).
    pub fn from_diode(diode: &Diode) -> Option<ExpDevice> {
        let law = diode.junction_law()?;
        Some(ExpDevice::at_temperature(&diode.junction_string()?, &law))
    }
}
