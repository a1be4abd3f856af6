//! PNG plots of a 1-D sweep: stacked panels of metrics against the swept
//! variable, DCM points shaded, failed points ticked, points with a
//! warning or failing verdict marked, limit lines dashed.

use super::canvas::{
    chart, dashed, de, draw_mesh, edges, legend_entry, lighten, padded_range, page, render,
    stacked, ticks, Area, Axis, Frame, GridLines, Key, Mesh, FAIL, INDUCTOR, INDUCTOR_LIGHT, INK,
    LED, LED_AVG, LEGEND_WIDTH, VLED, VSW, WARN, WIDTH,
};
use super::names::{field_name, field_title};
use crate::format::eng;
use anyhow::Result;
use plotters::prelude::*;
use sim_core::study::rows::{PointVerdict, RowExt, StudyTable};
use std::path::Path;

const DCM_SHADE: RGBColor = RGBColor(250, 226, 218);
const EFFICIENCY: RGBColor = RGBColor(34, 120, 70);

/// One line on a sweep panel; `None` leaves a gap (a failed point).
struct Curve {
    label: String,
    color: RGBColor,
    dashed: bool,
    points: Vec<Option<(f64, f64)>>,
}

/// A shaded band between two values at each x.
struct Band {
    label: String,
    color: RGBColor,
    points: Vec<Option<(f64, f64, f64)>>,
}

/// One panel of a sweep plot.
struct SweepPanel {
    quantity: String,
    unit: &'static str,
    /// Scale by an SI prefix (false for %).
    prefixed: bool,
    curves: Vec<Curve>,
    band: Option<Band>,
}

/// The y range of a sweep panel: its curves and band, and its limit
/// lines where they are near the data.
fn y_range(p: &SweepPanel) -> (f64, f64) {
    let mut lo = f64::INFINITY;
    let mut hi = f64::NEG_INFINITY;
    let mut see = |y: f64| {
        if y.is_finite() {
            lo = lo.min(y);
            hi = hi.max(y);
        }
    };
    for c in p.curves.iter().filter(|c| !c.dashed) {
        for (_, y) in c.points.iter().flatten() {
            see(*y);
        }
    }
    if let Some(b) = &p.band {
        for (_, a, c) in b.points.iter().flatten() {
            see(*a);
            see(*c);
        }
    }
    // Limit lines widen the range only up to three times the data, so a
    // far-off limit does not flatten the data (it is then left out).
    let data_hi = p
        .curves
        .iter()
        .filter(|c| !c.dashed)
        .flat_map(|c| c.points.iter().flatten().map(|q| q.1))
        .chain(
            p.band
                .iter()
                .flat_map(|b| b.points.iter().flatten().map(|q| q.2)),
        )
        .filter(|y| y.is_finite())
        .fold(f64::NEG_INFINITY, f64::max);
    for c in p.curves.iter().filter(|c| c.dashed) {
        for (_, y) in c.points.iter().flatten() {
            if !data_hi.is_finite() || *y <= 3.0 * data_hi.abs() {
                see(*y);
            }
        }
    }
    padded_range(lo, hi, 0.08, 0.1)
}

/// Sorted order of the points by their x value.
fn order_by(xs: &[f64]) -> Vec<usize> {
    let mut o: Vec<usize> = (0..xs.len()).filter(|&k| xs[k].is_finite()).collect();
    o.sort_by(|&a, &b| xs[a].total_cmp(&xs[b]));
    o
}

/// Stacked panels against a swept variable, DCM points shaded.
#[allow(clippy::too_many_arguments)]
fn draw_sweep(
    root: &Area,
    title: &str,
    subtitle: &str,
    path: &str,
    xs: &[f64],
    modes: &[Option<String>],
    verdicts: &[PointVerdict],
    panels: &[SweepPanel],
) -> Result<()> {
    let failed: Vec<bool> = verdicts
        .iter()
        .map(|v| *v == PointVerdict::NotRun)
        .collect();
    let body = page(root, title, subtitle)?;
    let areas = stacked(&body, panels.len());
    let x_lo = xs.iter().copied().fold(f64::INFINITY, f64::min);
    let x_hi = xs.iter().copied().fold(f64::NEG_INFINITY, f64::max);
    let x_axis = Axis::for_magnitude(x_lo.abs().max(x_hi.abs()));
    let pad = if x_hi > x_lo {
        0.02 * (x_hi - x_lo)
    } else {
        0.05 * x_hi.abs().max(1e-12)
    };
    let xr = ((x_lo - pad) / x_axis.scale, (x_hi + pad) / x_axis.scale);
    let order = order_by(xs);
    let sorted: Vec<f64> = order.iter().map(|&k| xs[k]).collect();
    let e = edges(&sorted);
    let any_dcm = modes.iter().any(|m| m.as_deref() == Some("dcm"));
    let any_failed = failed.iter().any(|f| *f);
    for (k, (panel, area)) in panels.iter().zip(areas.iter()).enumerate() {
        let last = k + 1 == panels.len();
        let (plot_area, legend_area) = area.split_horizontally(WIDTH - LEGEND_WIDTH);
        let (lo, hi) = y_range(panel);
        let y_axis = if panel.prefixed {
            Axis::for_magnitude(lo.abs().max(hi.abs()))
        } else {
            Axis::plain()
        };
        let yr = (lo / y_axis.scale, hi / y_axis.scale);
        let mut chart = chart(&plot_area, &Frame::panel(last), xr, yr)?;
        // Shade DCM points first, under the grid and data.
        for (j, &kk) in order.iter().enumerate() {
            if modes[kk].as_deref() == Some("dcm") {
                let (a, b) = (e[j].max(x_lo - pad), e[j + 1].min(x_hi + pad));
                chart
                    .draw_series(std::iter::once(Rectangle::new(
                        [(a / x_axis.scale, yr.0), (b / x_axis.scale, yr.1)],
                        DCM_SHADE.filled(),
                    )))
                    .map_err(de)?;
            }
        }
        let y_desc = if panel.unit.is_empty() {
            panel.quantity.clone()
        } else {
            format!("{} ({}{})", panel.quantity, y_axis.prefix, panel.unit)
        };
        draw_mesh(
            &mut chart,
            Mesh {
                x_labels: 10,
                y_labels: 5,
                grid: GridLines::Both,
                label_px: 19,
                desc_px: 21,
                x_desc: last.then(|| field_title(path, &x_axis)),
                y_desc: Some(y_desc),
                x_fmt: &ticks(xr.1 - xr.0, 10),
                y_fmt: &ticks(yr.1 - yr.0, 5),
            },
        )?;
        let (sx, sy) = (x_axis.scale, y_axis.scale);
        if let Some(b) = &panel.band {
            // One polygon per run of points without a gap.
            let mut run: Vec<(f64, f64, f64)> = Vec::new();
            let mut runs = Vec::new();
            for &kk in &order {
                match b.points[kk] {
                    Some(p) => run.push(p),
                    None => runs.push(std::mem::take(&mut run)),
                }
            }
            runs.push(run);
            for r in runs.into_iter().filter(|r| r.len() > 1) {
                let mut poly: Vec<(f64, f64)> = r.iter().map(|p| (p.0 / sx, p.2 / sy)).collect();
                poly.extend(r.iter().rev().map(|p| (p.0 / sx, p.1 / sy)));
                chart
                    .draw_series(std::iter::once(Polygon::new(
                        poly,
                        lighten(b.color, 0.35).filled(),
                    )))
                    .map_err(de)?;
            }
        }
        for c in &panel.curves {
            let style = ShapeStyle::from(&c.color).stroke_width(if c.dashed { 2 } else { 3 });
            let mut seg: Vec<(f64, f64)> = Vec::new();
            let mut segs = Vec::new();
            for &kk in &order {
                match c.points[kk] {
                    // A limit line outside the panel's range is left out.
                    Some((x, y)) if !c.dashed || (lo..=hi).contains(&y) => {
                        seg.push((x / sx, y / sy))
                    }
                    _ => segs.push(std::mem::take(&mut seg)),
                }
            }
            segs.push(seg);
            for s in segs {
                if c.dashed {
                    dashed(&mut chart, s, style)?;
                } else {
                    if s.len() == 1 || order.len() <= 40 {
                        chart
                            .draw_series(s.iter().map(|&p| Circle::new(p, 4, c.color.filled())))
                            .map_err(de)?;
                    }
                    chart.draw_series(LineSeries::new(s, style)).map_err(de)?;
                }
            }
        }
        // Failed points: a red tick at the bottom of every panel.
        for (kk, f) in failed.iter().enumerate() {
            if *f {
                let x = xs[kk] / sx;
                let h = 0.08 * (yr.1 - yr.0);
                chart
                    .draw_series(std::iter::once(PathElement::new(
                        vec![(x, yr.0), (x, yr.0 + h)],
                        FAIL.stroke_width(4),
                    )))
                    .map_err(de)?;
            }
        }
        let mut y = 22;
        if let Some(b) = &panel.band {
            y = legend_entry(
                &legend_area,
                y,
                lighten(b.color, 0.35),
                Key::Swatch,
                &b.label,
            )?;
        }
        for c in &panel.curves {
            let off = c.dashed && !c.points.iter().flatten().any(|p| (lo..=hi).contains(&p.1));
            let label = if off {
                format!("{} (off the scale)", c.label)
            } else {
                c.label.clone()
            };
            let key = if c.dashed { Key::Dashed } else { Key::Line };
            y = legend_entry(&legend_area, y, c.color, key, &label)?;
        }
        if any_dcm {
            y = legend_entry(&legend_area, y, DCM_SHADE, Key::Swatch, "DCM (shaded)")?;
        }
        // Points that ran with a warning or a failing verdict: a triangle
        // at the top of every panel (amber: warning; red: fails).
        for (kk, v) in verdicts.iter().enumerate() {
            let Some(c) = verdict_colour(*v) else {
                continue;
            };
            let x = xs[kk] / sx;
            let y = yr.1 - 0.05 * (yr.1 - yr.0);
            chart
                .draw_series(std::iter::once(TriangleMarker::new((x, y), 9, c.filled())))
                .map_err(de)?;
        }
        if any_failed {
            y = legend_entry(
                &legend_area,
                y,
                FAIL,
                Key::Line,
                "failed point (tick at bottom)",
            )?;
        }
        // The verdict marks are explained once, beside the first panel.
        if k == 0 && verdicts.contains(&PointVerdict::Fail) {
            y = legend_entry(
                &legend_area,
                y,
                FAIL,
                Key::Line,
                "top mark: fails (saturation, no regulation)",
            )?;
        }
        if k == 0 && verdicts.contains(&PointVerdict::Warn) {
            legend_entry(
                &legend_area,
                y,
                WARN,
                Key::Line,
                "top mark: audible or duty > 95 %",
            )?;
        }
    }
    Ok(())
}

fn metric_points(t: &StudyTable, name: &str, scale: f64) -> Vec<Option<(f64, f64)>> {
    t.rows
        .iter()
        .map(|r| r.metric(name).map(|v| (r.input(0), v * scale)))
        .collect()
}

fn mode_words(t: &StudyTable) -> Vec<Option<String>> {
    t.rows
        .iter()
        .map(|r| r.mode().map(str::to_string))
        .collect()
}

/// Each point's verdict, as the sweep plots mark it (see
/// [`sim_core::study::rows::Manifest::check_point`]).
pub(crate) fn verdict_marks(t: &StudyTable) -> Vec<PointVerdict> {
    t.rows
        .iter()
        .map(|r| t.manifest.check_point(r).verdict)
        .collect()
}

/// The colour of a point's verdict mark (amber: warning; red: fails), or
/// none.
pub(crate) fn verdict_colour(v: PointVerdict) -> Option<RGBColor> {
    match v {
        PointVerdict::Warn => Some(WARN),
        PointVerdict::Fail => Some(FAIL),
        _ => None,
    }
}

/// The subtitle of a study plot: points, warm or cold start, failures.
pub(crate) fn subtitle(t: &StudyTable) -> String {
    let f = t.failed();
    let mut s = format!(
        "{} points   ·   {} start{}",
        t.rows.len(),
        if t.manifest.warm_start {
            "warm"
        } else {
            "cold"
        },
        if t.manifest.warm_start {
            " (each from its neighbour's steady state)"
        } else {
            " (each from power-on)"
        }
    );
    if f > 0 {
        s.push_str(&format!("   ·   {f} failed (see the CSV error column)"));
    }
    s
}

/// Writes the two 1-D sweep plots: currents (LED average with its
/// min–max band, ripple %, inductor peak against its saturation rating)
/// and operation (frequency, duty, efficiency).
pub fn sweep_1d(t: &StudyTable, current: &Path, operation: &Path) -> Result<()> {
    let path = t.manifest.inputs[0].clone();
    let xs: Vec<f64> = t.rows.iter().map(|r| r.input(0)).collect();
    let modes = mode_words(t);
    let verdicts = verdict_marks(t);
    let band = Band {
        label: "LED current min to max (ripple band)".into(),
        color: LED,
        points: t
            .rows
            .iter()
            .map(|r| {
                r.metric("led_current_min_a")
                    .zip(r.metric("led_current_max_a"))
                    .map(|(a, b)| (r.input(0), a, b))
            })
            .collect(),
    };
    let mut peak_curves = vec![Curve {
        label: "inductor peak current".into(),
        color: INDUCTOR,
        dashed: false,
        points: metric_points(t, "inductor_current_peak_a", 1.0),
    }];
    if let Some(sat) = t.manifest.inductor_saturation_a {
        peak_curves.push(Curve {
            label: format!("saturation rating {}", eng(sat, "A")),
            color: FAIL,
            dashed: true,
            points: t.rows.iter().map(|r| Some((r.input(0), sat))).collect(),
        });
    }
    let panels = [
        SweepPanel {
            quantity: "LED current".into(),
            unit: "A",
            prefixed: true,
            curves: vec![Curve {
                label: "LED current average".into(),
                color: LED_AVG,
                dashed: false,
                points: metric_points(t, "led_current_avg_a", 1.0),
            }],
            band: Some(band),
        },
        SweepPanel {
            quantity: "LED ripple".into(),
            unit: "%",
            prefixed: false,
            curves: vec![Curve {
                label: "peak-to-peak LED ripple, % of average".into(),
                color: VLED,
                dashed: false,
                points: metric_points(t, "led_current_ripple_pct", 1.0),
            }],
            band: None,
        },
        SweepPanel {
            quantity: "Inductor peak".into(),
            unit: "A",
            prefixed: true,
            curves: peak_curves,
            band: None,
        },
    ];
    let title = format!(
        "{} — {} sweep: LED current and inductor stress",
        t.manifest.scenario,
        field_name(&path)
    );
    let current_title = title;
    let current_panels = panels;
    let panels = [
        SweepPanel {
            quantity: "Frequency".into(),
            unit: "Hz",
            prefixed: true,
            curves: std::iter::once(Curve {
                label: "switching frequency".into(),
                color: INDUCTOR,
                dashed: false,
                points: metric_points(t, "switching_frequency_hz", 1.0),
            })
            .chain(frequency_limits(t))
            .collect(),
            band: None,
        },
        SweepPanel {
            quantity: "Duty".into(),
            unit: "%",
            prefixed: false,
            curves: vec![Curve {
                label: "duty cycle (on-time over period)".into(),
                color: VSW,
                dashed: false,
                points: metric_points(t, "duty", 100.0),
            }],
            band: None,
        },
        SweepPanel {
            quantity: "Efficiency".into(),
            unit: "%",
            prefixed: false,
            curves: vec![Curve {
                label: "efficiency (LED power over input power)".into(),
                color: EFFICIENCY,
                dashed: false,
                points: metric_points(t, "efficiency", 100.0),
            }],
            band: None,
        },
    ];
    let title = format!(
        "{} — {} sweep: frequency, duty, efficiency",
        t.manifest.scenario,
        field_name(&path)
    );
    // The two plots are drawn and encoded side by side.
    let (a, b) = rayon::join(
        || {
            render(current, |root| {
                draw_sweep(
                    root,
                    &current_title,
                    &subtitle(t),
                    &path,
                    &xs,
                    &modes,
                    &verdicts,
                    &current_panels,
                )
            })
        },
        || {
            render(operation, |root| {
                draw_sweep(
                    root,
                    &title,
                    &subtitle(t),
                    &path,
                    &xs,
                    &modes,
                    &verdicts,
                    &panels,
                )
            })
        },
    );
    a.and(b)
}

/// Lowest frequency of the audible band, Hz: switching below it can be
/// heard from the inductor and capacitors (common practice).
pub const AUDIBLE_LIMIT_HZ: f64 = 20e3;

/// The limit lines of the frequency panel: the audible limit, the
/// controller's highest frequency and, from its shortest on-time, the
/// highest frequency each point's duty allows (f = D / t_on,min).
fn frequency_limits(t: &StudyTable) -> Vec<Curve> {
    let xs: Vec<f64> = t.rows.iter().map(|r| r.input(0)).collect();
    let flat = |v: f64| xs.iter().map(|&x| Some((x, v))).collect::<Vec<_>>();
    let mut out = vec![Curve {
        label: "20 kHz (audible below)".into(),
        color: FAIL,
        dashed: true,
        points: flat(AUDIBLE_LIMIT_HZ),
    }];
    if let Some(f) = t.manifest.controller_max_frequency_hz {
        out.push(Curve {
            label: format!("controller max {}", eng(f, "Hz")),
            color: INK,
            dashed: true,
            points: flat(f),
        });
    }
    if let Some(ton) = t.manifest.controller_min_on_time_s.filter(|v| *v > 0.0) {
        out.push(Curve {
            label: format!("max at min on-time {}", eng(ton, "s")),
            color: INDUCTOR_LIGHT,
            dashed: true,
            points: t
                .rows
                .iter()
                .map(|r| r.metric("duty").map(|d| (r.input(0), d / ton)))
                .collect(),
        });
    }
    out
}

#[cfg(test)]
pub(crate) mod tests {
    use super::*;
    use sim_core::study::run::{Hooks, RunSettings};
    use sim_core::study::sweep::sweep;
    use sim_core::study::vary::{Grid, Vary};

    /// The sweep of `s` over the `--vary` specs, with default settings.
    pub(crate) fn sweep_of(s: &sim_core::Scenario, specs: &[&str]) -> StudyTable {
        let grid = Grid::new(specs.iter().map(|v| Vary::parse(v, s).unwrap()).collect()).unwrap();
        sweep(s, &grid, &RunSettings::default(), None, &Hooks::default())
    }

    /// The frequency panel carries the 20 kHz line and the controller's
    /// limits: its maximum frequency, and from its minimum on-time the
    /// highest frequency each point's duty allows (f = D / t_on,min: the
    /// on-time is D/f; Erickson & Maksimovic, 3rd ed., ch. 2).
    #[test]
    fn frequency_panel_has_the_limit_lines() {
        let mut s = sim_core::scenario::template();
        s.parts.controller.max_frequency_hz = Some(1e6);
        s.parts.controller.min_on_time_s = Some(200e-9);
        let t = sweep_of(&s, &["supply.voltage_v=10.5:14:3"]);
        let lines = frequency_limits(&t);
        assert_eq!(lines.len(), 3);
        assert!(lines[0]
            .points
            .iter()
            .all(|p| (p.unwrap().1 - 20e3).abs() < 1e-9));
        assert!(lines[1]
            .points
            .iter()
            .all(|p| (p.unwrap().1 - 1e6).abs() < 1e-6));
        for (r, p) in t.rows.iter().zip(&lines[2].points) {
            let d = r.metric("on_time_s").unwrap() / r.metric("period_s").unwrap();
            assert!((p.unwrap().1 - d / 200e-9).abs() < 1e-6 * p.unwrap().1);
        }
    }

    /// Points with a warning or a failing verdict are marked: a long off-
    /// time drops the frequency below 20 kHz (common practice: the upper
    /// limit of hearing) and a rating under the peak threshold fails all.
    #[test]
    fn sweep_marks_follow_the_verdicts() {
        let mut s = sim_core::scenario::template();
        s.inductor.inductance_h = 1e-3;
        let t = sweep_of(&s, &["controller.off_time_s=5u:60u:4"]);
        let marks = verdict_marks(&t);
        for (r, m) in t.rows.iter().zip(&marks) {
            let f = r.metric("switching_frequency_hz").unwrap();
            let want = if f < 20e3 {
                PointVerdict::Warn
            } else {
                PointVerdict::Ok
            };
            assert_eq!(*m, want, "{f} Hz");
        }
        assert!(marks.contains(&PointVerdict::Warn) && marks.contains(&PointVerdict::Ok));
    }
}
