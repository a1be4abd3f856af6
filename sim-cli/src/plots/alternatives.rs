//! The comparison plot of a run: LED current, efficiency and driver loss
//! against the supply voltage for the switching design and its resistor
//! and linear alternatives, drawn as the run plots' stacked panels.

use super::canvas::{draw_buffer, encode_png, Axis, INDUCTOR, LED, LED_AVG, VLED};
use super::waveform::{draw_stack, Marker, Panel, Trace};
use crate::format::eng;
use anyhow::{anyhow, Result};
use plotters::style::RGBColor;
use sim_core::parts::alternatives::{self, OperatingPoint};
use sim_core::run::assess::Assessment;
use std::path::Path;

/// The alternatives plot's traces in drawing order: the switching design
/// last, so it is drawn on top (with its simulated points marked).
pub(crate) const ALTERNATIVE_LABELS: [&str; 3] = [
    "series resistor (closed form)",
    "linear regulator (closed form)",
    "switching design (simulated points)",
];

/// Writes the comparison plot: LED current, efficiency and driver loss
/// versus supply voltage for the switching design (its simulated points)
/// and the resistor and linear alternatives (drawn densely from their
/// closed forms).
pub fn alternatives_png(a: &Assessment, path: &Path) -> Result<()> {
    encode_png(path, &alternatives_buffer(a)?)
}

/// The comparison plot's pixels (see [`alternatives_png`]).
fn alternatives_buffer(a: &Assessment) -> Result<Vec<u8>> {
    let cmp = a
        .comparison
        .as_ref()
        .ok_or_else(|| anyhow!("no alternatives were computed"))?;
    let s = &a.effective;
    let (v0, v1) = (
        cmp.supply_v.first().copied().unwrap_or(s.supply.voltage_v),
        cmp.supply_v.last().copied().unwrap_or(s.supply.voltage_v),
    );
    let span = cmp.assumed_span.unwrap_or(alternatives::ASSUMED_SPAN);
    let (v0, v1) = if v1 > v0 {
        (v0, v1)
    } else {
        ((1.0 - span) * v0, (1.0 + span) * v0)
    };
    let dense: Vec<f64> = (0..=80).map(|k| v0 + (v1 - v0) * k as f64 / 80.0).collect();
    let res: Vec<OperatingPoint> = cmp
        .resistor_ohm
        .map(|r| {
            dense
                .iter()
                .map(|&v| alternatives::resistor_point(s, r, v))
                .collect()
        })
        .unwrap_or_default();
    let lin: Vec<OperatingPoint> = dense
        .iter()
        .map(|&v| alternatives::linear_point(s, cmp.target_current_a, cmp.linear_headroom_v, v))
        .collect();
    let sw: Vec<OperatingPoint> = cmp
        .drivers
        .iter()
        .find(|d| d.driver == "switching")
        .map(|d| d.points.iter().flatten().copied().collect())
        .unwrap_or_default();
    let col = |pts: &[OperatingPoint], f: fn(&OperatingPoint) -> f64| -> Vec<(f64, f64)> {
        pts.iter().map(|p| (p.supply_v, f(p))).collect()
    };
    let series: [(&[OperatingPoint], &str, RGBColor); 3] = [
        (&res, ALTERNATIVE_LABELS[0], LED),
        (&lin, ALTERNATIVE_LABELS[1], VLED),
        (&sw, ALTERNATIVE_LABELS[2], INDUCTOR),
    ];
    let cur: Vec<Vec<(f64, f64)>> = series
        .iter()
        .map(|x| col(x.0, |p| p.led_current_a))
        .collect();
    let eff: Vec<Vec<(f64, f64)>> = series
        .iter()
        .map(|x| col(x.0, |p| 100.0 * p.efficiency))
        .collect();
    let loss: Vec<Vec<(f64, f64)>> = series
        .iter()
        .map(|x| col(x.0, |p| p.dissipation_w))
        .collect();
    fn traces<'a>(
        series: &[(&[OperatingPoint], &str, RGBColor); 3],
        data: &'a [Vec<(f64, f64)>],
    ) -> Vec<Trace<'a>> {
        series
            .iter()
            .zip(data)
            .filter(|(_, d)| !d.is_empty())
            .map(|(x, d)| Trace {
                label: x.1.to_string(),
                color: x.2,
                width: 3,
                dots: x.1 == ALTERNATIVE_LABELS[2],
                points: d,
            })
            .collect()
    }
    let panels = [
        Panel {
            quantity: "LED current",
            unit: "A",
            traces: traces(&series, &cur),
            markers: vec![Marker {
                label: format!("target {}", eng(cmp.target_current_a, "A")),
                color: LED_AVG,
                y: cmp.target_current_a,
            }],
        },
        Panel {
            quantity: "Efficiency",
            unit: "%",
            traces: traces(&series, &eff),
            markers: vec![],
        },
        Panel {
            quantity: "Driver loss",
            unit: "W",
            traces: traces(&series, &loss),
            markers: vec![],
        },
    ];
    let range_words = match cmp.assumed_span {
        Some(f) => format!(
            "supply {} to {} (no input range given: ±{:.0} % of nominal)",
            eng(v0, "V"),
            eng(v1, "V"),
            100.0 * f
        ),
        None => format!("supply {} to {}", eng(v0, "V"), eng(v1, "V")),
    };
    let subtitle = format!(
        "same LED string, {range_words}   ·   resistor sized at {}   ·   linear headroom {}",
        eng(s.supply.voltage_v, "V"),
        eng(cmp.linear_headroom_v, "V")
    );
    let x_axis = Axis::for_magnitude(v1.abs());
    draw_buffer(|root| {
        draw_stack(
            root,
            &format!(
                "{} — switching vs resistor vs linear",
                a.result.scenario_name
            ),
            &subtitle,
            &format!("Supply voltage ({}V)", x_axis.prefix),
            (v0, v1),
            &x_axis,
            &panels,
        )
    })
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::plots::canvas::{HEIGHT, LEGEND_WIDTH, WIDTH};
    use crate::plots::waveform::tests::lamp;
    use sim_core::run::assess::{assess, AssessOptions};
    use sim_core::run::RunOptions;

    /// Without an input range the alternatives are compared over the same
    /// ±10 % the plot shows: the switching design has a point at each end
    /// (before: only the nominal one, so no line and "varies 0.0 %"), is
    /// drawn last (on top) and with its points marked.
    #[test]
    fn alternatives_without_a_range_use_the_plotted_span() {
        let s = lamp(10e-6, false);
        let mut s = s;
        s.simulation.record_startup = false;
        let a = assess(
            &s,
            &AssessOptions {
                run: RunOptions::default(),
                alternatives: true,
            },
        )
        .unwrap();
        let cmp = a.comparison.as_ref().unwrap();
        assert_eq!(cmp.assumed_span, Some(0.1));
        assert_eq!(cmp.supply_v.len(), 3);
        assert!((cmp.supply_v[0] - 10.8).abs() < 1e-9 && (cmp.supply_v[2] - 13.2).abs() < 1e-9);
        let sw = cmp
            .drivers
            .iter()
            .find(|d| d.driver == "switching")
            .unwrap();
        assert!(sw.points.iter().all(Option::is_some));
        let var = sw.current_variation_pct.unwrap();
        // A peak-current controller's average moves a little with the
        // supply (the ripple changes): not zero, not the resistor's.
        let res = cmp.drivers.iter().find(|d| d.driver == "resistor").unwrap();
        assert!(
            var > 1e-3 && var < res.current_variation_pct.unwrap(),
            "{var} %"
        );
        // The switching design is drawn on top with its points marked:
        // in the LED current panel (the top third), where the linear
        // regulator's line lies on it, its colour shows (three dots of
        // radius 8 px alone cover about 600 px; drawn first and without
        // dots, as before, 5 pixels showed).
        let buf = alternatives_buffer(&a).unwrap();
        let panel_rows = 96..(96 + (HEIGHT - 96 - 70) / 3);
        let mut seen = 0;
        for y in panel_rows {
            for x in 0..(WIDTH - LEGEND_WIDTH) {
                let k = ((y * WIDTH + x) * 3) as usize;
                if buf[k..k + 3] == [INDUCTOR.0, INDUCTOR.1, INDUCTOR.2] {
                    seen += 1;
                }
            }
        }
        assert!(
            seen > 700,
            "{seen} switching-design pixels in the current panel"
        );
        assert_eq!(ALTERNATIVE_LABELS[2], "switching design (simulated points)");
        let dir = std::env::temp_dir().join(format!("chopwave-alt-{}", std::process::id()));
        std::fs::create_dir_all(&dir).unwrap();
        let f = dir.join("alt.png");
        alternatives_png(&a, &f).unwrap();
        assert!(
            png::Decoder::new(std::io::BufReader::new(std::fs::File::open(&f).unwrap()))
                .read_info()
                .is_ok()
        );
        let _ = std::fs::remove_dir_all(&dir);
    }
}
