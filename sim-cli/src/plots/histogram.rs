//! PNG histograms of a spread (2 × 2 panels of the main metrics) with the
//! spec limits and the median drawn; corners are shown one bar each.

use super::canvas::{
    bold, chart, dashed, de, draw_mesh, font, lighten, page, render, tick, ticks, Area, Axis,
    Chart, Frame, GridLines, Mesh, FAIL, INDUCTOR, INK,
};
use crate::format::eng;
use anyhow::Result;
use plotters::element::DashedPathElement;
use plotters::prelude::*;
use sim_core::scenario::SpecLimits;
use sim_core::study::rows::{RowExt, StudyTable};
use std::path::Path;

/// What a histogram marks: spec limits and the median.
struct Mark {
    label: String,
    x: f64,
    color: RGBColor,
}

/// Writes histograms of the main metrics of a spread (2 × 2), with the
/// spec limits and the median drawn.
pub fn spread_histograms(t: &StudyTable, out: &Path) -> Result<()> {
    let spec: SpecLimits = t.manifest.spec.unwrap_or_default();
    let panels: [(&str, f64, &str, &str); 4] = [
        ("led_current_avg_a", 1.0, "LED current average", "A"),
        (
            "led_current_ripple_pct",
            1.0,
            "Peak-to-peak LED ripple relative to the average",
            "%",
        ),
        ("efficiency", 100.0, "Efficiency", "%"),
        ("inductor_current_peak_a", 1.0, "Inductor peak current", "A"),
    ];
    let title = format!(
        "{} — {} of {} samples{}",
        t.manifest.scenario,
        if t.manifest.kind == sim_core::study::rows::StudyKind::Corners {
            "corners"
        } else {
            "spread"
        },
        t.rows.len(),
        t.manifest
            .seed
            .map_or(String::new(), |s| format!(" (seed {s})"))
    );
    let failed = t.failed();
    let corners = t.manifest.kind == sim_core::study::rows::StudyKind::Corners;
    let sub = format!(
        "{} that ran{}   ·   red dashed: spec limits   ·   dark dashed: median",
        if corners {
            "one bar per corner"
        } else {
            "histograms of the samples"
        },
        if failed > 0 {
            format!(" ({failed} failed, not shown)")
        } else {
            String::new()
        }
    );
    render(out, |root| {
        let body = page(root, &title, &sub)?;
        let cells = body.split_evenly((2, 2));
        for ((name, k, label, unit), cell) in panels.iter().zip(cells.iter()) {
            let mut v: Vec<f64> = t
                .rows
                .iter()
                .filter_map(|r| r.metric(name).map(|x| x * k))
                .filter(|x| x.is_finite())
                .collect();
            v.sort_by(f64::total_cmp);
            let mut marks = Vec::new();
            if !v.is_empty() {
                let med = sim_core::study::spread::quantile_sorted(&v, 0.5);
                marks.push(Mark {
                    label: format!("median {}", show(med, unit)),
                    x: med,
                    color: INK,
                });
            }
            match *name {
                "led_current_avg_a" => {
                    if let (Some(p), Some(tg)) = (spec.current_within_pct, spec.target_current_a) {
                        for (s, w) in [(-1.0, "low"), (1.0, "high")] {
                            let x = tg * (1.0 + s * p / 100.0);
                            marks.push(Mark {
                                label: format!("spec {w} {}", show(x, unit)),
                                x,
                                color: FAIL,
                            });
                        }
                    }
                }
                "led_current_ripple_pct" => {
                    if let Some(m) = spec.max_ripple_pct {
                        marks.push(Mark {
                            label: format!("spec max {m} %"),
                            x: m,
                            color: FAIL,
                        });
                    }
                }
                "efficiency" => {
                    if let Some(m) = spec.min_efficiency {
                        marks.push(Mark {
                            label: format!("spec min {:.1} %", 100.0 * m),
                            x: 100.0 * m,
                            color: FAIL,
                        });
                    }
                }
                "inductor_current_peak_a" => {
                    if let Some(sat) = t.manifest.inductor_saturation_a {
                        marks.push(Mark {
                            label: format!("saturation rating {}", eng(sat, "A")),
                            x: sat,
                            color: FAIL,
                        });
                    }
                }
                _ => {}
            }
            if corners {
                // One bar per corner, in the table's order: a handful of
                // deliberate extremes is no distribution to bin.
                corner_bars(cell, label, unit, &corner_values(t, name, *k), &marks)?;
            } else {
                histogram(cell, label, unit, &v, &marks)?;
            }
        }
        Ok(())
    })
}

/// Each corner's label (its number when unlabelled) and value of a
/// metric times `k` (`None`: the corner did not run).
pub(crate) fn corner_values(t: &StudyTable, metric: &str, k: f64) -> Vec<(String, Option<f64>)> {
    t.rows
        .iter()
        .enumerate()
        .map(|(j, r)| {
            let name = r.label().map_or(format!("#{}", j + 1), str::to_string);
            (
                name,
                r.metric(metric).map(|x| x * k).filter(|x| x.is_finite()),
            )
        })
        .collect()
}

/// Draws a panel's title and the legend of its dashed marks (spec limits,
/// median) in a strip at the top of `cell`; returns the area below.
fn titled_with_marks<'a>(cell: &Area<'a>, label: &str, marks: &[Mark]) -> Result<Area<'a>> {
    let (legend, area) = cell.split_vertically(64);
    legend
        .draw(&Text::new(label.to_string(), (40, 6), bold(22)))
        .map_err(de)?;
    let mut x = 40;
    for m in marks {
        legend
            .draw(&DashedPathElement::new(
                vec![(x, 46), (x + 28, 46)],
                6,
                4,
                m.color.stroke_width(3),
            ))
            .map_err(de)?;
        legend
            .draw(&Text::new(m.label.clone(), (x + 34, 36), font(17)))
            .map_err(de)?;
        x += 44 + 9 * m.label.chars().count() as i32;
    }
    Ok(area)
}

/// The value axis of a panel (x: bars and histogram bins run along it).
struct ValueAxis {
    /// The SI prefix (none for per cent).
    ax: Axis,
    /// The range shown, scaled.
    xr: (f64, f64),
    /// The axis title: the panel's label and the unit.
    desc: String,
    /// The span of the values and marks, unscaled and unpadded.
    span: f64,
}

/// The value axis of a panel: `lo..hi` of the values widened to take in
/// the marks, `below` and 5 % of the span beyond them; per cent without a
/// prefix, other units with an SI prefix.
fn value_axis(
    label: &str,
    unit: &str,
    (lo, hi): (f64, f64),
    marks: &[Mark],
    below: f64,
) -> ValueAxis {
    let (mut lo, mut hi) = (lo, hi);
    for m in marks {
        lo = lo.min(m.x);
        hi = hi.max(m.x);
    }
    let span = (hi - lo).max(1e-9 * hi.abs().max(1e-30));
    let (lo, hi) = (lo - below * span, hi + 0.05 * span);
    let (ax, unit_text) = if unit == "%" {
        (Axis::plain(), "%".to_string())
    } else {
        let ax = Axis::for_magnitude(lo.abs().max(hi.abs()));
        let text = format!("{}{unit}", ax.prefix);
        (ax, text)
    };
    ValueAxis {
        xr: (lo / ax.scale, hi / ax.scale),
        ax,
        desc: format!("{label} ({unit_text})"),
        span,
    }
}

/// The chart of a value panel, `y_labels` px left for the y tick labels.
fn value_chart<'a, 'b>(
    area: &'a Area<'b>,
    xr: (f64, f64),
    yr: (f64, f64),
    y_labels: u32,
) -> Result<Chart<'a, 'b>> {
    let frame = Frame {
        left: 16,
        right: 30,
        top: 6,
        bottom: 8,
        x_labels: 56,
        y_labels,
    };
    chart(area, &frame, xr, yr)
}

/// The marks as dashed vertical lines from `y0` to `y1`.
fn draw_marks(chart: &mut Chart, marks: &[Mark], ax: &Axis, y0: f64, y1: f64) -> Result<()> {
    for m in marks {
        let x = m.x / ax.scale;
        dashed(chart, vec![(x, y0), (x, y1)], m.color.stroke_width(3))?;
    }
    Ok(())
}

/// Horizontal bars, one per corner (top to bottom in the table's order),
/// from the left edge of the value axis to the corner's value; spec limits
/// and the median as dashed lines.
fn corner_bars(
    cell: &Area,
    label: &str,
    unit: &str,
    items: &[(String, Option<f64>)],
    marks: &[Mark],
) -> Result<()> {
    let area = titled_with_marks(cell, label, marks)?;
    let vals: Vec<f64> = items.iter().filter_map(|i| i.1).collect();
    if vals.is_empty() {
        area.draw(&Text::new("no corner ran".to_string(), (60, 120), font(20)))
            .map_err(de)?;
        return Ok(());
    }
    let lo = vals.iter().copied().fold(f64::INFINITY, f64::min);
    let hi = vals.iter().copied().fold(f64::NEG_INFINITY, f64::max);
    let ValueAxis { ax, xr, desc, .. } = value_axis(label, unit, (lo, hi), marks, 0.08);
    let n = items.len();
    let mut chart = value_chart(&area, xr, (-0.5, n as f64 - 0.5), 150)?;
    // Corner k is drawn at y = n − 1 − k, so the first is at the top.
    let y_fmt = |v: &f64| {
        let k = (n as f64 - 1.0 - v.round()) as usize;
        let name = items.get(k).map_or("", |i| i.0.as_str());
        name.chars().take(18).collect::<String>()
    };
    draw_mesh(
        &mut chart,
        Mesh {
            x_labels: 6,
            y_labels: n.min(24),
            grid: GridLines::Vertical,
            label_px: 16,
            desc_px: 19,
            x_desc: Some(desc),
            y_desc: None,
            x_fmt: &ticks(xr.1 - xr.0, 6),
            y_fmt: &y_fmt,
        },
    )?;
    let h = 0.36;
    chart
        .draw_series(items.iter().enumerate().filter_map(|(k, (_, v))| {
            let v = (*v)?;
            let y = (n - 1 - k) as f64;
            Some(Rectangle::new(
                [(xr.0, y - h), (v / ax.scale, y + h)],
                lighten(INDUCTOR, 0.8).filled(),
            ))
        }))
        .map_err(de)?;
    draw_marks(&mut chart, marks, &ax, -0.5, n as f64 - 0.5)
}

/// A value with its unit for a mark's label: per cent to two decimals,
/// other units in engineering notation.
fn show(v: f64, unit: &str) -> String {
    if unit == "%" {
        format!("{v:.2} %")
    } else {
        eng(v, unit)
    }
}

/// A histogram of the `sorted` values (8 to 40 bins), spec limits and the
/// median as dashed lines.
fn histogram(cell: &Area, label: &str, unit: &str, sorted: &[f64], marks: &[Mark]) -> Result<()> {
    let area = titled_with_marks(cell, label, marks)?;
    if sorted.is_empty() {
        area.draw(&Text::new(
            "no samples ran".to_string(),
            (60, 120),
            font(20),
        ))
        .map_err(de)?;
        return Ok(());
    }
    let d0 = sorted[0];
    let d1 = sorted[sorted.len() - 1];
    let ValueAxis { ax, xr, desc, span } = value_axis(label, unit, (d0, d1), marks, 0.05);
    let bins = ((sorted.len() as f64).sqrt().round() as usize).clamp(8, 40);
    let w = ((d1 - d0) / bins as f64).max(span * 1e-6);
    let mut counts = vec![0usize; bins];
    for &v in sorted {
        let b = (((v - d0) / w) as usize).min(bins - 1);
        counts[b] += 1;
    }
    let top = counts.iter().copied().max().unwrap_or(1) as f64 * 1.12;
    let mut chart = value_chart(&area, xr, (0.0, top), 90)?;
    draw_mesh(
        &mut chart,
        Mesh {
            x_labels: 6,
            y_labels: 5,
            grid: GridLines::Both,
            label_px: 17,
            desc_px: 19,
            x_desc: Some(desc),
            y_desc: Some("samples".into()),
            x_fmt: &ticks(xr.1 - xr.0, 6),
            y_fmt: &|v| tick(*v, 0),
        },
    )?;
    let bar = |b: usize, c: usize| {
        let x0 = (d0 + b as f64 * w) / ax.scale;
        let x1 = (d0 + (b + 1) as f64 * w) / ax.scale;
        [(x0, 0.0), (x1, c as f64)]
    };
    chart
        .draw_series(
            counts
                .iter()
                .enumerate()
                .map(|(b, &c)| Rectangle::new(bar(b, c), INDUCTOR.mix(0.75).filled())),
        )
        .map_err(de)?;
    // White edges keep neighbouring bars of equal height apart.
    chart
        .draw_series(
            counts
                .iter()
                .enumerate()
                .filter(|(_, &c)| c > 0)
                .map(|(b, &c)| Rectangle::new(bar(b, c), WHITE.stroke_width(1))),
        )
        .map_err(de)?;
    draw_marks(&mut chart, marks, &ax, 0.0, top)
}

#[cfg(test)]
mod tests {
    use super::*;
    use sim_core::scenario::{Distribution, PartTolerance, Tolerances};
    use sim_core::study::run::{Hooks, RunSettings};
    use sim_core::study::spread::corners;

    /// Corners are shown one bar per corner, each at its own value (a
    /// histogram of four deliberate extremes bins them into counts).
    #[test]
    fn corners_are_one_bar_each() {
        let mut s = sim_core::scenario::template();
        s.tolerances = Some(Tolerances {
            parts: vec![PartTolerance {
                path: "inductor.inductance_h".into(),
                tolerance_pct: 20.0,
                distribution: Distribution::Uniform,
            }],
            led_forward_voltage: None,
            supply_over_range: true,
        });
        let t = corners(
            &s,
            &SpecLimits::default(),
            &RunSettings::default(),
            None,
            &Hooks::default(),
        )
        .unwrap();
        let bars = corner_values(&t, "inductor_ripple_pp_a", 1.0);
        assert_eq!(bars.len(), t.rows.len());
        assert_eq!(bars.len(), 4);
        for (b, r) in bars.iter().zip(&t.rows) {
            assert_eq!(Some(b.0.as_str()), r.label());
            assert!((b.1.unwrap() - r.metric("inductor_ripple_pp_a").unwrap()).abs() < 1e-15);
        }
        // Constant off-time ripple ΔI ≈ V_out·t_off/L (Erickson &
        // Maksimovic, ch. 2): the low-L corners have the larger ripple.
        let low: f64 = bars
            .iter()
            .filter(|b| b.0.contains("inductor.inductance_h low"))
            .map(|b| b.1.unwrap())
            .fold(0.0, f64::max);
        let high: f64 = bars
            .iter()
            .filter(|b| b.0.contains("inductor.inductance_h high"))
            .map(|b| b.1.unwrap())
            .fold(0.0, f64::max);
        assert!(low > high, "{low} {high}");
    }
}
