//! Axis titles for scenario fields: their human names (`supply.voltage_v`
//! is "Supply voltage") with the unit and its SI prefix.

use super::canvas::Axis;
use sim_core::study::vary::unit_of;

/// Human names of scenario fields for axis titles, by JSON path (the
/// unit is added from the field's suffix). A path not listed is named
/// from its last two parts.
const FIELD_NAMES: [(&str, &str); 34] = [
    ("supply.voltage_v", "Supply voltage"),
    ("supply.source_resistance_ohm", "Source resistance"),
    ("input_capacitor.capacitance_f", "Input capacitance"),
    ("input_capacitor.esr_ohm", "Input capacitor ESR"),
    ("output_capacitor.capacitance_f", "Output capacitance"),
    ("output_capacitor.esr_ohm", "Output capacitor ESR"),
    ("switch.on_resistance_ohm", "Switch on-resistance"),
    ("diode.forward_voltage_v", "Diode forward voltage"),
    ("diode.series_resistance_ohm", "Diode series resistance"),
    ("diode.saturation_current_a", "Diode saturation current"),
    ("diode.emission_coefficient", "Diode emission coefficient"),
    ("diode.temperature_c", "Diode temperature"),
    ("inductor.inductance_h", "Inductance"),
    ("inductor.dcr_ohm", "Inductor winding resistance"),
    (
        "inductor.saturation_current_a",
        "Inductor saturation current",
    ),
    ("load.count", "LEDs in series"),
    ("load.series_resistance_ohm", "LED series resistance"),
    ("load.saturation_current_a", "LED saturation current"),
    ("load.emission_coefficient", "LED emission coefficient"),
    ("load.junction_temperature_c", "LED junction temperature"),
    ("load.resistance_ohm", "Load resistance"),
    ("load.knee_voltage_v", "LED knee voltage"),
    ("controller.peak_current_a", "Peak-current threshold"),
    ("controller.off_time_s", "Off-time"),
    ("controller.delay_s", "Turn-off delay"),
    ("controller.min_on_time_s", "Minimum on-time"),
    ("controller.upper_current_a", "Upper current threshold"),
    ("controller.lower_current_a", "Lower current threshold"),
    ("controller.frequency_hz", "Switching frequency"),
    ("controller.duty", "Duty cycle"),
    ("parts.ambient_temperature_c", "Ambient temperature"),
    ("parts.led_current_target_a", "LED current target"),
    ("simulation.samples_per_interval", "Samples per interval"),
    ("simulation.record_cycles", "Recorded cycles"),
];

/// The human name of a scenario field (`supply.voltage_v` → "Supply
/// voltage"), without its unit.
pub(crate) fn field_name(path: &str) -> String {
    if let Some((_, n)) = FIELD_NAMES.iter().find(|(p, _)| *p == path) {
        return (*n).to_string();
    }
    // Drop the unit suffix of the last part, name it after its section.
    let mut parts: Vec<&str> = path.split('.').filter(|p| !p.is_empty()).collect();
    let last = parts.pop().unwrap_or(path);
    let units = ["v", "a", "ohm", "h", "f", "s", "hz", "c", "pct"];
    let stem = match last.rsplit_once('_') {
        Some((a, u)) if units.contains(&u) => a,
        _ => last,
    };
    let section = parts.last().map(|p| p.replace('_', " "));
    let words = match section {
        Some(sec) => format!("{sec} {}", stem.replace('_', " ")),
        None => stem.replace('_', " "),
    };
    let mut c = words.chars();
    match c.next() {
        Some(f) => f.to_uppercase().chain(c).collect(),
        None => words,
    }
}

/// An axis title for a swept field with its prefixed unit.
pub(crate) fn field_title(path: &str, axis: &Axis) -> String {
    // The unit symbol the library shows (none for ratios).
    let u = unit_of(path).display_symbol();
    let name = field_name(path);
    if u.is_empty() && axis.prefix.is_empty() {
        name
    } else {
        format!("{name} ({}{u})", axis.prefix)
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn axis_titles_use_human_names() {
        assert_eq!(field_name("supply.voltage_v"), "Supply voltage");
        assert_eq!(field_name("inductor.inductance_h"), "Inductance");
        assert_eq!(field_name("parts.switch.rise_time_s"), "Switch rise time");
        assert_eq!(
            field_name("controller.hysteresis_pct"),
            "Controller hysteresis"
        );
        for (p, _) in FIELD_NAMES {
            assert!(!field_name(p).contains('.') && !field_name(p).contains('_'));
        }
    }

    /// The unit in an axis title is the field's, with the axis prefix;
    /// a ratio has none.
    #[test]
    fn axis_titles_carry_the_unit() {
        let micro = Axis::for_magnitude(68e-6);
        assert_eq!(
            field_title("inductor.inductance_h", &micro),
            "Inductance (µH)"
        );
        let plain = Axis::plain();
        assert_eq!(
            field_title("load.series_resistance_ohm", &plain),
            "LED series resistance (Ω)"
        );
        assert_eq!(
            field_title("parts.ambient_temperature_c", &plain),
            "Ambient temperature (°C)"
        );
        assert_eq!(field_title("controller.duty", &plain), "Duty cycle");
    }
}
