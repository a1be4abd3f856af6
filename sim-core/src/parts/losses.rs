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
//! - gate drive: Q_g·V·f, drawn at the voltage the driver is fed from
//!   (`parts.controller.fed_from`): the supply V_in through the
//!   controller's own regulator (the regulator drops V_in − V_drive, so the
//!   input pays Q_g·V_in per cycle), or a separate rail at V_drive
//!   (Q_g·V_drive); dissipated in the driver, regulator and gate
//!   resistances, not in the switch channel;
//! - output capacitance: ½·C_oss·V² per turn-on at the blocked voltage;
//! - diode junction capacitance: ½·C_j·ΔV² per turn-on, ΔV the swing of
//!   the switch node at turn-on, which is the voltage the open switch
//!   blocked just before (V_in + V_F in CCM). Charging a capacitance from
//!   v₀ to V_in from the supply draws C_j·(V_in − v₀)·V_in and stores
//!   ½·C_j·(V_in² − v₀²); the difference, ½·C_j·(V_in − v₀)², is
//!   dissipated in the switch channel (the charge form of Erickson &
//!   Maksimovic, Fundamentals of Power Electronics, 3rd ed., ch. 4, on the
//!   diode's junction capacitance as a switching-loss source, with C_j
//!   taken as constant);
//! - reverse recovery: Q_rr·V_R per turn-on that cuts off a conducting
//!   diode (none in DCM, where the diode has already stopped; zero for a
//!   Schottky, Q_rr = 0);
//! - core: the improved generalized Steinmetz equation (iGSE;
//!   Venkatachalam, Sullivan, Abdallah & Tacca, "Accurate prediction of
//!   ferrite core loss with nonsinusoidal waveforms using only Steinmetz
//!   parameters", IEEE COMPEL 2002):
//!   P_v = (1/T)·∫ k_i·|dB/dt|^α·(ΔB)^(β−α) dt with
//!   k_i = k / ((2π)^(α−1)·∫₀^{2π} |cos θ|^α·2^(β−α) dθ), evaluated on the
//!   simulated flux density of the measured cycles, B = ψ(i_L)/(N·A_e)
//!   (ψ = L·i, or the saturation curve's flux), piecewise linear between
//!   the recorded samples, ΔB its peak-to-peak. The sinusoidal Steinmetz
//!   coefficients k, α, β are all it needs;
//! - quiescent: V·I_q at the same feed voltage as the gate drive.

use crate::metrics::{LossEnergies, Totals};
use crate::model::elements::Elements;
use crate::record::{Waveform, COL_IL, COL_TIME};
use crate::scenario::{ControllerFeed, Core, Scenario};

/// Energy of one switching edge, J: the linear-ramp estimate ½·V·I·t
/// (voltage and current overlap as straight ramps for time `t_s`).
pub(crate) fn transition_energy_j(v: f64, i: f64, t_s: f64) -> f64 {
    0.5 * v * i * t_s
}

/// Gate-drive power, W: Q_g·V·f with V the voltage the driver is fed at.
pub fn gate_drive_power_w(gate_charge_c: f64, drive_v: f64, frequency_hz: f64) -> f64 {
    gate_charge_c * drive_v * frequency_hz
}

/// Energy of an output capacitance charged to `v`, J: ½·C·V².
pub(crate) fn output_capacitance_energy_j(c_f: f64, v: f64) -> f64 {
    0.5 * c_f * v * v
}

/// Classical Steinmetz core loss density, W/m³: k·f^α·B̂^β (sinusoidal
/// flux of peak B̂; Steinmetz 1892). Kept for comparison with
/// [`igse_w_per_m3`].
pub fn steinmetz_w_per_m3(k: f64, alpha: f64, beta: f64, frequency_hz: f64, b_peak_t: f64) -> f64 {
    if frequency_hz <= 0.0 || b_peak_t <= 0.0 {
        return 0.0;
    }
    k * frequency_hz.powf(alpha) * b_peak_t.powf(beta)
}

/// ∫₀^{2π} |cos θ|^α dθ, by composite Simpson's rule on 4·∫₀^{π/2}
/// sin^α x dx after the substitution x = (π/2)·t² (which smooths the
/// power-law start of sin^α x at 0).
pub fn abs_cos_power_integral(alpha: f64) -> f64 {
    use std::f64::consts::FRAC_PI_2;
    const N: usize = 4000;
    let g = |t: f64| (FRAC_PI_2 * t * t).sin().powf(alpha) * 2.0 * FRAC_PI_2 * t;
    let h = 1.0 / N as f64;
    let mut sum = g(0.0) + g(1.0);
    for j in 1..N {
        let w = if j % 2 == 1 { 4.0 } else { 2.0 };
        sum += w * g(j as f64 * h);
    }
    4.0 * sum * h / 3.0
}

/// The iGSE coefficient k_i from the sinusoidal Steinmetz coefficients
/// (Venkatachalam et al., IEEE COMPEL 2002, eq. for k_i):
/// k_i = k / ((2π)^(α−1)·∫₀^{2π} |cos θ|^α·2^(β−α) dθ).
pub(crate) fn igse_ki(k: f64, alpha: f64, beta: f64) -> f64 {
    let two_pi = std::f64::consts::TAU;
    k / (two_pi.powf(alpha - 1.0) * 2f64.powf(beta - alpha) * abs_cos_power_integral(alpha))
}

/// iGSE core loss density of a piecewise-linear flux density, W/m³:
/// `points` are (t, B) samples over whole periods (time rising);
/// P_v = k_i·(ΔB)^(β−α)·Σ |ΔB_j|^α·Δt_j^(1−α) / T, with ΔB the
/// peak-to-peak flux density and T the time the samples span.
pub fn igse_w_per_m3(k: f64, alpha: f64, beta: f64, points: &[(f64, f64)]) -> f64 {
    let (Some(first), Some(last)) = (points.first(), points.last()) else {
        return 0.0;
    };
    let span = last.0 - first.0;
    let (lo, hi) = points
        .iter()
        .fold((f64::INFINITY, f64::NEG_INFINITY), |(lo, hi), p| {
            (lo.min(p.1), hi.max(p.1))
        });
    let db_pp = hi - lo;
    if !(span > 0.0 && db_pp > 0.0) {
        return 0.0;
    }
    let sum: f64 = points
        .windows(2)
        .map(|w| {
            let (dt, db) = (w[1].0 - w[0].0, (w[1].1 - w[0].1).abs());
            if dt > 0.0 && db > 0.0 {
                db.powf(alpha) * dt.powf(1.0 - alpha)
            } else {
                0.0
            }
        })
        .sum();
    igse_ki(k, alpha, beta) * db_pp.powf(beta - alpha) * sum / span
}

/// Peak flux density of the ripple, T: B̂ = L·ΔI/(2·N·A_e).
pub fn flux_peak_t(inductance_h: f64, ripple_pp_a: f64, turns: u32, area_m2: f64) -> f64 {
    inductance_h * ripple_pp_a.max(0.0) / (2.0 * f64::from(turns.max(1)) * area_m2)
}

/// The voltage the controller and gate driver draw their power at, V:
/// the supply, or the separate rail at the gate-drive voltage.
pub(crate) fn controller_feed_v(s: &Scenario) -> f64 {
    match s.parts.controller.fed_from {
        ControllerFeed::Input => s.supply.voltage_v,
        ControllerFeed::SeparateRail => s.parts.switch.gate_drive_v,
    }
}

/// The flux density of the recorded measured cycles, (t, B) per sample:
/// the flux linkage of the model's inductor (the same element values and
/// saturation curve both engines use) over N·A_e.
fn flux_density_points(s: &Scenario, core: &Core, w: &Waveform) -> Vec<(f64, f64)> {
    let na = f64::from(core.turns.max(1)) * core.area_m2;
    let elements = Elements::new(s);
    let t = w.column(COL_TIME);
    let il = w.column(COL_IL);
    t.iter()
        .zip(il.iter())
        .map(|(&t, &i)| (t, elements.flux_wb(i) / na))
        .collect()
}

/// The part losses of the measured cycles in `t`, J; `w` is the waveform
/// recorded over the same cycles (for the core loss).
pub(crate) fn part_loss_energies(s: &Scenario, t: &Totals, w: &Waveform) -> LossEnergies {
    let p = &s.parts;
    let e = &t.edges;
    let sw = &p.switch;
    let time = t.time_s;
    let feed_v = controller_feed_v(s);
    let mut l = LossEnergies {
        switch_transition: transition_energy_j(1.0, e.on_vi, sw.rise_time_s)
            + transition_energy_j(1.0, e.off_vi, sw.fall_time_s),
        switch_gate_drive: sw.gate_charge_c * feed_v * e.turn_ons as f64,
        switch_output_capacitance: output_capacitance_energy_j(sw.output_capacitance_f, 1.0)
            * e.on_v2,
        diode_reverse_recovery: p.diode.reverse_recovery_charge_c * e.recovery_v,
        diode_junction_capacitance: output_capacitance_energy_j(
            p.diode.junction_capacitance_f,
            1.0,
        ) * e.on_v2,
        controller_quiescent: feed_v * p.controller.quiescent_current_a * time,
        ..LossEnergies::default()
    };
    if let Some(core) = p.inductor.core {
        if time > 0.0 && t.cycles > 0 {
            let pts = flux_density_points(s, &core, w);
            let pv = igse_w_per_m3(
                core.steinmetz_k,
                core.steinmetz_alpha,
                core.steinmetz_beta,
                &pts,
            );
            l.inductor_core = pv * core.volume_m3 * time;
        }
    }
    l
}

/// Adds the part losses to `t`: to the losses and, as energy drawn from the
/// supply, to `e_in` (and `e_parts`), so the balance still closes.
pub fn apply(s: &Scenario, t: &mut Totals, w: &Waveform) {
    let l = part_loss_energies(s, t, w);
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
