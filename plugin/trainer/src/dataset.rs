//! Training rows: corpus calls turned into the exact tensors the engine will
//! feed the encoder (through the engine's own prompt fitting and codec, so
//! training and inference cannot disagree on the encoding), the token each
//! step should decode to, and the attributes the regularizer orders by.

use crate::contract::{self, CLASSES, INPUT, REGULARIZED, STEPS};
use anyhow::{bail, Context, Result};
use nudgebar_engine::codec::{self, InputRows};
use nudgebar_engine::fit;
use nudgebar_music::attributes::measure;
use nudgebar_music::Phrase;

/// Rows ready for training or evaluation.
#[derive(Debug, Clone)]
pub struct Dataset {
    pub rows: usize,
    /// One-hot inputs, `rows × INPUT`.
    pub inputs: Vec<f32>,
    /// Target token per step, `rows × STEPS`.
    pub targets: Vec<u32>,
    /// Measured value of each regularized attribute, `None` where undefined
    /// (the contour of a lone note); such pairs are left out of the regularizer.
    pub attributes: Vec<[Option<f64>; REGULARIZED.len()]>,
    /// The calls as the model sees them (quantized, in range).
    pub phrases: Vec<Phrase>,
}

impl Dataset {
    pub fn from_phrases(phrases: &[Phrase]) -> Result<Dataset> {
        let grid_spec = contract::grid_spec();
        let encoding = contract::encoding();
        let mut data = Dataset {
            rows: 0,
            inputs: Vec::with_capacity(phrases.len() * INPUT),
            targets: Vec::with_capacity(phrases.len() * STEPS),
            attributes: Vec::with_capacity(phrases.len()),
            phrases: Vec::with_capacity(phrases.len()),
        };
        for (i, phrase) in phrases.iter().enumerate() {
            let layout = fit::layout_for(phrase, &grid_spec)
                .with_context(|| format!("corpus call {i} does not fit the demo model's grid"))?;
            if layout.chunks() != 1 {
                bail!(
                    "corpus call {i} is {} measures long; the demo model trains on single measures",
                    phrase.measures
                );
            }
            let (grid, _) = fit::fit_prompt(phrase, &layout, &encoding);
            let InputRows::F32(x) = codec::input_rows(&grid, &layout, &encoding) else {
                bail!("the demo encoding must give one-hot rows");
            };
            for step in x.chunks(CLASSES) {
                let token = step
                    .iter()
                    .position(|&v| v == 1.0)
                    .expect("one-hot rows have a 1 per step");
                data.targets.push(token as u32);
            }
            data.inputs.extend_from_slice(&x);
            let fitted = grid.to_phrase();
            data.attributes
                .push(REGULARIZED.map(|a| measure(a, &fitted)));
            data.phrases.push(fitted);
            data.rows += 1;
        }
        Ok(data)
    }

    pub fn input_row(&self, i: usize) -> &[f32] {
        &self.inputs[i * INPUT..(i + 1) * INPUT]
    }
}
