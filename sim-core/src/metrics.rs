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
