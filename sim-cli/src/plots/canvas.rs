//! The chart set-up every plot shares: the image size, the embedded font,
//! our palette, the page head (title and subtitle), stacked panels, the
//! chart frame and its grid, axes scaled to an SI prefix with their tick
//! labels, the legend column, and writing the PNG.
//!
//! Rendered by plotters into an RGB buffer with the DejaVu Sans font
//! embedded in the binary (via the `dejavu` crate; Bitstream Vera licence)
//! and encoded with the `png` crate: no system font or graphics library
//! is used.

use crate::format::{eng_exponent, prefix};
use anyhow::{anyhow, Context, Result};
use plotters::coord::types::RangedCoordf64;
use plotters::coord::Shift;
use plotters::element::DashedPathElement;
use plotters::prelude::*;
use plotters::style::FontStyle;
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
/// Height of the page head (title and subtitle), px.
pub(crate) const HEAD_HEIGHT: u32 = 96;
/// Room under stacked panels for the last one's x labels, px.
const STACK_FOOT: u32 = 70;

// Our palette.
pub(crate) const INK: RGBColor = RGBColor(33, 37, 41);
pub(crate) const GRID: RGBColor = RGBColor(226, 229, 233);
pub(crate) const GRID_MAJOR: RGBColor = RGBColor(196, 201, 207);
pub(crate) const INDUCTOR: RGBColor = RGBColor(0, 105, 148);
pub(crate) const INDUCTOR_LIGHT: RGBColor = RGBColor(86, 170, 205);
pub(crate) const LED: RGBColor = RGBColor(222, 110, 20);
pub(crate) const LED_AVG: RGBColor = RGBColor(140, 45, 10);
pub(crate) const VLED: RGBColor = RGBColor(118, 62, 168);
pub(crate) const VLED_LIGHT: RGBColor = RGBColor(175, 140, 210);
pub(crate) const VSW: RGBColor = RGBColor(34, 120, 70);
pub(crate) const VIN: RGBColor = RGBColor(150, 118, 0);
/// Limits, ratings and failing points.
pub(crate) const FAIL: RGBColor = RGBColor(190, 30, 45);
/// Points that ran with a warning.
pub(crate) const WARN: RGBColor = RGBColor(214, 150, 0);

/// A drawing area of a plot.
pub(crate) type Area<'a> = DrawingArea<BitMapBackend<'a>, Shift>;
/// A chart with plain `f64` axes.
pub(crate) type Chart<'a, 'b> =
    ChartContext<'a, BitMapBackend<'b>, Cartesian2d<RangedCoordf64, RangedCoordf64>>;

static FONTS: Once = Once::new();

/// Registers the embedded font (once per process).
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

/// Regular text of `size` px in ink.
pub(crate) fn font(size: u32) -> TextStyle<'static> {
    (FAMILY, size).into_font().color(&INK)
}

/// Bold text of `size` px in ink.
pub(crate) fn bold(size: u32) -> TextStyle<'static> {
    (FAMILY, size)
        .into_font()
        .style(FontStyle::Bold)
        .color(&INK)
}

/// A plotters drawing error as ours.
pub(crate) fn de<E: std::fmt::Debug>(e: E) -> anyhow::Error {
    anyhow!("drawing failed: {e:?}")
}

/// `c` blended with white: `a` of the colour, the rest white (opaque).
pub(crate) fn lighten(c: RGBColor, a: f64) -> RGBColor {
    let m = |v: u8| (255.0 - a * (255.0 - f64::from(v))).round() as u8;
    RGBColor(m(c.0), m(c.1), m(c.2))
}

/// An axis scaled to an SI prefix: values are divided by `scale`.
pub(crate) struct Axis {
    pub(crate) scale: f64,
    pub(crate) prefix: &'static str,
}

impl Axis {
    /// The prefix that shows values of magnitude `m` between 1 and 1000.
    pub(crate) fn for_magnitude(m: f64) -> Axis {
        let e = eng_exponent(m);
        Axis {
            scale: 10f64.powi(e),
            prefix: prefix(e),
        }
    }

    /// No prefix, values as they are (per cent, counts).
    pub(crate) fn plain() -> Axis {
        Axis {
            scale: 1.0,
            prefix: "",
        }
    }
}

/// The value range of an axis from the data's `lo..hi`: zero included
/// when the data come near it (a reader then sees a ripple against the
/// whole value), widened by `below` and `above` of the span; `0..1` when
/// there are no data.
pub(crate) fn padded_range(mut lo: f64, hi: f64, below: f64, above: f64) -> (f64, f64) {
    if !lo.is_finite() || !hi.is_finite() {
        return (0.0, 1.0);
    }
    if lo > 0.0 && lo < 0.25 * hi {
        lo = 0.0;
    }
    let span = (hi - lo).max(1e-3 * hi.abs().max(lo.abs())).max(1e-12);
    (lo - below * span, hi + above * span)
}

/// Cell edges around sorted centres: midpoints, half a step past the ends.
pub(crate) fn edges(c: &[f64]) -> Vec<f64> {
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

/// Paints the page white, writes the title and the subtitle in the head
/// and returns the area below it.
pub(crate) fn page<'a>(root: &Area<'a>, title: &str, subtitle: &str) -> Result<Area<'a>> {
    root.fill(&WHITE).map_err(de)?;
    let (head, body) = root.split_vertically(HEAD_HEIGHT);
    head.draw(&Text::new(title.to_string(), (30, 16), bold(34)))
        .map_err(de)?;
    head.draw(&Text::new(subtitle.to_string(), (30, 60), font(22)))
        .map_err(de)?;
    Ok(body)
}

/// `n` panels of equal height stacked in `body`, the last one with the
/// room for the x labels below it.
pub(crate) fn stacked<'a>(body: &Area<'a>, n: usize) -> Vec<Area<'a>> {
    let n = n as u32;
    let each = (HEIGHT - HEAD_HEIGHT - STACK_FOOT) / n;
    let breaks: Vec<i32> = (1..n).map(|k| (k * each) as i32).collect();
    body.split_by_breakpoints(Vec::<i32>::new(), breaks)
}

/// The margins of a chart and the room for its tick labels, px.
pub(crate) struct Frame {
    pub(crate) left: u32,
    pub(crate) right: u32,
    pub(crate) top: u32,
    pub(crate) bottom: u32,
    pub(crate) x_labels: u32,
    pub(crate) y_labels: u32,
}

impl Frame {
    /// A panel of a stack: only the last one carries x labels.
    pub(crate) fn panel(last: bool) -> Frame {
        Frame {
            left: 20,
            right: 24,
            top: 10,
            bottom: if last { 10 } else { 6 },
            x_labels: if last { 70 } else { 0 },
            y_labels: 110,
        }
    }
}

/// A chart over `xr` × `yr` in `area`.
pub(crate) fn chart<'a, 'b>(
    area: &'a Area<'b>,
    f: &Frame,
    xr: (f64, f64),
    yr: (f64, f64),
) -> Result<Chart<'a, 'b>> {
    ChartBuilder::on(area)
        .margin_left(f.left)
        .margin_right(f.right)
        .margin_top(f.top)
        .margin_bottom(f.bottom)
        .x_label_area_size(f.x_labels)
        .y_label_area_size(f.y_labels)
        .build_cartesian_2d(xr.0..xr.1, yr.0..yr.1)
        .map_err(de)
}

/// Which grid lines a chart draws.
#[derive(Clone, Copy, PartialEq, Eq)]
pub(crate) enum GridLines {
    /// Both directions.
    Both,
    /// Only at the x ticks (bars along y).
    Vertical,
    /// None (maps, whose cells fill the chart).
    Off,
}

/// The axes, grid and tick labels of a chart.
pub(crate) struct Mesh<'f> {
    pub(crate) x_labels: usize,
    pub(crate) y_labels: usize,
    pub(crate) grid: GridLines,
    /// Tick label size, px.
    pub(crate) label_px: u32,
    /// Axis title size, px.
    pub(crate) desc_px: u32,
    pub(crate) x_desc: Option<String>,
    pub(crate) y_desc: Option<String>,
    pub(crate) x_fmt: &'f dyn Fn(&f64) -> String,
    pub(crate) y_fmt: &'f dyn Fn(&f64) -> String,
}

/// Draws the axes, grid and tick labels of `chart`.
pub(crate) fn draw_mesh(chart: &mut Chart, m: Mesh) -> Result<()> {
    let mut mesh = chart.configure_mesh();
    mesh.x_labels(m.x_labels)
        .y_labels(m.y_labels)
        .light_line_style(GRID)
        .bold_line_style(GRID_MAJOR)
        .axis_style(INK)
        .label_style(font(m.label_px))
        .axis_desc_style(font(m.desc_px))
        .x_label_formatter(m.x_fmt)
        .y_label_formatter(m.y_fmt);
    match m.grid {
        GridLines::Both => {}
        GridLines::Vertical => {
            mesh.disable_y_mesh();
        }
        GridLines::Off => {
            mesh.disable_mesh();
        }
    }
    if let Some(d) = m.x_desc {
        mesh.x_desc(d);
    }
    if let Some(d) = m.y_desc {
        mesh.y_desc(d);
    }
    mesh.draw().map_err(de)
}

/// A dashed line through `pts` (limits, markers, medians).
pub(crate) fn dashed(chart: &mut Chart, pts: Vec<(f64, f64)>, style: ShapeStyle) -> Result<()> {
    chart
        .draw_series(DashedLineSeries::new(pts, 10, 7, style))
        .map_err(de)?;
    Ok(())
}

/// The sample drawn before a legend label.
#[derive(Clone, Copy, PartialEq, Eq)]
pub(crate) enum Key {
    /// A solid line (a trace, a mark).
    Line,
    /// A dashed line (a limit, a marker).
    Dashed,
    /// A filled box (a shaded band, a map colour).
    Swatch,
}

/// One legend entry at height `y` of the legend column: the key and the
/// label wrapped to the column; returns the height of the next entry.
pub(crate) fn legend_entry(
    area: &Area,
    y: i32,
    color: RGBColor,
    key: Key,
    label: &str,
) -> Result<i32> {
    let x0 = 8;
    match key {
        Key::Line => area
            .draw(&PathElement::new(
                vec![(x0, y), (x0 + 34, y)],
                color.stroke_width(4),
            ))
            .map_err(de)?,
        Key::Dashed => area
            .draw(&DashedPathElement::new(
                vec![(x0, y), (x0 + 34, y)],
                7,
                5,
                color.stroke_width(3),
            ))
            .map_err(de)?,
        Key::Swatch => area
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

/// The tick labels of an axis spanning `span` in about `n` steps.
pub(crate) fn ticks(span: f64, n: usize) -> impl Fn(&f64) -> String {
    let d = tick_decimals(span, n);
    move |v| tick(*v, d)
}

/// Writes the RGB pixels `buf` ([`WIDTH`] × [`HEIGHT`]) as a PNG at
/// `path`, atomically.
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

/// Draws a plot and writes it as a PNG at `path`.
pub(crate) fn render(path: &Path, draw: impl FnOnce(&Area) -> Result<()>) -> Result<()> {
    encode_png(path, &draw_buffer(draw)?)
}

/// Draws into a fresh RGB buffer of [`WIDTH`] × [`HEIGHT`].
pub(crate) fn draw_buffer(draw: impl FnOnce(&Area) -> Result<()>) -> Result<Vec<u8>> {
    register_fonts()?;
    let mut buf = vec![255u8; (WIDTH * HEIGHT * 3) as usize];
    {
        let root = BitMapBackend::with_buffer(&mut buf, (WIDTH, HEIGHT)).into_drawing_area();
        draw(&root)?;
        root.present().map_err(de)?;
    }
    Ok(buf)
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn ticks_tell_close_values_apart() {
        let d = tick_decimals(0.003, 6);
        assert_ne!(tick(34.7975, d), tick(34.798, d));
        assert_eq!(tick(2.5, tick_decimals(10.0, 6)), "2.5");
        assert_eq!(tick(-0.0001, 2), "0");
        assert_eq!(tick(120.0, 0), "120");
    }
}
