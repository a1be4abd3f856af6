//! What the exact engine measures over an interval: energies and RMS
//! integrals from the Gramian, extremes with their interior turning
//! points, and recorded samples.

use super::*;

impl ExactEngine {
    #[allow(clippy::too_many_arguments)] // One interval's full context.
    pub(super) fn accumulate(
        &mut self,
        flow: &Flow,
        tot: &mut Totals,
        lin: &Linear,
        region: Region,
        z0: &Aug,
        z1: &Aug,
        dt: f64,
    ) {
        let (g, _) = gramian(&lin.m, z0, dt, &mut self.work);
        let row = |s: Signal| lin.row(s);
        let q = |a: &Row, b: &Row| (a * g * b.transpose())[0];
        let mut one = Row::zeros();
        one[X_ONE] = 1.0;
        let lin_int = |a: &Row| q(a, &one);
        let il = row(Signal::InductorCurrent);
        let iled = row(Signal::LedCurrent);
        let vled = row(Signal::LedVoltage);
        let isrc = row(Signal::SourceCurrent);
        let icin = row(Signal::InputCapCurrent);
        let ico = row(Signal::OutputCapCurrent);
        let isw = row(Signal::SwitchCurrent);
        let idi = row(Signal::DiodeCurrent);
        let vdi = row(Signal::DiodeVoltage);
        tot.time_s += dt;
        if region.switch_on {
            tot.on_time_s += dt;
        } else if !region.conducting {
            tot.idle_time_s += dt;
        }
        tot.il += lin_int(&il);
        tot.il2 += q(&il, &il);
        tot.iled += lin_int(&iled);
        tot.iled2 += q(&iled, &iled);
        tot.vled += lin_int(&vled);
        tot.isrc += lin_int(&isrc);
        tot.isrc2 += q(&isrc, &isrc);
        tot.icin += lin_int(&icin);
        tot.icin2 += q(&icin, &icin);
        tot.ico += lin_int(&ico);
        tot.ico2 += q(&ico, &ico);
        tot.isw2 += q(&isw, &isw);
        tot.idiode += lin_int(&idi);
        tot.idiode2 += q(&idi, &idi);
        let c = &self.circuit;
        tot.e_in += c.el.supply_v * lin_int(&isrc);
        tot.e_led += q(&vled, &iled);
        tot.loss.source_resistance += c.el.source_ohm * q(&isrc, &isrc);
        if let Some((_, esr)) = c.el.input_cap {
            tot.loss.input_capacitor_esr += esr * q(&icin, &icin);
        }
        if let Some((_, esr)) = c.el.output_cap {
            tot.loss.output_capacitor_esr += esr * q(&ico, &ico);
        }
        tot.loss.switch_conduction += c.el.switch_ohm * q(&isw, &isw);
        tot.loss.diode_conduction += q(&vdi, &idi);
        tot.loss.inductor_dcr += c.el.dcr_ohm * q(&il, &il);
        tot.loss.current_sense +=
            c.el.sense_string_ohm * q(&il, &il) + c.el.sense_switch_ohm * q(&isw, &isw);
        // Extremes: the ends, and any turning point inside.
        let extreme = |s: Signal, lo: Option<&mut f64>, hi: &mut f64, work: &mut WorkCounts| {
            let r = row(s);
            let (a, b) = ((r * z0)[0], (r * z1)[0]);
            let mut vmax = a.max(b);
            let mut vmin = a.min(b);
            let dr = r * lin.m;
            let (da, db) = ((dr * z0)[0], (dr * z1)[0]);
            if da * db < 0.0 {
                // A turning point: the derivative crosses zero.
                let drow = if da > 0.0 { -dr } else { dr };
                let ev = EventFn::new(drow, &lin.m);
                let sc = first_event(
                    flow,
                    z0,
                    &[ev],
                    ScanStart::default(),
                    dt,
                    f64::INFINITY,
                    work,
                );
                if sc.event.is_some() {
                    let v = (r * sc.z)[0];
                    vmax = vmax.max(v);
                    vmin = vmin.min(v);
                }
            }
            *hi = hi.max(vmax);
            if let Some(lo) = lo {
                *lo = lo.min(vmin);
            }
        };
        let mut work = self.work;
        extreme(
            Signal::InductorCurrent,
            Some(&mut tot.il_min),
            &mut tot.il_max,
            &mut work,
        );
        extreme(
            Signal::LedCurrent,
            Some(&mut tot.iled_min),
            &mut tot.iled_max,
            &mut work,
        );
        extreme(
            Signal::SwitchNode,
            Some(&mut tot.vsw_min),
            &mut tot.vsw_max,
            &mut work,
        );
        extreme(Signal::LedVoltage, None, &mut tot.vled_max, &mut work);
        self.work = work;
    }

    pub(super) fn sample(&self, lin: &Linear, z: &Aug, t: f64) -> Sample {
        let s = lin.signals * z;
        [
            t,
            s[Signal::InductorCurrent as usize],
            s[Signal::LedCurrent as usize],
            s[Signal::LedVoltage as usize],
            s[Signal::SwitchNode as usize],
            s[Signal::InputNode as usize],
            if self.region.switch_on { 1.0 } else { 0.0 },
        ]
    }

    #[allow(clippy::too_many_arguments)] // One interval's ends and model.
    pub(super) fn record(
        &mut self,
        r: &mut Recorder,
        flow: &Flow,
        lin: &Linear,
        z0: &Aug,
        z1: &Aug,
        dt: f64,
    ) {
        // The start repeats the last interval's end unless a signal jumped.
        r.push_unless_repeat(self.sample(lin, z0, self.t));
        let k = r.per_interval;
        for j in 1..=k {
            let tau = dt * j as f64 / (k + 1) as f64;
            let z = flow.advance(tau, z0, &mut self.work);
            r.push(self.sample(lin, &z, self.t + tau));
        }
        r.push(self.sample(lin, z1, self.t + dt));
    }
}
