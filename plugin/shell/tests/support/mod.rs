//! A tiny model package for the shell's tests: a real ONNX encoder and
//! decoder (written with nudgebar-onnx, run by tract like any user model)
//! with fixed pseudo-random weights. It steers nothing musically; it makes
//! the worker's plumbing testable without the trained demo model.

use nudgebar_engine::{ModelOrigin, ModelPackage};
use nudgebar_onnx::{
    decoder_graph, encoder_graph, Activation, DecoderSpec, Dense, EncoderSpec, Layer,
};

const STEPS: usize = 16;
const LOW: u8 = 60;
const HIGH: u8 = 71;
const CLASSES: usize = (HIGH - LOW + 1) as usize + 2;
const LATENT: usize = 4;

/// Deterministic weights in −scale…scale (a small linear congruential
/// sequence: reproducible and dependency-free).
fn weights(n: usize, seed: u64, scale: f32) -> Vec<f32> {
    let mut x = seed
        .wrapping_mul(6364136223846793005)
        .wrapping_add(1442695040888963407);
    (0..n)
        .map(|_| {
            x = x
                .wrapping_mul(6364136223846793005)
                .wrapping_add(1442695040888963407);
            ((x >> 40) as f32 / (1u64 << 24) as f32 * 2.0 - 1.0) * scale
        })
        .collect()
}

pub fn manifest() -> String {
    format!(
        r#"{{
  "format": "nudgebar.model",
  "version": 1,
  "name": "shell test model",
  "description": "random weights, for plumbing tests",
  "grid": {{ "steps_per_measure": {STEPS}, "measures": 1, "time_signature": {{ "numerator": 4, "denominator": 4 }} }},
  "encoding": {{ "kind": "tokens", "lowest_pitch": {LOW}, "highest_pitch": {HIGH}, "hold_token": {hold}, "rest_token": {rest}, "input": "one_hot" }},
  "encoder": {{ "file": "encoder.onnx", "input": "tokens", "mean": "mean" }},
  "decoder": {{ "file": "decoder.onnx", "input": "code", "output": "logits" }},
  "latent_size": {LATENT},
  "axes": [
    {{ "attribute": "note_density", "span": 2.0, "dimension": 0 }},
    {{ "attribute": "pitch_range", "span": 2.0, "dimension": 1 }},
    {{ "attribute": "rhythmic_complexity", "span": 2.0, "dimension": 2 }},
    {{ "attribute": "contour", "span": 2.0, "dimension": 3 }}
  ]
}}"#,
        hold = CLASSES - 2,
        rest = CLASSES - 1,
    )
}

pub fn encoder_bytes() -> Vec<u8> {
    let n = STEPS * CLASSES;
    encoder_graph(&EncoderSpec {
        input_name: "tokens".into(),
        input_shape: vec![STEPS, CLASSES],
        hidden: vec![],
        mean_name: "mean".into(),
        mean: Dense::new(n, LATENT, weights(n * LATENT, 1, 0.5), vec![0.0; LATENT]),
        log_variance: None,
    })
    .to_bytes()
}

pub fn decoder_bytes() -> Vec<u8> {
    let n = STEPS * CLASSES;
    // A bias that favours pitch tokens a little so takes are not all rests.
    let mut bias = weights(n, 3, 0.5);
    for step in 0..STEPS {
        bias[step * CLASSES + CLASSES - 1] -= 0.5;
    }
    decoder_graph(&DecoderSpec {
        input_name: "code".into(),
        hidden: vec![Layer {
            dense: Dense::new(LATENT, 32, weights(LATENT * 32, 2, 1.0), vec![0.1; 32]),
            activation: Activation::Tanh,
        }],
        output_name: "logits".into(),
        output: Dense::new(32, n, weights(32 * n, 4, 1.5), bias),
        output_shape: Some(vec![STEPS, CLASSES]),
    })
    .to_bytes()
}

pub fn package() -> ModelPackage {
    ModelPackage::from_parts(
        &manifest(),
        encoder_bytes(),
        decoder_bytes(),
        ModelOrigin::Embedded,
    )
    .expect("the test model is valid")
}

/// Writes the package into a folder (for "load a model by path").
#[allow(dead_code)] // used by worker.rs, not by every test file
pub fn write_folder(dir: &std::path::Path) {
    std::fs::create_dir_all(dir).unwrap();
    std::fs::write(dir.join("manifest.json"), manifest()).unwrap();
    std::fs::write(dir.join("encoder.onnx"), encoder_bytes()).unwrap();
    std::fs::write(dir.join("decoder.onnx"), decoder_bytes()).unwrap();
}
