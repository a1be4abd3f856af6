//! The ordinary differential equations the reference engine integrates:
//! the scaled state (circuit state plus the time integrals the totals
//! need), its right-hand side, the event functions on it, and the
//! `ode_solvers` system with its step-by-step event bracketing.

use super::*;

// Augmented state layout.
pub(super) const Y_IL: usize = 0;
pub(super) const Y_VCO: usize = 1;
pub(super) const Y_VCIN: usize = 2;
pub(super) const A_IL: usize = 3;
pub(super) const A_IL2: usize = 4;
pub(super) const A_ILED: usize = 5;
pub(super) const A_ILED2: usize = 6;
pub(super) const A_VLED: usize = 7;
pub(super) const A_ISRC: usize = 8;
pub(super) const A_ISRC2: usize = 9;
pub(super) const A_ICIN: usize = 10;
pub(super) const A_ICIN2: usize = 11;
pub(super) const A_ICO: usize = 12;
pub(super) const A_ICO2: usize = 13;
pub(super) const A_ISW2: usize = 14;
pub(super) const A_IDI: usize = 15;
pub(super) const A_IDI2: usize = 16;
pub(super) const A_PLED: usize = 17;
pub(super) const A_PDI: usize = 18;
/// Length of the integrated state.
pub(super) const N_Y: usize = 19;

pub(super) type Y = SVector<f64, N_Y>;

/// The scaled system seen by the integrator.
#[derive(Debug, Clone, Copy)]
pub(super) struct Ctx {
    pub(super) model: Model,
    /// Current scale, A.
    pub(super) i_s: f64,
    /// Voltage scale, V.
    pub(super) v_s: f64,
    /// Time scale, s.
    pub(super) t_s: f64,
    /// Scale of each component of the integrated state.
    pub(super) scale: [f64; N_Y],
}

impl Ctx {
    pub(super) fn new(model: Model, i_s: f64, v_s: f64) -> Ctx {
        let t_s = model.inductance_h * i_s / v_s;
        let (i, v, t) = (i_s, v_s, t_s);
        let mut scale = [0.0; N_Y];
        scale[Y_IL] = i;
        scale[Y_VCO] = v;
        scale[Y_VCIN] = v;
        for k in [A_IL, A_ILED, A_ISRC, A_ICIN, A_ICO, A_IDI] {
            scale[k] = i * t;
        }
        for k in [A_IL2, A_ILED2, A_ISRC2, A_ICIN2, A_ICO2, A_ISW2, A_IDI2] {
            scale[k] = i * i * t;
        }
        scale[A_VLED] = v * t;
        scale[A_PLED] = v * i * t;
        scale[A_PDI] = v * i * t;
        Ctx {
            model,
            i_s,
            v_s,
            t_s,
            scale,
        }
    }

    pub(super) fn sig(&self, mode: Mode, y: &Y) -> Sig {
        self.model.eval(
            mode,
            y[Y_IL] * self.scale[Y_IL],
            y[Y_VCO] * self.scale[Y_VCO],
            y[Y_VCIN] * self.scale[Y_VCIN],
        )
    }

    /// d(scaled state)/d(scaled time).
    pub(super) fn deriv(&self, mode: Mode, y: &Y) -> Y {
        let s = self.sig(mode, y);
        let mut r = [0.0; N_Y];
        r[Y_IL] = s.dil;
        r[Y_VCO] = s.dvco;
        r[Y_VCIN] = s.dvcin;
        r[A_IL] = s.il;
        r[A_IL2] = s.il * s.il;
        r[A_ILED] = s.iled;
        r[A_ILED2] = s.iled * s.iled;
        r[A_VLED] = s.vled;
        r[A_ISRC] = s.isrc;
        r[A_ISRC2] = s.isrc * s.isrc;
        r[A_ICIN] = s.icin;
        r[A_ICIN2] = s.icin * s.icin;
        r[A_ICO] = s.ico;
        r[A_ICO2] = s.ico * s.ico;
        r[A_ISW2] = s.isw * s.isw;
        r[A_IDI] = s.idiode;
        r[A_IDI2] = s.idiode * s.idiode;
        r[A_PLED] = s.vled * s.iled;
        r[A_PDI] = s.vdiode * s.idiode;
        let mut d = Y::zeros();
        for k in 0..N_Y {
            d[k] = self.t_s * r[k] / self.scale[k];
        }
        d
    }

    pub(super) fn value(&self, ev: &Event, mode: Mode, y: &Y) -> f64 {
        let s = self.sig(mode, y);
        match ev.kind {
            EventKind::Threshold { level_a, rising } => {
                let h = (s.il - level_a) / self.i_s;
                if rising {
                    h
                } else {
                    -h
                }
            }
            EventKind::DiodeOff { floor_a } => (floor_a - s.il) / self.i_s,
            EventKind::Block { level_a } => (level_a - s.il) / self.i_s,
            EventKind::Unblock => {
                let d = self.model.drive_at_zero(
                    mode.switch_on,
                    y[Y_VCO] * self.scale[Y_VCO],
                    y[Y_VCIN] * self.scale[Y_VCIN],
                );
                d * self.model.inductance_h / self.v_s
            }
            EventKind::Knee { knee_v, sign } => sign * (s.vo_open - knee_v) / self.v_s,
        }
    }

    /// Sign-only slope of an event function along the trajectory.
    pub(super) fn slope(&self, ev: &Event, mode: Mode, y: &Y) -> f64 {
        let eps = 1e-7;
        let y1 = y + self.deriv(mode, y) * eps;
        (self.value(ev, mode, &y1) - self.value(ev, mode, y)) / eps
    }
}

#[derive(Debug, Clone, Copy, PartialEq)]
pub(super) enum EventKind {
    /// The controller's inductor-current threshold.
    Threshold { level_a: f64, rising: bool },
    /// The diode current fell to the floor: DCM idle.
    DiodeOff { floor_a: f64 },
    /// Switch on, no output capacitor: the current fell to the level
    /// (zero, or the floor for an exponential string that started above it).
    Block { level_a: f64 },
    /// Switch on, blocked: the drive at zero current became positive.
    Unblock,
    /// The output node crossed a linear string's knee (a kink of the
    /// right-hand side; the integration restarts there).
    Knee { knee_v: f64, sign: f64 },
}

#[derive(Debug, Clone, Copy, PartialEq)]
pub(super) struct Event {
    pub(super) kind: EventKind,
}

/// The integrator's view of one interval: the scaled right-hand side and
/// the event bracketing.
pub(super) struct Rhs<'a> {
    pub(super) ctx: &'a Ctx,
    pub(super) mode: Mode,
    pub(super) events: &'a [Event],
    pub(super) prev: [f64; MAX_EVENTS],
}

impl System<f64, Y> for Rhs<'_> {
    fn system(&self, _x: f64, y: &Y, dy: &mut Y) {
        *dy = self.ctx.deriv(self.mode, y);
    }

    fn solout(&mut self, _x: f64, y: &Y, _dy: &Y) -> bool {
        let mut hit = false;
        for (j, ev) in self.events.iter().enumerate() {
            let g = self.ctx.value(ev, self.mode, y);
            if g > 0.0 && self.prev[j] <= 0.0 {
                hit = true;
            }
            self.prev[j] = g;
        }
        hit
    }
}

/// The end of one integrated interval.
pub(super) struct Segment {
    /// Scaled length.
    pub(super) tau: f64,
    /// Scaled state at the end.
    pub(super) y: Y,
    /// Index of the event that ended it, if one did.
    pub(super) fired: Option<usize>,
    /// Accepted step points inside, scaled (time, state), start included.
    pub(super) points: Vec<(f64, Y)>,
    /// Dense output over the interval.
    pub(super) dense: ContinuousOutputModel<f64, Y>,
}
