//! Switch controllers: constant off-time peak current, hysteretic, and
//! fixed-duty open loop.
//!
//! A controller is a small state machine. The engine asks it for a
//! [`Command`] (switch state, a deadline, an inductor-current threshold to
//! watch) and calls it back when the deadline passes or the threshold is
//! crossed. To add a controller, implement [`Controller`] and add a
//! variant to [`crate::scenario::ControllerSpec`] and to [`build`].

use crate::scenario::ControllerSpec;

/// An inductor-current threshold the controller wants to hear about.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Watch {
    /// Threshold, A.
    pub level_a: f64,
    /// `true`: fire when the current rises to the level; `false`: falls to it.
    pub rising: bool,
}

/// What the controller wants until its next callback.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Command {
    /// Switch on.
    pub switch_on: bool,
    /// Absolute time of the next timer callback, s (infinite: none).
    pub deadline_s: f64,
    /// Threshold to watch, if any.
    pub watch: Option<Watch>,
}

/// Why the controller is called back.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Cause {
    /// The deadline passed.
    Deadline,
    /// The watched threshold was crossed (or was already beyond it).
    Threshold,
}

/// A switch controller.
pub trait Controller: Send {
    /// Resets to power-on at time `t_s` and returns the first command.
    fn start(&mut self, t_s: f64) -> Command;
    /// Called when the deadline passes or the threshold is crossed.
    fn on_event(&mut self, t_s: f64, cause: Cause, inductor_current_a: f64) -> Command;
    /// [`Controller::on_event`], writing the command into `cmd`: the
    /// callee's stores land where the engine reads them, with no copy of a
    /// just-written command in between (a copy in wider words than the
    /// fields were stored in waits for the stores to retire).
    fn on_event_into(
        &mut self,
        t_s: f64,
        cause: Cause,
        inductor_current_a: f64,
        cmd: &mut Command,
    ) {
        *cmd = self.on_event(t_s, cause, inductor_current_a);
    }
    /// A short description of what the controller is waiting for, for
    /// error messages.
    fn waiting_for(&self) -> String;
}

const NEVER: f64 = f64::INFINITY;

/// Phases of the constant off-time controller.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
enum CotPhase {
    Blanking,
    Watching,
    Delay,
    Off,
}

/// Constant off-time peak-current control: on until the sensed inductor
/// current reaches the peak threshold (ignored during the minimum on-time),
/// off `delay_s` after that, then off for `off_time_s`.
///
/// The comparator trips at the later of the threshold crossing and the end
/// of the minimum on-time; the switch turns off one delay after the trip.
#[derive(Debug, Clone)]
pub struct ConstantOffTime {
    /// Peak threshold, A.
    pub peak_a: f64,
    /// Off-time, s.
    pub off_time_s: f64,
    /// Propagation delay, s.
    pub delay_s: f64,
    /// Minimum on-time, s.
    pub min_on_s: f64,
    phase: CotPhase,
}

impl ConstantOffTime {
    fn turn_on(&mut self, t: f64) -> Command {
        if self.min_on_s > 0.0 {
            self.phase = CotPhase::Blanking;
            Command {
                switch_on: true,
                deadline_s: t + self.min_on_s,
                watch: None,
            }
        } else {
            self.watching()
        }
    }
    fn watching(&mut self) -> Command {
        self.phase = CotPhase::Watching;
        Command {
            switch_on: true,
            deadline_s: NEVER,
            watch: Some(Watch {
                level_a: self.peak_a,
                rising: true,
            }),
        }
    }
    fn tripped(&mut self, t: f64) -> Command {
        if self.delay_s > 0.0 {
            self.phase = CotPhase::Delay;
            Command {
                switch_on: true,
                deadline_s: t + self.delay_s,
                watch: None,
            }
        } else {
            self.turn_off(t)
        }
    }
    fn turn_off(&mut self, t: f64) -> Command {
        self.phase = CotPhase::Off;
        Command {
            switch_on: false,
            deadline_s: t + self.off_time_s,
            watch: None,
        }
    }
}

impl Controller for ConstantOffTime {
    fn start(&mut self, t_s: f64) -> Command {
        self.turn_on(t_s)
    }
    fn on_event(&mut self, t: f64, cause: Cause, il: f64) -> Command {
        match (self.phase, cause) {
            (CotPhase::Blanking, _) => {
                if il >= self.peak_a {
                    self.tripped(t)
                } else {
                    self.watching()
                }
            }
            (CotPhase::Watching, _) => self.tripped(t),
            (CotPhase::Delay, _) => self.turn_off(t),
            (CotPhase::Off, _) => self.turn_on(t),
        }
    }
    fn waiting_for(&self) -> String {
        match self.phase {
            CotPhase::Watching => format!("peak current threshold {} A", self.peak_a),
            CotPhase::Blanking => "end of the minimum on-time".into(),
            CotPhase::Delay => "end of the turn-off delay".into(),
            CotPhase::Off => "end of the off-time".into(),
        }
    }
}

#[derive(Debug, Clone, Copy, PartialEq, Eq)]
enum HystPhase {
    OnWatch,
    OnDelay,
    OffWatch,
    OffDelay,
}

/// Hysteretic control: on until the inductor current reaches the upper
/// threshold (plus the turn-off delay), off until it falls to the lower
/// threshold (plus the turn-on delay).
#[derive(Debug, Clone)]
pub struct Hysteretic {
    /// Upper threshold, A.
    pub upper_a: f64,
    /// Lower threshold, A.
    pub lower_a: f64,
    /// Delay from the upper crossing to turn-off, s.
    pub off_delay_s: f64,
    /// Delay from the lower crossing to turn-on, s.
    pub on_delay_s: f64,
    phase: HystPhase,
}

impl Hysteretic {
    fn on_watch(&mut self) -> Command {
        self.phase = HystPhase::OnWatch;
        Command {
            switch_on: true,
            deadline_s: NEVER,
            watch: Some(Watch {
                level_a: self.upper_a,
                rising: true,
            }),
        }
    }
    fn off_watch(&mut self) -> Command {
        self.phase = HystPhase::OffWatch;
        Command {
            switch_on: false,
            deadline_s: NEVER,
            watch: Some(Watch {
                level_a: self.lower_a,
                rising: false,
            }),
        }
    }
}

impl Controller for Hysteretic {
    fn start(&mut self, _t_s: f64) -> Command {
        self.on_watch()
    }
    fn on_event(&mut self, t: f64, _cause: Cause, _il: f64) -> Command {
        match self.phase {
            HystPhase::OnWatch if self.off_delay_s > 0.0 => {
                self.phase = HystPhase::OnDelay;
                Command {
                    switch_on: true,
                    deadline_s: t + self.off_delay_s,
                    watch: None,
                }
            }
            HystPhase::OnWatch | HystPhase::OnDelay => self.off_watch(),
            HystPhase::OffWatch if self.on_delay_s > 0.0 => {
                self.phase = HystPhase::OffDelay;
                Command {
                    switch_on: false,
                    deadline_s: t + self.on_delay_s,
                    watch: None,
                }
            }
            HystPhase::OffWatch | HystPhase::OffDelay => self.on_watch(),
        }
    }
    fn waiting_for(&self) -> String {
        match self.phase {
            HystPhase::OnWatch => format!("upper current threshold {} A", self.upper_a),
            HystPhase::OffWatch => format!("lower current threshold {} A", self.lower_a),
            _ => "end of a delay".into(),
        }
    }
}

/// Open-loop fixed frequency and duty: on for `duty·period`, off for the rest.
#[derive(Debug, Clone)]
pub struct FixedDuty {
    /// Period, s.
    pub period_s: f64,
    /// Duty cycle (0..1).
    pub duty: f64,
    on: bool,
    cycle_start_s: f64,
    cycles: u64,
    t0: f64,
}

impl Controller for FixedDuty {
    fn start(&mut self, t_s: f64) -> Command {
        self.on = true;
        self.cycles = 0;
        self.t0 = t_s;
        self.cycle_start_s = t_s;
        Command {
            switch_on: true,
            deadline_s: t_s + self.duty * self.period_s,
            watch: None,
        }
    }
    fn on_event(&mut self, _t: f64, _cause: Cause, _il: f64) -> Command {
        if self.on {
            self.on = false;
            Command {
                switch_on: false,
                deadline_s: self.cycle_start_s + self.period_s,
                watch: None,
            }
        } else {
            // Cycle starts on an exact grid so the period does not drift.
            self.on = true;
            self.cycles += 1;
            self.cycle_start_s = self.t0 + self.cycles as f64 * self.period_s;
            Command {
                switch_on: true,
                deadline_s: self.cycle_start_s + self.duty * self.period_s,
                watch: None,
            }
        }
    }
    fn waiting_for(&self) -> String {
        "end of the fixed on- or off-time".into()
    }
}

/// The controller described by a scenario.
pub fn build(spec: &ControllerSpec) -> Box<dyn Controller> {
    match *spec {
        ControllerSpec::ConstantOffTime {
            peak_current_a,
            off_time_s,
            delay_s,
            min_on_time_s,
        } => Box::new(ConstantOffTime {
            peak_a: peak_current_a,
            off_time_s,
            delay_s,
            min_on_s: min_on_time_s,
            phase: CotPhase::Off,
        }),
        ControllerSpec::Hysteretic {
            upper_current_a,
            lower_current_a,
            turn_off_delay_s,
            turn_on_delay_s,
        } => Box::new(Hysteretic {
            upper_a: upper_current_a,
            lower_a: lower_current_a,
            off_delay_s: turn_off_delay_s,
            on_delay_s: turn_on_delay_s,
            phase: HystPhase::OnWatch,
        }),
        ControllerSpec::FixedDuty { frequency_hz, duty } => Box::new(FixedDuty {
            period_s: 1.0 / frequency_hz,
            duty,
            on: false,
            cycle_start_s: 0.0,
            cycles: 0,
            t0: 0.0,
        }),
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    /// Steps a controller through two cycles as the engine would (a
    /// watched threshold is crossed at once, else the deadline passes) and
    /// checks at every step that `waiting_for`, which error messages
    /// quote, describes what the command really waits for: the threshold
    /// with its value, or the end of a timed interval.
    fn describes_every_wait(spec: &ControllerSpec, thresholds: &[(&str, f64)]) {
        let mut c = build(spec);
        let mut cmd = c.start(0.0);
        for _ in 0..12 {
            let text = c.waiting_for();
            match cmd.watch {
                Some(w) => {
                    let named = thresholds
                        .iter()
                        .find(|(_, a)| (w.level_a - a).abs() < 1e-12)
                        .unwrap_or_else(|| panic!("unexpected threshold {}", w.level_a));
                    assert!(
                        text.contains(named.0) && text.contains(&format!("{} A", named.1)),
                        "waiting on {} A but says {text:?}",
                        named.1
                    );
                    cmd = c.on_event(0.0, Cause::Threshold, w.level_a);
                }
                None => {
                    assert!(
                        text.starts_with("end of"),
                        "timed wait described as {text:?}"
                    );
                    cmd = c.on_event(cmd.deadline_s, Cause::Deadline, 0.0);
                }
            }
        }
    }

    #[test]
    fn waiting_for_names_what_each_controller_waits_for() {
        describes_every_wait(
            &ControllerSpec::ConstantOffTime {
                peak_current_a: 0.8,
                off_time_s: 2e-6,
                delay_s: 5e-8,
                min_on_time_s: 1e-7,
            },
            &[("peak", 0.8)],
        );
        describes_every_wait(
            &ControllerSpec::Hysteretic {
                upper_current_a: 0.9,
                lower_current_a: 0.7,
                turn_off_delay_s: 4e-8,
                turn_on_delay_s: 6e-8,
            },
            &[("upper", 0.9), ("lower", 0.7)],
        );
        describes_every_wait(
            &ControllerSpec::FixedDuty {
                frequency_hz: 2e5,
                duty: 0.4,
            },
            &[],
        );
        let mut fixed = build(&ControllerSpec::FixedDuty {
            frequency_hz: 2e5,
            duty: 0.4,
        });
        fixed.start(0.0);
        assert!(fixed.waiting_for().contains("fixed on- or off-time"));
    }
}
