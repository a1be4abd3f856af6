//! One interval of the exact engine: from the present state to the next
//! event (controller threshold or timer, diode or LED current reaching a
//! segment boundary, inductor blocking or unblocking), applying what the
//! event does, including the switch transition.

use super::*;

impl ExactEngine {
    /// Simulates up to the next event, or to `until_s` when that comes
    /// first; says why it stopped and whether the switch turned on.
    /// `STOPPABLE` is false for whole cycles (`until_s` infinite): that
    /// copy is compiled without the end-time checks, so the cycle loop
    /// costs what it did before the stepping call existed.
    pub(super) fn interval<const STOPPABLE: bool>(
        &mut self,
        totals: Option<&mut Totals>,
        rec: Option<&mut Recorder>,
        until_s: f64,
    ) -> Result<Step, SimError> {
        let slot = self.model_slot(self.region);
        // Borrow the cached model without copying it: the cache is moved
        // out for the interval (an empty Vec allocates nothing) and back.
        let mut cache = std::mem::take(&mut self.cache);
        let result = match &mut cache[slot] {
            Some(CacheEntry {
                lin,
                spectral,
                events,
            }) => self.interval_with::<STOPPABLE>(
                lin,
                spectral.as_ref(),
                events,
                totals,
                rec,
                until_s,
            ),
            None => {
                let lin = self.circuit.linearize(self.region);
                let mut events = region_events(&self.circuit, self.region, &lin);
                self.interval_with::<STOPPABLE>(&lin, None, &mut events, totals, rec, until_s)
            }
        };
        self.cache = cache;
        result
    }

    /// [`Self::interval`] with the region's model at hand.
    pub(super) fn interval_with<const STOPPABLE: bool>(
        &mut self,
        lin: &Linear,
        spectral: Option<&Spectral>,
        set: &mut EventSet,
        mut totals: Option<&mut Totals>,
        rec: Option<&mut Recorder>,
        until_s: f64,
    ) -> Result<Step, SimError> {
        let region = self.region;
        let to_deadline = self.cmd.deadline_s - self.t;
        // A timer-ended interval that starts where its timer was set lasts
        // the timer's length (to rounding of the absolute times): its
        // transition matrix is kept with the region and reused, so the
        // interval is one affine update when no event cuts it short.
        let mut timer = None;
        if to_deadline > 0.0 && to_deadline.is_finite() && self.timer_just_set {
            // Within the rounding of the absolute times themselves: the
            // reused matrix then errs by no more than that rounding does.
            let slack = 2.0 * f64::EPSILON * (self.t.abs() + self.cmd.deadline_s.abs());
            let known = set
                .timers
                .iter()
                .position(|k| matches!(k, Some((t, _)) if (t - to_deadline).abs() <= slack));
            let k = match known {
                Some(k) => k,
                None => {
                    let full = Flow {
                        m: &lin.m,
                        spectral,
                        timer: None,
                    };
                    let phi = full.transition_matrix(to_deadline, &mut self.work);
                    let k = set.timer_next;
                    set.timers[k] = Some((to_deadline, phi));
                    set.timer_next = (k + 1) % TIMERS_PER_REGION;
                    k
                }
            };
            timer = Some(k);
        }
        let flow = Flow {
            m: &lin.m,
            spectral,
            timer: timer
                .and_then(|k| set.timers[k].as_ref())
                .map(|(_, phi)| (to_deadline, phi)),
        };
        let z0 = aug(&self.x);
        // The region's own events (cached), behind the controller's
        // threshold in slot 0 (written in place) when it watches one.
        let n = set.n;
        let evs = &mut set.evs;
        let acts = &set.acts;
        let first = match self.cmd.watch {
            Some(w) => {
                // `±(i_L − level)`: the cached i_L event with the level in
                // the constant column (M's last row is zero, so the
                // derivative rows do not change).
                let mut ev = set.il_event;
                if w.rising {
                    ev.row[X_ONE] -= w.level_a;
                } else {
                    ev.row = -ev.row;
                    ev.drow = -ev.drow;
                    ev.d2row = -ev.d2row;
                    ev.row[X_ONE] += w.level_a;
                }
                evs[0] = ev;
                0
            }
            None => 1,
        };
        // The threshold and a region event on the same current in the same
        // direction differ by a constant: the one with the larger constant
        // comes first (the threshold on a tie) and the other is left out.
        // A threshold already reached stays, to fire at once.
        let mut first = first;
        let mut n = n;
        let p = set.watch_partner;
        if first == 0 && p != 0 && same_state_part(&evs[0], &evs[p]) {
            if evs[0].row[X_ONE] >= evs[p].row[X_ONE] {
                n = p;
            } else if evs[0].value(&z0) < 0.0 {
                first = 1;
            }
        }
        // The slice starts at the threshold when there is one.
        let evs = &evs[first..n];
        let threshold_slot = (first == 0).then_some(0);
        let has_co = self.circuit.el.output_cap.is_some();

        // The scan ends at once on an event already due at the start, and
        // at the start when the deadline has passed.
        let t_limit = if to_deadline <= 0.0 {
            0.0
        } else if self.cmd.deadline_s.is_finite() {
            to_deadline
        } else {
            (self.max_interval_s - (self.t - self.switch_changed_t)).max(0.0)
        };
        // A caller's end time cuts the scan short (never when it is
        // infinite, as for whole cycles: the limit is then unchanged).
        let to_end = until_s - self.t;
        let cut = STOPPABLE && to_end < t_limit;
        let t_limit = if cut { to_end } else { t_limit };
        let start = ScanStart {
            due: true,
            threshold: threshold_slot,
            last_fired: if self.remember_event_times {
                &set.last_fired[first..n]
            } else {
                &[]
            },
        };
        let scan = first_event(
            &flow,
            &z0,
            evs,
            start,
            t_limit,
            self.max_step_s,
            &mut self.work,
        );
        if scan.event.is_none() && !cut && !self.cmd.deadline_s.is_finite() {
            return Err(SimError::IntervalTooLong {
                switch: if self.cmd.switch_on { "on" } else { "off" },
                what: self.controller.waiting_for(),
                limit_s: self.max_interval_s,
                current_a: scan.z[X_IL],
                led_voltage_v: (lin.row(Signal::LedVoltage) * scan.z)[0],
                time_s: self.t + scan.t,
            });
        }
        let (dt, fired) = (scan.t, scan.event);
        // Read in place: a copy of the state the scan just stored, in wider
        // words than it was stored in, would wait for those stores.
        let z1 = &scan.z;
        if let Some(j) = fired.filter(|_| dt > 0.0 && self.remember_event_times) {
            set.last_fired[j + first] = scan.t_zero;
        }
        if !z1.iter().all(|v| v.is_finite()) {
            return Err(SimError::NonFinite {
                time_s: self.t + dt,
                topology: region.name(),
                state: z1.iter().take(N_STATES).copied().collect(),
            });
        }
        self.intervals += 1;
        self.chatter.note(dt, self.t, || region.name())?;
        if let Some(sens) = self.sens.as_mut() {
            let ended = match fired {
                Some(j) => End::State(&evs[j].row),
                None if dt > 0.0 && !cut => End::Deadline,
                None => End::Immediate,
            };
            propagate_sensitivity(sens, &flow, z1, dt, ended, &mut self.work);
        }

        // Track the visited current ranges for the next refit, with the
        // turning points inside the interval (a capacitor's LED current
        // peaks between events), estimated from the ends' values and
        // slopes; the measured cycles find them exactly, and the driver
        // re-fits if this estimate fell short (`cover_currents`).
        if !self.freeze_fits {
            if region.led_segment.is_some() {
                // Without an output capacitor the LED carries the inductor
                // current, which turns only at events: its ends suffice.
                let (lo, hi) = if has_co {
                    span_estimate(&set.i_led, &z0, z1, dt)
                } else {
                    let (a, b) = (set.i_led.value(&z0), set.i_led.value(z1));
                    (a.min(b), a.max(b))
                };
                self.led_range.0 = self.led_range.0.min(lo);
                self.led_range.1 = self.led_range.1.max(hi);
            }
            if !region.switch_on && region.conducting {
                // Falling all through the diode's conduction (the output
                // side holds the switch node below the output): its ends.
                let (a, b) = (z0[X_IL], z1[X_IL]);
                self.diode_range.0 = self.diode_range.0.min(a.min(b));
                self.diode_range.1 = self.diode_range.1.max(a.max(b));
            }
        }

        if dt > 0.0 {
            if let Some(tot) = totals.as_deref_mut() {
                self.accumulate(&flow, tot, lin, region, &z0, z1, dt);
            }
            if let Some(r) = rec {
                if r.wants_interval() {
                    self.record(r, &flow, lin, &z0, z1, dt);
                }
            }
        }

        self.t += dt;
        self.x = SVector::from([z1[0], z1[1], z1[2]]);
        if let Some((c, _)) = self.circuit.el.output_cap {
            let _ = c;
        } else {
            self.x[X_VCO] = 0.0;
        }
        if self.circuit.el.input_cap.is_none() {
            self.x[X_VCIN] = 0.0;
        }
        if let Some(sens) = self.sens.as_mut() {
            if self.circuit.el.output_cap.is_none() {
                sens.j.row_mut(X_VCO).fill(0.0);
            }
            if self.circuit.el.input_cap.is_none() {
                sens.j.row_mut(X_VCIN).fill(0.0);
            }
        }

        self.timer_just_set = false;
        if cut && fired.is_none() {
            // Stopped at the caller's end time, between events: nothing
            // fires, the region and the controller stay as they are.
            self.t = until_s;
            return Ok(Step {
                reason: StopReason::EndTime,
                time_s: self.t,
                switch_on: self.cmd.switch_on,
                turned_on: false,
            });
        }
        let act = fired.map(|j| acts[j + first]).unwrap_or(Action::Controller);
        let mut turned_on = false;
        // The next region is built in a local and stored once, with its
        // key (see `set_region`).
        let mut next = region;
        let mut key = None;
        match act {
            Action::Controller => {
                let cause = if fired.is_some() {
                    Cause::Threshold
                } else {
                    Cause::Deadline
                };
                let was_on = self.cmd.switch_on;
                self.controller
                    .on_event_into(self.t, cause, self.x[X_IL], &mut self.cmd);
                // Read back field by field: copying the whole command would
                // reload the callee's narrow stores in wide words, which
                // stalls store forwarding.
                let now_on = self.cmd.switch_on;
                if self.cmd.deadline_s.is_finite() {
                    // A timer set now: the next interval starts with it, and
                    // its end moves with this event.
                    self.timer_just_set = true;
                    if let Some(sens) = self.sens.as_mut() {
                        sens.deadline_tau = sens.tau;
                    }
                }
                turned_on = now_on && !was_on;
                if now_on != was_on {
                    self.switch_changed_t = self.t;
                    // The edge's figures for the switching losses, taken
                    // before the transition changes the state.
                    let edge = totals.is_some().then(|| {
                        let il = self.x[X_IL];
                        let diode_on = !region.switch_on && region.conducting && il > 0.0;
                        (lin.signals * aug(&self.x), il, diode_on)
                    });
                    self.switch_transition(&mut next, now_on);
                    if let (Some(tot), Some((pre, il, diode_on))) = (totals, edge) {
                        // The switch's blocked voltage on the open side of
                        // the edge, for the post-processed switching losses.
                        let post = self.circuit.linearize(next).signals * aug(&self.x);
                        let (vin, vsw) = (Signal::InputNode as usize, Signal::SwitchNode as usize);
                        let blocked = if now_on {
                            pre[vin] - pre[vsw]
                        } else {
                            post[vin] - post[vsw]
                        };
                        let recovery = (now_on && diode_on).then_some(post[vsw]);
                        tot.edges.note(now_on, il, blocked, recovery);
                    }
                }
            }
            Action::DiodeOff | Action::Block => {
                self.x[X_IL] = 0.0;
                if let Some(sens) = self.sens.as_mut() {
                    sens.j.row_mut(X_IL).fill(0.0);
                }
                next.conducting = false;
                next.l_segment = 0;
                if !has_co {
                    next.led_segment = None;
                }
            }
            Action::Unblock => {
                next.conducting = true;
                next.led_segment = Some(0);
            }
            // A step of one segment moves one byte of the key by one; the
            // key is stepped from the old one (see `region_key`) rather than
            // recomputed from the bytes of `next` just stored one by one.
            Action::DiodeDown => {
                next.diode_segment -= 1;
                key = Some(self.region_key - KEY_DIODE_STEP);
            }
            Action::DiodeUp => {
                next.diode_segment += 1;
                key = Some(self.region_key + KEY_DIODE_STEP);
            }
            // LED segments are keyed one up (0 for none): LedOff leaves
            // segment 0, LedOn enters it.
            Action::LedDown | Action::LedOff => {
                next.led_segment = next.led_segment.and_then(|k| k.checked_sub(1));
                key = Some(self.region_key - KEY_LED_STEP);
            }
            Action::LedUp | Action::LedOn => {
                next.led_segment = Some(next.led_segment.map_or(0, |k| k + 1));
                key = Some(self.region_key + KEY_LED_STEP);
            }
            Action::SatDown => {
                next.l_segment -= 1;
                key = Some(self.region_key - KEY_L_STEP);
            }
            Action::SatUp => {
                next.l_segment += 1;
                key = Some(self.region_key + KEY_L_STEP);
            }
        }
        match key {
            Some(k) => {
                debug_assert_eq!(k, region_key(next));
                self.region = next;
                self.region_key = k;
            }
            None => self.set_region(next),
        }
        Ok(Step {
            reason: act.reason(fired.is_some()),
            time_s: self.t,
            switch_on: self.cmd.switch_on,
            turned_on,
        })
    }

    /// Moves `region` across a switch edge to `on`.
    pub(super) fn switch_transition(&mut self, region: &mut Region, on: bool) {
        let il = self.x[X_IL];
        region.switch_on = on;
        if on {
            if !region.conducting {
                // Leaving DCM idle: conducts if the drive pushes current forward
                // (always with an output capacitor: the switch conducts both ways).
                let r = self.circuit.region_for(true, &self.x);
                region.conducting = r.conducting;
                if self.circuit.el.output_cap.is_none() {
                    region.led_segment = r.led_segment;
                }
            }
        } else if il > 0.0 {
            region.conducting = true;
            region.diode_segment = self.circuit.diode.segment_for_current(il) as u8;
        } else {
            // A reverse current is cut off at turn-off (the switch's body
            // diode returns it to the input within nanoseconds); count its
            // energy as a loss of its own.
            self.clamped_energy_j += self.circuit.inductor_energy_j(il);
            self.x[X_IL] = 0.0;
            if let Some(sens) = self.sens.as_mut() {
                sens.j.row_mut(X_IL).fill(0.0);
            }
            region.conducting = false;
            region.l_segment = 0;
            if self.circuit.el.output_cap.is_none() {
                region.led_segment = None;
            }
        }
    }
}
