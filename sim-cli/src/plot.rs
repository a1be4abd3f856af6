//! PNG plots of a run: the steady-state waveforms over the last few
//! cycles and the start-up transient from power-on.
//!
//! Rendered by plotters into an RGB buffer with the DejaVu Sans font
//! embedded in the binary (via the `dejavu` crate; Bitstream Vera licence)
//! and encoded with the `png` crate: no system font or graphics library
//! is used.

use crate::format::{eng, eng_exponent, pct, prefix};
use anyhow::{anyhow, Context, Result};
use plotters::coord::Shift;
use plotters::element::DashedPathElement;
use plotters::prelude::*;
use plotters::style::FontStyle;
use sim_core::metrics::ConductionMode;
use sim_core::parts::alternatives::{self, OperatingPoint};
use sim_core::parts::assess::Assessment;
use sim_core::record::{settle_time_s, Waveform, SETTLED_FRACTION};
use sim_core::record::{COL_IL, COL_ILED, COL_TIME, COL_VIN, COL_VLED, COL_VSW};
use sim_core::{Scenario, SimResult};
use std::path::Path;
use std::sync::Once;

/// Image width, px.
pub const WIDTH: u32 = 1600;
/// Image height, px.
pub const HEIGHT: u32 = 1000;
/// The font family name the plots register and use.
pub(crate) const FAMILY: &str = "sans-serif";
/// Width of the legend column at the right of each panel, px.
pub(crate) const LEGEND_WIDTH: u32 = 330;
/// Steady-state cycles shown (the last ones recorded).
pub const CYCLES_SHOWN: usize = 4;

// Our palette.
pub(crate) const INK: RGBColor = RGBColor(33, 37, 41);
pub(crate) const GRID: RGBColor = RGBColor(226, 229, 233);
pub(crate) const GRID_MAJOR: RGBColor = RGBColor(196, 201, 207);
pub(crate) const INDUCTOR: RGBColor = RGBColor(0, 105, 148);
pub(crate) const INDUCTOR_LIGHT: RGBColor = RGBColor(86, 170, 205);
pub(crate) const LED: RGBColor = RGBColor(222, 110, 20);
pub(crate) const LED_AVG: RGBColor = RGBColor(140, 45, 10);
pub(crate) const VLED: RGBColor = RGBColor(118, 62, 168);
const VLED_LIGHT: RGBColor = RGBColor(175, 140, 210);
pub(crate) const VSW: RGBColor = RGBColor(34, 120, 70);
pub(crate) const VIN: RGBColor = RGBColor(150, 118, 0);

static FONTS: Once = Once::new();

pub(crate) fn register_fonts() -> Result<()> {
    let mut ok = true;
    FONTS.call_once(|| {
        ok &= plotters::style::register_font(FAMILY, FontStyle::Normal, dejavu::sans::regular())
            .is_ok();
        ok &= plotters::style::register_font(FAMILY, FontStyle::Bold, dejavu::sans::bold()).is_ok();
    });
    if ok {
        Ok(())
    } else {
        Err(anyhow!("the embedded font could not be loaded"))
    }
}

pub(crate) fn font(size: u32) -> TextStyle<'static> {
    (FAMILY, size).into_font().color(&INK)
}

pub(crate) fn bold(size: u32) -> TextStyle<'static> {
    (FAMILY, size)
        .into_font()
        .style(FontStyle::Bold)
        .color(&INK)
}

pub(crate) fn de<E: std::fmt::Debug>(e: E) -> anyhow::Error {
    anyhow!("drawing failed: {e:?}")
}

/// Human names of scenario fields for axis titles, by JSON path (the
/// unit is added from the field's suffix). A path not listed is named
/// from its last two parts.
const FIELD_NAMES: [(&str, &str); 34] = [
    ("supply.voltage_v", "Supply voltage"),
    ("supply.source_resistance_ohm", "Source resistance"),
    ("input_capacitor.capacitance_f", "Input capacitance"),
    ("input_capacitor.esr_ohm", "Input capacitor ESR"),
    ("output_capacitor.capacitance_f", "Output capacitance"),
    ("output_capacitor.esr_ohm", "Output capacitor ESR"),
    ("switch.on_resistance_ohm", "Switch on-resistance"),
    ("diode.forward_voltage_v", "Diode forward voltage"),
    ("diode.series_resistance_ohm", "Diode series resistance"),
    ("diode.saturation_current_a", "Diode saturation current"),
    ("diode.emission_coefficient", "Diode emission coefficient"),
    ("diode.temperature_c", "Diode temperature"),
    ("inductor.inductance_h", "Inductance"),
    ("inductor.dcr_ohm", "Inductor winding resistance"),
    (
        "inductor.saturation_current_a",
        "Inductor saturation current",
    ),
    ("load.count", "LEDs in series"),
    ("load.series_resistance_ohm", "LED series resistance"),
    ("load.saturation_current_a", "LED saturation current"),
    ("load.emission_coefficient", "LED emission coefficient"),
    ("load.junction_temperature_c", "LED junction temperature"),
    ("load.resistance_ohm", "Load resistance"),
    ("load.knee_voltage_v", "LED knee voltage"),
    ("controller.peak_current_a", "Peak-current threshold"),
    ("controller.off_time_s", "Off-time"),
    ("controller.delay_s", "Turn-off delay"),
    ("controller.min_on_time_s", "Minimum on-time"),
    ("controller.upper_current_a", "Upper current threshold"),
    ("controller.lower_current_a", "Lower current threshold"),
    ("controller.frequency_hz", "Switching frequency"),
    ("controller.duty", "Duty cycle"),
    ("parts.ambient_temperature_c", "Ambient temperature"),
    ("parts.led_current_target_a", "LED current target"),
    ("simulation.samples_per_interval", "Samples per interval"),
    ("simulation.record_cycles", "Recorded cycles"),
];

/// The human name of a scenario field (`supply.voltage_v` → "Supply
/// voltage"), without its unit.
pub(crate) fn field_name(path: &str) -> String {
    if let Some((_, n)) = FIELD_NAMES.iter().find(|(p, _)| *p == path) {
        return (*n).to_string();
    }
    // Drop the unit suffix of the last part, name it after its section.
    let mut parts: Vec<&str> = path.split('.').filter(|p| !p.is_empty()).collect();
    let last = parts.pop().unwrap_or(path);
    let units = ["v", "a", "ohm", "h", "f", "s", "hz", "c", "pct"];
    let stem = match last.rsplit_once('_') {
        Some((a, u)) if units.contains(&u) => a,
        _ => last,
    };
    let section = parts.last().map(|p| p.replace('_', " "));
    let words = match section {
        Some(sec) => format!("{sec} {}", stem.replace('_', " ")),
        None => stem.replace('_', " "),
    };
    let mut c = words.chars();
    match c.next() {
        Some(f) => f.to_uppercase().chain(c).collect(),
        None => words,
    }
}

/// One signal on a panel.
struct Trace<'a> {
    label: String,
    color: RGBColor,
    width: u32,
    /// Mark every point with a dot (simulated points, not a dense curve).
    dots: bool,
    points: &'a [(f64, f64)],
}

/// A horizontal marker line with a label (average, peak, valley).
struct Marker {
    label: String,
    color: RGBColor,
    y: f64,
}

/// One panel of a stacked plot.
struct Panel<'a> {
    quantity: &'a str,
    unit: &'a str,
    traces: Vec<Trace<'a>>,
    markers: Vec<Marker>,
}

/// An axis scaled to an SI prefix: values are divided by `scale`.
pub(crate) struct Axis {
    pub(crate) scale: f64,
    pub(crate) prefix: &'static str,
}

impl Axis {
    pub(crate) fn for_magnitude(m: f64) -> Axis {
        let e = eng_exponent(m);
        Axis {
            scale: 10f64.powi(e),
            prefix: prefix(e),
        }
    }
}

fn y_range(panel: &Panel) -> (f64, f64) {
    let mut lo = f64::INFINITY;
    let mut hi = f64::NEG_INFINITY;
    for t in &panel.traces {
        for &(_, y) in t.points {
            lo = lo.min(y);
            hi = hi.max(y);
        }
    }
    for m in &panel.markers {
        lo = lo.min(m.y);
        hi = hi.max(m.y);
    }
    if !lo.is_finite() || !hi.is_finite() {
        return (0.0, 1.0);
    }
    // Always include zero when the data come near it, so a reader sees the
    // ripple against the whole value for currents and voltages close to 0.
    if lo > 0.0 && lo < 0.25 * hi {
        lo = 0.0;
    }
    let span = (hi - lo).max(1e-3 * hi.abs().max(lo.abs())).max(1e-12);
    (lo - 0.06 * span, hi + 0.08 * span)
}

fn draw_stack(
    root: &DrawingArea<BitMapBackend, Shift>,
    title: &str,
    subtitle: &str,
    x_desc: &str,
    x_range: (f64, f64),
    x_axis: &Axis,
    panels: &[Panel],
) -> Result<()> {
    root.fill(&WHITE).map_err(de)?;
    let (head, body) = root.split_vertically(96);
    head.draw(&Text::new(title.to_string(), (30, 16), bold(34)))
        .map_err(de)?;
    head.draw(&Text::new(subtitle.to_string(), (30, 60), font(22)))
        .map_err(de)?;
    let n = panels.len() as u32;
    let body_h = HEIGHT - 96;
    let bottom_extra = 70;
    let each = (body_h - bottom_extra) / n;
    let mut sizes: Vec<u32> = (1..n).map(|k| k * each).collect();
    sizes.sort_unstable();
    let breaks: Vec<i32> = sizes.iter().map(|s| *s as i32).collect();
    let areas = body.split_by_breakpoints(Vec::<i32>::new(), breaks);
    let xs = (x_range.0 / x_axis.scale, x_range.1 / x_axis.scale);
    for (k, (panel, area)) in panels.iter().zip(areas.iter()).enumerate() {
        let last = k + 1 == panels.len();
        let (plot_area, legend_area) = area.split_horizontally(WIDTH - LEGEND_WIDTH);
        let (lo, hi) = y_range(panel);
        let y_axis = Axis::for_magnitude(lo.abs().max(hi.abs()));
        let ys = (lo / y_axis.scale, hi / y_axis.scale);
        let (xd, yd) = (
            tick_decimals(xs.1 - xs.0, 12),
            tick_decimals(ys.1 - ys.0, 6),
        );
        let mut chart = ChartBuilder::on(&plot_area)
            .margin_left(20)
            .margin_right(24)
            .margin_top(10)
            .margin_bottom(if last { 10 } else { 6 })
            .x_label_area_size(if last { 70 } else { 0 })
            .y_label_area_size(110)
            .build_cartesian_2d(xs.0..xs.1, ys.0..ys.1)
            .map_err(de)?;
        let y_desc = format!("{} ({}{})", panel.quantity, y_axis.prefix, panel.unit);
        let x_fmt = |v: &f64| tick(*v, xd);
        let y_fmt = |v: &f64| tick(*v, yd);
        let mut mesh = chart.configure_mesh();
        mesh.x_labels(12)
            .y_labels(6)
            .light_line_style(GRID)
            .bold_line_style(GRID_MAJOR)
            .axis_style(INK)
            .label_style(font(19))
            .axis_desc_style(font(21))
            .y_desc(y_desc)
            .x_label_formatter(&x_fmt)
            .y_label_formatter(&y_fmt);
        if last {
            mesh.x_desc(x_desc);
        }
        mesh.draw().map_err(de)?;
        for t in &panel.traces {
            let style = ShapeStyle::from(&t.color).stroke_width(t.width);
            let sx = x_axis.scale;
            let sy = y_axis.scale;
            let pts: Vec<(f64, f64)> = t.points.iter().map(|&(x, y)| (x / sx, y / sy)).collect();
            draw_polyline(&mut chart, &pts, style)?;
            if t.dots {
                chart
                    .draw_series(
                        pts.iter()
                            .map(|&p| Circle::new(p, 5 + t.width, t.color.filled())),
                    )
                    .map_err(de)?;
            }
        }
        for m in &panel.markers {
            let style = ShapeStyle::from(&m.color).stroke_width(2);
            let y = m.y / y_axis.scale;
            chart
                .draw_series(DashedLineSeries::new(
                    vec![(xs.0, y), (xs.1, y)],
                    10,
                    7,
                    style,
                ))
                .map_err(de)?;
        }
        draw_legend(&legend_area, panel)?;
    }
    root.present().map_err(de)?;
    Ok(())
}

/// Draws a polyline as separate segments. A stroke wider than one pixel
/// drawn as one path is outlined with mitred joins, and where a trace
/// turns back on itself (the zigzag of a min–max envelope) the inner
/// mitre point lands far beyond both segments: a spike the data do not
/// have. Separate segments have no joins, so nothing is drawn beyond the
/// points themselves (by more than half the stroke width).
pub(crate) fn draw_polyline<DB: DrawingBackend>(
    chart: &mut ChartContext<
        '_,
        DB,
        Cartesian2d<plotters::coord::types::RangedCoordf64, plotters::coord::types::RangedCoordf64>,
    >,
    pts: &[(f64, f64)],
    style: ShapeStyle,
) -> Result<()> {
    if pts.len() == 1 {
        chart
            .draw_series(std::iter::once(Circle::new(pts[0], 1, style.filled())))
            .map_err(|e| anyhow!("drawing failed: {e:?}"))?;
        return Ok(());
    }
    chart
        .draw_series(
            pts.windows(2)
                .map(|w| PathElement::new(vec![w[0], w[1]], style)),
        )
        .map_err(|e| anyhow!("drawing failed: {e:?}"))?;
    // Round joins for wide strokes of short (dense-curve) traces, so the
    // corners show no notches.
    let w = style.stroke_width;
    if w >= 3 && pts.len() <= 2000 {
        chart
            .draw_series(pts.iter().map(|&p| Circle::new(p, w / 2, style.filled())))
            .map_err(|e| anyhow!("drawing failed: {e:?}"))?;
    }
    Ok(())
}

/// The legend beside a panel, in its own column so it never covers data:
/// a solid line sample for each trace, a dashed one for each marker.
fn draw_legend(area: &DrawingArea<BitMapBackend, Shift>, panel: &Panel) -> Result<()> {
    let x0 = 8;
    let mut y = 22;
    let line = |y: i32, color: RGBColor, dashed: bool| -> Result<()> {
        if dashed {
            area.draw(&DashedPathElement::new(
                vec![(x0, y), (x0 + 34, y)],
                7,
                5,
                color.stroke_width(3),
            ))
            .map_err(de)
        } else {
            area.draw(&PathElement::new(
                vec![(x0, y), (x0 + 34, y)],
                color.stroke_width(4),
            ))
            .map_err(de)
        }
    };
    let entries = panel
        .traces
        .iter()
        .map(|t| (t.label.as_str(), t.color, false))
        .chain(
            panel
                .markers
                .iter()
                .map(|m| (m.label.as_str(), m.color, true)),
        );
    for (label, color, dashed) in entries {
        line(y, color, dashed)?;
        let lines = wrap(label, 27);
        for (k, part) in lines.iter().enumerate() {
            area.draw(&Text::new(
                part.clone(),
                (x0 + 44, y - 10 + 22 * k as i32),
                font(18),
            ))
            .map_err(de)?;
        }
        y += 32 + 22 * (lines.len() as i32 - 1);
    }
    Ok(())
}

/// Splits a label into lines of at most `width` characters at spaces.
pub(crate) fn wrap(text: &str, width: usize) -> Vec<String> {
    let mut lines = Vec::new();
    let mut cur = String::new();
    for word in text.split_whitespace() {
        if !cur.is_empty() && cur.chars().count() + 1 + word.chars().count() > width {
            lines.push(std::mem::take(&mut cur));
        }
        if !cur.is_empty() {
            cur.push(' ');
        }
        cur.push_str(word);
    }
    if !cur.is_empty() {
        lines.push(cur);
    }
    lines
}

/// Decimals that tell apart ticks spread over `span` in about `n` steps.
pub(crate) fn tick_decimals(span: f64, n: usize) -> usize {
    let step = span / n as f64;
    if step.is_nan() || step <= 0.0 || step.is_infinite() {
        return 2;
    }
    // One more than the step needs, in case the ticks fall on halves;
    // `tick` drops the trailing zeros this leaves on round values.
    (-step.log10()).ceil().clamp(0.0, 8.0) as usize + 1
}

/// A tick label with `decimals` decimals, trailing zeros dropped.
pub(crate) fn tick(v: f64, decimals: usize) -> String {
    let s = format!("{v:.decimals$}");
    let s = if s.contains('.') {
        s.trim_end_matches('0').trim_end_matches('.').to_string()
    } else {
        s
    };
    if s == "-0" {
        "0".into()
    } else {
        s.replace('-', "−")
    }
}

pub(crate) fn encode_png(path: &Path, buf: &[u8]) -> Result<()> {
    crate::output::write_atomic(path, |w| {
        let mut enc = png::Encoder::new(w, WIDTH, HEIGHT);
        enc.set_color(png::ColorType::Rgb);
        enc.set_depth(png::BitDepth::Eight);
        // The default deflate level: the best level took most of a
        // plotted run's time for files about 1 % smaller.
        enc.set_compression(png::Compression::Default);
        let mut writer = enc.write_header()?;
        writer.write_image_data(buf)?;
        writer.finish()?;
        Ok(())
    })
    .with_context(|| format!("cannot write {}", path.display()))
}

pub(crate) fn render(
    path: &Path,
    draw: impl FnOnce(&DrawingArea<BitMapBackend, Shift>) -> Result<()>,
) -> Result<()> {
    encode_png(path, &draw_buffer(draw)?)
}

/// Draws into a fresh RGB buffer of [`WIDTH`] × [`HEIGHT`].
pub(crate) fn draw_buffer(
    draw: impl FnOnce(&DrawingArea<BitMapBackend, Shift>) -> Result<()>,
) -> Result<Vec<u8>> {
    register_fonts()?;
    let mut buf = vec![255u8; (WIDTH * HEIGHT * 3) as usize];
    {
        let root = BitMapBackend::with_buffer(&mut buf, (WIDTH, HEIGHT)).into_drawing_area();
        draw(&root)?;
    }
    Ok(buf)
}

fn column_pairs(
    w: &Waveform,
    rows: std::ops::Range<usize>,
    col: usize,
    t0: f64,
) -> Vec<(f64, f64)> {
    rows.map(|r| (w.data[[r, COL_TIME]] - t0, w.data[[r, col]]))
        .collect()
}

/// The current traces: without an output capacitor the LED current is
/// the inductor current, so one trace says so instead of two drawn over
/// each other.
fn current_traces<'a>(same: bool, il: &'a [(f64, f64)], iled: &'a [(f64, f64)]) -> Vec<Trace<'a>> {
    if same {
        vec![Trace {
            label: "inductor current = LED current (no output capacitor)".into(),
            color: INDUCTOR,
            width: 2,
            dots: false,
            points: il,
        }]
    } else {
        vec![
            Trace {
                label: "inductor current".into(),
                color: INDUCTOR,
                width: 2,
                dots: false,
                points: il,
            },
            Trace {
                label: "LED current".into(),
                color: LED,
                width: 2,
                dots: false,
                points: iled,
            },
        ]
    }
}

/// The operating point in one line, for plot subtitles.
fn operating_point(s: &Scenario, r: &SimResult) -> String {
    let m = &r.metrics;
    let mode = match m.conduction_mode {
        ConductionMode::Ccm => "CCM",
        ConductionMode::Dcm => "DCM",
        ConductionMode::Boundary => "CCM/DCM boundary",
    };
    format!(
        "supply {}   ·   LED {} average, {} p-p ripple ({:.1} %)   ·   {}   ·   duty {}   ·   {}   ·   efficiency {}",
        eng(s.supply.voltage_v, "V"),
        eng(m.led_current_avg_a, "A"),
        eng(m.led_current_ripple_pp_a, "A"),
        m.led_current_ripple_pct,
        eng(m.switching_frequency_hz, "Hz"),
        pct(m.duty),
        mode,
        pct(m.efficiency)
    )
}

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

/// Writes the steady-state plot of the last [`CYCLES_SHOWN`] recorded
/// cycles: inductor and LED current with average, peak and valley marked;
/// the LED string voltage; the switch-node voltage.
pub fn steady_png(s: &Scenario, r: &SimResult, path: &Path) -> Result<()> {
    let w = &r.waveform;
    if w.is_empty() {
        return Err(anyhow!("no steady-state samples were recorded"));
    }
    let starts = &w.cycle_starts_s;
    let t_first = if starts.len() > CYCLES_SHOWN {
        starts[starts.len() - CYCLES_SHOWN]
    } else {
        starts.first().copied().unwrap_or(w.data[[0, COL_TIME]])
    };
    let first = (0..w.len())
        .find(|&k| w.data[[k, COL_TIME]] >= t_first)
        .unwrap_or(0);
    let rows = first..w.len();
    let t_end = w.data[[w.len() - 1, COL_TIME]];
    let shown = starts.len().min(CYCLES_SHOWN);
    let il = column_pairs(w, rows.clone(), COL_IL, t_first);
    let iled = column_pairs(w, rows.clone(), COL_ILED, t_first);
    let vled = column_pairs(w, rows.clone(), COL_VLED, t_first);
    let vsw = column_pairs(w, rows, COL_VSW, t_first);
    let m = &r.metrics;
    let same = s.output_capacitor.is_none();
    let valley = crate::report::clean_valley(m);
    let span = t_end - t_first;
    let x_axis = Axis::for_magnitude(span);
    let panels = [
        Panel {
            quantity: "Current",
            unit: "A",
            traces: current_traces(same, &il, &iled),
            markers: vec![
                Marker {
                    label: format!("inductor peak {}", eng(m.inductor_current_peak_a, "A")),
                    color: INDUCTOR,
                    y: m.inductor_current_peak_a,
                },
                Marker {
                    label: format!("inductor valley {}", eng(valley, "A")),
                    color: INDUCTOR_LIGHT,
                    y: valley,
                },
                Marker {
                    label: format!("LED average {}", eng(m.led_current_avg_a, "A")),
                    color: LED_AVG,
                    y: m.led_current_avg_a,
                },
            ],
        },
        Panel {
            quantity: "LED string voltage",
            unit: "V",
            traces: vec![Trace {
                label: "LED string voltage".into(),
                color: VLED,
                width: 2,
                dots: false,
                points: &vled,
            }],
            markers: vec![Marker {
                label: format!("average {}", eng(m.led_voltage_avg_v, "V")),
                color: VLED_LIGHT,
                y: m.led_voltage_avg_v,
            }],
        },
        Panel {
            quantity: "Switch node",
            unit: "V",
            traces: vec![Trace {
                label: "switch-node voltage".into(),
                color: VSW,
                width: 2,
                dots: false,
                points: &vsw,
            }],
            markers: vec![],
        },
    ];
    let title = format!(
        "{} — steady state, last {shown} switching cycles",
        r.scenario_name
    );
    let x_desc = format!("Time from the start of the window ({}s)", x_axis.prefix);
    render(path, |root| {
        draw_stack(
            root,
            &title,
            &operating_point(s, r),
            &x_desc,
            (0.0, span),
            &x_axis,
            &panels,
        )
    })
}

/// Reduces a long trace to at most two points (minimum and maximum, in
/// time order) per bucket, so a plot shows the true envelope of every
/// switching cycle without drawing hundreds of thousands of segments.
pub fn envelope(points: &[(f64, f64)], buckets: usize) -> Vec<(f64, f64)> {
    if points.len() <= 2 * buckets || buckets == 0 {
        return points.to_vec();
    }
    let t0 = points[0].0;
    let t1 = points[points.len() - 1].0;
    let width = (t1 - t0) / buckets as f64;
    let mut out = Vec::with_capacity(2 * buckets + 2);
    let mut k = 0;
    while k < points.len() {
        let b = (((points[k].0 - t0) / width) as usize).min(buckets - 1);
        let mut lo = points[k];
        let mut hi = points[k];
        let mut j = k;
        while j < points.len() && (((points[j].0 - t0) / width) as usize).min(buckets - 1) == b {
            if points[j].1 < lo.1 {
                lo = points[j];
            }
            if points[j].1 > hi.1 {
                hi = points[j];
            }
            j += 1;
        }
        if lo.0 <= hi.0 {
            out.push(lo);
            out.push(hi);
        } else {
            out.push(hi);
            out.push(lo);
        }
        k = j;
    }
    out
}

/// Bins of the start-up plot's min–max envelope.
pub const STARTUP_BINS: usize = 1400;

/// The plotted data of the start-up: each signal's min–max envelope (time
/// from power-on), the recording's end and the settling time.
#[derive(Debug, Clone)]
pub struct StartupSeries {
    /// Inductor current, A.
    pub il: Vec<(f64, f64)>,
    /// LED current, A.
    pub iled: Vec<(f64, f64)>,
    /// LED string voltage, V.
    pub vled: Vec<(f64, f64)>,
    /// Input-node voltage, V.
    pub vin: Vec<(f64, f64)>,
    /// The whole plotted span (start-up and the measured cycles), s.
    pub span_s: f64,
    /// When the start-up settled within [`SETTLED_FRACTION`] of steady
    /// state (the one rule both engines are measured by), s from
    /// power-on; `None` when the recording ended before.
    pub settled_s: Option<f64>,
    /// The end of the recorded start-up, s from power-on.
    pub recorded_s: f64,
}

/// The start-up's plotted data: the recorded start-up with the measured
/// steady cycles appended (placed right after it), reduced to a min–max
/// envelope of [`STARTUP_BINS`] bins.
pub fn startup_series(r: &SimResult) -> Result<StartupSeries> {
    let w = r
        .startup
        .as_ref()
        .filter(|w| !w.is_empty())
        .ok_or_else(|| anyhow!("the start-up transient was not recorded"))?;
    // Append the first measured cycles so the plot ends in steady state.
    let mut rows: Vec<[f64; 5]> = (0..w.len())
        .map(|k| {
            [
                w.data[[k, COL_TIME]],
                w.data[[k, COL_IL]],
                w.data[[k, COL_ILED]],
                w.data[[k, COL_VLED]],
                w.data[[k, COL_VIN]],
            ]
        })
        .collect();
    // The measured cycles come from the steady-state run, whose clock is
    // its own (shooting reaches them in a few cycles): they are placed
    // right after the recorded start-up.
    let ss = &r.waveform;
    let startup_end = w.data[[w.len() - 1, COL_TIME]];
    let shift = if ss.is_empty() {
        0.0
    } else {
        startup_end - ss.data[[0, COL_TIME]]
    };
    for k in 0..ss.len() {
        rows.push([
            ss.data[[k, COL_TIME]] + shift,
            ss.data[[k, COL_IL]],
            ss.data[[k, COL_ILED]],
            ss.data[[k, COL_VLED]],
            ss.data[[k, COL_VIN]],
        ]);
    }
    let t0 = rows[0][0];
    let t_end = rows[rows.len() - 1][0];
    let pick = |c: usize| -> Vec<(f64, f64)> {
        let p: Vec<(f64, f64)> = rows.iter().map(|r| (r[0] - t0, r[c])).collect();
        envelope(&p, STARTUP_BINS)
    };
    Ok(StartupSeries {
        il: pick(1),
        iled: pick(2),
        vled: pick(3),
        vin: pick(4),
        span_s: t_end - t0,
        settled_s: settle_time_s(w, ss, r.metrics.led_current_avg_a, SETTLED_FRACTION),
        recorded_s: startup_end - t0,
    })
}

/// Writes the start-up plot, from power-on to steady state: inductor and
/// LED current with the steady-state LED average marked; the LED string
/// and input-node voltages.
pub fn startup_png(s: &Scenario, r: &SimResult, path: &Path) -> Result<()> {
    let StartupSeries {
        il,
        iled,
        vled,
        vin,
        span_s: span,
        settled_s,
        recorded_s,
    } = startup_series(r)?;
    let m = &r.metrics;
    let same = s.output_capacitor.is_none();
    let x_axis = Axis::for_magnitude(span);
    let mut markers = vec![Marker {
        label: format!("steady LED average {}", eng(m.led_current_avg_a, "A")),
        color: LED_AVG,
        y: m.led_current_avg_a,
    }];
    if let Some(sat) = s.inductor.saturation_current_a {
        if sat < 1.5 * m.inductor_current_peak_a.max(0.0) {
            markers.push(Marker {
                label: format!("inductor saturation rating {}", eng(sat, "A")),
                color: RGBColor(190, 30, 45),
                y: sat,
            });
        }
    }
    let panels = [
        Panel {
            quantity: "Current",
            unit: "A",
            traces: current_traces(same, &il, &iled),
            markers,
        },
        Panel {
            quantity: "Voltage",
            unit: "V",
            traces: vec![
                Trace {
                    label: "input node (after source resistance)".into(),
                    color: VIN,
                    width: 2,
                    dots: false,
                    points: &vin,
                },
                Trace {
                    label: "LED string voltage".into(),
                    color: VLED,
                    width: 2,
                    dots: false,
                    points: &vled,
                },
            ],
            markers: vec![],
        },
    ];
    let title = match settled_s {
        Some(t) => format!(
            "{} — start-up from power-on, within 0.1 % of steady state after {}",
            r.scenario_name,
            eng(t, "s")
        ),
        None => format!(
            "{} — start-up from power-on, not yet within 0.1 % of steady state at {}",
            r.scenario_name,
            eng(recorded_s, "s")
        ),
    };
    let x_desc = format!("Time from power-on ({}s)", x_axis.prefix);
    render(path, |root| {
        draw_stack(
            root,
            &title,
            &operating_point(s, r),
            &x_desc,
            (0.0, span),
            &x_axis,
            &panels,
        )
    })
}

#[cfg(test)]
mod tests {
    use super::*;

    use sim_core::parts::assess::{assess, AssessOptions};
    use sim_core::simulate::{simulate, EngineKind, RunOptions};

    /// A 12 V lamp of our own: three white LEDs (exponential model, about
    /// 3 V each at 0.7 A, illustrative values) behind a constant off-time
    /// buck with an output capacitor. Three LEDs are a stiff load: a few
    /// millivolts on the capacitor move the current by tens of mA.
    fn lamp(cap_f: f64, range: bool) -> Scenario {
        let range = if range {
            r#","input_range_v": {"min_v": 9, "max_v": 16}"#
        } else {
            ""
        };
        let json = format!(
            r#"{{
  "name": "lamp-12v",
  "supply": {{"voltage_v": 12, "source_resistance_ohm": 0.05{range}}},
  "input_capacitor": {{"capacitance_f": 10e-6, "esr_ohm": 0.01}},
  "switch": {{"on_resistance_ohm": 0.08}},
  "diode": {{"model": "fixed_drop", "forward_voltage_v": 0.35, "series_resistance_ohm": 0.03}},
  "inductor": {{"inductance_h": 33e-6, "dcr_ohm": 0.08}},
  "output_capacitor": {{"capacitance_f": {cap_f}, "esr_ohm": 0.02}},
  "load": {{"kind": "led_exponential", "count": 3, "saturation_current_a": 4.6e-18,
            "emission_coefficient": 2.4, "series_resistance_ohm": 0.1,
            "junction_temperature_c": 60}},
  "controller": {{"kind": "constant_off_time", "peak_current_a": 0.85,
                  "off_time_s": 1.5e-6, "delay_s": 50e-9, "min_on_time_s": 100e-9}}
}}"#
        );
        let mut s = Scenario::from_json_str(&json).expect("the test scenario loads");
        s.simulation.record_startup = true;
        s
    }

    fn run(s: &Scenario, engine: EngineKind) -> SimResult {
        let opts = RunOptions {
            engine,
            ..RunOptions::default()
        };
        simulate(s, &opts).expect("the test scenario runs")
    }

    /// Value of a piecewise-linear series at time t (series sorted by t).
    fn at(p: &[(f64, f64)], t: f64) -> f64 {
        let k = p.partition_point(|q| q.0 < t).clamp(1, p.len() - 1);
        let (a, b) = (p[k - 1], p[k]);
        if b.0 > a.0 {
            a.1 + (b.1 - a.1) * (t - a.0) / (b.0 - a.0)
        } else {
            b.1
        }
    }

    /// The start-up with an output capacitor: the exact engine's LED
    /// current follows the independent reference engine's at matched
    /// times, rises without steps between samples larger than the
    /// reference's own largest step (its physical slope, sampled alike),
    /// and both engines' settling times agree within 5 %. Before, the
    /// exact start-up stopped while its current was still several per
    /// cent low (the measured cycles then jumped up), and each engine's
    /// "within 0.1 %" meant something else (a factor of two apart).
    #[test]
    fn startup_engines_agree_with_an_output_capacitor() {
        let s = lamp(100e-6, false);
        let ex = run(&s, EngineKind::Exact);
        let rf = run(&s, EngineKind::Reference);
        let i_avg = rf.metrics.led_current_avg_a;
        let raw = |r: &SimResult| -> Vec<(f64, f64)> {
            let w = r.startup.as_ref().expect("start-up recorded");
            let t0 = w.data[[0, COL_TIME]];
            (0..w.len())
                .map(|k| (w.data[[k, COL_TIME]] - t0, w.data[[k, COL_ILED]]))
                .collect()
        };
        let (pe, pr) = (raw(&ex), raw(&rf));
        let t_end = pe.last().unwrap().0.min(pr.last().unwrap().0);
        for k in 1..200 {
            let t = t_end * f64::from(k) / 200.0;
            let (a, b) = (at(&pe, t), at(&pr, t));
            // 2 % of the average: the exact engine's fitted LED curve is
            // coarser near the knee, where the string barely conducts.
            assert!(
                (a - b).abs() <= 0.02 * i_avg,
                "t {t}: exact {a}, reference {b}"
            );
        }
        // Steps between consecutive plotted samples (start-up and the
        // measured cycles joined as plotted).
        let max_step = |r: &SimResult| {
            let w = r.startup.as_ref().unwrap();
            let ss = &r.waveform;
            let mut v: Vec<f64> = (0..w.len()).map(|k| w.data[[k, COL_ILED]]).collect();
            v.extend((0..ss.len()).map(|k| ss.data[[k, COL_ILED]]));
            v.windows(2)
                .map(|p| (p[1] - p[0]).abs())
                .fold(0.0, f64::max)
        };
        let (se, sr) = (max_step(&ex), max_step(&rf));
        assert!(
            se <= 2.0 * sr + 1e-3 * i_avg,
            "exact step {se} A, reference {sr} A"
        );
        let (te, tr) = (
            startup_series(&ex).unwrap().settled_s,
            startup_series(&rf).unwrap().settled_s,
        );
        let (te, tr) = (te.expect("exact settled"), tr.expect("reference settled"));
        assert!(
            (te - tr).abs() <= 0.05 * tr,
            "settled after {te} s vs {tr} s"
        );
    }

    /// The plotted start-up envelope never leaves the true range of the
    /// samples in its bin, and the drawn picture stays within the range
    /// of the data: a zigzag envelope drawn as one wide polyline put
    /// mitre spikes far beyond both (a 1 mF output capacitor drew spikes
    /// hundreds of mA beyond a settled waveform).
    #[test]
    fn startup_envelope_stays_within_the_samples() {
        let s = lamp(1e-3, false);
        let r = run(&s, EngineKind::Exact);
        let series = startup_series(&r).unwrap();
        let w = r.startup.as_ref().unwrap();
        let t0 = w.data[[0, COL_TIME]];
        let mut all: Vec<(f64, f64)> = (0..w.len())
            .map(|k| (w.data[[k, COL_TIME]] - t0, w.data[[k, COL_IL]]))
            .collect();
        let shift = w.data[[w.len() - 1, COL_TIME]] - t0 - r.waveform.data[[0, COL_TIME]];
        all.extend((0..r.waveform.len()).map(|k| {
            (
                r.waveform.data[[k, COL_TIME]] + shift,
                r.waveform.data[[k, COL_IL]],
            )
        }));
        let width = series.span_s / STARTUP_BINS as f64;
        for &(t, y) in &series.il {
            let b = ((t / width) as usize).min(STARTUP_BINS - 1);
            let (lo, hi) = all
                .iter()
                .filter(|p| ((p.0 / width) as usize).min(STARTUP_BINS - 1) == b)
                .fold((f64::INFINITY, f64::NEG_INFINITY), |(l, h), p| {
                    (l.min(p.1), h.max(p.1))
                });
            assert!(
                y >= lo - 1e-12 && y <= hi + 1e-12,
                "bin {b}: {y} outside {lo}..{hi}"
            );
        }
    }

    /// Pixels of one colour in the plot area (left of the legends).
    fn rows_of(buf: &[u8], c: RGBColor) -> Vec<u32> {
        let mut rows = Vec::new();
        for y in 0..HEIGHT {
            for x in 0..(WIDTH - LEGEND_WIDTH) {
                let k = ((y * WIDTH + x) * 3) as usize;
                if buf[k] == c.0 && buf[k + 1] == c.1 && buf[k + 2] == c.2 {
                    rows.push(y);
                    break;
                }
            }
        }
        rows
    }

    /// A fast zigzag (a settled switching waveform seen from afar) drawn
    /// as its min–max envelope: no trace pixel above the line marking
    /// its maximum or below the line marking its minimum, beyond the
    /// stroke's half width. The written file is a valid PNG.
    #[test]
    fn drawn_envelope_has_no_spikes() {
        let p: Vec<(f64, f64)> = (0..60_000)
            .map(|k| {
                let ph = (k % 13) as f64 / 13.0;
                let y = 0.53 + 0.47 * (1.0 - (2.0 * ph - 1.0).abs()) + 1e-4 * (k as f64).sin();
                (k as f64 * 1e-7, y)
            })
            .collect();
        let env = envelope(&p, STARTUP_BINS);
        let (lo, hi) = env
            .iter()
            .fold((f64::INFINITY, f64::NEG_INFINITY), |(l, h), q| {
                (l.min(q.1), h.max(q.1))
            });
        let panels = [Panel {
            quantity: "Current",
            unit: "A",
            traces: vec![Trace {
                label: "inductor current".into(),
                color: INDUCTOR,
                width: 2,
                dots: false,
                points: &env,
            }],
            markers: vec![
                Marker {
                    label: "max".into(),
                    color: LED_AVG,
                    y: hi,
                },
                Marker {
                    label: "min".into(),
                    color: VIN,
                    y: lo,
                },
                Marker {
                    label: "zero".into(),
                    color: VLED,
                    y: 0.0,
                },
                Marker {
                    label: "two".into(),
                    color: VLED,
                    y: 2.0,
                },
            ],
        }];
        register_fonts().unwrap();
        let mut buf = vec![255u8; (WIDTH * HEIGHT * 3) as usize];
        {
            let root = BitMapBackend::with_buffer(&mut buf, (WIDTH, HEIGHT)).into_drawing_area();
            let x = Axis::for_magnitude(6e-3);
            draw_stack(&root, "t", "s", "x", (0.0, 6e-3), &x, &panels).unwrap();
        }
        let trace = rows_of(&buf, INDUCTOR);
        let top = *rows_of(&buf, LED_AVG).first().unwrap();
        let bottom = *rows_of(&buf, VIN).last().unwrap();
        assert!(!trace.is_empty());
        let (t_top, t_bottom) = (trace[0], *trace.last().unwrap());
        assert!(
            t_top + 3 >= top && t_bottom <= bottom + 3,
            "trace rows {t_top}..{t_bottom}, data rows {top}..{bottom}"
        );
        let dir = std::env::temp_dir().join(format!("chopwave-plot-{}", std::process::id()));
        std::fs::create_dir_all(&dir).unwrap();
        let f = dir.join("zigzag.png");
        encode_png(&f, &buf).unwrap();
        let dec = png::Decoder::new(std::io::BufReader::new(std::fs::File::open(&f).unwrap()));
        let mut reader = dec.read_info().unwrap();
        let mut out = vec![0; reader.output_buffer_size()];
        let info = reader.next_frame(&mut out).unwrap();
        assert_eq!((info.width, info.height), (WIDTH, HEIGHT));
        assert_eq!(&out[..info.buffer_size()], &buf[..]);
        let _ = std::fs::remove_dir_all(&dir);
    }

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

    #[test]
    fn axis_titles_use_human_names() {
        assert_eq!(field_name("supply.voltage_v"), "Supply voltage");
        assert_eq!(field_name("inductor.inductance_h"), "Inductance");
        assert_eq!(field_name("parts.switch.rise_time_s"), "Switch rise time");
        assert_eq!(
            field_name("controller.hysteresis_pct"),
            "Controller hysteresis"
        );
        for (p, _) in FIELD_NAMES {
            assert!(!field_name(p).contains('.') && !field_name(p).contains('_'));
        }
    }

    #[test]
    fn envelope_keeps_extremes() {
        let p: Vec<(f64, f64)> = (0..10_000)
            .map(|k| (k as f64, if k == 5_001 { 9.0 } else { (k % 7) as f64 }))
            .collect();
        let e = envelope(&p, 100);
        assert!(e.len() <= 200);
        assert!(e.iter().any(|&(_, y)| (y - 9.0).abs() < 1e-12));
        assert!(e.windows(2).all(|w| w[0].0 <= w[1].0));
    }

    #[test]
    fn ticks_tell_close_values_apart() {
        let d = tick_decimals(0.003, 6);
        assert_ne!(tick(34.7975, d), tick(34.798, d));
        assert_eq!(tick(2.5, tick_decimals(10.0, 6)), "2.5");
        assert_eq!(tick(-0.0001, 2), "0");
        assert_eq!(tick(120.0, 0), "120");
    }
}
