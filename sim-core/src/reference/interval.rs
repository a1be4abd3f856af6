//! One interval of the reference engine: its events, the integration to
//! the first, what the event does (controller, diode, LED, inductance),
//! and the figures and samples measured over it.

use super::locate::{dense_at, extreme};
use super::*;

impl ReferenceEngine {
    pub(super) fn events(&self) -> ([Event; MAX_EVENTS], usize, Option<usize>) {
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

    pub(super) fn scaled_state(&self) -> Y {
        let mut y = Y::zeros();
        y[Y_IL] = self.x[0] / self.ctx.scale[Y_IL];
        y[Y_VCO] = self.x[1] / self.ctx.scale[Y_VCO];
        y[Y_VCIN] = self.x[2] / self.ctx.scale[Y_VCIN];
        y
    }

    /// Simulates up to the next event; returns whether the switch turned on.
    pub(super) fn interval(
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

    pub(super) fn switch_transition(&mut self, on: bool) {
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

    pub(super) fn accumulate(&self, tot: &mut Totals, seg: &Segment, dt: f64) {
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

    pub(super) fn sample(&self, s: &Sig, t: f64) -> Sample {
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

    pub(super) fn record(&self, r: &mut Recorder, seg: &Segment) {
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
