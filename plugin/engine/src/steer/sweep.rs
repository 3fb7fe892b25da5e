//! Slider sweeps and their monotonicity: decode one take per slider value
//! along an axis (no wander) and ask whether the measured attribute rises
//! with the slider. Shared by derived axes (how well a derived axis steers)
//! and the model report.

use crate::codec::{HoleReport, NoteChoice, PitchMask};
use crate::engine::{Engine, Prepared};
use crate::error::EngineError;
use nudgebar_music::attributes::Readout;
use nudgebar_music::{Grid, Phrase};
use serde::{Deserialize, Serialize};

/// One decoded point of a sweep.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct SweepPoint {
    pub slider: f32,
    pub attributes: Readout,
    /// The decode misbehaved here: an invalid token sequence, non-finite
    /// logits, or a measure left silent where the prompt played.
    pub hole: bool,
}

/// Decodes the codes `rows_per_take` rows at a time and reads each take
/// on its own, so each gets its own hole verdict.
pub fn decode_points(
    engine: &mut Engine,
    prepared: &Prepared,
    codes: &[f32],
) -> Result<Vec<(Readout, bool, Grid)>, EngineError> {
    let chunks = prepared.layout.chunks();
    let count = codes.len() / (chunks * engine.latent_size());
    let logits = engine.decode(codes, count * chunks)?;
    let mask = PitchMask::default();
    Ok((0..count)
        .map(|i| {
            let mut holes = HoleReport::default();
            let grid = engine.read_take(
                &logits,
                i * chunks,
                prepared,
                &NoteChoice::Argmax,
                i as u64,
                &mask,
                &mut holes,
            );
            let hole = holes.total() > 0 || silenced_a_measure(&prepared.grid, &grid);
            (Readout::of(&grid.to_phrase()), hole, grid)
        })
        .collect())
}

fn silenced_a_measure(prompt: &Grid, take: &Grid) -> bool {
    let spm = prompt.steps_per_measure;
    (0..prompt.measures as usize).any(|m| {
        let has = |g: &Grid| g.notes.iter().any(|n| n.start / spm == m);
        has(prompt) && !has(take)
    })
}

impl Engine {
    /// The prompt decoded at each slider value of axis `axis` (the other
    /// sliders at 0), with argmax note choice and no wander.
    pub fn sweep_axis(
        &mut self,
        prompt: &Phrase,
        axis: usize,
        sliders: &[f32],
    ) -> Result<Vec<SweepPoint>, EngineError> {
        let prepared = self.prepare(prompt)?;
        let base = self.encode(&prepared)?.mean;
        let size = self.latent_size();
        let mut codes = Vec::with_capacity(sliders.len() * base.len());
        for &s in sliders {
            let mut one = vec![0.0; self.axes().len()];
            one[axis] = s;
            let offset = self.offset_for(&one);
            codes.extend(base.iter().enumerate().map(|(i, b)| b + offset[i % size]));
        }
        Ok(decode_points(self, &prepared, &codes)?
            .into_iter()
            .zip(sliders)
            .map(|((attributes, hole, _), &slider)| SweepPoint {
                slider,
                attributes,
                hole,
            })
            .collect())
    }
}

/// Spearman's rank correlation: Pearson's r of the ranks, ties given their
/// average rank (the definition scipy.stats.spearmanr uses). `None` when
/// either side is constant or there are fewer than two pairs.
pub fn spearman(x: &[f64], y: &[f64]) -> Option<f64> {
    if x.len() != y.len() || x.len() < 2 {
        return None;
    }
    pearson(&ranks(x), &ranks(y))
}

fn ranks(v: &[f64]) -> Vec<f64> {
    let mut order: Vec<usize> = (0..v.len()).collect();
    order.sort_by(|&a, &b| v[a].total_cmp(&v[b]));
    let mut r = vec![0.0; v.len()];
    let mut i = 0;
    while i < order.len() {
        let mut j = i;
        while j + 1 < order.len() && v[order[j + 1]] == v[order[i]] {
            j += 1;
        }
        let avg = (i + j) as f64 / 2.0 + 1.0;
        for k in i..=j {
            r[order[k]] = avg;
        }
        i = j + 1;
    }
    r
}

fn pearson(x: &[f64], y: &[f64]) -> Option<f64> {
    let n = x.len() as f64;
    let (mx, my) = (x.iter().sum::<f64>() / n, y.iter().sum::<f64>() / n);
    let sxy: f64 = x.iter().zip(y).map(|(a, b)| (a - mx) * (b - my)).sum();
    let sxx: f64 = x.iter().map(|a| (a - mx).powi(2)).sum();
    let syy: f64 = y.iter().map(|b| (b - my).powi(2)).sum();
    (sxx > 1e-12 && syy > 1e-12).then(|| sxy / (sxx * syy).sqrt())
}

/// How well one axis steers its attribute over a set of prompts.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct Steering {
    /// Mean of the per-prompt ρ, with a prompt whose attribute did not move
    /// at all counted as 0 (the axis did nothing for it).
    pub mean_rho: f64,
    /// Spearman ρ between slider and measured attribute, per prompt (None
    /// where the attribute stayed constant or undefined).
    pub per_prompt: Vec<Option<f64>>,
}

/// Spearman ρ of slider against the axis's attribute, per prompt and averaged.
pub fn steering(
    engine: &mut Engine,
    prompts: &[Phrase],
    axis: usize,
    sliders: &[f32],
) -> Result<Steering, EngineError> {
    let attribute = engine.axes()[axis].attribute;
    let mut per_prompt = Vec::with_capacity(prompts.len());
    for p in prompts {
        let points = engine.sweep_axis(p, axis, sliders)?;
        let (xs, ys): (Vec<f64>, Vec<f64>) = points
            .iter()
            .filter_map(|pt| pt.attributes.get(attribute).map(|v| (pt.slider as f64, v)))
            .unzip();
        per_prompt.push(spearman(&xs, &ys));
    }
    let mean_rho = if per_prompt.is_empty() {
        0.0
    } else {
        per_prompt.iter().map(|r| r.unwrap_or(0.0)).sum::<f64>() / per_prompt.len() as f64
    };
    Ok(Steering {
        mean_rho,
        per_prompt,
    })
}

/// Evenly spaced slider values from −reach to +reach, `count` of them (≥ 2).
pub fn slider_grid(reach: f32, count: usize) -> Vec<f32> {
    let count = count.max(2);
    (0..count)
        .map(|i| -reach + 2.0 * reach * i as f32 / (count - 1) as f32)
        .collect()
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn spearman_worked_examples() {
        // Monotone but not linear: ρ = 1.
        assert_eq!(spearman(&[1., 2., 3., 4.], &[1., 4., 9., 100.]), Some(1.0));
        assert_eq!(spearman(&[1., 2., 3.], &[3., 2., 1.]), Some(-1.0));
        // Ties take their average rank: y ranks (1.5, 1.5, 3) against (1, 2, 3)
        // give r = 0.866… (√3/2).
        let r = spearman(&[1., 2., 3.], &[5., 5., 7.]).unwrap();
        assert!((r - 3f64.sqrt() / 2.0).abs() < 1e-12);
        assert_eq!(spearman(&[1., 2., 3.], &[4., 4., 4.]), None);
    }
}
