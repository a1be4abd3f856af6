//! The reference engine's circuit model: the same circuit as the exact
//! engine's with the exponential LED and Shockley diode curves kept
//! exact, its conduction modes, and every branch current and node
//! voltage for a state.

use super::*;
use crate::model::elements::{DeviceCurve, Elements};

/// A voltage–current curve as the reference engine evaluates it (the
/// model's own, shared with the exact engine's circuit).
pub(super) type Curve = DeviceCurve;

impl Curve {
    pub(super) fn voltage(&self, i: f64) -> f64 {
        match *self {
            Curve::Exp(d) => d.voltage_v(i),
            Curve::Line { knee_v, r_ohm } => knee_v + r_ohm * i,
        }
    }
}

/// Element values, SI: the model's, read from the scenario once.
pub(super) type Model = Elements;

/// Switch state and whether the inductor conducts.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub(super) struct Mode {
    pub(super) switch_on: bool,
    pub(super) conducting: bool,
}

impl Mode {
    pub(super) fn name(&self) -> String {
        match (self.switch_on, self.conducting) {
            (true, true) => "on",
            (true, false) => "on-blocked",
            (false, true) => "off/diode",
            (false, false) => "idle",
        }
        .to_string()
    }
}

/// Every current and voltage at one instant, SI.
#[derive(Debug, Clone, Copy, Default)]
pub(super) struct Sig {
    pub(super) il: f64,
    pub(super) iled: f64,
    pub(super) vled: f64,
    pub(super) vsw: f64,
    pub(super) vin: f64,
    pub(super) isrc: f64,
    pub(super) icin: f64,
    pub(super) ico: f64,
    pub(super) isw: f64,
    pub(super) idiode: f64,
    pub(super) vdiode: f64,
    /// Output node voltage with the LED string removed, V (for the knee event).
    pub(super) vo_open: f64,
    pub(super) dil: f64,
    pub(super) dvco: f64,
    pub(super) dvcin: f64,
}

impl Model {
    /// The scenario's element values with the current floor `floor_a`, A.
    pub(super) fn from_scenario(s: &Scenario, floor_a: f64) -> Model {
        Model {
            floor_a,
            ..Elements::new(s)
        }
    }

    /// Input node voltage, source current and input-capacitor current for
    /// a switch current.
    pub(super) fn input_side(&self, vcin: f64, i_sw: f64) -> (f64, f64, f64) {
        let vs = self.supply_v;
        match self.input_cap {
            None => (vs - self.source_ohm * i_sw, i_sw, 0.0),
            Some((_, esr)) => {
                if self.source_ohm == 0.0 {
                    let i_c = (vs - vcin) / esr;
                    (vs, i_c + i_sw, i_c)
                } else if esr == 0.0 {
                    let i_s = (vs - vcin) / self.source_ohm;
                    (vcin, i_s, i_s - i_sw)
                } else {
                    let gs = 1.0 / self.source_ohm;
                    let gc = 1.0 / esr;
                    let vin = (vs * gs + vcin * gc - i_sw) / (gs + gc);
                    (vin, (vs - vin) * gs, (vin - vcin) * gc)
                }
            }
        }
    }

    /// Output node voltage, LED current, output-capacitor current and the
    /// open-circuit output voltage, for the current leaving the inductor.
    pub(super) fn output_side(&self, vco: f64, il: f64, conducting: bool) -> (f64, f64, f64, f64) {
        match self.output_cap {
            None => {
                if conducting {
                    (self.led.voltage(il), il, 0.0, self.led.voltage(il))
                } else {
                    // No current: the string sits at its zero-current voltage
                    // (the knee of a linear string, 0 V on the exact curve).
                    let v0 = self.led_idle_v();
                    (v0, 0.0, 0.0, v0)
                }
            }
            Some((_, esr)) => {
                let i = if conducting { il } else { 0.0 };
                let vo_open = vco + esr * i;
                match self.led {
                    Curve::Exp(d) => {
                        // v_led(i_led) + esr·i_led = v_Co + esr·i_L.
                        let i_led = d.current_a(vo_open, esr);
                        let vo = vo_open - esr * i_led;
                        (vo, i_led, i - i_led, vo_open)
                    }
                    Curve::Line { knee_v, r_ohm } => {
                        if vo_open <= knee_v {
                            (vo_open, 0.0, i, vo_open)
                        } else if esr == 0.0 {
                            let i_led = (vco - knee_v) / r_ohm;
                            (vco, i_led, i - i_led, vo_open)
                        } else if r_ohm == 0.0 {
                            let i_c = (knee_v - vco) / esr;
                            (knee_v, i - i_c, i_c, vo_open)
                        } else {
                            let vo = (i + vco / esr + knee_v / r_ohm) / (1.0 / esr + 1.0 / r_ohm);
                            (vo, (vo - knee_v) / r_ohm, (vo - vco) / esr, vo_open)
                        }
                    }
                }
            }
        }
    }

    /// All signals and the state derivative, SI.
    pub(super) fn eval(&self, mode: Mode, il_state: f64, vco: f64, vcin: f64) -> Sig {
        let il = if mode.conducting { il_state } else { 0.0 };
        let i_sw = if mode.switch_on { il } else { 0.0 };
        let (vin, isrc, icin) = self.input_side(vcin, i_sw);
        let (vo, iled, ico, vo_open) = self.output_side(vco, il, mode.conducting);
        let (vsw, idiode, vdiode) = if mode.switch_on {
            (
                vin - (self.switch_ohm + self.sense_switch_ohm) * il,
                0.0,
                0.0,
            )
        } else if mode.conducting {
            let vd = self.diode.voltage(il);
            (-vd, il, vd)
        } else {
            (vo, 0.0, 0.0)
        };
        let dil = if mode.conducting {
            (vsw - (self.dcr_ohm + self.sense_string_ohm) * il - vo) / self.l_at(il)
        } else {
            0.0
        };
        Sig {
            il,
            iled,
            vled: vo,
            vsw,
            vin,
            isrc,
            icin,
            ico,
            isw: i_sw,
            idiode,
            vdiode,
            vo_open,
            dil,
            dvco: self.output_cap.map_or(0.0, |(c, _)| ico / c),
            dvcin: self.input_cap.map_or(0.0, |(c, _)| icin / c),
        }
    }

    /// dI_L/dt if the inductor were conducting at zero current, A/s: the
    /// drive that decides whether a blocked inductor starts to conduct.
    /// Without an output capacitor the LED string is taken at its blocking
    /// voltage ([`Model::led_idle_v`]). Without this an exponential string
    /// fed from a discharged input capacitor at power-on would sit in a
    /// quasi-equilibrium at femtoamperes where the inductor's time constant
    /// L·i/(n·Vt) is far below a femtosecond, which no explicit integrator
    /// can follow.
    pub(super) fn drive_at_zero(&self, switch_on: bool, vco: f64, vcin: f64) -> f64 {
        let m = Mode {
            switch_on,
            conducting: true,
        };
        let (vin, _, _) = self.input_side(vcin, 0.0);
        let v_sw = if switch_on { vin } else { 0.0 };
        match self.output_cap {
            None => (v_sw - self.led_idle_v()) / self.inductance_h,
            Some(_) => self.eval(m, 0.0, vco, vcin).dil,
        }
    }

    /// Incremental inductance at current `il`, H.
    pub(super) fn l_at(&self, il: f64) -> f64 {
        self.saturation
            .as_ref()
            .map_or(self.inductance_h, |c| c.inductance_h(il))
    }

    /// Energy in the inductor at current `il`, J (∫ i dψ).
    pub(super) fn inductor_energy_j(&self, il: f64) -> f64 {
        match &self.saturation {
            Some(c) => c.energy_continuous_j(il),
            None => 0.5 * self.inductance_h * il * il,
        }
    }

    pub(super) fn stored_energy_j(&self, x: &[f64; N_STATES]) -> f64 {
        let mut e = self.inductor_energy_j(x[0]);
        if let Some((c, _)) = self.output_cap {
            e += 0.5 * c * x[1] * x[1];
        }
        if let Some((c, _)) = self.input_cap {
            e += 0.5 * c * x[2] * x[2];
        }
        e
    }
}
