//! `chopwave fit-led`: the per-LED exponential model fitted to datasheet
//! points, printed with its residuals and the scenario fragment to paste.

use crate::{format, Failure};
use sim_core::Scenario;

#[derive(Debug, clap::Args)]
pub(crate) struct FitLedArgs {
    /// A point on one LED's forward curve, `CURRENT,VOLTAGE` (A, V;
    /// engineering notation allowed, e.g. `350m,2.95`); three or more.
    #[arg(long = "point", value_name = "I,V", value_parser = parse_point, required = true)]
    points: Vec<(f64, f64)>,
    /// Junction temperature the points were taken at, °C.
    #[arg(
        long = "temp",
        value_name = "T",
        default_value_t = 25.0,
        allow_hyphen_values = true
    )]
    temp_c: f64,
    /// Forward-voltage temperature coefficient per LED, mV/K (e.g. -2).
    #[arg(
        long = "tempco-mv",
        value_name = "MV_PER_K",
        allow_hyphen_values = true
    )]
    tempco_mv_per_k: Option<f64>,
    /// Current at which the temperature coefficient is stated, A (default:
    /// the largest current among the points it comes from).
    #[arg(long = "tempco-current", value_name = "A")]
    tempco_current_a: Option<f64>,
    /// A point at the second temperature `--hot-temp`, to fit the
    /// temperature coefficient from (repeatable).
    #[arg(long = "hot-point", value_name = "I,V", value_parser = parse_point)]
    hot_points: Vec<(f64, f64)>,
    /// Junction temperature of the `--hot-point` points, °C.
    #[arg(long = "hot-temp", value_name = "T")]
    hot_temp_c: Option<f64>,
    /// LEDs in the string, for the fragment.
    #[arg(long, default_value_t = 1)]
    count: u32,
    /// Print the fit as JSON.
    #[arg(long)]
    json: bool,
}

fn parse_point(s: &str) -> Result<(f64, f64), String> {
    let bad = || format!("`{s}` is not CURRENT,VOLTAGE (for example 350m,2.95)");
    let (i, v) = s.split_once(',').ok_or_else(bad)?;
    let i = sim_core::units::parse_quantity(i.trim(), sim_core::units::Unit::Ampere)
        .map_err(|e| format!("current in `{s}`: {e}"))?;
    let v = sim_core::units::parse_quantity(v.trim(), sim_core::units::Unit::Volt)
        .map_err(|e| format!("voltage in `{s}`: {e}"))?;
    Ok((i, v))
}

pub(crate) fn fit_led(a: &FitLedArgs) -> Result<(), Failure> {
    use sim_core::parts::fit::fit_led as fit;
    if !(-60.0..=250.0).contains(&a.temp_c) {
        return Err(Failure::Input(format!(
            "--temp {}: outside -60 to 250 °C",
            a.temp_c
        )));
    }
    if !(1..=1000).contains(&a.count) {
        return Err(Failure::Input(format!(
            "--count {}: give 1 to 1000 LEDs (as load.count allows)",
            a.count
        )));
    }
    let f = fit(
        &a.points,
        a.temp_c,
        a.tempco_mv_per_k.map(|t| t * 1e-3),
        &a.hot_points,
        a.hot_temp_c,
    )
    .map_err(|e| Failure::Input(format!("fit-led: {e}")))?;
    let mut load = serde_json::json!({
        "kind": "led_exponential",
        "count": a.count,
        "saturation_current_a": f.saturation_current_a,
        "emission_coefficient": f.emission_coefficient,
        "series_resistance_ohm": f.series_resistance_ohm,
        "junction_temperature_c": f.temperature_c,
        "reference_temperature_c": f.temperature_c,
    });
    // The coefficient goes into the load, stated at a current, from which
    // the model derives its junction law (band gap).
    let tempco_current = a.tempco_current_a.unwrap_or_else(|| {
        let pts = if a.tempco_mv_per_k.is_none() && !a.hot_points.is_empty() {
            &a.hot_points
        } else {
            &a.points
        };
        pts.iter().map(|p| p.0).fold(0.0, f64::max)
    });
    if let Some(tc) = f.tempco_v_per_k {
        if !(tempco_current.is_finite() && tempco_current > 0.0) {
            return Err(Failure::Input(format!(
                "--tempco-current {tempco_current}: must be a positive current"
            )));
        }
        load["forward_voltage_tempco_v_per_k"] = tc.into();
        load["tempco_current_a"] = tempco_current.into();
    }
    fragment_loads(&load, None)?;
    if a.json {
        let out = serde_json::json!({ "fit": f, "load": load });
        println!(
            "{}",
            serde_json::to_string_pretty(&out).map_err(|e| Failure::Run(e.to_string()))?
        );
        return Ok(());
    }
    println!(
        "Per-LED model v = n·Vt·ln(1 + i/Is) + Rs·i at {:.1} °C (least squares):",
        f.temperature_c
    );
    // Engineering notation down to femto; an LED's Is (1e-18 A and
    // below) lies beyond the prefixes and keeps scientific notation.
    let is = f.saturation_current_a;
    if is.abs() >= 1e-15 {
        println!("  Is = {}", format::eng_sig(is, "A", 7));
    } else {
        println!("  Is = {is:.6e} A");
    }
    println!("  n  = {:.6}", f.emission_coefficient);
    println!(
        "  Rs = {}",
        format::eng_sig(f.series_resistance_ohm, "Ω", 6)
    );
    println!(
        "\n  {:>12}{:>12}{:>12}{:>14}",
        "current", "datasheet", "model", "residual"
    );
    for (&(i, v), r) in a.points.iter().zip(&f.residuals_v) {
        println!(
            "  {:>12}{:>12}{:>12}{:>14}",
            format::eng(i, "A"),
            format!("{v:.4} V"),
            format!("{:.4} V", v + r),
            format!("{:+.2} mV", 1e3 * r)
        );
    }
    if let Some(tc) = f.tempco_v_per_k {
        let how = if a.tempco_mv_per_k.is_some() {
            "given"
        } else {
            "fitted"
        };
        println!(
            "\n  forward-voltage tempco {:+.3} mV/K per LED at {} ({how})",
            1e3 * tc,
            format::eng(tempco_current, "A")
        );
        if let Some(th) = a.hot_temp_c {
            for (&(i, v), r) in a.hot_points.iter().zip(&f.hot_residuals_v) {
                println!(
                    "  at {th:.1} °C: {} {v:.4} V, model {:.4} V ({:+.2} mV)",
                    format::eng(i, "A"),
                    v + r,
                    1e3 * r
                );
            }
        }
    }
    let mut fragment = serde_json::json!({ "load": load });
    if f.tempco_v_per_k.is_some() {
        fragment["parts"] = serde_json::json!({
            "led": {
                "resistance_c_per_w": "(your LED's junction-to-ambient °C/W)",
                "max_junction_temperature_c": "(from the datasheet)",
            }
        });
    }
    println!("\nScenario fragment to paste (fill in the thermal data where shown):");
    println!(
        "{}",
        serde_json::to_string_pretty(&fragment).map_err(|e| Failure::Run(e.to_string()))?
    );
    Ok(())
}

/// Checks that a fitted `load` (and tempco) read back through the
/// scenario loader, placed in the starter scenario: a fragment is never
/// printed that a scenario file would refuse.
fn fragment_loads(load: &serde_json::Value, tempco: Option<f64>) -> Result<(), Failure> {
    let mut v = serde_json::to_value(sim_core::scenario::template_with_parts())
        .map_err(|e| Failure::Run(e.to_string()))?;
    v["load"] = load.clone();
    if let Some(tc) = tempco {
        v["parts"]["led"]["forward_voltage_tempco_v_per_k"] = tc.into();
    }
    let problems: Vec<String> = match Scenario::from_json_value(&v) {
        Ok(_) => Vec::new(),
        Err(e) => e
            .problems()
            .into_iter()
            .filter(|p| p.path.starts_with("load") || p.path.starts_with("parts.led"))
            .map(|p| p.to_string())
            .collect(),
    };
    if problems.is_empty() {
        Ok(())
    } else {
        Err(Failure::Input(format!(
            "fit-led: the fitted model would not load in a scenario: {}",
            problems.join("; ")
        )))
    }
}
