//! The warnings of a run, in words: high supply, saturation, conduction
//! mode (with the inductance that keeps the current flowing), subharmonic
//! operation, audible frequency, duty headroom.

use crate::metrics::{ConductionMode, Metrics};
use crate::scenario::{IntendedMode, Scenario};

/// Idle share of the period above which DCM is called deep: the current
/// collapses early in every off-time and rests at zero most of the cycle.
pub(crate) const DEEP_DCM_IDLE: f64 = 0.5;

/// The DCM warning: how deep, whether it contradicts the stated intent,
/// and (constant off-time) the inductance that would just keep the
/// current flowing. In DCM the current falls from the peak to zero in
/// `t_off − t_idle`; the fall is linear in 1/L at the same peak and
/// voltages, so `L · t_off / (t_off − t_idle)` stretches it over the whole
/// off-time: the CCM/DCM boundary.
fn dcm_words(s: &Scenario, m: &Metrics) -> String {
    let idle = m.idle_time_s / m.period_s;
    let what = if idle >= DEEP_DCM_IDLE {
        format!(
            "deep discontinuous conduction (DCM): the inductor current collapses to zero every \
             cycle and rests there for {:.1} % of the period",
            100.0 * idle
        )
    } else {
        format!(
            "discontinuous conduction (DCM): the inductor current rests at zero for {:.1} % of \
             each period",
            100.0 * idle
        )
    };
    let hint = match s.controller {
        crate::scenario::ControllerSpec::ConstantOffTime { off_time_s, .. }
            if m.idle_time_s < off_time_s =>
        {
            let l_ccm = s.inductor.inductance_h * off_time_s / (off_time_s - m.idle_time_s);
            format!(
                "; roughly {:.3} µH or more (or a proportionally shorter off-time) keeps it \
                 continuous (`chopwave boundary` finds the exact value)",
                l_ccm * 1e6
            )
        }
        _ => String::new(),
    };
    if s.parts.intended_mode == IntendedMode::Ccm {
        format!(
            "{what}, but the design asks for CCM (parts.intended_mode = ccm): the LED average is \
             {:.1} % of the inductor peak{hint}",
            100.0 * m.led_current_avg_a / m.inductor_current_peak_a
        )
    } else {
        format!(
            "{what}. This is a valid way to run, not an error: the controller still regulates, \
             and the LED average is {:.1} % of the inductor peak{hint}",
            100.0 * m.led_current_avg_a / m.inductor_current_peak_a
        )
    }
}

/// Supply voltage above which the usual safety-extra-low-voltage limit is
/// passed, V (60 V DC; from memory).
pub(crate) const SELV_LIMIT_V: f64 = 60.0;

/// The warnings of a measured run (`order`: cycles per orbit).
pub(crate) fn warnings(s: &Scenario, m: &Metrics, order: usize) -> Vec<String> {
    let mut w = Vec::new();
    if s.supply.voltage_v > SELV_LIMIT_V {
        w.push(format!(
            "supply {:.1} V is above the usual 60 V DC extra-low-voltage limit: touch-safe \
             construction, insulation and creepage rules apply; follow local codes and licensed practice",
            s.supply.voltage_v
        ));
    }
    if let Some(isat) = s.inductor.saturation_current_a {
        if m.inductor_current_peak_a > isat {
            w.push(format!(
                "inductor peak current {:.3} A exceeds its rated saturation current {:.3} A",
                m.inductor_current_peak_a, isat
            ));
        }
    }
    if m.conduction_mode == ConductionMode::Dcm {
        w.push(dcm_words(s, m));
    } else if m.conduction_mode == ConductionMode::Boundary {
        w.push("at the CCM/DCM boundary: the valley current touches zero".into());
    }
    if order > 1 {
        w.push(format!(
            "subharmonic operation: the waveform repeats every {order} switching cycles"
        ));
    }
    if m.switching_frequency_hz < 20e3 {
        w.push(format!(
            "switching frequency {:.1} kHz is in the audible band (below 20 kHz)",
            m.switching_frequency_hz / 1e3
        ));
    }
    if m.duty > 0.95 {
        w.push(format!(
            "duty cycle {:.1} % leaves little headroom: the supply is close to the LED string voltage",
            100.0 * m.duty
        ));
    }
    w
}
