//! PNG plots of studies, in the look of the run plots (same fonts,
//! palette, legend column): sweep curves against the swept variable with
//! DCM shaded, 2-D conduction-mode maps and heat maps, the CCM/DCM
//! boundary curve over the mode map, and spread histograms with the spec
//! limits drawn.

use crate::format::eng;
use crate::plot::{
    bold, de, font, render, tick, tick_decimals, wrap, Axis, GRID, GRID_MAJOR, HEIGHT, INDUCTOR,
    INDUCTOR_LIGHT, INK, LED, LED_AVG, LEGEND_WIDTH, VLED, VSW, WIDTH,
};
use anyhow::Result;
use plotters::coord::Shift;
use plotters::element::DashedPathElement;
use plotters::prelude::*;
use plotters::style::text_anchor::{HPos, Pos, VPos};
use sim_core::study::rows::Row;
use sim_core::study::rows::{PointVerdict, RowExt, StudyTable};
use sim_core::study::spread::SpecLimits;
use sim_core::study::vary::unit_of;
use sim_core::units::Unit;
use std::path::Path;

const DCM_SHADE: RGBColor = RGBColor(250, 226, 218);
const FAIL: RGBColor = RGBColor(190, 30, 45);
const WARN: RGBColor = RGBColor(214, 150, 0);
const CCM_FILL: RGBColor = RGBColor(118, 168, 206);
const BOUNDARY_FILL: RGBColor = RGBColor(242, 196, 88);
const DCM_FILL: RGBColor = RGBColor(222, 116, 104);
const FAILED_FILL: RGBColor = RGBColor(160, 160, 160);
const EFFICIENCY: RGBColor = RGBColor(34, 120, 70);

/// `c` blended with white: `a` of the colour, the rest white (opaque).
fn lighten(c: RGBColor, a: f64) -> RGBColor {
    let m = |v: u8| (255.0 - a * (255.0 - f64::from(v))).round() as u8;
    RGBColor(m(c.0), m(c.1), m(c.2))
}

/// The unit symbol of a field, for axis titles (empty for ratios).
fn unit_symbol(path: &str) -> &'static str {
    match unit_of(path) {
        Unit::Ratio => "",
        Unit::Ohm => "Ω",
        Unit::Celsius => "°C",
        u => u.symbol(),
    }
}

/// An axis title for a swept field with its prefixed unit.
fn field_title(path: &str, axis: &Axis) -> String {
    let u = unit_symbol(path);
    let name = crate::plot::field_name(path);
    if u.is_empty() && axis.prefix.is_empty() {
        name
    } else {
        format!("{name} ({}{u})", axis.prefix)
    }
}

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

struct SweepPanel {
    quantity: String,
    unit: &'static str,
    /// Scale by an SI prefix (false for %).
    prefixed: bool,
    curves: Vec<Curve>,
    band: Option<Band>,
}

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
    if !lo.is_finite() {
        return (0.0, 1.0);
    }
    if lo > 0.0 && lo < 0.25 * hi {
        lo = 0.0;
    }
    let span = (hi - lo).max(1e-3 * hi.abs().max(lo.abs())).max(1e-12);
    (lo - 0.08 * span, hi + 0.1 * span)
}

/// Sorted order of the points by their x value.
fn order_by(xs: &[f64]) -> Vec<usize> {
    let mut o: Vec<usize> = (0..xs.len()).filter(|&k| xs[k].is_finite()).collect();
    o.sort_by(|&a, &b| xs[a].total_cmp(&xs[b]));
    o
}

/// Cell edges around sorted centres: midpoints, half a step past the ends.
fn edges(c: &[f64]) -> Vec<f64> {
    if c.len() == 1 {
        let w = (0.05 * c[0].abs()).max(1e-12);
        return vec![c[0] - w, c[0] + w];
    }
    let mut e = Vec::with_capacity(c.len() + 1);
    e.push(c[0] - 0.5 * (c[1] - c[0]));
    for w in c.windows(2) {
        e.push(0.5 * (w[0] + w[1]));
    }
    let n = c.len();
    e.push(c[n - 1] + 0.5 * (c[n - 1] - c[n - 2]));
    e
}

fn legend_line(
    area: &DrawingArea<BitMapBackend, Shift>,
    y: i32,
    color: RGBColor,
    kind: u8,
    label: &str,
) -> Result<i32> {
    let x0 = 8;
    match kind {
        0 => area
            .draw(&PathElement::new(
                vec![(x0, y), (x0 + 34, y)],
                color.stroke_width(4),
            ))
            .map_err(de)?,
        1 => area
            .draw(&DashedPathElement::new(
                vec![(x0, y), (x0 + 34, y)],
                7,
                5,
                color.stroke_width(3),
            ))
            .map_err(de)?,
        _ => area
            .draw(&Rectangle::new(
                [(x0, y - 9), (x0 + 34, y + 9)],
                color.filled(),
            ))
            .map_err(de)?,
    }
    let lines = wrap(label, 27);
    for (k, part) in lines.iter().enumerate() {
        area.draw(&Text::new(
            part.clone(),
            (x0 + 44, y - 10 + 22 * k as i32),
            font(18),
        ))
        .map_err(de)?;
    }
    Ok(y + 32 + 22 * (lines.len() as i32 - 1))
}

/// Stacked panels against a swept variable, DCM points shaded.
#[allow(clippy::too_many_arguments)]
fn draw_sweep(
    root: &DrawingArea<BitMapBackend, Shift>,
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
    root.fill(&WHITE).map_err(de)?;
    let (head, body) = root.split_vertically(96);
    head.draw(&Text::new(title.to_string(), (30, 16), bold(34)))
        .map_err(de)?;
    head.draw(&Text::new(subtitle.to_string(), (30, 60), font(22)))
        .map_err(de)?;
    let n = panels.len() as u32;
    let each = (HEIGHT - 96 - 70) / n;
    let breaks: Vec<i32> = (1..n).map(|k| (k * each) as i32).collect();
    let areas = body.split_by_breakpoints(Vec::<i32>::new(), breaks);
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
            Axis {
                scale: 1.0,
                prefix: "",
            }
        };
        let yr = (lo / y_axis.scale, hi / y_axis.scale);
        let (xd, yd) = (
            tick_decimals(xr.1 - xr.0, 10),
            tick_decimals(yr.1 - yr.0, 5),
        );
        let mut chart = ChartBuilder::on(&plot_area)
            .margin_left(20)
            .margin_right(24)
            .margin_top(10)
            .margin_bottom(if last { 10 } else { 6 })
            .x_label_area_size(if last { 70 } else { 0 })
            .y_label_area_size(110)
            .build_cartesian_2d(xr.0..xr.1, yr.0..yr.1)
            .map_err(de)?;
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
        let x_fmt = |v: &f64| tick(*v, xd);
        let y_fmt = |v: &f64| tick(*v, yd);
        let mut mesh = chart.configure_mesh();
        mesh.x_labels(10)
            .y_labels(5)
            .light_line_style(GRID)
            .bold_line_style(GRID_MAJOR)
            .axis_style(INK)
            .label_style(font(19))
            .axis_desc_style(font(21))
            .y_desc(y_desc)
            .x_label_formatter(&x_fmt)
            .y_label_formatter(&y_fmt);
        if last {
            mesh.x_desc(field_title(path, &x_axis));
        }
        mesh.draw().map_err(de)?;
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
                    chart
                        .draw_series(DashedLineSeries::new(s, 10, 7, style))
                        .map_err(de)?;
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
            y = legend_line(&legend_area, y, lighten(b.color, 0.35), 2, &b.label)?;
        }
        for c in &panel.curves {
            let off = c.dashed && !c.points.iter().flatten().any(|p| (lo..=hi).contains(&p.1));
            let label = if off {
                format!("{} (off the scale)", c.label)
            } else {
                c.label.clone()
            };
            y = legend_line(&legend_area, y, c.color, u8::from(c.dashed), &label)?;
        }
        if any_dcm {
            y = legend_line(&legend_area, y, DCM_SHADE, 2, "DCM (shaded)")?;
        }
        // Points that ran with a warning or a failing verdict: a triangle
        // at the top of every panel (amber: warning; red: fails).
        for (kk, v) in verdicts.iter().enumerate() {
            let c = match v {
                PointVerdict::Warn => WARN,
                PointVerdict::Fail => FAIL,
                _ => continue,
            };
            let x = xs[kk] / sx;
            let y = yr.1 - 0.05 * (yr.1 - yr.0);
            chart
                .draw_series(std::iter::once(TriangleMarker::new((x, y), 9, c.filled())))
                .map_err(de)?;
        }
        if any_failed {
            y = legend_line(&legend_area, y, FAIL, 0, "failed point (tick at bottom)")?;
        }
        // The verdict marks are explained once, beside the first panel.
        if k == 0 && verdicts.contains(&PointVerdict::Fail) {
            y = legend_line(
                &legend_area,
                y,
                FAIL,
                0,
                "top mark: fails (saturation, no regulation)",
            )?;
        }
        if k == 0 && verdicts.contains(&PointVerdict::Warn) {
            legend_line(&legend_area, y, WARN, 0, "top mark: audible or duty > 95 %")?;
        }
    }
    root.present().map_err(de)?;
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

/// Where the nominal design sits on a 2-D map (its two input values),
/// when both are plain numbers.
pub(crate) fn nominal_point(t: &StudyTable) -> Option<(f64, f64)> {
    match t.manifest.nominal_inputs.as_slice() {
        [Some(x), Some(y), ..] if x.is_finite() && y.is_finite() => Some((*x, *y)),
        _ => None,
    }
}

/// Each point's verdict, as the sweep plots mark it (see
/// [`sim_core::study::rows::Manifest::check_point`]).
pub(crate) fn verdict_marks(t: &StudyTable) -> Vec<PointVerdict> {
    t.rows
        .iter()
        .map(|r| t.manifest.check_point(r).verdict)
        .collect()
}

fn subtitle(t: &StudyTable) -> String {
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
        crate::plot::field_name(&path)
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
        crate::plot::field_name(&path)
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

/// Our colour scale for heat maps: deep blue, through teal, to sand.
fn scale_colour(f: f64) -> RGBColor {
    let stops = [
        (30.0, 45.0, 105.0),
        (25.0, 140.0, 140.0),
        (246.0, 206.0, 96.0),
    ];
    let f = f.clamp(0.0, 1.0) * 2.0;
    let k = (f.floor() as usize).min(1);
    let u = f - k as f64;
    let (a, b) = (stops[k], stops[k + 1]);
    let mix = |p: f64, q: f64| (p + u * (q - p)).round() as u8;
    RGBColor(mix(a.0, b.0), mix(a.1, b.1), mix(a.2, b.2))
}

/// How a 2-D map colours its cells.
#[derive(Debug, Clone, Copy)]
pub enum MapKind<'a> {
    /// Conduction mode: CCM, boundary, DCM, failed.
    Mode,
    /// A metric on a colour scale: (metric name, multiplier, title, unit).
    Heat(&'a str, f64, &'a str, &'a str),
}

/// Writes a 2-D map over the grid of a sweep table (first input along
/// x, second along y), with an optional curve (x, y) drawn over it.
pub fn grid_map(
    t: &StudyTable,
    kind: MapKind,
    title: &str,
    overlay: Option<(&str, &[(f64, f64)])>,
    out: &Path,
) -> Result<()> {
    let (px, py) = (t.manifest.inputs[0].clone(), t.manifest.inputs[1].clone());
    let mut xv: Vec<f64> = t.rows.iter().map(|r| r.input(0)).collect();
    let mut yv: Vec<f64> = t.rows.iter().map(|r| r.input(1)).collect();
    xv.sort_by(f64::total_cmp);
    xv.dedup_by(|a, b| a.to_bits() == b.to_bits());
    yv.sort_by(f64::total_cmp);
    yv.dedup_by(|a, b| a.to_bits() == b.to_bits());
    let (ex, ey) = (edges(&xv), edges(&yv));
    let xa = Axis::for_magnitude(ex[0].abs().max(ex[ex.len() - 1].abs()));
    let ya = Axis::for_magnitude(ey[0].abs().max(ey[ey.len() - 1].abs()));
    let value = |r: &Row| match kind {
        MapKind::Heat(m, k, _, _) => r.metric(m).map(|v| v * k),
        MapKind::Mode => None,
    };
    let vals: Vec<f64> = t
        .rows
        .iter()
        .filter_map(value)
        .filter(|v| v.is_finite())
        .collect();
    let vmin = vals.iter().copied().fold(f64::INFINITY, f64::min);
    let vmax = vals.iter().copied().fold(f64::NEG_INFINITY, f64::max);
    let sub = subtitle(t);
    render(out, |root| {
        root.fill(&WHITE).map_err(de)?;
        let (head, body) = root.split_vertically(96);
        head.draw(&Text::new(title.to_string(), (30, 16), bold(34)))
            .map_err(de)?;
        head.draw(&Text::new(sub.clone(), (30, 60), font(22)))
            .map_err(de)?;
        let (plot_area, legend) = body.split_horizontally(WIDTH - LEGEND_WIDTH);
        let xr = (ex[0] / xa.scale, ex[ex.len() - 1] / xa.scale);
        let yr = (ey[0] / ya.scale, ey[ey.len() - 1] / ya.scale);
        let (xd, yd) = (
            tick_decimals(xr.1 - xr.0, 10),
            tick_decimals(yr.1 - yr.0, 8),
        );
        let mut chart = ChartBuilder::on(&plot_area)
            .margin_left(20)
            .margin_right(24)
            .margin_top(16)
            .margin_bottom(10)
            .x_label_area_size(70)
            .y_label_area_size(120)
            .build_cartesian_2d(xr.0..xr.1, yr.0..yr.1)
            .map_err(de)?;
        let x_fmt = |v: &f64| tick(*v, xd);
        let y_fmt = |v: &f64| tick(*v, yd);
        chart
            .configure_mesh()
            .disable_mesh()
            .x_labels(10)
            .y_labels(8)
            .axis_style(INK)
            .label_style(font(19))
            .axis_desc_style(font(21))
            .x_desc(field_title(&px, &xa))
            .y_desc(field_title(&py, &ya))
            .x_label_formatter(&x_fmt)
            .y_label_formatter(&y_fmt)
            .draw()
            .map_err(de)?;
        for r in &t.rows {
            let (x, y) = (r.input(0), r.input(1));
            let (Some(i), Some(j)) = (
                xv.iter().position(|v| v.to_bits() == x.to_bits()),
                yv.iter().position(|v| v.to_bits() == y.to_bits()),
            ) else {
                continue;
            };
            let colour = match kind {
                MapKind::Mode => match r.mode() {
                    Some("ccm") => CCM_FILL,
                    Some("dcm") => DCM_FILL,
                    Some(_) => BOUNDARY_FILL,
                    None => FAILED_FILL,
                },
                MapKind::Heat(..) => match value(r) {
                    Some(v) if v.is_finite() => {
                        let span = vmax - vmin;
                        scale_colour(if span > 0.0 { (v - vmin) / span } else { 0.5 })
                    }
                    _ => FAILED_FILL,
                },
            };
            chart
                .draw_series(std::iter::once(Rectangle::new(
                    [
                        (ex[i] / xa.scale, ey[j] / ya.scale),
                        (ex[i + 1] / xa.scale, ey[j + 1] / ya.scale),
                    ],
                    colour.filled(),
                )))
                .map_err(de)?;
            // Thin white cell borders keep cells apart.
            chart
                .draw_series(std::iter::once(Rectangle::new(
                    [
                        (ex[i] / xa.scale, ey[j] / ya.scale),
                        (ex[i + 1] / xa.scale, ey[j + 1] / ya.scale),
                    ],
                    WHITE.stroke_width(1),
                )))
                .map_err(de)?;
        }
        // Values written in the cells when they fit (heat maps): per cent
        // to a tenth, other units in engineering notation.
        let cell_text = |v: f64| match kind {
            MapKind::Heat(_, _, _, u) if u != "%" => eng(v, u),
            _ => format!("{v:.1}"),
        };
        let cell_px = f64::from(WIDTH - LEGEND_WIDTH - 180) / xv.len() as f64;
        if matches!(kind, MapKind::Heat(..)) && cell_px >= 64.0 && yv.len() <= 24 {
            let span = vmax - vmin;
            for r in &t.rows {
                let Some(v) = value(r).filter(|v| v.is_finite()) else {
                    continue;
                };
                let (x, y) = (r.input(0), r.input(1));
                let (Some(i), Some(j)) = (
                    xv.iter().position(|q| q.to_bits() == x.to_bits()),
                    yv.iter().position(|q| q.to_bits() == y.to_bits()),
                ) else {
                    continue;
                };
                let f = if span > 0.0 { (v - vmin) / span } else { 0.5 };
                let ink = if f < 0.55 { WHITE } else { INK };
                let style = font(17)
                    .color(&ink)
                    .pos(Pos::new(HPos::Center, VPos::Center));
                let c = (
                    0.5 * (ex[i] + ex[i + 1]) / xa.scale,
                    0.5 * (ey[j] + ey[j + 1]) / ya.scale,
                );
                chart
                    .draw_series(std::iter::once(Text::new(cell_text(v), c, style)))
                    .map_err(de)?;
            }
        }
        // Points that ran with a warning or a failing verdict: a small
        // triangle in the cell (amber: warning; red: fails).
        let marks = verdict_marks(t);
        for (r, v) in t.rows.iter().zip(&marks) {
            let c = match v {
                PointVerdict::Warn => WARN,
                PointVerdict::Fail => FAIL,
                _ => continue,
            };
            let q = (r.input(0) / xa.scale, r.input(1) / ya.scale);
            chart
                .draw_series(std::iter::once(TriangleMarker::new(q, 8, c.filled())))
                .map_err(de)?;
        }
        // The nominal design: a ring.
        let nominal = nominal_point(t);
        if let Some((x, y)) = nominal {
            let q = (x / xa.scale, y / ya.scale);
            chart
                .draw_series([
                    Circle::new(q, 13, WHITE.stroke_width(6)),
                    Circle::new(q, 13, INK.stroke_width(3)),
                ])
                .map_err(de)?;
        }
        if let Some((_, pts)) = overlay {
            let p: Vec<(f64, f64)> = pts
                .iter()
                .map(|&(x, y)| (x / xa.scale, y / ya.scale))
                .collect();
            chart
                .draw_series(LineSeries::new(p.clone(), INK.stroke_width(4)))
                .map_err(de)?;
            chart
                .draw_series(p.iter().map(|&q| Circle::new(q, 6, INK.filled())))
                .map_err(de)?;
        }
        let mut y = 30;
        if nominal.is_some() {
            y = legend_line(&legend, y, INK, 0, "nominal design (ring)")?;
        }
        if marks.contains(&PointVerdict::Fail) {
            y = legend_line(&legend, y, FAIL, 0, "fails: saturation or not regulating")?;
        }
        if marks.contains(&PointVerdict::Warn) {
            y = legend_line(&legend, y, WARN, 0, "warning: audible or duty near 100 %")?;
        }
        match kind {
            MapKind::Mode => {
                let seen = |w: &str| t.rows.iter().any(|r| r.mode() == Some(w));
                for (w, c, l) in [
                    ("ccm", CCM_FILL, "CCM: current never reaches zero"),
                    ("boundary", BOUNDARY_FILL, "at the CCM/DCM boundary"),
                    ("dcm", DCM_FILL, "DCM: current rests at zero"),
                ] {
                    if seen(w) {
                        y = legend_line(&legend, y, c, 2, l)?;
                    }
                }
                if t.any_failed() {
                    y = legend_line(&legend, y, FAILED_FILL, 2, "failed point")?;
                }
                if let Some((label, _)) = overlay {
                    legend_line(&legend, y, INK, 0, label)?;
                }
            }
            MapKind::Heat(_, _, name, unit) => {
                legend
                    .draw(&Text::new(name.to_string(), (8, y - 12), bold(19)))
                    .map_err(de)?;
                let (top, bottom) = (y + 24, y + 24 + 500);
                for k in 0..(bottom - top) {
                    let f = 1.0 - k as f64 / f64::from(bottom - top - 1);
                    legend
                        .draw(&Rectangle::new(
                            [(12, top + k), (52, top + k + 1)],
                            scale_colour(f).filled(),
                        ))
                        .map_err(de)?;
                }
                let span = vmax - vmin;
                let d = tick_decimals(span.max(1e-9), 5);
                for k in 0..=5 {
                    let f = f64::from(k) / 5.0;
                    let v = vmax - f * span;
                    let yy = top as f64 + f * f64::from(bottom - top);
                    legend
                        .draw(&Text::new(
                            format!("{} {unit}", tick(v, d)),
                            (62, yy as i32 - 10),
                            font(18),
                        ))
                        .map_err(de)?;
                }
                if t.any_failed() {
                    legend_line(&legend, bottom + 40, FAILED_FILL, 2, "failed point")?;
                }
            }
        }
        root.present().map_err(de)?;
        Ok(())
    })
}

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
        root.fill(&WHITE).map_err(de)?;
        let (head, body) = root.split_vertically(96);
        head.draw(&Text::new(title.clone(), (30, 16), bold(34)))
            .map_err(de)?;
        head.draw(&Text::new(sub.clone(), (30, 60), font(22)))
            .map_err(de)?;
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
        root.present().map_err(de)?;
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
fn titled_with_marks<'a>(
    cell: &DrawingArea<BitMapBackend<'a>, Shift>,
    label: &str,
    marks: &[Mark],
) -> Result<DrawingArea<BitMapBackend<'a>, Shift>> {
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

/// Horizontal bars, one per corner (top to bottom in the table's order),
/// from the left edge of the value axis to the corner's value; spec limits
/// and the median as dashed lines.
fn corner_bars(
    cell: &DrawingArea<BitMapBackend, Shift>,
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
    let mut lo = vals.iter().copied().fold(f64::INFINITY, f64::min);
    let mut hi = vals.iter().copied().fold(f64::NEG_INFINITY, f64::max);
    for m in marks {
        lo = lo.min(m.x);
        hi = hi.max(m.x);
    }
    let span = (hi - lo).max(1e-9 * hi.abs().max(1e-30));
    let (lo, hi) = (lo - 0.08 * span, hi + 0.05 * span);
    let ax = if unit == "%" {
        Axis {
            scale: 1.0,
            prefix: "",
        }
    } else {
        Axis::for_magnitude(lo.abs().max(hi.abs()))
    };
    let n = items.len();
    let xr = (lo / ax.scale, hi / ax.scale);
    let xd = tick_decimals(xr.1 - xr.0, 6);
    let mut chart = ChartBuilder::on(&area)
        .margin_left(16)
        .margin_right(30)
        .margin_top(6)
        .margin_bottom(8)
        .x_label_area_size(56)
        .y_label_area_size(150)
        .build_cartesian_2d(xr.0..xr.1, -0.5..(n as f64 - 0.5))
        .map_err(de)?;
    let x_fmt = |v: &f64| tick(*v, xd);
    // Corner k is drawn at y = n − 1 − k, so the first is at the top.
    let y_fmt = |v: &f64| {
        let k = (n as f64 - 1.0 - v.round()) as usize;
        let name = items.get(k).map_or("", |i| i.0.as_str());
        name.chars().take(18).collect::<String>()
    };
    let unit_text = if unit == "%" {
        "%".to_string()
    } else {
        format!("{}{unit}", ax.prefix)
    };
    chart
        .configure_mesh()
        .x_labels(6)
        .y_labels(n.min(24))
        .disable_y_mesh()
        .light_line_style(GRID)
        .bold_line_style(GRID_MAJOR)
        .axis_style(INK)
        .label_style(font(16))
        .axis_desc_style(font(19))
        .x_desc(format!("{label} ({unit_text})"))
        .x_label_formatter(&x_fmt)
        .y_label_formatter(&y_fmt)
        .draw()
        .map_err(de)?;
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
    for m in marks {
        let x = m.x / ax.scale;
        chart
            .draw_series(DashedLineSeries::new(
                vec![(x, -0.5), (x, n as f64 - 0.5)],
                10,
                7,
                m.color.stroke_width(3),
            ))
            .map_err(de)?;
    }
    Ok(())
}

fn show(v: f64, unit: &str) -> String {
    if unit == "%" {
        format!("{v:.2} %")
    } else {
        eng(v, unit)
    }
}

fn histogram(
    cell: &DrawingArea<BitMapBackend, Shift>,
    label: &str,
    unit: &str,
    sorted: &[f64],
    marks: &[Mark],
) -> Result<()> {
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
    let mut lo = sorted[0];
    let mut hi = sorted[sorted.len() - 1];
    for m in marks {
        lo = lo.min(m.x);
        hi = hi.max(m.x);
    }
    let span = (hi - lo).max(1e-9 * hi.abs().max(1e-30));
    let (lo, hi) = (lo - 0.05 * span, hi + 0.05 * span);
    let bins = ((sorted.len() as f64).sqrt().round() as usize).clamp(8, 40);
    let d0 = sorted[0];
    let d1 = sorted[sorted.len() - 1];
    let w = ((d1 - d0) / bins as f64).max(span * 1e-6);
    let mut counts = vec![0usize; bins];
    for &v in sorted {
        let b = (((v - d0) / w) as usize).min(bins - 1);
        counts[b] += 1;
    }
    let top = counts.iter().copied().max().unwrap_or(1) as f64 * 1.12;
    let ax = if unit == "%" {
        Axis {
            scale: 1.0,
            prefix: "",
        }
    } else {
        Axis::for_magnitude(lo.abs().max(hi.abs()))
    };
    let xr = (lo / ax.scale, hi / ax.scale);
    let xd = tick_decimals(xr.1 - xr.0, 6);
    let mut chart = ChartBuilder::on(&area)
        .margin_left(16)
        .margin_right(30)
        .margin_top(6)
        .margin_bottom(8)
        .x_label_area_size(56)
        .y_label_area_size(90)
        .build_cartesian_2d(xr.0..xr.1, 0.0..top)
        .map_err(de)?;
    let x_fmt = |v: &f64| tick(*v, xd);
    let y_fmt = |v: &f64| tick(*v, 0);
    let unit_text = if unit == "%" {
        "%".to_string()
    } else {
        format!("{}{unit}", ax.prefix)
    };
    chart
        .configure_mesh()
        .x_labels(6)
        .y_labels(5)
        .light_line_style(GRID)
        .bold_line_style(GRID_MAJOR)
        .axis_style(INK)
        .label_style(font(17))
        .axis_desc_style(font(19))
        .x_desc(format!("{label} ({unit_text})"))
        .y_desc("samples")
        .x_label_formatter(&x_fmt)
        .y_label_formatter(&y_fmt)
        .draw()
        .map_err(de)?;
    chart
        .draw_series(counts.iter().enumerate().map(|(b, &c)| {
            let x0 = (d0 + b as f64 * w) / ax.scale;
            let x1 = (d0 + (b + 1) as f64 * w) / ax.scale;
            Rectangle::new([(x0, 0.0), (x1, c as f64)], INDUCTOR.mix(0.75).filled())
        }))
        .map_err(de)?;
    // White edges keep neighbouring bars of equal height apart.
    chart
        .draw_series(
            counts
                .iter()
                .enumerate()
                .filter(|(_, &c)| c > 0)
                .map(|(b, &c)| {
                    let x0 = (d0 + b as f64 * w) / ax.scale;
                    let x1 = (d0 + (b + 1) as f64 * w) / ax.scale;
                    Rectangle::new([(x0, 0.0), (x1, c as f64)], WHITE.stroke_width(1))
                }),
        )
        .map_err(de)?;
    for m in marks {
        let x = m.x / ax.scale;
        chart
            .draw_series(DashedLineSeries::new(
                vec![(x, 0.0), (x, top)],
                10,
                7,
                m.color.stroke_width(3),
            ))
            .map_err(de)?;
    }
    Ok(())
}

#[cfg(test)]
mod tests {
    use super::*;
    use sim_core::study::run::{Hooks, RunSettings};
    use sim_core::study::spread::{corners, Distribution, PartTolerance, Tolerances};
    use sim_core::study::sweep::sweep;
    use sim_core::study::vary::{Grid, Vary};

    fn grid(s: &sim_core::Scenario, specs: &[&str]) -> Grid {
        Grid::new(specs.iter().map(|v| Vary::parse(v, s).unwrap()).collect()).unwrap()
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
        let t = sweep(
            &s,
            &grid(&s, &["supply.voltage_v=10.5:14:3"]),
            &RunSettings::default(),
            None,
            &Hooks::default(),
        );
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

    /// A 2-D map marks the nominal design at the scenario's own values,
    /// and the LED current map's values are the rows' averages.
    #[test]
    fn maps_mark_the_nominal_design() {
        let s = sim_core::scenario::template();
        let t = sweep(
            &s,
            &grid(
                &s,
                &[
                    "supply.voltage_v=10.5:14:2",
                    "inductor.inductance_h=47u:100u:2",
                ],
            ),
            &RunSettings::default(),
            None,
            &Hooks::default(),
        );
        let (x, y) = nominal_point(&t).unwrap();
        assert!((x - 12.0).abs() < 1e-12 && (y - 68e-6).abs() < 1e-18);
        let dir = std::env::temp_dir().join(format!("chopwave-maps-{}", std::process::id()));
        std::fs::create_dir_all(&dir).unwrap();
        let f = dir.join("led.png");
        grid_map(
            &t,
            MapKind::Heat("led_current_avg_a", 1.0, "LED current", "A"),
            "t",
            None,
            &f,
        )
        .unwrap();
        assert!(
            png::Decoder::new(std::io::BufReader::new(std::fs::File::open(&f).unwrap()))
                .read_info()
                .is_ok()
        );
        let _ = std::fs::remove_dir_all(&dir);
    }

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

    /// Points with a warning or a failing verdict are marked: a long off-
    /// time drops the frequency below 20 kHz (common practice: the upper
    /// limit of hearing) and a rating under the peak threshold fails all.
    #[test]
    fn sweep_marks_follow_the_verdicts() {
        let mut s = sim_core::scenario::template();
        s.inductor.inductance_h = 1e-3;
        let t = sweep(
            &s,
            &grid(&s, &["controller.off_time_s=5u:60u:4"]),
            &RunSettings::default(),
            None,
            &Hooks::default(),
        );
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
