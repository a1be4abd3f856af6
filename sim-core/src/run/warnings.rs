//! The warnings of a measured run as typed values
//! ([`crate::parts::advice::Warning`]): high supply, saturation,
//! conduction mode (with the inductance that keeps the current flowing),
//! subharmonic operation, audible frequency, duty headroom.

use crate::metrics::{ConductionMode, Metrics};
pub use crate::parts::advice::{Warning, DEEP_DCM_IDLE, SELV_LIMIT_V};
use crate::scenario::{ControllerSpec, IntendedMode, Scenario};

/// The DCM warning: how deep, whether it contradicts the stated intent,
/// and (constant off-time) the inductance that would just keep the
/// current flowing. In DCM the current falls from the peak to zero in
/// `t_off − t_idle`; the fall is linear in 1/L at the same peak and
/// voltages, so `L · t_off / (t_off − t_idle)` stretches it over the whole
/// off-time: the CCM/DCM boundary.
fn dcm_warning(s: &Scenario, m: &Metrics) -> Warning {
    let ccm_inductance_h = match s.controller {
        ControllerSpec::ConstantOffTime { off_time_s, .. } if m.idle_time_s < off_time_s => {
            Some(s.inductor.inductance_h * off_time_s / (off_time_s - m.idle_time_s))
        }
        _ => None,
    };
    Warning::Dcm {
        idle_time_s: m.idle_time_s,
        period_s: m.period_s,
        led_current_avg_a: m.led_current_avg_a,
        inductor_peak_a: m.inductor_current_peak_a,
        ccm_inductance_h,
        ccm_intended: s.parts.intended_mode == IntendedMode::Ccm,
    }
}

/// The warnings of a measured run (`order`: cycles per orbit).
pub(crate) fn warnings(s: &Scenario, m: &Metrics, order: usize) -> Vec<Warning> {
    let mut w = Vec::new();
    if s.supply.voltage_v > SELV_LIMIT_V {
        w.push(Warning::SupplyAboveSelv {
            supply_v: s.supply.voltage_v,
        });
    }
    if let Some(isat) = s.inductor.saturation_current_a {
        if m.inductor_current_peak_a > isat {
            w.push(Warning::InductorSaturation {
                inductor_peak_a: m.inductor_current_peak_a,
                saturation_a: isat,
            });
        }
    }
    if m.conduction_mode == ConductionMode::Dcm {
        w.push(dcm_warning(s, m));
    } else if m.conduction_mode == ConductionMode::Boundary {
        w.push(Warning::ModeBoundary);
    }
    if order > 1 {
        w.push(Warning::Subharmonic {
            period_cycles: order,
        });
    }
    if m.switching_frequency_hz < 20e3 {
        w.push(Warning::AudibleSwitching {
            switching_frequency_hz: m.switching_frequency_hz,
        });
    }
    if m.duty > 0.95 {
        w.push(Warning::DutyHeadroom { duty: m.duty });
    }
    w
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::metrics::Totals;
    use crate::scenario::template;

    /// Figures of a healthy CCM point: 100 kHz, half duty, 0.7 A LEDs,
    /// 0.8 A peak (set by hand; no run).
    fn healthy() -> Metrics {
        let mut m = Metrics::from_totals(&Totals::new());
        m.conduction_mode = ConductionMode::Ccm;
        m.switching_frequency_hz = 100e3;
        m.period_s = 1e-5;
        m.duty = 0.5;
        m.idle_time_s = 0.0;
        m.led_current_avg_a = 0.7;
        m.inductor_current_peak_a = 0.8;
        m
    }

    /// A healthy point at 12 V under the rating gives no warning.
    #[test]
    fn a_healthy_point_has_no_warning() {
        let s = template();
        assert!(s.supply.voltage_v <= SELV_LIMIT_V);
        assert_eq!(warnings(&s, &healthy(), 1), vec![]);
    }

    /// Every threshold passed at once: each kind once, in order, with the
    /// numbers it was given.
    #[test]
    fn each_threshold_gives_its_variant_with_its_numbers() {
        let mut s = template();
        s.supply.voltage_v = 72.0;
        s.inductor.saturation_current_a = Some(0.75);
        s.inductor.inductance_h = 68e-6;
        s.controller = crate::scenario::ControllerSpec::ConstantOffTime {
            peak_current_a: 0.8,
            off_time_s: 4e-6,
            delay_s: 0.0,
            min_on_time_s: 0.0,
        };
        s.parts.intended_mode = IntendedMode::Ccm;
        let mut m = healthy();
        m.conduction_mode = ConductionMode::Dcm;
        m.idle_time_s = 1e-6;
        m.switching_frequency_hz = 18e3;
        m.duty = 0.96;
        // Boundary inductance L·t_off/(t_off − t_idle) = 68 µH · 4/3.
        let l_ccm = 68e-6 * 4.0 / 3.0;
        let got = warnings(&s, &m, 3);
        let want = [
            Warning::SupplyAboveSelv { supply_v: 72.0 },
            Warning::InductorSaturation {
                inductor_peak_a: 0.8,
                saturation_a: 0.75,
            },
            Warning::Dcm {
                idle_time_s: 1e-6,
                period_s: 1e-5,
                led_current_avg_a: 0.7,
                inductor_peak_a: 0.8,
                ccm_inductance_h: Some(l_ccm),
                ccm_intended: true,
            },
            Warning::Subharmonic { period_cycles: 3 },
            Warning::AudibleSwitching {
                switching_frequency_hz: 18e3,
            },
            Warning::DutyHeadroom { duty: 0.96 },
        ];
        assert_eq!(got.len(), want.len(), "{got:?}");
        for (g, w) in got.iter().zip(&want) {
            match (g, w) {
                (
                    Warning::Dcm {
                        ccm_inductance_h: Some(a),
                        ..
                    },
                    Warning::Dcm {
                        ccm_inductance_h: Some(b),
                        ..
                    },
                ) => {
                    assert!((a - b).abs() <= 1e-15, "{a} vs {b}");
                    assert_eq!(g.to_string(), w.to_string());
                }
                _ => assert_eq!(g, w),
            }
        }
    }

    /// At the boundary a bare notice; a fixed-duty design in DCM gets no
    /// inductance hint (it has no off-time to stretch); just inside each
    /// threshold nothing.
    #[test]
    fn boundary_and_dcm_without_an_off_time_and_the_edges() {
        let mut s = template();
        let mut m = healthy();
        m.conduction_mode = ConductionMode::Boundary;
        assert_eq!(warnings(&s, &m, 1), vec![Warning::ModeBoundary]);

        s.controller = crate::scenario::ControllerSpec::FixedDuty {
            frequency_hz: 100e3,
            duty: 0.5,
        };
        m.conduction_mode = ConductionMode::Dcm;
        m.idle_time_s = 6e-6;
        let w = warnings(&s, &m, 1);
        assert!(matches!(
            w.as_slice(),
            [Warning::Dcm {
                ccm_inductance_h: None,
                ccm_intended: false,
                ..
            }]
        ));
        assert!(w[0].is_deep_dcm());

        let mut m = healthy();
        m.switching_frequency_hz = 20e3;
        m.duty = 0.95;
        s.supply.voltage_v = 60.0;
        s.inductor.saturation_current_a = Some(0.8);
        assert_eq!(warnings(&s, &m, 1), vec![]);
    }
}
