//! Part physics and design checks against closed forms: gate drive and
//! quiescent loss by where the controller is fed, the diode's junction
//! capacitance, the iGSE core loss on a triangular flux, the input
//! capacitor behind an ideal source, the diode's average-current rating,
//! temperature margins in kelvin, the start-up peak against saturation,
//! and the worst case over the declared input range.

use approx::assert_relative_eq;
use chopwave_suite::*;
use sim_core::parts::advice::{SupplyEnd, Warning};
use sim_core::parts::checks::{worst, Check, Status};
use sim_core::parts::losses::{abs_cos_power_integral, igse_w_per_m3, steinmetz_w_per_m3};
use sim_core::record::COL_IL;
use sim_core::run::assess::{assess, AssessOptions, Assessment};
use sim_core::scenario::{
    Capacitor, ControllerFeed, ControllerSpec, Core, Scenario, Thermal, VoltageRange,
};
use sim_core::{
    run::drive::simulate,
    run::{EngineKind, RunOptions},
};

fn cot(peak_current_a: f64, off_time_s: f64) -> ControllerSpec {
    ControllerSpec::ConstantOffTime {
        peak_current_a,
        off_time_s,
        delay_s: 0.0,
        min_on_time_s: 0.0,
    }
}

/// A lossless constant off-time buck and its textbook figures (Erickson &
/// Maksimovic, Fundamentals of Power Electronics, 3rd ed., ch. 2,
/// volt-second balance): D = V_out/V_in, ΔI = V_out·t_off/L,
/// f = (1 − D)/t_off, I_out = I_pk − ΔI/2.
struct Ideal {
    v_in: f64,
    v_out: f64,
    l: f64,
    i_pk: f64,
    t_off: f64,
}

impl Ideal {
    const BASE: Ideal = Ideal {
        v_in: 24.0,
        v_out: 12.0,
        l: 100e-6,
        i_pk: 1.0,
        t_off: 2e-6,
    };
    fn scenario(&self) -> Scenario {
        ideal_buck(self.v_in, self.v_out, self.l, cot(self.i_pk, self.t_off))
    }
    fn d(&self) -> f64 {
        self.v_out / self.v_in
    }
    fn di(&self) -> f64 {
        self.v_out * self.t_off / self.l
    }
    fn f(&self) -> f64 {
        (1.0 - self.d()) / self.t_off
    }
    fn i_out(&self) -> f64 {
        self.i_pk - self.di() / 2.0
    }
    fn t_on(&self) -> f64 {
        self.d() / self.f()
    }
}

fn run(s: &Scenario) -> sim_core::SimResult {
    s.validate().unwrap();
    simulate(s, &RunOptions::default()).unwrap()
}

fn a(s: &Scenario) -> Assessment {
    s.validate().unwrap();
    assess(s, &AssessOptions::default()).unwrap()
}

fn row<'a>(a: &'a Assessment, check: &str) -> &'a Check {
    a.checks
        .iter()
        .find(|c| c.check == check)
        .unwrap_or_else(|| panic!("no check `{check}` in {:#?}", a.checks))
}

#[test]
fn gate_drive_and_quiescent_loss_are_drawn_where_the_controller_is_fed() {
    // Gate charge per cycle at the feed voltage: from the input through
    // the controller's regulator, Q_g·V_in·f (the regulator drops the
    // rest); from a separate rail at the drive voltage, Q_g·V_drive·f.
    // The quiescent current is drawn at the same voltage.
    let b = Ideal::BASE;
    for (feed, v) in [
        (ControllerFeed::Input, b.v_in),
        (ControllerFeed::SeparateRail, 10.0),
    ] {
        let mut s = b.scenario();
        s.parts.switch.gate_charge_c = 12e-9;
        s.parts.switch.gate_drive_v = 10.0;
        s.parts.controller.quiescent_current_a = 2e-3;
        s.parts.controller.fed_from = feed;
        let m = run(&s).metrics;
        let gate = 12e-9 * v * b.f();
        let quiescent = v * 2e-3;
        assert_relative_eq!(m.losses_w.switch_gate_drive, gate, max_relative = 1e-6);
        assert_relative_eq!(
            m.losses_w.controller_quiescent,
            quiescent,
            max_relative = 1e-12
        );
        // Drawn from the supply: input = LED + these two.
        assert_relative_eq!(
            m.input_power_w - m.led_power_w,
            gate + quiescent,
            max_relative = 1e-6
        );
    }
    // A separate rail needs its voltage.
    let mut s = b.scenario();
    s.parts.controller.quiescent_current_a = 2e-3;
    s.parts.controller.fed_from = ControllerFeed::SeparateRail;
    let e = s.validate().unwrap_err().to_string();
    assert!(e.contains("parts.controller.fed_from"), "{e}");
}

#[test]
fn diode_junction_capacitance_loses_half_cj_v_squared_per_turn_on() {
    // Each turn-on charges the diode's junction capacitance from the
    // switch node's off-state level (0 V with an ideal diode) to V_in
    // through the switch: the supply gives C_j·V_in², half is stored,
    // half is lost, ½·C_j·V_in²·f (Erickson & Maksimovic, Fundamentals of
    // Power Electronics, 3rd ed., ch. 4, junction capacitance as a
    // switching-loss source). Beside the switch's ½·C_oss·V²·f.
    let b = Ideal::BASE;
    let mut s = b.scenario();
    s.parts.diode.junction_capacitance_f = 80e-12;
    s.parts.switch.output_capacitance_f = 150e-12;
    for engine in [EngineKind::Exact, EngineKind::Reference] {
        s.validate().unwrap();
        let m = simulate(
            &s,
            &RunOptions {
                engine,
                ..RunOptions::default()
            },
        )
        .unwrap()
        .metrics;
        let cj = 0.5 * 80e-12 * b.v_in * b.v_in * b.f();
        let coss = 0.5 * 150e-12 * b.v_in * b.v_in * b.f();
        let tol = if engine == EngineKind::Exact {
            1e-6
        } else {
            1e-4
        };
        assert_relative_eq!(
            m.losses_w.diode_junction_capacitance,
            cj,
            max_relative = tol
        );
        // In the total and drawn from the supply.
        assert_relative_eq!(m.total_loss_w, cj + coss, max_relative = tol);
        assert_relative_eq!(
            m.input_power_w - m.led_power_w,
            cj + coss,
            max_relative = tol
        );
        assert!(m.energy_balance_residual.abs() < 1e-9);
    }
}

/// ∫₀^{2π} |cos θ|^α dθ = 2√π·Γ((α+1)/2)/Γ(α/2 + 1) (Beta-function
/// form of Wallis' integral); at α = 1.5 with Γ(1.25) = 0.906402477055477
/// and Γ(1.75) = 0.919062526848883 (values from Python's math.gamma).
fn cos_integral_15() -> f64 {
    2.0 * std::f64::consts::PI.sqrt() * 0.906_402_477_055_477 / 0.919_062_526_848_883
}

/// k_i of the iGSE (Venkatachalam, Sullivan, Abdallah & Tacca, "Accurate
/// prediction of ferrite core loss with nonsinusoidal waveforms using only
/// Steinmetz parameters", IEEE COMPEL 2002):
/// k_i = k / ((2π)^(α−1)·∫₀^{2π} |cos θ|^α·2^(β−α) dθ), at α = 1.5.
fn ki_15(k: f64, beta: f64) -> f64 {
    let alpha = 1.5;
    k / (std::f64::consts::TAU.powf(alpha - 1.0) * 2f64.powf(beta - alpha) * cos_integral_15())
}

/// The iGSE for a triangular flux of peak-to-peak ΔB and duty D, from
/// the definition P_v = (1/T)∫ k_i·|dB/dt|^α·ΔB^(β−α) dt with
/// |dB/dt| = ΔB/(D·T) for D·T and ΔB/((1−D)·T) for (1−D)·T:
/// P_v = k_i·ΔB^β·f^α·(D^(1−α) + (1−D)^(1−α)).
fn igse_triangle(ki: f64, alpha: f64, beta: f64, db: f64, f: f64, d: f64) -> f64 {
    ki * db.powf(beta) * f.powf(alpha) * (d.powf(1.0 - alpha) + (1.0 - d).powf(1.0 - alpha))
}

#[test]
fn cosine_power_integral_matches_its_closed_forms() {
    // Exact by elementary calculus: ∫|cos| = 4, ∫cos² = π, ∫|cos|³ = 8/3.
    assert_relative_eq!(abs_cos_power_integral(1.0), 4.0, max_relative = 1e-9);
    assert_relative_eq!(
        abs_cos_power_integral(2.0),
        std::f64::consts::PI,
        max_relative = 1e-9
    );
    assert_relative_eq!(abs_cos_power_integral(3.0), 8.0 / 3.0, max_relative = 1e-9);
    assert_relative_eq!(
        abs_cos_power_integral(1.5),
        cos_integral_15(),
        max_relative = 1e-9
    );
}

#[test]
fn igse_on_a_triangle_matches_its_closed_form_and_differs_from_steinmetz() {
    let (k, alpha, beta, f, db) = (3.0, 1.5, 2.6, 100e3, 0.1);
    let ki = ki_15(k, beta);
    // Expected iGSE/Steinmetz factors at the same peak B̂ = ΔB/2:
    // 2^α·(D^(1−α) + (1−D)^(1−α)) / ((2π)^(α−1)·∫|cos θ|^α dθ); at α = 1.5
    // that is 1.3609, 0.9129, 1.3609 for D = 0.1, 0.5, 0.9 (hand
    // computation from the closed form above).
    for (d, factor) in [(0.1, 1.3609), (0.5, 0.9129), (0.9, 1.3609)] {
        // Three periods sampled at the corners and 7 points in between.
        let t_period = 1.0 / f;
        let mut pts = vec![(0.0, 0.0)];
        for p in 0..3 {
            let t0 = p as f64 * t_period;
            for j in 1..=8 {
                let x = j as f64 / 8.0;
                pts.push((t0 + x * d * t_period, x * db));
            }
            for j in 1..=8 {
                let x = j as f64 / 8.0;
                pts.push((t0 + (d + x * (1.0 - d)) * t_period, (1.0 - x) * db));
            }
        }
        let p = igse_w_per_m3(k, alpha, beta, &pts);
        let expect = igse_triangle(ki, alpha, beta, db, f, d);
        assert_relative_eq!(p, expect, max_relative = 1e-8);
        let classical = steinmetz_w_per_m3(k, alpha, beta, f, db / 2.0);
        let closed = 2f64.powf(alpha) * (d.powf(1.0 - alpha) + (1.0 - d).powf(1.0 - alpha))
            / (std::f64::consts::TAU.powf(alpha - 1.0) * cos_integral_15());
        assert_relative_eq!(p / classical, closed, max_relative = 1e-8);
        assert!(
            (p / classical - factor).abs() < 1e-4,
            "{d}: {}",
            p / classical
        );
    }
}

#[test]
fn simulated_core_loss_is_the_igse_of_the_simulated_triangle() {
    // The ideal buck's flux is an exact triangle of ΔB = L·ΔI/(N·A_e)
    // rising for D·T: the core loss must be the iGSE closed form, at
    // several duties, in both engines.
    for v_out in [2.4, 12.0, 21.6] {
        let b = Ideal {
            v_out,
            ..Ideal::BASE
        };
        let mut s = b.scenario();
        s.parts.inductor.core = Some(Core {
            turns: 30,
            area_m2: 20e-6,
            volume_m3: 1.5e-6,
            // Illustrative ferrite coefficients (from memory).
            steinmetz_k: 1.5,
            steinmetz_alpha: 1.5,
            steinmetz_beta: 2.5,
        });
        let db = b.l * b.di() / (30.0 * 20e-6);
        let expect = igse_triangle(ki_15(1.5, 2.5), 1.5, 2.5, db, b.f(), b.d()) * 1.5e-6;
        for engine in [EngineKind::Exact, EngineKind::Reference] {
            s.validate().unwrap();
            let m = simulate(
                &s,
                &RunOptions {
                    engine,
                    ..RunOptions::default()
                },
            )
            .unwrap()
            .metrics;
            let tol = if engine == EngineKind::Exact {
                1e-6
            } else {
                1e-3
            };
            assert_relative_eq!(m.losses_w.inductor_core, expect, max_relative = tol);
        }
    }
}

#[test]
fn input_capacitor_behind_an_ideal_source_is_checked_on_the_textbook_ripple() {
    // With no source resistance the simulated input capacitor carries no
    // ripple; the check uses I_out·√(D(1−D)) (Erickson & Maksimovic,
    // Fundamentals of Power Electronics, 3rd ed., ch. 2, charge balance)
    // and says so. Rating edges: ok below 80 % of the rating, warn between
    // 80 % and 100 % (common practice), fail above it.
    let b = Ideal::BASE;
    let expect = b.i_out() * (b.d() * (1.0 - b.d())).sqrt();
    let check = "input capacitor RMS ripple current vs rating";
    for (rating, want) in [
        (1.01 * expect / 0.8, Status::Ok),
        (0.99 * expect / 0.8, Status::Warn),
        (1.01 * expect, Status::Warn),
        (0.99 * expect, Status::Fail),
    ] {
        let mut s = b.scenario();
        s.input_capacitor = Some(Capacitor {
            capacitance_f: 10e-6,
            esr_ohm: 0.01,
        });
        s.parts.input_capacitor.ripple_current_rating_a = Some(rating);
        let a = a(&s);
        let c = row(&a, check);
        assert_relative_eq!(c.value, expect, max_relative = 1e-6);
        assert_eq!(c.status, want, "{rating}: {c:?}");
        assert!(c.source.contains("ideal source"), "{}", c.source);
    }
    // With a source resistance the simulated ripple is used.
    let mut s = b.scenario();
    s.supply.source_resistance_ohm = 0.1;
    s.input_capacitor = Some(Capacitor {
        capacitance_f: 10e-6,
        esr_ohm: 0.01,
    });
    s.parts.input_capacitor.ripple_current_rating_a = Some(5.0);
    let a = a(&s);
    let c = row(&a, check);
    assert!(!c.source.contains("ideal source"), "{}", c.source);
    assert_relative_eq!(
        c.value,
        a.result.metrics.input_capacitor_ripple_rms_a,
        max_relative = 1e-12
    );
}

#[test]
fn diode_is_checked_on_its_average_current_rating() {
    // The diode carries the inductor current while the switch is off:
    // average I_out·(1 − D) (volt-second balance, as above). Warn above
    // 90 % of I_F(AV) (common practice), fail above it.
    let b = Ideal::BASE;
    let avg = b.i_out() * (1.0 - b.d());
    let check = "diode average current vs rating";
    for (rating, want) in [
        (1.01 * avg / 0.9, Status::Ok),
        (0.99 * avg / 0.9, Status::Warn),
        (1.01 * avg, Status::Warn),
        (0.99 * avg, Status::Fail),
    ] {
        let mut s = b.scenario();
        s.parts.diode.average_current_rating_a = Some(rating);
        let a = a(&s);
        let c = row(&a, check);
        assert_relative_eq!(c.value, avg, max_relative = 1e-6);
        assert_eq!(c.status, want, "{rating}: {c:?}");
    }
    // A file with only an RMS rating still loads and keeps its row.
    let mut s = b.scenario();
    s.parts.diode.rms_current_rating_a = Some(5.0);
    let text = serde_json::to_string(&s).unwrap();
    assert!(!text.contains("average_current_rating_a"), "{text}");
    let back = Scenario::from_json_str(&text).unwrap();
    let a = a(&back);
    assert_eq!(row(&a, "diode RMS current vs rating").status, Status::Ok);
    assert!(!a.checks.iter().any(|c| c.check == check));
}

#[test]
fn temperature_margins_are_kelvin_below_the_maximum() {
    // Warn within 10 K of the maximum (common practice), fail above it;
    // a part at 135 °C under a 147 °C maximum is 12 K clear (a
    // percentage of the Celsius value, 90 % of 147 = 132, would warn).
    let mut s = lamp_12v();
    s.supply.input_range_v = None;
    let thermal = |max: f64| {
        Some(Thermal {
            resistance_c_per_w: 2500.0,
            max_temperature_c: max,
        })
    };
    s.parts.switch.thermal = thermal(300.0);
    let t = row(&a(&s), "switch temperature vs maximum").value;
    assert!(t > 110.0, "{t}");
    for (max, want) in [
        (t + 12.0, Status::Ok),
        (t + 10.5, Status::Ok),
        (t + 9.5, Status::Warn),
        (t + 0.5, Status::Warn),
        (t - 0.5, Status::Fail),
    ] {
        s.parts.switch.thermal = thermal(max);
        let a = a(&s);
        let c = row(&a, "switch temperature vs maximum");
        assert_relative_eq!(c.value, t, max_relative = 1e-12);
        assert_eq!(c.status, want, "{max}: {c:?}");
        assert!(c.source.contains("10 K"), "{}", c.source);
    }
}

#[test]
fn start_up_peak_is_a_check_row_against_the_saturation_current() {
    // With an output capacitor the first on-times meet an empty capacitor:
    // the current rises at nearly V_in/L, so the comparator delay carries
    // it further past the threshold than in steady state. The start-up
    // peak is bounded by I_pk + V_in·t_d/L (the steepest possible rise).
    let mut s = lamp_12v_with_output_cap();
    s.supply.input_range_v = None;
    s.inductor.saturation_current_a = Some(10.0);
    let (i_pk, t_d) = match s.controller {
        ControllerSpec::ConstantOffTime {
            peak_current_a,
            delay_s,
            ..
        } => (peak_current_a, delay_s),
        _ => unreachable!(),
    };
    let base = a(&s);
    let steady = base.result.metrics.inductor_current_peak_a;
    let startup = row(&base, "inductor start-up peak vs saturation current").value;
    // The same figure from a run that records its start-up.
    let mut rec = s.clone();
    rec.simulation.record_startup = true;
    let w = run(&rec).startup.unwrap();
    let recorded = w.column(COL_IL).iter().copied().fold(f64::MIN, f64::max);
    assert_relative_eq!(startup, recorded, max_relative = 1e-9);
    assert!(startup > steady + 2e-3, "{startup} vs {steady}");
    assert!(startup <= i_pk + 12.0 * t_d / 68e-6 + 1e-9, "{startup}");
    let sat = "inductor peak current vs saturation current";
    let sup = "inductor start-up peak vs saturation current";
    for (isat, want) in [
        (1.01 * startup / 0.9, Status::Ok),
        (0.99 * startup / 0.9, Status::Warn),
        (1.001 * startup, Status::Warn),
        (0.5 * (startup + steady), Status::Fail),
    ] {
        s.inductor.saturation_current_a = Some(isat);
        let a = a(&s);
        assert_eq!(row(&a, sup).status, want, "{isat}");
        // The steady-state row never fails here: only the start-up does.
        assert_ne!(row(&a, sat).status, Status::Fail);
    }
}

/// The ideal buck with a declared range 18–36 V around 24 V.
fn ideal_with_range() -> (Ideal, Scenario) {
    let b = Ideal::BASE;
    let mut s = b.scenario();
    s.supply.input_range_v = Some(VoltageRange {
        min_v: 18.0,
        max_v: 36.0,
    });
    (b, s)
}

#[test]
fn worst_case_over_the_input_range_is_checked_at_the_supply_where_it_occurs() {
    let (b, mut s) = ideal_with_range();
    // On-time t_on = t_off·V_out/(V_in − V_out) (volt-second balance):
    // 2 µs at 24 V, 1 µs at 36 V. A 1.2 µs controller minimum passes at
    // the nominal supply and fails at the top of the range.
    let top = Ideal { v_in: 36.0, ..b };
    s.parts.controller.min_on_time_s = Some(1.2e-6);
    // The switch blocks V_in (ideal diode): 36 V at the top, against a
    // 40 V rating: above 80 % of it there (warn), 60 % of it at 24 V.
    s.parts.switch.voltage_rating_v = Some(40.0);
    // The switch peak is the threshold at every supply (no delay); the
    // diode average I_out·(1 − D) is largest at the highest supply.
    let diode_avg = |i: &Ideal| i.i_out() * (1.0 - i.d());
    s.parts.diode.average_current_rating_a = Some(1.05 * diode_avg(&top));
    let a = a(&s);
    let on = row(&a, "on-time vs controller minimum");
    assert_eq!(on.status, Status::Fail);
    assert_relative_eq!(on.value, top.t_on(), max_relative = 1e-6);
    assert_relative_eq!(on.supply_v, 36.0);
    let sw = row(&a, "switch blocking voltage vs rating");
    assert_eq!(sw.status, Status::Warn);
    assert_relative_eq!(sw.value, 36.0, max_relative = 1e-9);
    assert_relative_eq!(sw.supply_v, 36.0);
    let d = row(&a, "diode average current vs rating");
    assert_eq!(d.status, Status::Warn);
    assert_relative_eq!(d.value, diode_avg(&top), max_relative = 1e-6);
    assert_relative_eq!(d.supply_v, 36.0);
    // The LED current (a constant-voltage sink, I_out = I_pk − ΔI/2 with
    // ΔI independent of V_in) stays put: regulation holds.
    let reg = row(&a, "LED current regulation over the input range");
    assert_eq!(reg.status, Status::Ok, "{reg:?}");
    assert!(reg.value < 1e-3, "{reg:?}");
    // Without the range every row is at the nominal supply and the on-time
    // passes.
    s.supply.input_range_v = None;
    let nominal = assess(&s, &AssessOptions::default()).unwrap();
    let on = row(&nominal, "on-time vs controller minimum");
    assert_eq!(on.status, Status::Ok);
    assert_relative_eq!(on.value, b.t_on(), max_relative = 1e-6);
    assert_relative_eq!(on.supply_v, 24.0);
}

#[test]
fn a_design_that_cannot_run_at_its_range_end_fails_a_row_not_the_run() {
    // The 12 V lamp's three LEDs need about 8.5 V at the threshold: at a
    // declared minimum of 8 V the inductor current never reaches the peak
    // threshold. The run still reports, with a failing row naming the
    // supply and where the current settles.
    let mut s = lamp_12v();
    s.supply.input_range_v = Some(VoltageRange {
        min_v: 8.0,
        max_v: 14.0,
    });
    let a = a(&s);
    let c = row(&a, "design runs at the low end of the input range");
    assert_eq!(c.status, Status::Fail);
    assert_relative_eq!(c.supply_v, 8.0);
    assert!(c.source.contains("8 V"), "{}", c.source);
    assert!(c.source.contains("settles at"), "{}", c.source);
    assert_eq!(worst(&a.checks), Status::Fail);
    assert!(
        a.result.warnings.iter().any(|w| matches!(
            w,
            Warning::RangeEndFails { supply_v, end: SupplyEnd::Low, reason }
                if (supply_v - 8.0).abs() < 1e-12 && !reason.is_empty()
        )),
        "{:?}",
        a.result.warnings
    );
    // Only the low end failed.
    assert!(!a.result.warnings.iter().any(|w| matches!(
        w,
        Warning::RangeEndFails {
            end: SupplyEnd::High,
            ..
        }
    )));
    assert!(a
        .result
        .warnings
        .iter()
        .any(|w| w.to_string().starts_with("at 8 V, the low end")));
    // The high end ran: its regulation row is there.
    assert!(a
        .checks
        .iter()
        .any(|c| c.check == "LED current regulation over the input range"));
}

#[test]
fn regulation_over_the_range_fires_at_its_edges() {
    // The change of the average LED current at the range ends from the
    // nominal supply, against parts.current_accuracy_pct: warn above half
    // of it (common practice), fail above it. The expected change comes
    // from plain runs at 10.5, 12 and 14 V.
    let s = lamp_12v();
    let at = |v: f64| {
        let mut x = s.clone();
        x.supply.voltage_v = v;
        x.supply.input_range_v = None;
        run(&x).metrics.led_current_avg_a
    };
    let nominal = at(12.0);
    let dev = [10.5, 14.0]
        .iter()
        .map(|&v| 100.0 * (at(v) - nominal).abs() / nominal)
        .fold(0.0, f64::max);
    assert!(dev > 0.01, "{dev}");
    let check = "LED current regulation over the input range";
    for (acc, want) in [
        (dev / 0.49, Status::Ok),
        (dev / 0.51, Status::Warn),
        (dev / 0.99, Status::Warn),
        (dev / 1.01, Status::Fail),
    ] {
        let mut x = s.clone();
        x.parts.current_accuracy_pct = Some(acc);
        let a = a(&x);
        let c = row(&a, check);
        assert_relative_eq!(c.value, dev, max_relative = 1e-6);
        assert_eq!(c.status, want, "{acc}: {c:?}");
    }
}

/// The report warns about a start-up peak above the saturation rating
/// when the steady-state peak stays below it, with the recorded start-up
/// peak (read here off the waveform), the rating and the steady peak; with
/// the rating above the start-up peak it does not.
#[test]
fn the_report_warns_of_start_up_saturation_with_its_three_currents() {
    use sim_core::report::Report;
    let mut s = lamp_12v_with_output_cap();
    s.supply.input_range_v = None;
    s.simulation.record_startup = true;
    s.inductor.saturation_current_a = Some(10.0);
    let base = a(&s);
    let steady = base.result.metrics.inductor_current_peak_a;
    let w = base.result.startup.as_ref().expect("recorded start-up");
    let startup = w.column(COL_IL).iter().copied().fold(f64::MIN, f64::max);
    assert!(startup > steady + 2e-3, "{startup} vs {steady}");
    let is_startup = |w: &Warning| matches!(w, Warning::StartupSaturation { .. });
    assert!(!Report::new(&s, &base).warnings.iter().any(is_startup));

    let isat = 0.5 * (startup + steady);
    s.inductor.saturation_current_a = Some(isat);
    let at = a(&s);
    let r = Report::new(&s, &at);
    let got: Vec<_> = r.warnings.iter().filter(|w| is_startup(w)).collect();
    assert_eq!(got.len(), 1, "{:?}", r.warnings);
    let Warning::StartupSaturation {
        startup_peak_a,
        saturation_a,
        steady_peak_a,
    } = got[0]
    else {
        unreachable!()
    };
    assert_relative_eq!(*startup_peak_a, startup, max_relative = 1e-9);
    assert_relative_eq!(*saturation_a, isat, max_relative = 1e-15);
    assert_relative_eq!(
        *steady_peak_a,
        at.result.metrics.inductor_current_peak_a,
        max_relative = 1e-15
    );
    // The steady-state peak is under the rating: no steady-state warning.
    assert!(!r
        .warnings
        .iter()
        .any(|w| matches!(w, Warning::InductorSaturation { .. })));
}
