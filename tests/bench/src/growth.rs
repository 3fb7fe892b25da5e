//! Growth: how a full request's cost grows with the number of takes
//! (1 → 16), the prompt's length (1 → 4 bars) and the model's size (the
//! demo model and a synthetic one about ten times larger).

use crate::engine_rows::{full_request, load_engine};
use crate::models::BenchModel;
use crate::timing::{self, Timing};
use anyhow::{anyhow, Result};
use nudgebar_engine::Engine;
use nudgebar_music::Phrase;
use serde::Serialize;
use std::hint::black_box;

#[derive(Debug, Clone, Serialize)]
pub struct GrowthRow {
    /// "takes", "bars" or "model".
    pub axis: String,
    pub label: String,
    pub timing: Timing,
    /// Best time over the first row of the same axis.
    pub relative: f64,
    /// Decoder rows the request ran (takes × bars, plus resampled takes).
    pub decoded_rows: usize,
    pub resampled: usize,
}

fn request_row(
    engine: &mut Engine,
    axis: &str,
    label: String,
    prompt: &Phrase,
    takes: usize,
) -> Result<GrowthRow> {
    let request = full_request(engine.axes().len(), takes);
    let variation = engine.vary(prompt, &request).map_err(|e| anyhow!("{e}"))?;
    let timing = timing::measure(|| {
        black_box(engine.vary(prompt, &request).expect("the request ran once"));
    });
    let bars = prompt.measures as usize;
    Ok(GrowthRow {
        axis: axis.into(),
        label,
        timing,
        relative: f64::NAN,
        decoded_rows: (variation.takes.len() + variation.holes.resampled as usize) * bars,
        resampled: variation.holes.resampled,
    })
}

/// `bars` holds the prompt at 1, 2, 3 and 4 bars.
pub fn run(demo: &BenchModel, large: &BenchModel, bars: &[Phrase]) -> Result<Vec<GrowthRow>> {
    let mut rows = Vec::new();
    let mut engine = load_engine(&demo.package)?;
    for takes in [1, 2, 4, 8, 16] {
        rows.push(request_row(
            &mut engine,
            "takes",
            format!("{takes} takes, 1 bar"),
            &bars[0],
            takes,
        )?);
    }
    for prompt in bars {
        let label = format!(
            "16 takes, {} bar{}",
            prompt.measures,
            if prompt.measures == 1 { "" } else { "s" }
        );
        rows.push(request_row(&mut engine, "bars", label, prompt, 16)?);
    }
    for model in [demo, large] {
        let mut engine = load_engine(&model.package)?;
        let label = format!(
            "{} ({:.2} M parameters), 16 takes",
            model.name,
            model.parameters as f64 / 1e6
        );
        rows.push(request_row(&mut engine, "model", label, &bars[0], 16)?);
    }
    for axis in ["takes", "bars", "model"] {
        let first = rows
            .iter()
            .find(|r| r.axis == axis)
            .map(|r| r.timing.best_us)
            .unwrap_or(f64::NAN);
        for r in rows.iter_mut().filter(|r| r.axis == axis) {
            r.relative = r.timing.best_us / first;
        }
    }
    Ok(rows)
}
