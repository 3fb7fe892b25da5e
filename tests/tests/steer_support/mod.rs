//! Shared by the steering tests: a model with a wide pitch range and seeded
//! random weights (so masks and locks meet a decoder that really spreads
//! its notes around), and small prompt helpers.
#![allow(dead_code)]

use nudgebar_engine::{ModelOrigin, ModelPackage};
use nudgebar_music::{Note, Phrase, TimeSignature};
use nudgebar_onnx::{
    decoder_graph, encoder_graph, Activation, DecoderSpec, Dense, EncoderSpec, Layer,
};

pub const LOW: u8 = 48;
pub const HIGH: u8 = 84;
pub const STEPS: usize = 16;
pub const LATENT: usize = 6;
const PITCHES: usize = (HIGH - LOW + 1) as usize;
const CLASSES: usize = PITCHES + 2;

/// A small deterministic generator (SplitMix64), so the weights never change.
pub struct Rng(pub u64);
impl Rng {
    pub fn next_u64(&mut self) -> u64 {
        self.0 = self.0.wrapping_add(0x9E37_79B9_7F4A_7C15);
        let mut z = self.0;
        z = (z ^ (z >> 30)).wrapping_mul(0xBF58_476D_1CE4_E5B9);
        z = (z ^ (z >> 27)).wrapping_mul(0x94D0_49BB_1331_11EB);
        z ^ (z >> 31)
    }
    /// Uniform in [-1, 1).
    pub fn unit(&mut self) -> f32 {
        (self.next_u64() >> 40) as f32 / (1u64 << 23) as f32 - 1.0
    }
    pub fn below(&mut self, n: usize) -> usize {
        (self.next_u64() % n as u64) as usize
    }
}

fn dense(rng: &mut Rng, inputs: usize, outputs: usize, scale: f32) -> Dense {
    let w = (0..inputs * outputs).map(|_| rng.unit() * scale).collect();
    let b = (0..outputs).map(|_| rng.unit() * scale).collect();
    Dense::new(inputs, outputs, w, b)
}

/// Tokens 48..=84 (+ hold, rest), 16 steps of 4/4, latent size 6, two axes
/// on dimensions 0 and 1. Random weights: the decodes are arbitrary but
/// varied melodies, which is what the mask and lock checks need.
pub fn wide_package() -> ModelPackage {
    let mut rng = Rng(2026);
    let enc = EncoderSpec {
        input_name: "grid".into(),
        input_shape: vec![STEPS, CLASSES],
        hidden: vec![],
        mean_name: "mean".into(),
        mean: dense(&mut rng, STEPS * CLASSES, LATENT, 0.3),
        log_variance: None,
    };
    let mut out = dense(&mut rng, 24, STEPS * CLASSES, 1.5);
    // Hold and rest slightly less likely than a random pitch, so takes have notes.
    for s in 0..STEPS {
        out.bias[s * CLASSES + PITCHES] -= 1.0;
        out.bias[s * CLASSES + PITCHES + 1] += 0.5;
    }
    let dec = DecoderSpec {
        input_name: "code".into(),
        hidden: vec![Layer {
            dense: dense(&mut rng, LATENT, 24, 1.0),
            activation: Activation::Tanh,
        }],
        output_name: "logits".into(),
        output: out,
        output_shape: Some(vec![STEPS, CLASSES]),
    };
    let manifest = serde_json::json!({
        "format": "nudgebar.model", "version": 1,
        "name": "seeded random test model",
        "grid": { "steps_per_measure": 16, "measures": 1, "time_signature": { "numerator": 4, "denominator": 4 } },
        "encoding": { "kind": "tokens", "lowest_pitch": LOW, "highest_pitch": HIGH, "hold_token": PITCHES, "rest_token": PITCHES + 1, "input": "one_hot" },
        "encoder": { "file": "encoder.onnx", "input": "grid", "mean": "mean" },
        "decoder": { "file": "decoder.onnx", "input": "code", "output": "logits" },
        "latent_size": LATENT,
        "axes": [
            { "attribute": "note_density", "span": 2.0, "dimension": 0 },
            { "attribute": "pitch_range", "span": 2.0, "dimension": 1 }
        ]
    });
    ModelPackage::from_parts(
        &manifest.to_string(),
        encoder_graph(&enc).to_bytes(),
        decoder_graph(&dec).to_bytes(),
        ModelOrigin::Embedded,
    )
    .expect("the seeded test manifest is valid")
}

/// A one-measure 4/4 phrase of (pitch, sixteenth step, length in sixteenths).
pub fn bar(notes: &[(u8, usize, usize)]) -> Phrase {
    Phrase::new(
        TimeSignature::FOUR_FOUR,
        1,
        notes
            .iter()
            .map(|&(p, s, l)| Note::new(p, s as f64 * 0.25, l as f64 * 0.25, 100))
            .collect(),
    )
}

/// A ferry call for the tests: "lamp climb", a leap then steps upward.
pub fn lamp_climb() -> Phrase {
    bar(&[
        (60, 0, 2),
        (67, 2, 2),
        (69, 4, 4),
        (71, 8, 2),
        (72, 10, 2),
        (74, 12, 4),
    ])
}
