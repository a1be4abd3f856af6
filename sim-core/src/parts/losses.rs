//! Losses of real parts that the idealised circuit does not model
//! dynamically, computed from the simulated waveform after each run.
//!
//! The engines see an ideal switch (a resistance) that changes state
//! instantly, so a real switch's transition, gate-drive and
//! output-capacitance losses, a diode's reverse recovery, the core loss
//! and the controller's own supply current are **post-processed**: each
//! engine records, at every switching edge of the measured cycles, the
//! inductor current and the voltage across the open switch
//! ([`crate::metrics::EdgeTotals`]), and [`apply`] turns those sums and the
//! measured ripple into energies. They are booked as energy drawn from the
//! supply *and* as losses, so `energy_balance_residual` still measures how
//! well the simulated circuit closes (the idealised circuit itself is
//! unchanged), while the input power and the efficiency include them.
//!
//! The formulas (approximations, stated in README.md):
//! - transition: the usual linear-ramp estimate, ½·V·I·t per edge (t_r at
//!   turn-on, t_f at turn-off) with the edge's own V and I, which for equal
//!   edges is ½·V·I·(t_r + t_f)·f;
//! - gate drive: Q_g·V_drive per cycle (dissipated in the driver and gate
//!   resistances, not in the switch channel);
//! - output capacitance: ½·C_oss·V² per turn-on at the blocked voltage;
//! - reverse recovery: Q_rr·V_R per turn-on that cuts off a conducting
//!   diode (none in DCM, where the diode has already stopped; zero for a
//!   Schottky, Q_rr = 0);
//! - core: the Steinmetz equation P_v = k·f^α·B̂^β (Steinmetz 1892) at the
//!   switching frequency with B̂ = L·ΔI/(2·N·A_e) from the simulated ripple
//!   (with a saturation curve, B̂ = (ψ(i_max) − ψ(i_min))/(2·N·A_e)):
//!   sinusoidal-excitation coefficients applied to a triangular current,
//!   the classical estimate;
//! - quiescent: V_supply·I_q.

use crate::devices::InductanceCurve;
use crate::metrics::{LossEnergies, Totals};
use crate::scenario::Scenario;

/// Energy of one switching edge, J: the linear-ramp estimate ½·V·I·t
/// (voltage and current overlap as straight ramps for time `t_s`).
pub fn transition_energy_j(v: f64, i: f64, t_s: f64) -> f64 {
    0.5 * v * i * t_s
}

/// Gate-drive power, W: Q_g·V_drive·f.
pub fn gate_drive_power_w(gate_charge_c: f64, drive_v: f64, frequency_hz: f64) -> f64 {
    gate_charge_c * drive_v * frequency_hz
}

/// Energy of an output capacitance charged to `v`, J: ½·C·V².
pub fn output_capacitance_energy_j(c_f: f64, v: f64) -> f64 {
    0.5 * c_f * v * v
}

/// Steinmetz core loss density, W/m³: k·f^α·B̂^β.
pub fn steinmetz_w_per_m3(k: f64, alpha: f64, beta: f64, frequency_hz: f64, b_peak_t: f64) -> f64 {
    if frequency_hz <= 0.0 || b_peak_t <= 0.0 {
        return 0.0;
    }
    k * frequency_hz.powf(alpha) * b_peak_t.powf(beta)
}

/// Peak flux density of the ripple, T: B̂ = L·ΔI/(2·N·A_e).
pub fn flux_peak_t(inductance_h: f64, ripple_pp_a: f64, turns: u32, area_m2: f64) -> f64 {
    inductance_h * ripple_pp_a.max(0.0) / (2.0 * f64::from(turns.max(1)) * area_m2)
}

/// The part losses of the measured cycles in `t`, J.
pub fn part_loss_energies(s: &Scenario, t: &Totals) -> LossEnergies {
    let p = &s.parts;
    let e = &t.edges;
    let sw = &p.switch;
    let time = t.time_s;
    let mut l = LossEnergies {
        switch_transition: transition_energy_j(1.0, e.on_vi, sw.rise_time_s)
            + transition_energy_j(1.0, e.off_vi, sw.fall_time_s),
        switch_gate_drive: sw.gate_charge_c * sw.gate_drive_v * e.turn_ons as f64,
        switch_output_capacitance: output_capacitance_energy_j(sw.output_capacitance_f, 1.0)
            * e.on_v2,
        diode_reverse_recovery: p.diode.reverse_recovery_charge_c * e.recovery_v,
        controller_quiescent: s.supply.voltage_v * p.controller.quiescent_current_a * time,
        ..LossEnergies::default()
    };
    if let Some(core) = p.inductor.core {
        if time > 0.0 && t.cycles > 0 {
            let f = t.cycles as f64 / time;
            let (lo, hi) = (t.il_min.max(0.0), t.il_max);
            let curve = &p.inductor.saturation_curve;
            let b = if curve.is_empty() {
                flux_peak_t(s.inductor.inductance_h, hi - lo, core.turns, core.area_m2)
            } else {
                // A saturating core: half the flux swing ψ(hi) − ψ(lo).
                let pts: Vec<(f64, f64)> = curve
                    .iter()
                    .map(|p| (p.current_a, p.inductance_h))
                    .collect();
                let c = InductanceCurve::new(&pts);
                (c.flux_wb(hi) - c.flux_wb(lo)) / (2.0 * f64::from(core.turns) * core.area_m2)
            };
            let pv = steinmetz_w_per_m3(
                core.steinmetz_k,
                core.steinmetz_alpha,
                core.steinmetz_beta,
                f,
                b,
            );
            l.inductor_core = pv * core.volume_m3 * time;
        }
    }
    l
}

/// Adds the part losses to `t`: to the losses and, as energy drawn from the
/// supply, to `e_in` (and `e_parts`), so the balance still closes.
pub fn apply(s: &Scenario, t: &mut Totals) {
    let l = part_loss_energies(s, t);
    let extra = l.total();
    t.loss.add(&l);
    t.e_in += extra;
    t.e_parts += extra;
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn steinmetz_by_hand() {
        // Steinmetz (1892): P_v = k·f^α·B̂^β. k = 2, α = 1.5, β = 2.5 at
        // 100 kHz and 0.1 T: 2·(1e5)^1.5·(0.1)^2.5 = 2·3.16227766e7·3.16227766e-3
        // = 2.0e5 W/m³ (hand computation).
        let p = steinmetz_w_per_m3(2.0, 1.5, 2.5, 1e5, 0.1);
        assert!((p - 2.0e5).abs() < 1e-6 * 2.0e5, "{p}");
        // B̂ = L·ΔI/(2·N·A_e): 100 µH, 0.4 A, 20 turns, 20 mm² → 0.05 T.
        let b = flux_peak_t(100e-6, 0.4, 20, 20e-6);
        assert!((b - 0.05).abs() < 1e-15, "{b}");
    }

    #[test]
    fn edge_formulas_by_hand() {
        // Linear-ramp estimate (Erickson & Maksimovic, Fundamentals of Power
        // Electronics, 3rd ed., ch. 4, switching loss): ½·V·I·t.
        // 24 V, 1 A, 20 ns → 0.24 µJ.
        assert!((transition_energy_j(24.0, 1.0, 20e-9) - 0.24e-6).abs() < 1e-18);
        // Q_g·V·f: 10 nC, 10 V, 200 kHz → 20 mW.
        assert!((gate_drive_power_w(10e-9, 10.0, 200e3) - 0.02).abs() < 1e-15);
        // ½·C·V²: 100 pF at 48 V → 115.2 nJ.
        assert!((output_capacitance_energy_j(100e-12, 48.0) - 115.2e-9).abs() < 1e-20);
    }
}
