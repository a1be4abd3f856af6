//! The buck LED driver as a piecewise-linear circuit.
//!
//! The circuit: an ideal supply behind a source resistance feeds the input
//! node, where an optional input capacitor (with ESR) sits; a high-side
//! switch (a resistance while on) connects the input node to the switch
//! node; a freewheel diode runs from ground to the switch node; the
//! inductor (with DCR) runs from the switch node to the output node, where
//! the LED string and an optional output capacitor (with ESR) sit.
//!
//! The state is `x = [i_L, v_Co, v_Cin]` (an absent capacitor's state stays
//! at zero) and the augmented state is `z = [x, 1]`. In each [`Region`]
//! (switch on or off, inductor conducting or blocked, diode segment, LED
//! segment) the circuit is linear: `z' = M z` with `M = [[A, b], [0, 0]]`,
//! and every current and voltage is a row vector times `z`
//! ([`Linear::signals`]). [`Circuit::linearize`] builds both by evaluating
//! the (affine) circuit equations at `z = e_j`.

use super::elements::{DeviceCurve, Elements};
use crate::devices::{ExpDevice, PwlCurve};
use crate::scenario::{Load, Scenario};
use nalgebra::{SMatrix, SVector};

/// Number of circuit states (inductor current, output and input capacitor voltages).
pub const N_STATES: usize = 3;
/// Size of the augmented state `[x, 1]`.
pub(crate) const N_AUG: usize = N_STATES + 1;
/// The augmented state.
pub type Aug = SVector<f64, N_AUG>;
/// An augmented state matrix.
pub(crate) type AugMatrix = SMatrix<f64, N_AUG, N_AUG>;
/// A row of coefficients on the augmented state.
pub type Row = nalgebra::RowSVector<f64, N_AUG>;

/// State index of the inductor current, A.
pub const X_IL: usize = 0;
/// State index of the output capacitor voltage, V.
pub(crate) const X_VCO: usize = 1;
/// State index of the input capacitor voltage, V.
pub(crate) const X_VCIN: usize = 2;
/// Index of the constant 1 in the augmented state.
pub(crate) const X_ONE: usize = 3;

/// The circuit signals every region expresses as rows on `z`.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Signal {
    /// Inductor current, A.
    InductorCurrent = 0,
    /// Current through the LED string (or load), A.
    LedCurrent,
    /// Voltage across the LED string (output node), V.
    LedVoltage,
    /// Switch-node voltage, V.
    SwitchNode,
    /// Input-node voltage (after the source resistance), V.
    InputNode,
    /// Current drawn from the ideal source, A.
    SourceCurrent,
    /// Input capacitor current, A.
    InputCapCurrent,
    /// Output capacitor current, A.
    OutputCapCurrent,
    /// Switch current, A.
    SwitchCurrent,
    /// Diode forward current, A.
    DiodeCurrent,
    /// Diode forward voltage (anode to cathode), V.
    DiodeVoltage,
}

/// Number of [`Signal`]s.
pub(crate) const N_SIGNALS: usize = 11;

/// Which linear piece of the circuit applies.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash)]
pub struct Region {
    /// The switch is on.
    pub switch_on: bool,
    /// The inductor carries current (false: held at zero, DCM idle or blocked).
    pub conducting: bool,
    /// Diode segment (meaningful when off and conducting).
    pub diode_segment: u8,
    /// LED segment, or `None` below the knee.
    pub led_segment: Option<u8>,
    /// Inductance segment of a saturating inductor (0 without one).
    pub l_segment: u8,
}

impl Region {
    /// A short name for messages, e.g. `off/diode[0]/led[3]`.
    pub fn name(&self) -> String {
        let sw = match (self.switch_on, self.conducting) {
            (true, true) => "on".to_string(),
            (true, false) => "on-blocked".to_string(),
            (false, true) => format!("off/diode[{}]", self.diode_segment),
            (false, false) => "idle".to_string(),
        };
        let sw = if self.l_segment > 0 {
            format!("{sw}/L[{}]", self.l_segment)
        } else {
            sw
        };
        match self.led_segment {
            Some(k) => format!("{sw}/led[{k}]"),
            None => format!("{sw}/led-off"),
        }
    }
}

/// The linear dynamics and outputs of one region.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Linear {
    /// `z' = m z`.
    pub m: AugMatrix,
    /// Row `s` gives signal `s` as `signals.row(s) · z`.
    pub signals: SMatrix<f64, N_SIGNALS, N_AUG>,
}

impl Linear {
    /// The row of one signal.
    pub fn row(&self, s: Signal) -> Row {
        self.signals.row(s as usize).into_owned()
    }
}

/// The circuit the exact engine runs: the element values and the
/// piecewise-linear device curves fitted to them, in SI units.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Circuit {
    /// The element values, as read from the scenario once (the same
    /// values the reference engine and the part losses use); the device
    /// curves there are the exact ones, the fitted curves are below.
    pub el: Elements,
    /// The diode's piecewise-linear curve in use.
    pub diode: PwlCurve,
    /// The load's piecewise-linear curve in use.
    pub led: PwlCurve,
    /// Exact diode curve, when the diode is exponential.
    pub diode_exact: Option<ExpDevice>,
    /// Exact LED curve, when the load is exponential.
    pub led_exact: Option<ExpDevice>,
    /// Voltage the LED string holds while the inductor rests with no
    /// output capacitor, V: the knee of a straight-line load; for an
    /// exponential string the exact curve's voltage at the current floor
    /// below which it is taken to block (the reference engine's
    /// [`crate::model::DIODE_FLOOR_REL`] of the current scale), not
    /// the fit's knee, which moves with the fit.
    pub led_idle_v: f64,
}

struct Eval {
    dx: [f64; N_STATES],
    sig: [f64; N_SIGNALS],
}

impl Circuit {
    /// Builds the circuit of a validated scenario. Exponential curves get
    /// an initial fit from zero to the controller's target current.
    pub fn new(s: &Scenario) -> Circuit {
        let target = s.target_current_a().unwrap_or_else(|| {
            // Fixed duty: the current a resistor or LED string would draw at
            // the average switch-node voltage.
            let d = match s.controller {
                crate::scenario::ControllerSpec::FixedDuty { duty, .. } => duty,
                _ => 0.5,
            };
            let v = d * s.supply.voltage_v;
            match s.load {
                Load::Resistor { resistance_ohm } => v / resistance_ohm,
                _ => 1.0,
            }
        });
        let segs = s.simulation.curve_segments as usize;
        let tol = s.simulation.curve_tolerance_v;
        let e = Elements::new(s);
        let led_exact = e.led.exp();
        let led = match e.led {
            DeviceCurve::Exp(d) => PwlCurve::fit(&d, 0.0, target, segs, tol),
            DeviceCurve::Line { knee_v, r_ohm } => PwlCurve::line(knee_v, r_ohm),
        };
        let diode_exact = e.diode.exp();
        let diode = match e.diode {
            DeviceCurve::Exp(d) => PwlCurve::fit(&d, 0.0, target, segs, tol),
            DeviceCurve::Line { knee_v, r_ohm } => PwlCurve::line(knee_v, r_ohm),
        };
        Circuit {
            el: e,
            diode,
            led,
            diode_exact,
            led_idle_v: e.led_idle_v(),
            led_exact,
        }
    }

    /// The state at power-on: no current, capacitors discharged.
    pub fn power_on_state(&self) -> SVector<f64, N_STATES> {
        SVector::zeros()
    }

    /// Energy stored in the inductor and capacitors, J.
    pub fn stored_energy_j(&self, x: &SVector<f64, N_STATES>) -> f64 {
        let mut e = self.inductor_energy_j(x[X_IL]);
        if let Some((c, _)) = self.el.output_cap {
            e += 0.5 * c * x[X_VCO] * x[X_VCO];
        }
        if let Some((c, _)) = self.el.input_cap {
            e += 0.5 * c * x[X_VCIN] * x[X_VCIN];
        }
        e
    }

    /// Energy in the inductor at current `i`, J (segment by segment for a
    /// saturating inductor).
    pub fn inductor_energy_j(&self, i: f64) -> f64 {
        match &self.el.saturation {
            Some(c) => c.energy_segmented_j(i),
            None => 0.5 * self.el.inductance_h * i * i,
        }
    }

    /// The inductance segment for current `i` (0 without saturation).
    pub fn l_segment_for(&self, i: f64) -> u8 {
        self.el
            .saturation
            .as_ref()
            .map_or(0, |c| c.segment_for(i) as u8)
    }

    /// The inductance in a region, H.
    pub fn inductance_in(&self, region: Region) -> f64 {
        match &self.el.saturation {
            Some(c) => c.seg_h[(region.l_segment as usize).min(c.segments - 1)],
            None => self.el.inductance_h,
        }
    }

    /// A bound on the highest natural angular frequency of the circuit,
    /// rad/s: the inductor against the series combination of the capacitors.
    pub fn max_angular_frequency(&self) -> f64 {
        let inv_c: f64 = self.el.input_cap.map_or(0.0, |c| 1.0 / c.0)
            + self.el.output_cap.map_or(0.0, |c| 1.0 / c.0);
        let l_min = self
            .el
            .saturation
            .as_ref()
            .map_or(self.el.inductance_h, |c| c.min_h());
        (inv_c / l_min).sqrt()
    }

    /// The input-node voltage and the source and input-capacitor currents
    /// for a given switch current.
    fn input_side(&self, x: &[f64; N_STATES], one: f64, i_sw: f64) -> (f64, f64, f64) {
        let vs = self.el.supply_v * one;
        match self.el.input_cap {
            None => {
                let vin = vs - self.el.source_ohm * i_sw;
                (vin, i_sw, 0.0)
            }
            Some((_, esr)) => {
                let vc = x[X_VCIN];
                if self.el.source_ohm == 0.0 {
                    let i_c = (vs - vc) / esr;
                    (vs, i_c + i_sw, i_c)
                } else if esr == 0.0 {
                    let i_s = (vs - vc) / self.el.source_ohm;
                    (vc, i_s, i_s - i_sw)
                } else {
                    let gs = 1.0 / self.el.source_ohm;
                    let gc = 1.0 / esr;
                    let vin = (vs * gs + vc * gc - i_sw) / (gs + gc);
                    let i_c = (vin - vc) * gc;
                    (vin, (vs - vin) * gs, i_c)
                }
            }
        }
    }

    /// Output node voltage, LED current and output-capacitor current.
    fn output_side(
        &self,
        x: &[f64; N_STATES],
        one: f64,
        il: f64,
        led: Option<u8>,
    ) -> (f64, f64, f64) {
        match (self.el.output_cap, led) {
            (None, Some(k)) => {
                let k = k as usize;
                let vo = self.led.v0_v[k] * one + self.led.r_ohm[k] * il;
                (vo, il, 0.0)
            }
            (None, None) => (self.led_idle_v * one, 0.0, 0.0),
            (Some((_, esr)), None) => {
                let vo = x[X_VCO] + esr * il;
                (vo, 0.0, il)
            }
            (Some((_, esr)), Some(k)) => {
                let k = k as usize;
                let v0 = self.led.v0_v[k] * one;
                let r = self.led.r_ohm[k];
                let vc = x[X_VCO];
                if esr == 0.0 {
                    let i_led = (vc - v0) / r;
                    (vc, i_led, il - i_led)
                } else if r == 0.0 {
                    let i_c = (v0 - vc) / esr;
                    (v0, il - i_c, i_c)
                } else {
                    let vo = (il + vc / esr + v0 / r) / (1.0 / esr + 1.0 / r);
                    let i_led = (vo - v0) / r;
                    (vo, i_led, (vo - vc) / esr)
                }
            }
        }
    }

    fn eval(&self, region: Region, z: &[f64; N_AUG]) -> Eval {
        let x = [z[0], z[1], z[2]];
        let one = z[X_ONE];
        let il = if region.conducting { x[X_IL] } else { 0.0 };
        let i_sw = if region.switch_on { il } else { 0.0 };
        let (vin, i_s, i_cin) = self.input_side(&x, one, i_sw);
        let (vo, i_led, i_co) = self.output_side(&x, one, il, region.led_segment);
        let (v_sw, i_d, v_d) = if region.switch_on {
            (
                vin - (self.el.switch_ohm + self.el.sense_switch_ohm) * il,
                0.0,
                0.0,
            )
        } else if region.conducting {
            let k = region.diode_segment as usize;
            let vd = self.diode.v0_v[k] * one + self.diode.r_ohm[k] * il;
            (-vd, il, vd)
        } else {
            (vo, 0.0, 0.0)
        };
        let dil = if region.conducting {
            (v_sw - (self.el.dcr_ohm + self.el.sense_string_ohm) * il - vo)
                / self.inductance_in(region)
        } else {
            0.0
        };
        let dvco = self.el.output_cap.map_or(0.0, |(c, _)| i_co / c);
        let dvcin = self.el.input_cap.map_or(0.0, |(c, _)| i_cin / c);
        Eval {
            dx: [dil, dvco, dvcin],
            sig: [il, i_led, vo, v_sw, vin, i_s, i_cin, i_co, i_sw, i_d, v_d],
        }
    }

    /// The linear dynamics and signal rows of a region.
    pub fn linearize(&self, region: Region) -> Linear {
        let mut m = AugMatrix::zeros();
        let mut signals = SMatrix::<f64, N_SIGNALS, N_AUG>::zeros();
        for j in 0..N_AUG {
            let mut z = [0.0; N_AUG];
            z[j] = 1.0;
            let e = self.eval(region, &z);
            for (i, d) in e.dx.iter().enumerate() {
                m[(i, j)] = *d;
            }
            for (s, v) in e.sig.iter().enumerate() {
                signals[(s, j)] = *v;
            }
        }
        // `eval` is linear in z (every constant is scaled by z[X_ONE]), so
        // the probes are exactly the columns.
        Linear { m, signals }
    }

    /// Chooses the region for a switch state and a circuit state, resolving
    /// boundaries by the direction the state is moving.
    pub fn region_for(&self, switch_on: bool, x: &SVector<f64, N_STATES>) -> Region {
        let il = x[X_IL];
        let led_for = |conducting: bool, diode_segment: u8| -> Option<u8> {
            match self.el.output_cap {
                None => {
                    if conducting {
                        Some(self.led.segment_for_current(il) as u8)
                    } else {
                        None
                    }
                }
                Some((_, esr)) => {
                    let i = if conducting { il } else { 0.0 };
                    let vo_open = x[X_VCO] + esr * i;
                    let seg = self.led.segment_for_voltage(vo_open)?;
                    let _ = diode_segment;
                    // Refine using the LED current with this segment.
                    let mut k = seg;
                    loop {
                        let r = Region {
                            switch_on,
                            conducting,
                            diode_segment,
                            led_segment: Some(k as u8),
                            l_segment: 0,
                        };
                        let z = [x[0], x[1], x[2], 1.0];
                        let i_led = self.eval(r, &z).sig[Signal::LedCurrent as usize];
                        if k + 1 < self.led.segments && i_led > self.led.upper_a[k] {
                            k += 1;
                        } else if k > 0 && i_led < self.led.upper_a[k - 1] {
                            k -= 1;
                        } else {
                            break;
                        }
                    }
                    Some(k as u8)
                }
            }
        };
        let diode_segment = self.diode.segment_for_current(il) as u8;
        let conducting = if switch_on {
            if self.el.output_cap.is_some() {
                // The switch conducts both ways: current may reverse into
                // the input while the output capacitor is above it.
                true
            } else {
                il > 0.0 || {
                    let r = Region {
                        switch_on,
                        conducting: true,
                        diode_segment,
                        led_segment: Some(0),
                        l_segment: 0,
                    };
                    self.derivative_il(r, x) > 0.0
                }
            }
        } else {
            il > 0.0
        };
        let mut region = Region {
            switch_on,
            conducting,
            diode_segment,
            led_segment: led_for(conducting, diode_segment),
            l_segment: if conducting {
                self.l_segment_for(il)
            } else {
                0
            },
        };
        // At the knee with a capacitor: decide by the direction of travel.
        if let (Some(_), Some(0)) = (self.el.output_cap, region.led_segment) {
            let lin = self.linearize(region);
            let z = Aug::new(x[0], x[1], x[2], 1.0);
            let i_led = (lin.row(Signal::LedCurrent) * z)[0];
            if i_led <= 0.0 {
                let d = (lin.row(Signal::LedCurrent) * lin.m * z)[0];
                if d <= 0.0 {
                    region.led_segment = None;
                }
            }
        }
        region
    }

    fn derivative_il(&self, r: Region, x: &SVector<f64, N_STATES>) -> f64 {
        let z = [x[0], x[1], x[2], 1.0];
        self.eval(r, &z).dx[X_IL]
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::scenario::template;

    #[test]
    fn signals_are_consistent_with_kirchhoff() {
        let mut s = template();
        s.output_capacitor = Some(crate::scenario::Capacitor {
            capacitance_f: 4.7e-6,
            esr_ohm: 0.02,
        });
        let c = Circuit::new(&s);
        let x = SVector::<f64, 3>::new(0.7, 9.5, 11.8);
        for on in [true, false] {
            let r = c.region_for(on, &x);
            let lin = c.linearize(r);
            let z = Aug::new(x[0], x[1], x[2], 1.0);
            let sig = lin.signals * z;
            let g = |s: Signal| sig[s as usize];
            // Output node: inductor current splits into LED and capacitor.
            let kcl =
                g(Signal::InductorCurrent) - g(Signal::LedCurrent) - g(Signal::OutputCapCurrent);
            assert!(kcl.abs() < 1e-12, "{kcl}");
            // Input node.
            let kcl_in =
                g(Signal::SourceCurrent) - g(Signal::InputCapCurrent) - g(Signal::SwitchCurrent);
            assert!(kcl_in.abs() < 1e-12, "{kcl_in}");
        }
    }
}
