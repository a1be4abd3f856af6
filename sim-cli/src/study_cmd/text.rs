//! The study summaries printed on standard output: sweep rows, spread
//! percentiles and yield, the boundary, point verdicts and the safety
//! cautions.

use crate::format::{eng, pct};
use sim_core::report::{Caution, Scope};
use sim_core::study::boundary::Boundary;
use sim_core::study::rows::{Metric, Row, RowExt, StudyKind, StudyTable};
use sim_core::study::spread::summarize;
use sim_core::Scenario;

/// Safety cautions for a whole study, from its highest supply, losses
/// and LED power (the library's [`Caution`]s, in a study's words).
pub(super) fn cautions(t: &StudyTable) -> Vec<Caution> {
    let max = |m: Metric| {
        t.rows
            .iter()
            .filter_map(|r| r.value(m))
            .fold(f64::NEG_INFINITY, f64::max)
    };
    Caution::for_figures(
        Scope::Study,
        t.manifest.max_supply_v,
        Some(max(Metric::TotalLossW)),
        Some(max(Metric::LedPowerW)),
    )
}

pub(super) fn print_cautions(t: &StudyTable) {
    println!("\nCautions");
    for c in cautions(t) {
        println!("  * {c}");
    }
}

pub(super) fn mode_word(r: &Row) -> &str {
    match r.mode() {
        Some("ccm") => "CCM",
        Some("dcm") => "DCM",
        Some(_) => "boundary",
        None => "-",
    }
}

/// Rows printed in full before the rest is left to the CSV.
pub(super) const ROWS_SHOWN: usize = 40;

pub(super) fn print_sweep(t: &StudyTable) {
    let m = &t.manifest;
    println!(
        "sweep of `{}`: {} points over {} ({} start)",
        m.scenario,
        t.rows.len(),
        m.inputs.join(" × "),
        if m.warm_start { "warm" } else { "cold" }
    );
    let mut head = String::new();
    for i in &m.inputs {
        head.push_str(&format!("{i:>24} "));
    }
    println!(
        "{head}{:>10} {:>8} {:>10} {:>7} {:>9} {:>8}  verdict",
        "LED avg", "ripple", "frequency", "duty", "mode", "effic."
    );
    for r in t.rows.iter().take(ROWS_SHOWN) {
        let mut line = String::new();
        for (k, p) in m.inputs.iter().enumerate() {
            line.push_str(&format!("{:>24} ", value_of(r.input(k), p, 3)));
        }
        if r.ok() {
            let g = |m: Metric| r.value(m).unwrap_or(f64::NAN);
            line.push_str(&format!(
                "{:>10} {:>6.1} % {:>10} {:>7} {:>9} {:>8}",
                eng(g(Metric::LedCurrentAvgA), "A"),
                g(Metric::LedCurrentRipplePct),
                eng(g(Metric::SwitchingFrequencyHz), "Hz"),
                pct(g(Metric::Duty)),
                mode_word(r),
                pct(g(Metric::Efficiency))
            ));
            let c = m.check_point(r);
            line.push_str(&format!("  {}", c.verdict.word()));
            if !c.warnings.is_empty() {
                line.push_str(&format!(" ({})", c.codes().replace(';', ", ")));
            }
        } else {
            line.push_str(&format!("FAILED: {}", r.error().unwrap_or("")));
        }
        println!("{line}");
    }
    if t.rows.len() > ROWS_SHOWN {
        println!(
            "... {} more rows in the CSV and JSON",
            t.rows.len() - ROWS_SHOWN
        );
    }
    let dcm = t.rows.iter().filter(|r| r.mode() == Some("dcm")).count();
    println!(
        "\n{} of {} points in DCM, {} failed",
        dcm,
        t.rows.len(),
        t.failed()
    );
    print_point_verdicts(t);
}

/// How many points warn or fail, by warning (audible, duty near 100 %,
/// saturation, not regulating); the verdicts are in the CSV and JSON.
pub(super) fn print_point_verdicts(t: &StudyTable) {
    let checks: Vec<_> = t.rows.iter().map(|r| t.manifest.check_point(r)).collect();
    let count = |code: &str| {
        checks
            .iter()
            .filter(|c| c.warnings.iter().any(|w| w.code() == code))
            .count()
    };
    let words = [
        ("audible", "switch below 20 kHz (audible)"),
        ("duty_near_full", "run at a duty above 95 %"),
        ("saturation", "exceed the inductor's saturation rating"),
        (
            "not_regulating",
            "do not regulate (inductor peak short of the threshold)",
        ),
    ];
    for (code, what) in words {
        let n = count(code);
        if n > 0 {
            println!("{n} of {} points {what}", t.rows.len());
        }
    }
}

/// A value of the field at `path` for people: engineering notation with
/// the field's unit (`68 µH`), plain figures for ratios (`0.45`, never
/// `450 m`) and degrees Celsius (`85 °C`).
pub(super) fn value_of(v: f64, path: &str, sig: usize) -> String {
    use sim_core::units::{short_number, Unit};
    match sim_core::study::vary::unit_of(path) {
        Unit::Ratio => short_number(v, sig.max(3)),
        Unit::Celsius => format!("{} °C", short_number(v, sig.max(3))),
        u => crate::format::eng_sig(v, u.display_symbol(), sig),
    }
}

/// One line on stdout for a table that stopped early.
pub(super) fn print_incomplete(t: &StudyTable) {
    if let Some(inc) = &t.manifest.incomplete {
        println!(
            "\nINCOMPLETE: {} — {} of {} points ran; figures above cover those only",
            inc.reason, inc.ran, inc.of
        );
    }
}

/// Metrics the spread summary prints (all are in the summary JSON).
pub(super) const PRINTED: [(Metric, &str, f64); 8] = [
    (Metric::LedCurrentAvgA, "A", 1.0),
    (Metric::LedCurrentRipplePct, "%", 1.0),
    (Metric::SwitchingFrequencyHz, "Hz", 1.0),
    (Metric::Duty, "%", 100.0),
    (Metric::Efficiency, "%", 100.0),
    (Metric::InductorCurrentPeakA, "A", 1.0),
    (Metric::CcmMargin, "", 1.0),
    (Metric::TotalLossW, "W", 1.0),
];

pub(super) fn show(v: f64, unit: &str, k: f64) -> String {
    match unit {
        "%" => format!("{:.2} %", v * k),
        "" => crate::format::ratio(v, 1.0),
        u => eng(v, u),
    }
}

pub(super) fn print_spread(t: &StudyTable) {
    let m = &t.manifest;
    let sum = summarize(t);
    let corners = m.kind == StudyKind::Corners;
    if corners {
        println!(
            "corners of `{}`: {} corners of {} toleranced inputs, {} failed",
            m.scenario,
            sum.points,
            m.inputs.len(),
            sum.failed
        );
    } else {
        println!(
            "spread of `{}`: {} samples (seed {}), {} failed",
            m.scenario,
            sum.points,
            m.seed.unwrap_or(0),
            sum.failed
        );
    }
    println!("inputs:");
    for n in &m.input_notes {
        println!("  {n}");
    }
    if corners {
        println!(
            "\n{:<26} {:>11} {:<40} {:>11} corner",
            "metric", "lowest", "corner", "highest"
        );
    } else {
        println!(
            "\n{:<26} {:>11} {:>11} {:>11} {:>11} {:>11}",
            "metric", "min", "1st pct", "median", "99th pct", "max"
        );
    }
    for (metric, unit, k) in PRINTED {
        let Some(x) = sum.metrics.iter().find(|x| x.metric == metric) else {
            continue;
        };
        let name = metric.name();
        if corners {
            println!(
                "{name:<26} {:>11} {:<40} {:>11} {}",
                show(x.min, unit, k),
                x.min_at,
                show(x.max, unit, k),
                x.max_at
            );
        } else {
            println!(
                "{name:<26} {:>11} {:>11} {:>11} {:>11} {:>11}",
                show(x.min, unit, k),
                show(x.p01, unit, k),
                show(x.p50, unit, k),
                show(x.p99, unit, k),
                show(x.max, unit, k)
            );
        }
    }
    if sum.limits.is_empty() {
        println!(
            "\nno spec limits: add a `spec` object to the scenario or --spec (e.g. \
             --spec current_within_pct=5)"
        );
        return;
    }
    println!("\nspec limits:");
    for l in &sum.limits {
        let worst = l
            .worst_at
            .as_deref()
            .map_or(String::new(), |w| format!("   worst: {w}"));
        println!(
            "  {:<44} {:>6} of {:<6} ({}){worst}",
            l.limit,
            l.pass,
            l.of,
            pct(l.pass as f64 / l.of.max(1) as f64)
        );
    }
    if let (Some(p), Some(y), Some((lo, hi))) =
        (sum.pass, sum.yield_fraction, sum.yield_interval_95)
    {
        println!(
            "yield: {p} of {} meet every limit = {}{}",
            sum.points,
            pct(y),
            if corners {
                String::new()
            } else {
                format!(" (95 % interval {} to {})", pct(lo), pct(hi))
            }
        );
    }
}

pub(super) fn print_boundary(s: &Scenario, b: &Boundary) {
    let u = |v: f64| value_of(v, &b.path, 5);
    println!("CCM/DCM boundary of `{}` along {}:", s.name, b.path);
    println!(
        "  boundary   {}   (bracket {} to {}, width {:.3} % of the value, {} runs)",
        u(b.value),
        u(b.bracket.0),
        u(b.bracket.1),
        100.0 * (b.bracket.1 - b.bracket.0) / b.value.abs(),
        b.runs
    );
    println!(
        "  CCM lies {} the boundary, DCM {} it",
        if b.ccm_above { "above" } else { "below" },
        if b.ccm_above { "below" } else { "above" }
    );
    println!(
        "  nominal    {} is on the {} side, {:.2} % of the nominal from the boundary",
        value_of(b.nominal, &b.path, 3),
        if b.nominal_ccm { "CCM" } else { "DCM" },
        b.margin_pct
    );
}
