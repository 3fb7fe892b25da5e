//! The report's charts as SVG strings (plotters' SVG backend; text is left
//! to the browser's fonts, so nothing here needs a font file).

use crate::measure::{AxisFigures, LatentMap};
use plotters::prelude::*;

/// Size of each axis's steering chart, in pixels.
pub const AXIS_CHART: (u32, u32) = (520, 300);
/// Size of the latent map, in pixels.
pub const MAP_CHART: (u32, u32) = (560, 480);

const LINE: RGBColor = RGBColor(31, 92, 153);
const HOLES: RGBColor = RGBColor(196, 58, 40);
const HOLE_CELL: RGBColor = RGBColor(40, 40, 40);

fn failed<E: std::fmt::Debug>(e: E) -> String {
    format!("drawing the chart failed: {e:?}")
}

/// Range of the finite values, padded so a flat line is still drawn.
fn span_of(values: impl Iterator<Item = f64>) -> (f64, f64) {
    let (lo, hi) = values.fold((f64::INFINITY, f64::NEG_INFINITY), |(l, h), v| {
        (l.min(v), h.max(v))
    });
    if !lo.is_finite() {
        return (0.0, 1.0);
    }
    let pad = ((hi - lo) * 0.08).max(0.5);
    (lo - pad, hi + pad)
}

/// Mean measured attribute against the slider (line) and the hole rate
/// (red steps, on the same chart scaled to the attribute's range; the
/// right-hand axis reads it as a share).
pub fn axis_chart(axis: &AxisFigures, sliders: &[f32]) -> Result<String, String> {
    let mut svg = String::new();
    {
        let root = SVGBackend::with_string(&mut svg, AXIS_CHART).into_drawing_area();
        root.fill(&WHITE).map_err(failed)?;
        let (lo, hi) = span_of(axis.mean_response.iter().flatten().copied());
        let (x0, x1) = (
            *sliders.first().unwrap_or(&-1.0) as f64,
            *sliders.last().unwrap_or(&1.0) as f64,
        );
        let mut chart = ChartBuilder::on(&root)
            .caption(
                format!("{}: ρ = {:.2}", axis.label, axis.mean_rho),
                ("sans-serif", 16),
            )
            .margin(12)
            .x_label_area_size(36)
            .y_label_area_size(48)
            .right_y_label_area_size(40)
            .build_cartesian_2d(x0..x1, lo..hi)
            .map_err(failed)?
            .set_secondary_coord(x0..x1, 0.0..1.0);
        chart
            .configure_mesh()
            .x_desc("slider")
            .y_desc(axis.attribute.label())
            .draw()
            .map_err(failed)?;
        chart
            .configure_secondary_axes()
            .y_desc("hole rate")
            .draw()
            .map_err(failed)?;
        chart
            .draw_secondary_series(LineSeries::new(
                sliders
                    .iter()
                    .zip(&axis.hole_rate)
                    .map(|(s, h)| (*s as f64, *h)),
                HOLES.stroke_width(2),
            ))
            .map_err(failed)?;
        // Undefined points break the line rather than being invented.
        let mut run: Vec<(f64, f64)> = Vec::new();
        let mut runs = Vec::new();
        for (s, v) in sliders.iter().zip(&axis.mean_response) {
            match v {
                Some(v) => run.push((*s as f64, *v)),
                None => runs.push(std::mem::take(&mut run)),
            }
        }
        runs.push(run);
        for r in runs.into_iter().filter(|r| !r.is_empty()) {
            chart
                .draw_series(LineSeries::new(r, LINE.stroke_width(2)))
                .map_err(failed)?;
        }
        root.present().map_err(failed)?;
    }
    Ok(svg)
}

/// Colour for a value at `t` in 0–1: pale yellow to deep blue.
fn ramp(t: f64) -> RGBColor {
    let t = t.clamp(0.0, 1.0);
    let lerp = |a: f64, b: f64| (a + (b - a) * t).round() as u8;
    RGBColor(lerp(250.0, 24.0), lerp(240.0, 52.0), lerp(170.0, 130.0))
}

/// The attribute over (slider, latent offset); holes are dark cells with a
/// white cross, so they cannot be mistaken for a low value.
pub fn map_chart(map: &LatentMap) -> Result<String, String> {
    let mut svg = String::new();
    {
        let root = SVGBackend::with_string(&mut svg, MAP_CHART).into_drawing_area();
        root.fill(&WHITE).map_err(failed)?;
        let (lo, hi) = span_of(map.values.iter().flatten().flatten().copied());
        let half = |v: &[f32]| {
            if v.len() > 1 {
                (v[1] - v[0]) as f64 / 2.0
            } else {
                0.5
            }
        };
        let (hx, hy) = (half(&map.sliders), half(&map.offsets));
        let x = (
            map.sliders[0] as f64 - hx,
            *map.sliders.last().unwrap() as f64 + hx,
        );
        let y = (
            map.offsets[0] as f64 - hy,
            *map.offsets.last().unwrap() as f64 + hy,
        );
        let mut chart = ChartBuilder::on(&root)
            .caption(
                format!(
                    "{} across the {} slider and latent dimension {}",
                    map.attribute.label(),
                    map.axis.label().to_lowercase(),
                    map.dimension
                ),
                ("sans-serif", 16),
            )
            .margin(12)
            .x_label_area_size(36)
            .y_label_area_size(48)
            .build_cartesian_2d(x.0..x.1, y.0..y.1)
            .map_err(failed)?;
        chart
            .configure_mesh()
            .disable_mesh()
            .x_desc(format!("{} slider", map.axis.label()))
            .y_desc(format!("offset on dimension {}", map.dimension))
            .draw()
            .map_err(failed)?;
        for (r, &oy) in map.offsets.iter().enumerate() {
            for (c, &sx) in map.sliders.iter().enumerate() {
                let (cx, cy) = (sx as f64, oy as f64);
                let cell = [(cx - hx, cy - hy), (cx + hx, cy + hy)];
                let hole = map.holes[r][c] || map.values[r][c].is_none();
                let colour = match map.values[r][c] {
                    Some(v) if !hole => ramp((v - lo) / (hi - lo)),
                    _ => HOLE_CELL,
                };
                chart
                    .draw_series(std::iter::once(Rectangle::new(cell, colour.filled())))
                    .map_err(failed)?;
                if hole {
                    let (dx, dy) = (hx * 0.6, hy * 0.6);
                    chart
                        .draw_series([
                            PathElement::new(vec![(cx - dx, cy - dy), (cx + dx, cy + dy)], WHITE),
                            PathElement::new(vec![(cx - dx, cy + dy), (cx + dx, cy - dy)], WHITE),
                        ])
                        .map_err(failed)?;
                }
            }
        }
        root.present().map_err(failed)?;
    }
    Ok(svg)
}
