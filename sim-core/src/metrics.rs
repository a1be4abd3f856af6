//! Steady-state measurements over an integer number of switching cycles.
//!
//! Both engines fill the same [`Totals`] (time integrals of every current,
//! square and power, extremes, time spent in each switch state) over the
//! measured cycles; [`Metrics::from_totals`] turns them into the figures an
//! engineer reads. All values are SI.

use serde::Serialize;

/// Running integrals and extremes over the measured cycles.
#[derive(Debug, Clone, Copy, PartialEq, Default)]
pub struct Totals {
    /// Complete switching cycles included.
    pub cycles: u64,
    /// Time covered, s.
    pub time_s: f64,
    /// Time with the switch on, s.
    pub on_time_s: f64,
    /// Time with the switch off and the inductor current at zero (DCM idle), s.
    pub idle_time_s: f64,
    /// ∫ i_L dt, A·s.
    pub il: f64,
    /// ∫ i_L² dt.
    pub il2: f64,
    /// ∫ i_LED dt.
    pub iled: f64,
    /// ∫ i_LED² dt.
    pub iled2: f64,
    /// ∫ v_LED dt, V·s.
    pub vled: f64,
    /// ∫ i_source dt.
    pub isrc: f64,
    /// ∫ i_source² dt.
    pub isrc2: f64,
    /// ∫ i_Cin dt.
    pub icin: f64,
    /// ∫ i_Cin² dt.
    pub icin2: f64,
    /// ∫ i_Co dt.
    pub ico: f64,
    /// ∫ i_Co² dt.
    pub ico2: f64,
    /// ∫ i_switch² dt.
    pub isw2: f64,
    /// ∫ i_diode dt.
    pub idiode: f64,
    /// ∫ i_diode² dt.
    pub idiode2: f64,
    /// Energy from the ideal source, J.
    pub e_in: f64,
    /// Energy into the LED string (or load), J.
    pub e_led: f64,
    /// Losses, J.
    pub loss: LossEnergies,
    /// Stored energy at the start of the measured cycles, J.
    pub stored_start_j: f64,
    /// Stored energy at the end, J.
    pub stored_end_j: f64,
    /// Highest inductor current, A.
    pub il_max: f64,
    /// Lowest inductor current, A.
    pub il_min: f64,
    /// Highest LED current, A.
    pub iled_max: f64,
    /// Lowest LED current, A.
    pub iled_min: f64,
    /// Highest switch-node voltage, V.
    pub vsw_max: f64,
    /// Lowest switch-node voltage, V.
    pub vsw_min: f64,
    /// Highest LED voltage, V.
    pub vled_max: f64,
    /// The switching edges seen (for the post-processed switching losses).
    pub edges: EdgeTotals,
    /// Energy the part losses computed after the run draw from the supply
    /// (transition, gate, output capacitance, recovery, core, quiescent),
    /// J; included in `e_in` and in `loss`.
    pub e_parts: f64,
}

/// Sums over the switching edges of the measured cycles, filled by both
/// engines at each change of the switch state.
#[derive(Debug, Clone, Copy, PartialEq, Default)]
pub struct EdgeTotals {
    /// Turn-on edges.
    pub turn_ons: u64,
    /// Turn-off edges.
    pub turn_offs: u64,
    /// Σ V·I at turn-on: the voltage the switch blocked just before and the
    /// current it takes over, V·A.
    pub on_vi: f64,
    /// Σ V·I at turn-off: the current it carried and the voltage it blocks
    /// just after, V·A.
    pub off_vi: f64,
    /// Σ V² of the blocked voltage at turn-on (output-capacitance loss), V².
    pub on_v2: f64,
    /// Σ of the diode's reverse voltage just after each turn-on that cut off
    /// a conducting diode (reverse recovery), V.
    pub recovery_v: f64,
}

impl EdgeTotals {
    /// Notes one edge. `on`: turn-on; `current_a`: inductor current at the
    /// edge; `blocked_v`: voltage across the open switch (before turn-on or
    /// after turn-off); `recovery_v`: the diode's reverse voltage after a
    /// turn-on that cut off diode conduction.
    pub fn note(&mut self, on: bool, current_a: f64, blocked_v: f64, recovery_v: Option<f64>) {
        let i = current_a.max(0.0);
        let v = blocked_v.max(0.0);
        if on {
            self.turn_ons += 1;
            self.on_vi += v * i;
            self.on_v2 += v * v;
            if let Some(vr) = recovery_v {
                self.recovery_v += vr.max(0.0);
            }
        } else {
            self.turn_offs += 1;
            self.off_vi += v * i;
        }
    }
}

impl Totals {
    /// Empty totals ready for extremes.
    pub fn new() -> Totals {
        Totals {
            il_max: f64::NEG_INFINITY,
            il_min: f64::INFINITY,
            iled_max: f64::NEG_INFINITY,
            iled_min: f64::INFINITY,
            vsw_max: f64::NEG_INFINITY,
            vsw_min: f64::INFINITY,
            vled_max: f64::NEG_INFINITY,
            ..Totals::default()
        }
    }
}

/// Energy lost in each element, J (or W when divided by time).
#[derive(Debug, Clone, Copy, PartialEq, Default, Serialize)]
pub struct LossEnergies {
    /// Supply source resistance.
    pub source_resistance: f64,
    /// Input capacitor ESR.
    pub input_capacitor_esr: f64,
    /// Switch on-resistance (conduction).
    pub switch_conduction: f64,
    /// Freewheel diode conduction.
    pub diode_conduction: f64,
    /// Inductor winding resistance.
    pub inductor_dcr: f64,
    /// Output capacitor ESR.
    pub output_capacitor_esr: f64,
    /// Energy dropped when a reverse inductor current was cut off at
    /// turn-off (only with an output capacitor charged above the input).
    pub reverse_current_clamp: f64,
    /// Switch turn-on and turn-off transitions (linear-ramp estimate).
    pub switch_transition: f64,
    /// Gate drive, Q_g·V_drive per cycle.
    pub switch_gate_drive: f64,
    /// Switch output capacitance discharged at each turn-on, ½·C_oss·V².
    pub switch_output_capacitance: f64,
    /// Diode reverse recovery, Q_rr·V per turn-on.
    pub diode_reverse_recovery: f64,
    /// Diode junction capacitance charged at each turn-on, ½·C_j·ΔV²
    /// (dissipated in the switch channel).
    pub diode_junction_capacitance: f64,
    /// Inductor core (improved generalized Steinmetz equation on the
    /// simulated flux).
    pub inductor_core: f64,
    /// Controller quiescent current from the supply.
    pub controller_quiescent: f64,
    /// Current-sense resistor.
    pub current_sense: f64,
}

impl LossEnergies {
    /// Sum of all losses.
    pub fn total(&self) -> f64 {
        self.source_resistance
            + self.input_capacitor_esr
            + self.switch_conduction
            + self.diode_conduction
            + self.inductor_dcr
            + self.output_capacitor_esr
            + self.reverse_current_clamp
            + self.switch_transition
            + self.switch_gate_drive
            + self.switch_output_capacitance
            + self.diode_reverse_recovery
            + self.diode_junction_capacitance
            + self.inductor_core
            + self.controller_quiescent
            + self.current_sense
    }

    /// Every entry multiplied by `k` (e.g. 1/time for watts).
    pub fn scaled(&self, k: f64) -> LossEnergies {
        LossEnergies {
            source_resistance: self.source_resistance * k,
            input_capacitor_esr: self.input_capacitor_esr * k,
            switch_conduction: self.switch_conduction * k,
            diode_conduction: self.diode_conduction * k,
            inductor_dcr: self.inductor_dcr * k,
            output_capacitor_esr: self.output_capacitor_esr * k,
            reverse_current_clamp: self.reverse_current_clamp * k,
            switch_transition: self.switch_transition * k,
            switch_gate_drive: self.switch_gate_drive * k,
            switch_output_capacitance: self.switch_output_capacitance * k,
            diode_reverse_recovery: self.diode_reverse_recovery * k,
            diode_junction_capacitance: self.diode_junction_capacitance * k,
            inductor_core: self.inductor_core * k,
            controller_quiescent: self.controller_quiescent * k,
            current_sense: self.current_sense * k,
        }
    }

    /// Adds another set.
    pub fn add(&mut self, o: &LossEnergies) {
        self.source_resistance += o.source_resistance;
        self.input_capacitor_esr += o.input_capacitor_esr;
        self.switch_conduction += o.switch_conduction;
        self.diode_conduction += o.diode_conduction;
        self.inductor_dcr += o.inductor_dcr;
        self.output_capacitor_esr += o.output_capacitor_esr;
        self.reverse_current_clamp += o.reverse_current_clamp;
        self.switch_transition += o.switch_transition;
        self.switch_gate_drive += o.switch_gate_drive;
        self.switch_output_capacitance += o.switch_output_capacitance;
        self.diode_reverse_recovery += o.diode_reverse_recovery;
        self.diode_junction_capacitance += o.diode_junction_capacitance;
        self.inductor_core += o.inductor_core;
        self.controller_quiescent += o.controller_quiescent;
        self.current_sense += o.current_sense;
    }
}

/// Whether the inductor current falls to zero each cycle.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize)]
#[serde(rename_all = "lowercase")]
pub enum ConductionMode {
    /// Continuous conduction: the current never reaches zero.
    Ccm,
    /// Discontinuous conduction: the current rests at zero part of each cycle.
    Dcm,
    /// At the boundary: the valley touches zero (within 1 % of the
    /// average, or idle for under 0.1 % of the period).
    Boundary,
}

/// The steady-state figures of one operating point.
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
pub struct Metrics {
    /// Cycles measured.
    pub cycles_measured: u64,
    /// Average LED current, A.
    pub led_current_avg_a: f64,
    /// RMS LED current, A.
    pub led_current_rms_a: f64,
    /// Peak-to-peak LED current ripple, A.
    pub led_current_ripple_pp_a: f64,
    /// Peak-to-peak LED current ripple, % of the average.
    pub led_current_ripple_pct: f64,
    /// Highest LED current, A.
    pub led_current_max_a: f64,
    /// Lowest LED current, A.
    pub led_current_min_a: f64,
    /// Average LED string voltage, V.
    pub led_voltage_avg_v: f64,
    /// Highest LED string voltage, V.
    pub led_voltage_max_v: f64,
    /// Inductor peak current, A.
    pub inductor_current_peak_a: f64,
    /// Inductor valley current, A.
    pub inductor_current_valley_a: f64,
    /// Inductor average current, A.
    pub inductor_current_avg_a: f64,
    /// Inductor RMS current, A.
    pub inductor_current_rms_a: f64,
    /// Peak-to-peak inductor ripple, A.
    pub inductor_ripple_pp_a: f64,
    /// Switching frequency, Hz.
    pub switching_frequency_hz: f64,
    /// Switching period, s.
    pub period_s: f64,
    /// Duty cycle: on-time over period.
    pub duty: f64,
    /// Switch on-time per cycle, s.
    pub on_time_s: f64,
    /// Switch off-time per cycle (including DCM idle), s.
    pub off_time_s: f64,
    /// DCM idle time per cycle, s.
    pub idle_time_s: f64,
    /// CCM, DCM or boundary.
    pub conduction_mode: ConductionMode,
    /// Inductor valley over its average current (0 in DCM): how far from DCM.
    pub ccm_margin: f64,
    /// Average current from the supply, A.
    pub input_current_avg_a: f64,
    /// RMS current from the supply, A.
    pub input_current_rms_a: f64,
    /// RMS ripple current in the input capacitor, A.
    pub input_capacitor_ripple_rms_a: f64,
    /// RMS ripple current in the output capacitor, A.
    pub output_capacitor_ripple_rms_a: f64,
    /// RMS switch current, A.
    pub switch_current_rms_a: f64,
    /// Average diode current, A.
    pub diode_current_avg_a: f64,
    /// RMS diode current, A.
    pub diode_current_rms_a: f64,
    /// Highest switch-node voltage, V.
    pub switch_node_max_v: f64,
    /// Lowest switch-node voltage, V.
    pub switch_node_min_v: f64,
    /// Average power from the supply, W.
    pub input_power_w: f64,
    /// Average power into the LED string, W.
    pub led_power_w: f64,
    /// Average power lost in each element, W.
    pub losses_w: LossEnergies,
    /// Sum of the losses, W.
    pub total_loss_w: f64,
    /// LED power over input power.
    pub efficiency: f64,
    /// (input − LED − losses − change in stored energy) / input, over the
    /// measured cycles.
    pub energy_balance_residual: f64,
}

fn ac_rms(sq: f64, mean: f64) -> f64 {
    (sq - mean * mean).max(0.0).sqrt()
}

impl Metrics {
    /// The figures from totals over whole cycles.
    pub fn from_totals(t: &Totals) -> Metrics {
        let time = t.time_s;
        let cycles = t.cycles.max(1) as f64;
        let avg = |x: f64| x / time;
        let period = time / cycles;
        let led_avg = avg(t.iled);
        let il_avg = avg(t.il);
        let ripple = t.iled_max - t.iled_min;
        let idle = t.idle_time_s / cycles;
        let valley = t.il_min.max(0.0);
        let margin = if il_avg > 0.0 { valley / il_avg } else { 0.0 };
        let mode = if idle > 1e-3 * period {
            ConductionMode::Dcm
        } else if idle > 0.0 || margin < 0.01 {
            ConductionMode::Boundary
        } else {
            ConductionMode::Ccm
        };
        let e_loss = t.loss.total();
        let d_stored = t.stored_end_j - t.stored_start_j;
        let residual = if t.e_in != 0.0 {
            (t.e_in - t.e_led - e_loss - d_stored) / t.e_in
        } else {
            0.0
        };
        let on = t.on_time_s / cycles;
        Metrics {
            cycles_measured: t.cycles,
            led_current_avg_a: led_avg,
            led_current_rms_a: avg(t.iled2).max(0.0).sqrt(),
            led_current_ripple_pp_a: ripple,
            led_current_ripple_pct: if led_avg != 0.0 {
                100.0 * ripple / led_avg
            } else {
                0.0
            },
            led_current_max_a: t.iled_max,
            led_current_min_a: t.iled_min,
            led_voltage_avg_v: avg(t.vled),
            led_voltage_max_v: t.vled_max,
            inductor_current_peak_a: t.il_max,
            inductor_current_valley_a: t.il_min,
            inductor_current_avg_a: il_avg,
            inductor_current_rms_a: avg(t.il2).max(0.0).sqrt(),
            inductor_ripple_pp_a: t.il_max - t.il_min,
            switching_frequency_hz: 1.0 / period,
            period_s: period,
            duty: on / period,
            on_time_s: on,
            off_time_s: period - on,
            idle_time_s: idle,
            conduction_mode: mode,
            ccm_margin: if mode == ConductionMode::Dcm {
                0.0
            } else {
                margin
            },
            input_current_avg_a: avg(t.isrc),
            input_current_rms_a: avg(t.isrc2).max(0.0).sqrt(),
            input_capacitor_ripple_rms_a: ac_rms(avg(t.icin2), avg(t.icin)),
            output_capacitor_ripple_rms_a: ac_rms(avg(t.ico2), avg(t.ico)),
            switch_current_rms_a: avg(t.isw2).max(0.0).sqrt(),
            diode_current_avg_a: avg(t.idiode),
            diode_current_rms_a: avg(t.idiode2).max(0.0).sqrt(),
            switch_node_max_v: t.vsw_max,
            switch_node_min_v: t.vsw_min,
            input_power_w: avg(t.e_in),
            led_power_w: avg(t.e_led),
            losses_w: t.loss.scaled(1.0 / time),
            total_loss_w: avg(e_loss),
            efficiency: if t.e_in > 0.0 { t.e_led / t.e_in } else { 0.0 },
            energy_balance_residual: residual,
        }
    }
}

#[cfg(test)]
mod tests {
    //! `Metrics::from_totals` on hand-made totals: each figure against its
    //! definition (average = ∫x dt / T, RMS = √(∫x² dt / T), AC RMS =
    //! √(mean square − mean²)), with every input distinct so a figure read
    //! from the wrong integral shows, and the classification rule at the
    //! exact edges documented on [`ConductionMode`].
    use super::*;

    fn close(a: f64, b: f64) -> bool {
        (a - b).abs() <= 1e-12 * b.abs().max(1e-300)
    }

    macro_rules! check {
        ($a:expr, $b:expr) => {
            assert!(
                close($a, $b),
                "{} = {} (expected {})",
                stringify!($a),
                $a,
                $b
            )
        };
    }

    /// Loss entries 1, 2, 4, … 2¹⁴ (distinct powers of two: any sum of a
    /// subset is exact and identifies the subset).
    fn powers_of_two() -> LossEnergies {
        let mut k = 0.5;
        let mut next = || {
            k *= 2.0;
            k
        };
        LossEnergies {
            source_resistance: next(),
            input_capacitor_esr: next(),
            switch_conduction: next(),
            diode_conduction: next(),
            inductor_dcr: next(),
            output_capacitor_esr: next(),
            reverse_current_clamp: next(),
            switch_transition: next(),
            switch_gate_drive: next(),
            switch_output_capacitance: next(),
            diode_reverse_recovery: next(),
            diode_junction_capacitance: next(),
            inductor_core: next(),
            controller_quiescent: next(),
            current_sense: next(),
        }
    }

    fn entries(l: &LossEnergies) -> Vec<f64> {
        serde_json::to_value(l)
            .unwrap()
            .as_object()
            .unwrap()
            .values()
            .map(|v| v.as_f64().unwrap())
            .collect()
    }

    #[test]
    fn total_scaled_and_add_cover_every_entry() {
        let l = powers_of_two();
        let e = entries(&l);
        // Every serialised entry distinct, and the total their exact sum
        // (2¹⁵ − 1 for fifteen entries).
        assert_eq!(e.len(), 15);
        let sum: f64 = e.iter().sum();
        check!(l.total(), sum);
        check!(l.total(), 32767.0);
        for (s, x) in entries(&l.scaled(3.0)).iter().zip(&e) {
            check!(*s, 3.0 * x);
        }
        let mut a = l.scaled(65536.0);
        a.add(&l);
        for (s, x) in entries(&a).iter().zip(&e) {
            check!(*s, 65537.0 * x);
        }
    }

    #[test]
    fn edges_book_each_product_on_its_own_side() {
        let mut e = EdgeTotals::default();
        e.note(true, 2.0, 30.0, Some(29.0));
        e.note(true, 3.0, 10.0, None);
        e.note(false, 5.0, 7.0, Some(100.0));
        // Negative currents and voltages are clipped to zero.
        e.note(true, -1.0, 50.0, Some(-4.0));
        e.note(false, 4.0, -9.0, None);
        assert_eq!((e.turn_ons, e.turn_offs), (3, 2));
        check!(e.on_vi, 2.0 * 30.0 + 3.0 * 10.0);
        check!(e.on_v2, 30.0 * 30.0 + 10.0 * 10.0 + 50.0 * 50.0);
        check!(e.recovery_v, 29.0);
        check!(e.off_vi, 5.0 * 7.0);
    }

    #[test]
    fn new_totals_start_extremes_at_infinity() {
        let t = Totals::new();
        assert!(t.il_max == f64::NEG_INFINITY && t.il_min == f64::INFINITY);
        assert!(t.iled_max == f64::NEG_INFINITY && t.iled_min == f64::INFINITY);
        assert!(t.vsw_max == f64::NEG_INFINITY && t.vsw_min == f64::INFINITY);
        assert!(t.vled_max == f64::NEG_INFINITY);
        assert_eq!(t.cycles, 0);
        assert!(t.il == 0.0 && t.e_in == 0.0);
    }

    /// Four cycles over 2 s, every integral distinct.
    fn hand_totals() -> Totals {
        Totals {
            cycles: 4,
            time_s: 2.0,
            on_time_s: 0.8,
            idle_time_s: 0.0,
            il: 3.0,
            il2: 10.0,
            iled: 5.0,
            iled2: 14.0,
            vled: 8.0,
            isrc: 1.0,
            isrc2: 2.0,
            icin: 0.4,
            icin2: 0.5,
            ico: 0.2,
            ico2: 0.18,
            isw2: 18.0,
            idiode: 1.2,
            idiode2: 4.5,
            e_in: 20.0,
            e_led: 16.0,
            loss: powers_of_two().scaled(1.0 / 32767.0 * 3.5),
            stored_start_j: 0.25,
            stored_end_j: 0.75,
            il_max: 2.0,
            il_min: 0.9,
            iled_max: 2.75,
            iled_min: 2.25,
            vsw_max: 24.5,
            vsw_min: -0.6,
            vled_max: 4.25,
            edges: EdgeTotals::default(),
            e_parts: 0.0,
        }
    }

    #[test]
    fn every_figure_from_its_own_integral() {
        let m = Metrics::from_totals(&hand_totals());
        assert_eq!(m.cycles_measured, 4);
        check!(m.period_s, 0.5);
        check!(m.switching_frequency_hz, 2.0);
        check!(m.on_time_s, 0.2);
        check!(m.off_time_s, 0.3);
        check!(m.duty, 0.4);
        check!(m.idle_time_s + 1.0, 1.0);
        check!(m.inductor_current_avg_a, 1.5);
        check!(m.inductor_current_rms_a, 5f64.sqrt());
        check!(m.inductor_current_peak_a, 2.0);
        check!(m.inductor_current_valley_a, 0.9);
        check!(m.inductor_ripple_pp_a, 1.1);
        check!(m.led_current_avg_a, 2.5);
        check!(m.led_current_rms_a, 7f64.sqrt());
        check!(m.led_current_max_a, 2.75);
        check!(m.led_current_min_a, 2.25);
        check!(m.led_current_ripple_pp_a, 0.5);
        check!(m.led_current_ripple_pct, 20.0);
        check!(m.led_voltage_avg_v, 4.0);
        check!(m.led_voltage_max_v, 4.25);
        check!(m.input_current_avg_a, 0.5);
        check!(m.input_current_rms_a, 1.0);
        // AC RMS: √(0.25 − 0.2²) and √(0.09 − 0.1²).
        check!(m.input_capacitor_ripple_rms_a, 0.21f64.sqrt());
        check!(m.output_capacitor_ripple_rms_a, 0.08f64.sqrt());
        check!(m.switch_current_rms_a, 3.0);
        check!(m.diode_current_avg_a, 0.6);
        check!(m.diode_current_rms_a, 1.5);
        check!(m.switch_node_max_v, 24.5);
        check!(m.switch_node_min_v, -0.6);
        check!(m.input_power_w, 10.0);
        check!(m.led_power_w, 8.0);
        check!(m.total_loss_w, 1.75);
        check!(m.losses_w.current_sense, 3.5 * 16384.0 / 32767.0 / 2.0);
        check!(m.losses_w.source_resistance, 3.5 / 32767.0 / 2.0);
        check!(m.efficiency, 0.8);
        // (20 − 16 − 3.5 − 0.5)/20 = 0.
        check!(m.energy_balance_residual + 1.0, 1.0);
        assert_eq!(m.conduction_mode, ConductionMode::Ccm);
        check!(m.ccm_margin, 0.6);
        let mut t = hand_totals();
        t.stored_end_j = 0.5;
        check!(
            Metrics::from_totals(&t).energy_balance_residual,
            0.25 / 20.0
        );
    }

    #[test]
    fn degenerate_totals_give_zeros_not_nan() {
        // A negative mean square (round-off) gives a zero AC RMS.
        let mut t = hand_totals();
        t.icin2 = 0.01;
        assert!(Metrics::from_totals(&t).input_capacitor_ripple_rms_a == 0.0);
        // No LED current, no inductor current, no input energy.
        t.iled = 0.0;
        t.il = 0.0;
        t.il_min = 0.0;
        t.e_in = 0.0;
        t.e_led = 0.0;
        let m = Metrics::from_totals(&t);
        assert!(m.led_current_ripple_pct == 0.0);
        assert!(m.efficiency == 0.0);
        assert!(m.energy_balance_residual == 0.0);
        assert!(m.ccm_margin == 0.0);
        assert_eq!(m.conduction_mode, ConductionMode::Boundary);
        // Zero cycles count as one (no division by zero).
        t.cycles = 0;
        check!(Metrics::from_totals(&t).period_s, 2.0);
    }

    #[test]
    fn conduction_mode_at_its_exact_edges() {
        let mode = |idle_s: f64, valley_a: f64| {
            let mut t = hand_totals();
            t.cycles = 1;
            t.time_s = 1.0;
            t.il = 1.0;
            t.idle_time_s = idle_s;
            t.il_min = valley_a;
            let m = Metrics::from_totals(&t);
            (m.conduction_mode, m.ccm_margin)
        };
        // DCM only above a thousandth of the period (period 1 s here).
        assert_eq!(mode(1e-3, 0.0).0, ConductionMode::Boundary);
        assert_eq!(mode(1.0001e-3, 0.0), (ConductionMode::Dcm, 0.0));
        // Any idle time at all is at least the boundary, whatever the valley.
        assert_eq!(mode(1e-9, 0.5).0, ConductionMode::Boundary);
        // Boundary strictly under 1 % valley/average; CCM from 1 % on.
        assert_eq!(mode(0.0, 0.01), (ConductionMode::Ccm, 0.01));
        assert_eq!(mode(0.0, 0.0099).0, ConductionMode::Boundary);
        check!(mode(0.0, 0.0099).1, 0.0099);
        // A negative valley (reverse current) counts as zero.
        assert_eq!(mode(0.0, -0.2), (ConductionMode::Boundary, 0.0));
    }
}
