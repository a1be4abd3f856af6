//! PNG maps over a 2-D sweep grid: conduction mode (CCM, boundary, DCM)
//! or a metric on our colour scale, cell by cell, with the nominal design
//! ringed, points with a warning or failing verdict marked, and an
//! optional curve over it (the traced CCM/DCM boundary).

use super::canvas::{
    bold, chart, de, draw_mesh, edges, font, legend_entry, page, render, tick, tick_decimals,
    ticks, Axis, Frame, GridLines, Key, Mesh, FAIL, INK, LEGEND_WIDTH, WARN, WIDTH,
};
use super::names::field_title;
use super::sweep::{subtitle, verdict_colour, verdict_marks};
use crate::format::eng;
use anyhow::Result;
use plotters::prelude::*;
use plotters::style::text_anchor::{HPos, Pos, VPos};
use sim_core::study::rows::{PointVerdict, Row, RowExt, StudyTable};
use std::path::Path;

const CCM_FILL: RGBColor = RGBColor(118, 168, 206);
const BOUNDARY_FILL: RGBColor = RGBColor(242, 196, 88);
const DCM_FILL: RGBColor = RGBColor(222, 116, 104);
const FAILED_FILL: RGBColor = RGBColor(160, 160, 160);

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
    // The cell of a row: its indices in `xv` and `yv`.
    let cell = |r: &Row| {
        let (x, y) = (r.input(0), r.input(1));
        Some((
            xv.iter().position(|v| v.to_bits() == x.to_bits())?,
            yv.iter().position(|v| v.to_bits() == y.to_bits())?,
        ))
    };
    let sub = subtitle(t);
    render(out, |root| {
        let body = page(root, title, &sub)?;
        let (plot_area, legend) = body.split_horizontally(WIDTH - LEGEND_WIDTH);
        let xr = (ex[0] / xa.scale, ex[ex.len() - 1] / xa.scale);
        let yr = (ey[0] / ya.scale, ey[ey.len() - 1] / ya.scale);
        let frame = Frame {
            left: 20,
            right: 24,
            top: 16,
            bottom: 10,
            x_labels: 70,
            y_labels: 120,
        };
        let mut chart = chart(&plot_area, &frame, xr, yr)?;
        draw_mesh(
            &mut chart,
            Mesh {
                x_labels: 10,
                y_labels: 8,
                grid: GridLines::Off,
                label_px: 19,
                desc_px: 21,
                x_desc: Some(field_title(&px, &xa)),
                y_desc: Some(field_title(&py, &ya)),
                x_fmt: &ticks(xr.1 - xr.0, 10),
                y_fmt: &ticks(yr.1 - yr.0, 8),
            },
        )?;
        for r in &t.rows {
            let Some((i, j)) = cell(r) else {
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
            let corners = [
                (ex[i] / xa.scale, ey[j] / ya.scale),
                (ex[i + 1] / xa.scale, ey[j + 1] / ya.scale),
            ];
            // Thin white cell borders keep cells apart.
            for style in [colour.filled(), WHITE.stroke_width(1)] {
                chart
                    .draw_series(std::iter::once(Rectangle::new(corners, style)))
                    .map_err(de)?;
            }
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
                let Some((i, j)) = cell(r) else {
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
            let Some(c) = verdict_colour(*v) else {
                continue;
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
            y = legend_entry(&legend, y, INK, Key::Line, "nominal design (ring)")?;
        }
        for (v, c, words) in [
            (
                PointVerdict::Fail,
                FAIL,
                "fails: saturation or not regulating",
            ),
            (
                PointVerdict::Warn,
                WARN,
                "warning: audible or duty near 100 %",
            ),
        ] {
            if marks.contains(&v) {
                y = legend_entry(&legend, y, c, Key::Line, words)?;
            }
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
                        y = legend_entry(&legend, y, c, Key::Swatch, l)?;
                    }
                }
                if t.any_failed() {
                    y = legend_entry(&legend, y, FAILED_FILL, Key::Swatch, "failed point")?;
                }
                if let Some((label, _)) = overlay {
                    legend_entry(&legend, y, INK, Key::Line, label)?;
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
                    legend_entry(
                        &legend,
                        bottom + 40,
                        FAILED_FILL,
                        Key::Swatch,
                        "failed point",
                    )?;
                }
            }
        }
        Ok(())
    })
}

/// Where the nominal design sits on a 2-D map (its two input values),
/// when both are plain numbers.
pub(crate) fn nominal_point(t: &StudyTable) -> Option<(f64, f64)> {
    match t.manifest.nominal_inputs.as_slice() {
        [Some(x), Some(y), ..] if x.is_finite() && y.is_finite() => Some((*x, *y)),
        _ => None,
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::plots::sweep::tests::sweep_of;

    /// A 2-D map marks the nominal design at the scenario's own values,
    /// and the LED current map's values are the rows' averages.
    #[test]
    fn maps_mark_the_nominal_design() {
        let s = sim_core::scenario::template();
        let t = sweep_of(
            &s,
            &[
                "supply.voltage_v=10.5:14:2",
                "inductor.inductance_h=47u:100u:2",
            ],
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
}
