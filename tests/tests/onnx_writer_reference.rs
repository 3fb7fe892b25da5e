//! The ONNX writer against the ONNX project's own tools.
//!
//! Outside sources (PyPI, versions pinned in tests/py/requirements.txt):
//! - `onnx` 1.23.2: `onnx.checker.check_model(full_check=True)` — the
//!   standard's reference validator, including shape inference;
//! - `onnxruntime` 1.32.0: the reference runtime; tract must agree with it.

use nudgebar_onnx::{
    decoder_graph, encoder_graph, Activation, DecoderSpec, Dense, EncoderSpec, Layer,
};
use nudgebar_tests::tract_run::tract_run;
use nudgebar_tests::{pyref, scratch_dir};
use serde_json::json;

/// SplitMix64 (Steele, Lea & Flood, "Fast splittable pseudorandom number
/// generators", OOPSLA 2014): enough for reproducible test weights.
struct SplitMix(u64);

impl SplitMix {
    fn next(&mut self) -> f32 {
        self.0 = self.0.wrapping_add(0x9E37_79B9_7F4A_7C15);
        let mut z = self.0;
        z = (z ^ (z >> 30)).wrapping_mul(0xBF58_476D_1CE4_E5B9);
        z = (z ^ (z >> 27)).wrapping_mul(0x94D0_49BB_1331_11EB);
        z ^= z >> 31;
        // Uniform in [-1, 1).
        (z >> 40) as f32 / (1u64 << 23) as f32 - 1.0
    }

    fn dense(&mut self, inputs: usize, outputs: usize) -> Dense {
        let scale = 1.0 / (inputs as f32).sqrt();
        let w = (0..inputs * outputs).map(|_| self.next() * scale).collect();
        let b = (0..outputs).map(|_| self.next() * 0.1).collect();
        Dense::new(inputs, outputs, w, b)
    }
}

/// Writes the model and its input, asks the reference tools, and returns
/// their JSON answer.
fn reference(
    name: &str,
    bytes: &[u8],
    input: &str,
    shape: &[usize],
    data: &[f32],
) -> serde_json::Value {
    let dir = scratch_dir(&format!("onnx-writer-{name}"));
    let model = dir.join("model.onnx");
    let inputs = dir.join("inputs.json");
    std::fs::write(&model, bytes).unwrap();
    std::fs::write(
        &inputs,
        json!({ input: { "shape": shape, "data": data } }).to_string(),
    )
    .unwrap();
    pyref::run_json(
        "onnx_reference.py",
        &[model.to_str().unwrap(), inputs.to_str().unwrap()],
    )
}

fn assert_close(
    what: &str,
    tract: &(Vec<usize>, Vec<f32>),
    reference: &serde_json::Value,
    tolerance: f32,
) {
    let ref_shape: Vec<usize> = serde_json::from_value(reference["shape"].clone()).unwrap();
    let ref_data: Vec<f32> = serde_json::from_value(reference["data"].clone()).unwrap();
    assert_eq!(
        tract.0, ref_shape,
        "{what}: tract and onnxruntime disagree on the shape"
    );
    let worst = tract
        .1
        .iter()
        .zip(&ref_data)
        .map(|(a, b)| (a - b).abs())
        .fold(0.0f32, f32::max);
    assert!(
        worst <= tolerance,
        "{what}: tract and onnxruntime differ by {worst} (allowed {tolerance})"
    );
}

#[test]
fn random_encoder_passes_the_checker_and_matches_onnxruntime() {
    let mut rng = SplitMix(0x5EED_0001);
    let spec = EncoderSpec {
        input_name: "tokens".into(),
        input_shape: vec![8, 6],
        hidden: vec![
            Layer {
                dense: rng.dense(48, 32),
                activation: Activation::Relu,
            },
            Layer {
                dense: rng.dense(32, 24),
                activation: Activation::Tanh,
            },
        ],
        mean_name: "mean".into(),
        mean: rng.dense(24, 5),
        log_variance: Some(("log_variance".into(), rng.dense(24, 5))),
    };
    let bytes = encoder_graph(&spec).to_bytes();
    let batch = 3;
    let data: Vec<f32> = (0..batch * 48).map(|_| rng.next()).collect();
    let shape = [batch, 8, 6];
    let answer = reference("encoder", &bytes, "tokens", &shape, &data);
    assert_eq!(answer["checker"], "ok");
    assert_eq!(answer["ir_version"], 8);
    assert_eq!(answer["opset"][0]["version"], 13);
    // The batch dimension is symbolic in the file, as onnx reads it.
    assert_eq!(answer["inputs"][0]["shape"], json!(["batch", 8, 6]));
    let ours = tract_run(&bytes, &shape, &data);
    assert_close("mean", &ours[0], &answer["outputs"]["mean"], 1e-5);
    assert_close(
        "log_variance",
        &ours[1],
        &answer["outputs"]["log_variance"],
        1e-5,
    );
}

#[test]
fn random_decoder_with_reshape_passes_the_checker_and_matches_onnxruntime() {
    let mut rng = SplitMix(0x5EED_0002);
    let spec = DecoderSpec {
        input_name: "code".into(),
        hidden: vec![Layer {
            dense: rng.dense(5, 40),
            activation: Activation::Relu,
        }],
        output_name: "logits".into(),
        output: rng.dense(40, 8 * 6),
        output_shape: Some(vec![8, 6]),
    };
    let bytes = decoder_graph(&spec).to_bytes();
    for batch in [1usize, 4] {
        let data: Vec<f32> = (0..batch * 5).map(|_| rng.next() * 2.0).collect();
        let shape = [batch, 5];
        let answer = reference(&format!("decoder-{batch}"), &bytes, "code", &shape, &data);
        assert_eq!(answer["checker"], "ok");
        let ours = tract_run(&bytes, &shape, &data);
        assert_eq!(ours[0].0, vec![batch, 8, 6]);
        assert_close("logits", &ours[0], &answer["outputs"]["logits"], 1e-5);
    }
}
