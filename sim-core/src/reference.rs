//! The reference engine: the full nonlinear circuit integrated numerically.
//!
//! This engine exists to check the exact engine ([`crate::engine`])
//! independently. It models the same circuit as [`crate::circuit`] (ideal
//! supply behind a source resistance, optional input capacitor with ESR,
//! switch resistance, freewheel diode, inductor with DCR, optional output
//! capacitor with ESR, LED string) but keeps the exponential LED and
//! Shockley diode curves exact ([`ExpDevice`]) instead of fitting straight
//! chords, and it shares no propagation code with the exact engine: each
//! interval between events is integrated with the Dormand–Prince 5(4)
//! method of `ode_solvers` ([`Dopri5`]).
//!
//! The state integrated is `[i_L, v_Co, v_Cin]` plus one accumulator per
//! time integral that [`Totals`] needs (∫i, ∫i², ∫v, ∫v·i for the LED and
//! the diode), so every average, RMS value and energy also comes from the
//! integrator. All components are scaled to order one (currents by the
//! controller's target current, voltages by the supply voltage, time by
//! L·I/V) so that one absolute tolerance fits them all.
//!
//! Events are bracketed in `solout` (the integration stops after the
//! accepted step in which an event function changed sign from ≤ 0 to > 0)
//! and then located on Dopri5's continuous output model with the Illinois
//! method to the resolution of f64 time (far below 1e-12 s). Controller
//! deadlines are integrated to exactly. Interval semantics (cycle boundaries at turn-on, DCM idle and
//! blocked states, reverse current cut off at turn-off, the max-interval
//! guard, what goes into [`Totals`] and the [`Recorder`]) mirror the exact
//! engine so the two can be compared figure by figure.
//!
//! This is not the hot path: each interval allocates the integrator's
//! output vectors.

use crate::devices::{ExpDevice, InductanceCurve};
use crate::error::SimError;
use crate::metrics::Totals;
use crate::model::circuit::N_STATES;
use crate::model::controller::{self, Cause, Command, Controller};
use crate::model::seam::{state_scales, ChatterGuard, CycleEngine, RunStats};
use crate::record::{Recorder, Sample};
use crate::scenario::{Diode, Load, Scenario};
use nalgebra::SVector;
use ode_solvers::continuous_output_model::ContinuousOutputModel;
use ode_solvers::dop_shared::IntegrationError;
use ode_solvers::{Dopri5, OutputType, System};

/// Relative tolerance of the integrator.
pub const RTOL: f64 = 1e-10;

/// Absolute tolerance of the integrator, on the scaled state: 1e-12 of the
/// current scale for the inductor current, of the supply voltage for the
/// capacitor voltages, and of (scale × time scale) for the accumulators.
/// Every scaled component is of order one over an interval, so this is
/// two decades below [`RTOL`] and only matters where a component passes
/// through zero.
pub const ATOL: f64 = 1e-12;

// reshape shim
pub use crate::model::DIODE_FLOOR_REL;

/// Interior extremes are refined to within this time, s.
pub const EXTREME_TIME_TOL_S: f64 = 1e-17;

/// Most accepted integrator steps in one interval between events.
const MAX_STEPS_PER_INTERVAL: u32 = 2_000_000;

/// Tolerance on a scaled event function for "already due at the start".
const DUE_TOL: f64 = 1e-12;

/// Most event functions watched in one interval.
const MAX_EVENTS: usize = 4;

// Augmented state layout.
const Y_IL: usize = 0;
const Y_VCO: usize = 1;
const Y_VCIN: usize = 2;
const A_IL: usize = 3;
const A_IL2: usize = 4;
const A_ILED: usize = 5;
const A_ILED2: usize = 6;
const A_VLED: usize = 7;
const A_ISRC: usize = 8;
const A_ISRC2: usize = 9;
const A_ICIN: usize = 10;
const A_ICIN2: usize = 11;
const A_ICO: usize = 12;
const A_ICO2: usize = 13;
const A_ISW2: usize = 14;
const A_IDI: usize = 15;
const A_IDI2: usize = 16;
const A_PLED: usize = 17;
const A_PDI: usize = 18;
/// Length of the integrated state.
const N_Y: usize = 19;

type Y = SVector<f64, N_Y>;

/// A voltage–current curve as the reference engine evaluates it.
#[derive(Debug, Clone, Copy, PartialEq)]
enum Curve {
    /// The exact exponential curve.
    Exp(ExpDevice),
    /// v = knee + r·i above the knee, no current below it.
    Line { knee_v: f64, r_ohm: f64 },
}

impl Curve {
    fn voltage(&self, i: f64) -> f64 {
        match *self {
            Curve::Exp(d) => d.voltage_v(i),
            Curve::Line { knee_v, r_ohm } => knee_v + r_ohm * i,
        }
    }
}

/// Element values, SI.
#[derive(Debug, Clone, Copy, PartialEq)]
struct Model {
    supply_v: f64,
    source_ohm: f64,
    input_cap: Option<(f64, f64)>,
    switch_ohm: f64,
    inductance_h: f64,
    /// Soft saturation: the continuous L(i) of the part's points.
    saturation: Option<InductanceCurve>,
    dcr_ohm: f64,
    /// Sense resistance in series with the LED string (inductor current), ohms.
    sense_string_ohm: f64,
    /// Sense resistance in series with the switch, ohms.
    sense_switch_ohm: f64,
    output_cap: Option<(f64, f64)>,
    led: Curve,
    diode: Curve,
    /// The current floor, A ([`DIODE_FLOOR_REL`] of the current scale).
    floor_a: f64,
}

/// Switch state and whether the inductor conducts.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
struct Mode {
    switch_on: bool,
    conducting: bool,
}

impl Mode {
    fn name(&self) -> String {
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
struct Sig {
    il: f64,
    iled: f64,
    vled: f64,
    vsw: f64,
    vin: f64,
    isrc: f64,
    icin: f64,
    ico: f64,
    isw: f64,
    idiode: f64,
    vdiode: f64,
    /// Output node voltage with the LED string removed, V (for the knee event).
    vo_open: f64,
    dil: f64,
    dvco: f64,
    dvcin: f64,
}

impl Model {
    fn from_scenario(s: &Scenario, floor_a: f64) -> Model {
        let led = match (ExpDevice::from_load(&s.load), s.load) {
            (Some(d), _) => Curve::Exp(d),
            (
                None,
                Load::LedKnee {
                    count,
                    knee_voltage_v,
                    dynamic_resistance_ohm,
                },
            ) => Curve::Line {
                knee_v: f64::from(count) * knee_voltage_v,
                r_ohm: f64::from(count) * dynamic_resistance_ohm,
            },
            (None, Load::Resistor { resistance_ohm }) => Curve::Line {
                knee_v: 0.0,
                r_ohm: resistance_ohm,
            },
            // `from_load` gives a curve for every exponential load.
            (None, Load::LedExponential { .. }) => Curve::Line {
                knee_v: 0.0,
                r_ohm: 0.0,
            },
        };
        let diode = match (ExpDevice::from_diode(&s.diode), s.diode) {
            (Some(d), _) => Curve::Exp(d),
            (
                None,
                Diode::FixedDrop {
                    forward_voltage_v,
                    series_resistance_ohm,
                },
            ) => Curve::Line {
                knee_v: forward_voltage_v,
                r_ohm: series_resistance_ohm,
            },
            // `from_diode` gives a curve for every Shockley diode.
            (None, Diode::Shockley { .. }) => Curve::Line {
                knee_v: 0.0,
                r_ohm: 0.0,
            },
        };
        // A capacitor with no ESR straight on an ideal source does nothing
        // (same rule as the exact engine).
        let input_cap = s.input_capacitor.and_then(|c| {
            if s.supply.source_resistance_ohm == 0.0 && c.esr_ohm == 0.0 {
                None
            } else {
                Some((c.capacitance_f, c.esr_ohm))
            }
        });
        let saturation = (!s.parts.inductor.saturation_curve.is_empty()).then(|| {
            let pts: Vec<(f64, f64)> = s
                .parts
                .inductor
                .saturation_curve
                .iter()
                .map(|p| (p.current_a, p.inductance_h))
                .collect();
            InductanceCurve::new(&pts)
        });
        let (sense_string_ohm, sense_switch_ohm) = crate::model::circuit::sense_resistances(s);
        Model {
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
            floor_a,
        }
    }

    /// Voltage of the LED string carrying no current, with no output
    /// capacitor: the knee of a linear string; for the exponential string
    /// its voltage at the current floor (the string is taken to block below
    /// the floor, as the exact engine's chord fit blocks below its knee).
    fn led_idle_v(&self) -> f64 {
        match self.led {
            Curve::Exp(d) => d.voltage_v(self.floor_a),
            Curve::Line { knee_v, .. } => knee_v,
        }
    }

    /// Input node voltage, source current and input-capacitor current for
    /// a switch current.
    fn input_side(&self, vcin: f64, i_sw: f64) -> (f64, f64, f64) {
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
    fn output_side(&self, vco: f64, il: f64, conducting: bool) -> (f64, f64, f64, f64) {
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
    fn eval(&self, mode: Mode, il_state: f64, vco: f64, vcin: f64) -> Sig {
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
    fn drive_at_zero(&self, switch_on: bool, vco: f64, vcin: f64) -> f64 {
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
    fn l_at(&self, il: f64) -> f64 {
        self.saturation
            .as_ref()
            .map_or(self.inductance_h, |c| c.inductance_h(il))
    }

    /// Energy in the inductor at current `il`, J (∫ i dψ).
    fn inductor_energy_j(&self, il: f64) -> f64 {
        match &self.saturation {
            Some(c) => c.energy_continuous_j(il),
            None => 0.5 * self.inductance_h * il * il,
        }
    }

    fn stored_energy_j(&self, x: &[f64; N_STATES]) -> f64 {
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

/// The scaled system seen by the integrator.
#[derive(Debug, Clone, Copy)]
struct Ctx {
    model: Model,
    /// Current scale, A.
    i_s: f64,
    /// Voltage scale, V.
    v_s: f64,
    /// Time scale, s.
    t_s: f64,
    /// Scale of each component of the integrated state.
    scale: [f64; N_Y],
}

impl Ctx {
    fn new(model: Model, i_s: f64, v_s: f64) -> Ctx {
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

    fn sig(&self, mode: Mode, y: &Y) -> Sig {
        self.model.eval(
            mode,
            y[Y_IL] * self.scale[Y_IL],
            y[Y_VCO] * self.scale[Y_VCO],
            y[Y_VCIN] * self.scale[Y_VCIN],
        )
    }

    /// d(scaled state)/d(scaled time).
    fn deriv(&self, mode: Mode, y: &Y) -> Y {
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

    fn value(&self, ev: &Event, mode: Mode, y: &Y) -> f64 {
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
    fn slope(&self, ev: &Event, mode: Mode, y: &Y) -> f64 {
        let eps = 1e-7;
        let y1 = y + self.deriv(mode, y) * eps;
        (self.value(ev, mode, &y1) - self.value(ev, mode, y)) / eps
    }
}

#[derive(Debug, Clone, Copy, PartialEq)]
enum EventKind {
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
struct Event {
    kind: EventKind,
}

/// The integrator's view of one interval: the scaled right-hand side and
/// the event bracketing.
struct Rhs<'a> {
    ctx: &'a Ctx,
    mode: Mode,
    events: &'a [Event],
    prev: [f64; MAX_EVENTS],
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
struct Segment {
    /// Scaled length.
    tau: f64,
    /// Scaled state at the end.
    y: Y,
    /// Index of the event that ended it, if one did.
    fired: Option<usize>,
    /// Accepted step points inside, scaled (time, state), start included.
    points: Vec<(f64, Y)>,
    /// Dense output over the interval.
    dense: ContinuousOutputModel<f64, Y>,
}

/// The reference engine's state for one run.
pub struct ReferenceEngine {
    ctx: Ctx,
    controller: Box<dyn Controller>,
    /// Simulated time, s.
    t: f64,
    /// Circuit state `[i_L (A), v_Co (V), v_Cin (V)]`.
    x: [f64; N_STATES],
    cmd: Command,
    mode: Mode,
    switch_changed_t: f64,
    max_interval_s: f64,
    floor_a: f64,
    cycles: u64,
    intervals: u64,
    steps: u64,
    chatter: ChatterGuard,
    clamped_energy_j: f64,
}

impl ReferenceEngine {
    /// An engine at power-on for a validated scenario.
    pub fn new(s: &Scenario) -> ReferenceEngine {
        let sc = state_scales(s);
        let model = Model::from_scenario(s, DIODE_FLOOR_REL * sc[0]);
        let ctx = Ctx::new(model, sc[0], sc[1]);
        let mut controller = controller::build(&s.controller);
        let cmd = controller.start(0.0);
        let mut e = ReferenceEngine {
            ctx,
            controller,
            t: 0.0,
            x: [0.0; N_STATES],
            cmd,
            mode: Mode {
                switch_on: cmd.switch_on,
                conducting: false,
            },
            switch_changed_t: 0.0,
            max_interval_s: s.simulation.max_interval_s,
            floor_a: DIODE_FLOOR_REL * sc[0],
            cycles: 0,
            intervals: 0,
            steps: 0,
            chatter: ChatterGuard::default(),
            clamped_energy_j: 0.0,
        };
        e.mode.conducting = e.conducting_for(cmd.switch_on);
        e
    }

    /// Whether the inductor conducts in the present state for a switch
    /// state (same rule as the exact engine's region choice).
    fn conducting_for(&self, switch_on: bool) -> bool {
        let m = &self.ctx.model;
        let il = self.x[0];
        if switch_on {
            let drive = || m.drive_at_zero(true, self.x[1], self.x[2]) > 0.0;
            if m.output_cap.is_some() {
                il != 0.0 || drive()
            } else {
                il > 0.0 || drive()
            }
        } else {
            il > 0.0
        }
    }

    /// Runs one switching cycle: from this turn-on to the next. Integrals,
    /// energies and extremes go into `totals` and samples into `rec` when
    /// given.
    pub fn run_cycle(
        &mut self,
        mut totals: Option<&mut Totals>,
        mut rec: Option<&mut Recorder>,
    ) -> Result<(), SimError> {
        if let Some(r) = rec.as_deref_mut() {
            r.cycle_start(self.t);
        }
        loop {
            if self.interval(totals.as_deref_mut(), rec.as_deref_mut())? {
                self.cycles += 1;
                return Ok(());
            }
        }
    }

    fn events(&self) -> ([Event; MAX_EVENTS], usize, Option<usize>) {
        let mut evs = [Event {
            kind: EventKind::Block { level_a: 0.0 },
        }; MAX_EVENTS];
        let mut n = 0;
        let mut push = |k: EventKind, n: &mut usize| {
            evs[*n] = Event { kind: k };
            *n += 1;
        };
        let mut threshold = None;
        if let Some(w) = self.cmd.watch {
            threshold = Some(n);
            push(
                EventKind::Threshold {
                    level_a: w.level_a,
                    rising: w.rising,
                },
                &mut n,
            );
        }
        let m = &self.ctx.model;
        let has_co = m.output_cap.is_some();
        let mode = self.mode;
        if mode.conducting {
            if !mode.switch_on {
                push(
                    EventKind::DiodeOff {
                        floor_a: self.floor_a,
                    },
                    &mut n,
                );
            } else if !has_co {
                let level_a = match m.led {
                    Curve::Exp(_) if self.x[0] > self.floor_a => self.floor_a,
                    _ => 0.0,
                };
                push(EventKind::Block { level_a }, &mut n);
            }
        } else if mode.switch_on && !has_co {
            push(EventKind::Unblock, &mut n);
        }
        if let (Some(_), Curve::Line { knee_v, .. }) = (m.output_cap, m.led) {
            // Watch the knee in the direction the node is not moving from.
            let y0 = self.scaled_state();
            let probe = Event {
                kind: EventKind::Knee { knee_v, sign: 1.0 },
            };
            let g = self.ctx.value(&probe, mode, &y0);
            let rising_now =
                g > DUE_TOL || (g >= -DUE_TOL && self.ctx.slope(&probe, mode, &y0) > 0.0);
            let sign = if rising_now { -1.0 } else { 1.0 };
            push(EventKind::Knee { knee_v, sign }, &mut n);
        }
        (evs, n, threshold)
    }

    fn scaled_state(&self) -> Y {
        let mut y = Y::zeros();
        y[Y_IL] = self.x[0] / self.ctx.scale[Y_IL];
        y[Y_VCO] = self.x[1] / self.ctx.scale[Y_VCO];
        y[Y_VCIN] = self.x[2] / self.ctx.scale[Y_VCIN];
        y
    }

    /// Integrates from the present state for at most `tau_end` (scaled),
    /// stopping at the first event.
    fn integrate(&mut self, events: &[Event], tau_end: f64) -> Result<Segment, SimError> {
        let ctx = self.ctx;
        let mode = self.mode;
        let y0 = self.scaled_state();
        let mut prev = [0.0; MAX_EVENTS];
        for (j, ev) in events.iter().enumerate() {
            prev[j] = ctx.value(ev, mode, &y0);
        }
        let rhs = Rhs {
            ctx: &ctx,
            mode,
            events,
            prev,
        };
        let mut dense = ContinuousOutputModel::default();
        // Default step control (safety 0.9, β 0.04, step ratio 0.2..10),
        // stiffness detection off: the circuit is stiff only transiently,
        // near zero LED or diode current where the exponential curve's
        // slope n·Vt/(Is + i) is huge, and there stability bounds the step
        // while the current grows (or decays to the floor) geometrically fast.
        let mut stepper = Dopri5::from_param(
            rhs,
            0.0,
            tau_end,
            tau_end,
            y0,
            RTOL,
            ATOL,
            0.9,
            0.04,
            0.2,
            10.0,
            tau_end,
            0.0,
            MAX_STEPS_PER_INTERVAL,
            u32::MAX,
            OutputType::Continuous,
        );
        let res = stepper.integrate_with_continuous_output_model(&mut dense);
        let stats = res.map_err(|e| SimError::Integrator {
            time_s: self.t
                + ctx.t_s
                    * match e {
                        IntegrationError::MaxNumStepReached { x, .. }
                        | IntegrationError::StepSizeUnderflow { x }
                        | IntegrationError::StiffnessDetected { x } => x,
                    },
            reason: format!(
                "{e} (topology {}, time in units of {:.3e} s)",
                mode.name(),
                ctx.t_s
            ),
        })?;
        self.steps += u64::from(stats.accepted_steps);
        let xs = stepper.x_out();
        let ys = stepper.y_out();
        let mut points: Vec<(f64, Y)> = Vec::with_capacity(xs.len() + 1);
        points.push((0.0, y0));
        points.extend(xs.iter().copied().zip(ys.iter().copied()));
        let n = points.len();
        if n < 2 {
            return Err(SimError::Integrator {
                time_s: self.t,
                reason: "no step was taken".into(),
            });
        }
        // The last step holds any crossing (solout stops right after it).
        let (ta, ya) = points[n - 2];
        let (tb, yb) = points[n - 1];
        let mut best: Option<(usize, f64)> = None;
        for (j, ev) in events.iter().enumerate() {
            let ga = ctx.value(ev, mode, &ya);
            let gb = ctx.value(ev, mode, &yb);
            if gb > 0.0 && ga <= 0.0 {
                let tr = locate(&ctx, ev, mode, &dense, ta, ga, tb, gb, &yb);
                if !matches!(best, Some((_, t)) if t <= tr) {
                    best = Some((j, tr));
                }
            }
        }
        let (tau, y, fired) = match best {
            Some((j, tr)) => {
                let y = dense_at(&dense, tr, &yb);
                points.retain(|p| p.0 < tr);
                points.push((tr, y));
                (tr, y, Some(j))
            }
            None => {
                let last = points.len() - 1;
                points[last].0 = tau_end;
                (tau_end, yb, None)
            }
        };
        Ok(Segment {
            tau,
            y,
            fired,
            points,
            dense,
        })
    }

    /// Simulates up to the next event; returns whether the switch turned on.
    fn interval(
        &mut self,
        mut totals: Option<&mut Totals>,
        rec: Option<&mut Recorder>,
    ) -> Result<bool, SimError> {
        let ctx = self.ctx;
        let mode = self.mode;
        let (evs, n, threshold_slot) = self.events();
        let events = &evs[..n];
        let y0 = self.scaled_state();

        // Events already due at the start.
        let mut due = None;
        for (j, ev) in events.iter().enumerate() {
            let h = ctx.value(ev, mode, &y0);
            let fire = if Some(j) == threshold_slot {
                h >= 0.0
            } else {
                h > DUE_TOL || (h > -DUE_TOL && ctx.slope(ev, mode, &y0) > 0.0)
            };
            if fire {
                due = Some(j);
                break;
            }
        }
        let to_deadline = self.cmd.deadline_s - self.t;
        let seg = if due.is_some() || to_deadline <= 0.0 {
            None
        } else {
            let limit_left = self.max_interval_s - (self.t - self.switch_changed_t);
            let t_limit = if self.cmd.deadline_s.is_finite() {
                to_deadline
            } else {
                limit_left.max(0.0)
            };
            let seg = if t_limit > 0.0 {
                Some(self.integrate(events, t_limit / ctx.t_s)?)
            } else {
                None
            };
            let no_event = !matches!(&seg, Some(s) if s.fired.is_some());
            if no_event && !self.cmd.deadline_s.is_finite() {
                let y = seg.as_ref().map_or(y0, |s| s.y);
                let sg = ctx.sig(mode, &y);
                return Err(SimError::IntervalTooLong {
                    switch: if self.cmd.switch_on { "on" } else { "off" },
                    what: self.controller.waiting_for(),
                    limit_s: self.max_interval_s,
                    current_a: sg.il,
                    led_voltage_v: sg.vled,
                    time_s: self.t + seg.as_ref().map_or(0.0, |s| s.tau * ctx.t_s),
                });
            }
            seg
        };
        let (dt, y1, fired) = match &seg {
            Some(s) => (s.tau * ctx.t_s, s.y, s.fired),
            None => (0.0, y0, due),
        };
        if !y1.iter().all(|v| v.is_finite()) {
            return Err(SimError::NonFinite {
                time_s: self.t + dt,
                topology: mode.name(),
                state: (0..N_STATES).map(|k| y1[k] * ctx.scale[k]).collect(),
            });
        }
        self.intervals += 1;
        self.chatter.note(dt, self.t, || mode.name())?;

        if let Some(s) = &seg {
            if dt > 0.0 {
                if let Some(tot) = totals.as_deref_mut() {
                    self.accumulate(tot, s, dt);
                }
                if let Some(r) = rec {
                    if r.wants_interval() {
                        self.record(r, s);
                    }
                }
            }
        }

        let reached_deadline = seg.is_some() && fired.is_none();
        self.t = if reached_deadline {
            self.cmd.deadline_s
        } else {
            self.t + dt
        };
        for k in 0..N_STATES {
            self.x[k] = y1[k] * ctx.scale[k];
        }
        if ctx.model.output_cap.is_none() {
            self.x[1] = 0.0;
        }
        if ctx.model.input_cap.is_none() {
            self.x[2] = 0.0;
        }
        if !mode.conducting {
            self.x[0] = 0.0;
        }

        let kind = fired.map(|j| events[j].kind);
        let mut turned_on = false;
        match kind {
            None | Some(EventKind::Threshold { .. }) => {
                let cause = if fired.is_some() {
                    Cause::Threshold
                } else {
                    Cause::Deadline
                };
                let new = self.controller.on_event(self.t, cause, self.x[0]);
                turned_on = new.switch_on && !self.cmd.switch_on;
                let changed = new.switch_on != self.cmd.switch_on;
                self.cmd = new;
                if changed {
                    self.switch_changed_t = self.t;
                    let pre = ctx.sig(self.mode, &self.scaled_state());
                    let il = self.x[0];
                    let diode_on = !mode.switch_on && mode.conducting && il > 0.0;
                    self.switch_transition(new.switch_on);
                    if let Some(tot) = totals {
                        // As in the exact engine: the blocked voltage on the
                        // open side of the edge.
                        let post = ctx.sig(self.mode, &self.scaled_state());
                        let blocked = if new.switch_on {
                            pre.vin - pre.vsw
                        } else {
                            post.vin - post.vsw
                        };
                        let recovery = (new.switch_on && diode_on).then_some(post.vsw);
                        tot.edges.note(new.switch_on, il, blocked, recovery);
                    }
                }
            }
            Some(EventKind::DiodeOff { .. }) | Some(EventKind::Block { .. }) => {
                self.x[0] = 0.0;
                self.mode.conducting = false;
            }
            Some(EventKind::Unblock) => {
                self.x[0] = 0.0;
                self.mode.conducting = true;
            }
            Some(EventKind::Knee { .. }) => {}
        }
        Ok(turned_on)
    }

    fn switch_transition(&mut self, on: bool) {
        let il = self.x[0];
        self.mode.switch_on = on;
        if on {
            if !self.mode.conducting {
                self.mode.conducting = self.conducting_for(true);
            }
        } else if il > 0.0 {
            self.mode.conducting = true;
        } else {
            // A reverse current is cut off at turn-off (returned to the
            // input by the switch's body diode); its energy is a loss of
            // its own, as in the exact engine.
            self.clamped_energy_j += self.ctx.model.inductor_energy_j(il);
            self.x[0] = 0.0;
            self.mode.conducting = false;
        }
    }

    fn accumulate(&self, tot: &mut Totals, seg: &Segment, dt: f64) {
        let ctx = &self.ctx;
        let m = &ctx.model;
        let mode = self.mode;
        let a = |k: usize| seg.y[k] * ctx.scale[k];
        tot.time_s += dt;
        if mode.switch_on {
            tot.on_time_s += dt;
        } else if !mode.conducting {
            tot.idle_time_s += dt;
        }
        tot.il += a(A_IL);
        tot.il2 += a(A_IL2);
        tot.iled += a(A_ILED);
        tot.iled2 += a(A_ILED2);
        tot.vled += a(A_VLED);
        tot.isrc += a(A_ISRC);
        tot.isrc2 += a(A_ISRC2);
        tot.icin += a(A_ICIN);
        tot.icin2 += a(A_ICIN2);
        tot.ico += a(A_ICO);
        tot.ico2 += a(A_ICO2);
        tot.isw2 += a(A_ISW2);
        tot.idiode += a(A_IDI);
        tot.idiode2 += a(A_IDI2);
        tot.e_in += m.supply_v * a(A_ISRC);
        tot.e_led += a(A_PLED);
        tot.loss.source_resistance += m.source_ohm * a(A_ISRC2);
        if let Some((_, esr)) = m.input_cap {
            tot.loss.input_capacitor_esr += esr * a(A_ICIN2);
        }
        if let Some((_, esr)) = m.output_cap {
            tot.loss.output_capacitor_esr += esr * a(A_ICO2);
        }
        tot.loss.switch_conduction += m.switch_ohm * a(A_ISW2);
        tot.loss.diode_conduction += a(A_PDI);
        tot.loss.inductor_dcr += m.dcr_ohm * a(A_IL2);
        tot.loss.current_sense += m.sense_string_ohm * a(A_IL2) + m.sense_switch_ohm * a(A_ISW2);

        // Extremes over the accepted steps, refined on the dense output
        // where one lies inside.
        let sigs: Vec<Sig> = seg.points.iter().map(|p| ctx.sig(mode, &p.1)).collect();
        let fallback = seg.y;
        let at = |tau: f64| ctx.sig(mode, &dense_at(&seg.dense, tau, &fallback));
        let pick = |f: fn(&Sig) -> f64, maximize: bool| -> f64 {
            extreme(&seg.points, &sigs, f, maximize, &at, ctx.t_s)
        };
        tot.il_max = tot.il_max.max(pick(|s| s.il, true));
        tot.il_min = tot.il_min.min(pick(|s| s.il, false));
        tot.iled_max = tot.iled_max.max(pick(|s| s.iled, true));
        tot.iled_min = tot.iled_min.min(pick(|s| s.iled, false));
        tot.vsw_max = tot.vsw_max.max(pick(|s| s.vsw, true));
        tot.vsw_min = tot.vsw_min.min(pick(|s| s.vsw, false));
        tot.vled_max = tot.vled_max.max(pick(|s| s.vled, true));
    }

    fn sample(&self, s: &Sig, t: f64) -> Sample {
        [
            t,
            s.il,
            s.iled,
            s.vled,
            s.vsw,
            s.vin,
            if self.mode.switch_on { 1.0 } else { 0.0 },
        ]
    }

    fn record(&self, r: &mut Recorder, seg: &Segment) {
        let ctx = &self.ctx;
        let y0 = seg.points[0].1;
        r.push(self.sample(&ctx.sig(self.mode, &y0), self.t));
        let k = r.per_interval;
        for j in 1..=k {
            let tau = seg.tau * j as f64 / (k + 1) as f64;
            let y = dense_at(&seg.dense, tau, &seg.y);
            r.push(self.sample(&ctx.sig(self.mode, &y), self.t + tau * ctx.t_s));
        }
        r.push(self.sample(&ctx.sig(self.mode, &seg.y), self.t + seg.tau * ctx.t_s));
    }
}

/// The dense output at a scaled time (or `fallback` outside its range).
fn dense_at(dense: &ContinuousOutputModel<f64, Y>, tau: f64, fallback: &Y) -> Y {
    dense.evaluate(tau).unwrap_or(*fallback)
}

/// Locates the crossing of an event function in `[ta, tb]` (g(ta) ≤ 0 <
/// g(tb)) on the dense output with the Illinois variant of regula falsi;
/// returns the time on the positive side of the final bracket, iterated
/// until the bracket cannot shrink in f64 (far below 1e-12 s).
#[allow(clippy::too_many_arguments)]
fn locate(
    ctx: &Ctx,
    ev: &Event,
    mode: Mode,
    dense: &ContinuousOutputModel<f64, Y>,
    mut ta: f64,
    mut ga: f64,
    mut tb: f64,
    mut gb: f64,
    fallback: &Y,
) -> f64 {
    // Iterate to the resolution of f64 (Illinois converges superlinearly,
    // so this costs a few evaluations more than a fixed tolerance); the
    // cycle-start state then repeats to round-off in steady state.
    let mut side = 0i8;
    for _ in 0..200 {
        let tc = (ta * gb - tb * ga) / (gb - ga);
        let tc = if tc > ta && tc < tb {
            tc
        } else {
            0.5 * (ta + tb)
        };
        if tc <= ta || tc >= tb {
            break;
        }
        let gc = ctx.value(ev, mode, &dense_at(dense, tc, fallback));
        if gc > 0.0 {
            tb = tc;
            gb = gc;
            if side == 1 {
                ga *= 0.5;
            }
            side = 1;
        } else {
            ta = tc;
            ga = gc;
            if side == -1 {
                gb *= 0.5;
            }
            side = -1;
        }
    }
    tb
}

/// Largest (or smallest) value of a signal over an interval: the sampled
/// extreme at the accepted steps, refined by golden-section search on the
/// dense output over the two steps around it when it lies inside.
fn extreme(
    points: &[(f64, Y)],
    sigs: &[Sig],
    f: fn(&Sig) -> f64,
    maximize: bool,
    at: &dyn Fn(f64) -> Sig,
    t_s: f64,
) -> f64 {
    let sgn = if maximize { 1.0 } else { -1.0 };
    let mut k = 0;
    let mut best = f64::NEG_INFINITY;
    for (j, s) in sigs.iter().enumerate() {
        let v = sgn * f(s);
        if v > best {
            best = v;
            k = j;
        }
    }
    if k > 0 && k + 1 < points.len() {
        let (mut a, mut b) = (points[k - 1].0, points[k + 1].0);
        let g = |tau: f64| sgn * f(&at(tau));
        let r = 0.5 * (5f64.sqrt() - 1.0);
        let mut c = b - r * (b - a);
        let mut d = a + r * (b - a);
        let (mut fc, mut fd) = (g(c), g(d));
        let tol = EXTREME_TIME_TOL_S / t_s;
        for _ in 0..80 {
            if b - a <= tol {
                break;
            }
            if fc > fd {
                b = d;
                d = c;
                fd = fc;
                c = b - r * (b - a);
                fc = g(c);
            } else {
                a = c;
                c = d;
                fc = fd;
                d = a + r * (b - a);
                fd = g(d);
            }
        }
        best = best.max(fc).max(fd);
    }
    sgn * best
}

impl CycleEngine for ReferenceEngine {
    fn run_cycle(
        &mut self,
        totals: Option<&mut Totals>,
        rec: Option<&mut Recorder>,
    ) -> Result<(), SimError> {
        ReferenceEngine::run_cycle(self, totals, rec)
    }
    fn state(&self) -> [f64; N_STATES] {
        self.x
    }
    fn set_state(&mut self, x: [f64; N_STATES]) {
        self.x = x;
        self.mode.switch_on = self.cmd.switch_on;
        self.mode.conducting = self.conducting_for(self.cmd.switch_on);
    }
    fn time_s(&self) -> f64 {
        self.t
    }
    fn stored_energy_j(&self) -> f64 {
        self.ctx.model.stored_energy_j(&self.x)
    }
    fn clamped_energy_j(&self) -> f64 {
        self.clamped_energy_j
    }
    fn freeze_fits(&mut self) {
        // No curve fits: the exact curves are used throughout.
    }
    fn stats(&self) -> RunStats {
        RunStats {
            cycles: self.cycles,
            intervals: self.intervals,
            exponentials: 0,
            gramians: 0,
            integrator_steps: self.steps,
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::scenario::{template, Capacitor};
    use approx::assert_relative_eq;

    #[test]
    fn output_side_satisfies_kirchhoff_and_the_exact_curve() {
        let mut s = template();
        s.output_capacitor = Some(Capacitor {
            capacitance_f: 4.7e-6,
            esr_ohm: 0.02,
        });
        let m = Model::from_scenario(&s, 1e-9);
        let dev = ExpDevice::from_load(&s.load).unwrap();
        for &(il, vco) in &[(0.7, 9.5), (0.0, 9.0), (1.2, 8.0), (-0.1, 9.8)] {
            let (vo, iled, ico, _) = m.output_side(vco, il, true);
            assert_relative_eq!(iled + ico, il, epsilon = 1e-12);
            assert_relative_eq!(vo, vco + 0.02 * ico, epsilon = 1e-9);
            assert_relative_eq!(vo, dev.voltage_v(iled), epsilon = 1e-9);
        }
    }

    #[test]
    fn scaled_derivative_unscales_to_the_circuit_equations() {
        let s = template();
        let m = Model::from_scenario(&s, 1e-9);
        let ctx = Ctx::new(m, 0.8, 12.0);
        let mode = Mode {
            switch_on: false,
            conducting: true,
        };
        let mut y = Y::zeros();
        y[Y_IL] = 0.7 / 0.8;
        y[Y_VCIN] = 11.9 / 12.0;
        let d = ctx.deriv(mode, &y);
        let sig = m.eval(mode, 0.7, 0.0, 11.9);
        // Off: L di/dt = -v_d - DCR·i - v_LED.
        let dev = ExpDevice::from_load(&s.load).unwrap();
        let expect =
            (-(0.4 + 0.03 * 0.7) - 0.08 * 0.7 - dev.voltage_v(0.7)) / s.inductor.inductance_h;
        assert_relative_eq!(sig.dil, expect, max_relative = 1e-12);
        assert_relative_eq!(d[Y_IL] * 0.8 / ctx.t_s, expect, max_relative = 1e-12);
        assert_relative_eq!(
            d[A_PDI] * ctx.scale[A_PDI] / ctx.t_s,
            (0.4 + 0.021) * 0.7,
            max_relative = 1e-12
        );
    }
    #[test]
    fn knee_crossing_is_located_on_the_dense_output() {
        // Illustrative: 24 V into five 2.7 V knees behind a 1 µF, 50 mΩ
        // capacitor; from power-on the output node rises through 13.5 V.
        let mut s = template();
        s.supply.voltage_v = 24.0;
        s.load = Load::LedKnee {
            count: 5,
            knee_voltage_v: 2.7,
            dynamic_resistance_ohm: 0.4,
        };
        s.output_capacitor = Some(Capacitor {
            capacitance_f: 1e-6,
            esr_ohm: 0.05,
        });
        let mut e = ReferenceEngine::new(&s);
        let (evs, n, _) = e.events();
        let knee: Vec<Event> = evs[..n]
            .iter()
            .copied()
            .filter(|ev| matches!(ev.kind, EventKind::Knee { .. }))
            .collect();
        assert_eq!(knee.len(), 1);
        let seg = e.integrate(&knee, 100.0).unwrap();
        assert_eq!(seg.fired, Some(0));
        let sig = e.ctx.sig(e.mode, &seg.y);
        assert!((sig.vo_open - 13.5).abs() < 1e-9, "{}", sig.vo_open);
        // The crossing lies inside the last accepted step, not at its end.
        assert!(seg.points.len() > 2);
    }
}
