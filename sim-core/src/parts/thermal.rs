//! Part temperatures from their dissipation and thermal resistance, and
//! the LED's forward voltage at its junction temperature.
//!
//! Each part that gives a [`crate::scenario::Thermal`] path gets the
//! steady estimate T = T_ambient + R_th·P (one thermal resistance to
//! ambient, no coupling between parts: a first estimate, not a thermal
//! simulation). The LED junction temperature T_j = T_ambient +
//! R_th·h·P_LED/count (h: the fraction of the electrical power that becomes
//! heat) is fed back into the load: the exponential model is evaluated at
//! T_j (its saturation current by [`crate::devices::JunctionLaw`], the
//! same model as `load.junction_temperature_c`), the knee model's knee
//! moves by tempco·(T_j − 25 °C); [`fn@crate::run::assess`] repeats the run
//! until T_j settles.

use crate::metrics::Metrics;
use crate::scenario::{Load, Scenario, Thermal};
use crate::units::thermal_voltage_v;
use serde::Serialize;

/// Surface temperature above which a part burns a finger that touches it,
/// °C (**common practice**: about 60 °C is where brief contact starts to
/// hurt; no standard is applied).
pub(crate) const TOUCH_HOT_C: f64 = 60.0;

/// One part's estimated steady temperature.
#[derive(Debug, Clone, Serialize, PartialEq)]
pub struct PartTemperature {
    /// Which part (`switch`, `diode`, `inductor`, `input_capacitor`,
    /// `output_capacitor`, `led`).
    pub part: &'static str,
    /// Heat dissipated in it, W (per LED for `led`).
    pub dissipation_w: f64,
    /// Thermal resistance to ambient, °C/W.
    pub resistance_c_per_w: f64,
    /// Estimated temperature, °C.
    pub temperature_c: f64,
    /// Its allowed maximum, °C.
    pub max_temperature_c: f64,
}

/// Heat in each dissipating part, W: switch (conduction, transition,
/// output capacitance and the diode junction capacitance it charges; the
/// gate drive heats the driver, not the channel),
/// diode (conduction, recovery), inductor (winding, core), capacitors (ESR).
pub(crate) fn dissipations(m: &Metrics) -> [(&'static str, f64); 5] {
    let l = &m.losses_w;
    [
        (
            "switch",
            l.switch_conduction
                + l.switch_transition
                + l.switch_output_capacitance
                + l.diode_junction_capacitance,
        ),
        ("diode", l.diode_conduction + l.diode_reverse_recovery),
        ("inductor", l.inductor_dcr + l.inductor_core),
        ("input_capacitor", l.input_capacitor_esr),
        ("output_capacitor", l.output_capacitor_esr),
    ]
}

/// Number of LEDs in the string (1 for a resistor load).
pub(crate) fn led_count(load: &Load) -> u32 {
    match *load {
        Load::LedExponential { count, .. } | Load::LedKnee { count, .. } => count.max(1),
        Load::Resistor { .. } => 1,
    }
}

/// The LED junction temperature for a run's LED power, °C (None without
/// LED thermal data).
pub(crate) fn led_junction_c(s: &Scenario, m: &Metrics) -> Option<f64> {
    let led = s.parts.led?;
    let per_led = led.heat_fraction * m.led_power_w / f64::from(led_count(&s.load));
    Some(s.parts.ambient_temperature_c + led.resistance_c_per_w * per_led)
}

/// Every part's temperature estimate (those with a thermal path).
pub fn temperatures(s: &Scenario, m: &Metrics) -> Vec<PartTemperature> {
    let p = &s.parts;
    let paths: [Option<Thermal>; 5] = [
        p.switch.thermal,
        p.diode.thermal,
        p.inductor.thermal,
        p.input_capacitor.thermal,
        p.output_capacitor.thermal,
    ];
    let mut out: Vec<PartTemperature> = dissipations(m)
        .into_iter()
        .zip(paths)
        .filter_map(|((part, w), th)| {
            th.map(|th| PartTemperature {
                part,
                dissipation_w: w,
                resistance_c_per_w: th.resistance_c_per_w,
                temperature_c: p.ambient_temperature_c + th.resistance_c_per_w * w,
                max_temperature_c: th.max_temperature_c,
            })
        })
        .collect();
    if let (Some(led), Some(tj)) = (p.led, led_junction_c(s, m)) {
        out.push(PartTemperature {
            part: "led",
            dissipation_w: led.heat_fraction * m.led_power_w / f64::from(led_count(&s.load)),
            resistance_c_per_w: led.resistance_c_per_w,
            temperature_c: tj,
            max_temperature_c: led.max_junction_temperature_c,
        });
    }
    out
}

/// The load with each LED's forward voltage shifted by `shift_v`
/// (tempco·ΔT). For the exponential model the saturation current is
/// scaled by exp(−shift/(n·Vt)), which moves v = n·Vt·ln(1 + i/Is) + Rs·i
/// by `shift_v` at every current well above Is (all operating currents);
/// for the knee model the knee moves; a resistor is unchanged.
pub(crate) fn shifted_load(load: &Load, shift_v: f64) -> Load {
    let mut out = *load;
    match &mut out {
        Load::LedExponential {
            saturation_current_a,
            emission_coefficient,
            junction_temperature_c,
            ..
        } => {
            let n_vt = *emission_coefficient * thermal_voltage_v(*junction_temperature_c);
            *saturation_current_a *= (-shift_v / n_vt).exp();
        }
        Load::LedKnee { knee_voltage_v, .. } => *knee_voltage_v += shift_v,
        Load::Resistor { .. } => {}
    }
    out
}

/// The exponential load's temperature law completed from `parts.led`: a
/// load that gives neither a band gap nor a coefficient of its own takes
/// `parts.led.forward_voltage_tempco_v_per_k` (when not 0) as its
/// datasheet coefficient at the controller's target current (the rated
/// current). Any other load is returned unchanged.
pub fn load_with_led_tempco(s: &Scenario) -> Load {
    let mut out = s.load;
    let (Some(led), Some(target)) = (s.parts.led, s.target_current_a()) else {
        return out;
    };
    if let Load::LedExponential {
        bandgap_ev: None,
        forward_voltage_tempco_v_per_k: tc @ None,
        tempco_current_a,
        ..
    } = &mut out
    {
        if led.forward_voltage_tempco_v_per_k != 0.0 {
            *tc = Some(led.forward_voltage_tempco_v_per_k);
            *tempco_current_a = Some(target);
        }
    }
    out
}

/// The load with its LEDs at junction temperature `t_j_c`. The
/// exponential model is simply evaluated there (its saturation current
/// follows the junction law, [`crate::devices::JunctionLaw`]: the same
/// model as a scenario's `load.junction_temperature_c`); the knee model's
/// knee moves by `parts.led.forward_voltage_tempco_v_per_k`·(T_j − 25 °C).
pub(crate) fn load_at_junction(s: &Scenario, t_j_c: f64) -> Load {
    let mut out = load_with_led_tempco(s);
    match &mut out {
        Load::LedExponential {
            junction_temperature_c,
            ..
        } => *junction_temperature_c = t_j_c,
        Load::LedKnee { .. } => {
            let tc = s
                .parts
                .led
                .map_or(0.0, |l| l.forward_voltage_tempco_v_per_k);
            out = shifted_load(&out, tc * (t_j_c - model_temperature_c(&s.load)));
        }
        Load::Resistor { .. } => {}
    }
    out
}

/// Whether the LED load's voltage depends on its junction temperature
/// (so the temperature loop must iterate): always for the exponential
/// model, for the knee model when a coefficient is given.
pub(crate) fn led_depends_on_temperature(s: &Scenario) -> bool {
    s.parts.led.is_some_and(|l| match s.load {
        Load::LedExponential { .. } => true,
        Load::LedKnee { .. } => l.forward_voltage_tempco_v_per_k != 0.0,
        Load::Resistor { .. } => false,
    })
}

/// The temperature the LED model's parameters hold at, °C: the junction
/// temperature the exponential model is evaluated at, 25 °C for the knee
/// model.
pub(crate) fn model_temperature_c(load: &Load) -> f64 {
    match *load {
        Load::LedExponential {
            junction_temperature_c,
            ..
        } => junction_temperature_c,
        _ => 25.0,
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::devices::ExpDevice;

    #[test]
    fn shifted_exponential_moves_by_the_shift_at_every_current() {
        let load = Load::LedExponential {
            count: 3,
            saturation_current_a: 1e-18,
            emission_coefficient: 2.2,
            series_resistance_ohm: 0.35,
            junction_temperature_c: 25.0,
            reference_temperature_c: None,
            bandgap_ev: None,
            is_temp_exponent: None,
            forward_voltage_tempco_v_per_k: None,
            tempco_current_a: None,
        };
        let a = ExpDevice::from_load(&load).unwrap();
        let b = ExpDevice::from_load(&shifted_load(&load, -0.1)).unwrap();
        for i in [1e-3, 0.1, 0.7, 2.0] {
            let d = b.voltage_v(i) - a.voltage_v(i);
            assert!((d + 0.3).abs() < 1e-9, "{i}: {d}");
        }
    }
}
