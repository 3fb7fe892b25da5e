//! The models the benchmarks run: the demo model and a synthetic model of
//! the same contract but about ten times the parameters, written here with
//! Nudgebar's own ONNX writer.
//!
//! The demo model is the one the plugin embeds (`nudgebar_demo_model`);
//! the large one has the demo's contract and layer pattern with wider
//! hidden layers and seeded random weights. Inference cost depends only on
//! the shapes, so its speed rows hold for any trained weights of that size;
//! take-level rows (how often the hole guard resamples) depend on the
//! weights and are reported per model.

use anyhow::Result;
use nudgebar_engine::{ModelOrigin, ModelPackage};
use nudgebar_onnx::{
    decoder_graph, encoder_graph, Activation, DecoderSpec, Dense, EncoderSpec, Layer,
};
use rand::{Rng, SeedableRng};
use rand_chacha::ChaCha8Rng;
use std::path::{Path, PathBuf};

/// The demo contract (plugin/trainer/src/contract.rs): one 4/4 measure of sixteenths, tokens for MIDI
/// 48–83 plus hold and rest, one-hot input, 32 latent dimensions.
pub const STEPS: usize = 16;
pub const CLASSES: usize = 38;
pub const LATENT: usize = 32;
/// Hidden sizes of the demo network (encoder; the decoder mirrors them).
pub const DEMO_HIDDEN: [usize; 2] = [256, 128];
/// Hidden sizes of the synthetic large model: about 11× the demo's
/// parameters (counted from the written graphs and reported).
pub const LARGE_HIDDEN: [usize; 2] = [1536, 768];

/// A model package and what the bench reports about it.
#[derive(Debug, Clone)]
pub struct BenchModel {
    /// Short name for tables ("demo", "demo-shaped stand-in", "large").
    pub name: String,
    pub package: ModelPackage,
    /// Weights and biases in both graphs.
    pub parameters: usize,
}

/// The embedded demo model.
pub fn demo() -> Result<BenchModel> {
    let package = nudgebar_demo_model::package();
    let parameters = onnx_parameters(&package.encoder)? + onnx_parameters(&package.decoder)?;
    Ok(BenchModel {
        name: "demo".into(),
        package,
        parameters,
    })
}

/// The synthetic model about ten times the demo's size.
pub fn large() -> Result<BenchModel> {
    synthetic("large (synthetic)", &LARGE_HIDDEN, 11)
}

/// An MLP VAE of the demo contract with the given hidden sizes and seeded
/// random weights.
pub fn synthetic(name: &str, hidden: &[usize], seed: u64) -> Result<BenchModel> {
    let mut rng = ChaCha8Rng::seed_from_u64(seed);
    let input = STEPS * CLASSES;
    let mut sizes = vec![input];
    sizes.extend_from_slice(hidden);
    let enc_hidden: Vec<Layer> = sizes
        .windows(2)
        .map(|w| relu(dense(&mut rng, w[0], w[1])))
        .collect();
    let last = *sizes.last().expect("sizes holds the input size");
    let encoder = EncoderSpec {
        input_name: "tokens".into(),
        input_shape: vec![STEPS, CLASSES],
        hidden: enc_hidden,
        mean_name: "mean".into(),
        mean: dense(&mut rng, last, LATENT),
        log_variance: Some(("log_variance".into(), dense(&mut rng, last, LATENT))),
    };
    let mut dec_sizes = vec![LATENT];
    dec_sizes.extend(hidden.iter().rev());
    let dec_last = *dec_sizes.last().expect("sizes holds the latent size");
    let decoder = DecoderSpec {
        input_name: "code".into(),
        hidden: dec_sizes
            .windows(2)
            .map(|w| relu(dense(&mut rng, w[0], w[1])))
            .collect(),
        output_name: "logits".into(),
        output: dense(&mut rng, dec_last, input),
        output_shape: Some(vec![STEPS, CLASSES]),
    };
    let enc_bytes = encoder_graph(&encoder).to_bytes();
    let dec_bytes = decoder_graph(&decoder).to_bytes();
    let parameters = onnx_parameters(&enc_bytes)? + onnx_parameters(&dec_bytes)?;
    let package = ModelPackage::from_parts(
        &manifest_json(name).to_string(),
        enc_bytes,
        dec_bytes,
        ModelOrigin::Embedded,
    )
    .map_err(|e| anyhow::anyhow!("the bench's synthetic manifest was refused: {e}"))?;
    Ok(BenchModel {
        name: name.into(),
        package,
        parameters,
    })
}

/// Writes a package as a folder a user would point the plugin at.
pub fn write_folder(model: &BenchModel, folder: &Path) -> Result<PathBuf> {
    std::fs::create_dir_all(folder)?;
    let m = &model.package.manifest;
    std::fs::write(folder.join("manifest.json"), m.to_json())?;
    std::fs::write(folder.join(&m.encoder.file), &model.package.encoder)?;
    std::fs::write(folder.join(&m.decoder.file), &model.package.decoder)?;
    Ok(folder.to_path_buf())
}

/// The demo contract's manifest (same grid, encoding, tensor names and
/// regularized dimensions as the demo model's).
fn manifest_json(name: &str) -> serde_json::Value {
    serde_json::json!({
        "format": "nudgebar.model",
        "version": 1,
        "name": name,
        "description": "Random weights in the demo model's shape, for benchmarks only.",
        "grid": { "steps_per_measure": STEPS, "measures": 1,
                  "time_signature": { "numerator": 4, "denominator": 4 } },
        "encoding": { "kind": "tokens", "lowest_pitch": 48, "highest_pitch": 83,
                      "hold_token": 36, "rest_token": 37, "input": "one_hot" },
        "encoder": { "file": "encoder.onnx", "input": "tokens", "mean": "mean",
                     "log_variance": "log_variance" },
        "decoder": { "file": "decoder.onnx", "input": "code", "output": "logits" },
        "latent_size": LATENT,
        "axes": [
            { "attribute": "note_density", "label": "Density", "span": 2.0, "dimension": 0 },
            { "attribute": "pitch_range", "label": "Range", "span": 2.0, "dimension": 1 },
            { "attribute": "rhythmic_complexity", "label": "Syncopation", "span": 2.0, "dimension": 2 },
            { "attribute": "contour", "label": "Contour", "span": 2.0, "dimension": 3 }
        ]
    })
}

fn relu(dense: Dense) -> Layer {
    Layer {
        dense,
        activation: Activation::Relu,
    }
}

/// Uniform weights scaled by √(6 / fan-in) (He-uniform, common practice
/// for ReLU layers), so activations stay finite and of order one through
/// the stack and the decoder's argmax is not degenerate.
fn dense(rng: &mut ChaCha8Rng, inputs: usize, outputs: usize) -> Dense {
    let bound = (6.0 / inputs as f32).sqrt();
    let weight = (0..inputs * outputs)
        .map(|_| rng.random_range(-bound..bound))
        .collect();
    let bias = (0..outputs).map(|_| rng.random_range(-0.1..0.1)).collect();
    Dense::new(inputs, outputs, weight, bias)
}

/// Weights and biases in an ONNX file: the element count of every
/// initializer.
pub fn onnx_parameters(bytes: &[u8]) -> Result<usize> {
    let graph = crate::flops::read_graph(bytes)?;
    Ok(graph
        .initializer
        .iter()
        .filter(|t| t.data_type == nudgebar_onnx::pb::tensor_proto::DataType::Float as i32)
        .map(|t| t.dims.iter().product::<i64>().max(0) as usize)
        .sum())
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn the_demo_model_has_the_shape_the_bench_counts_for() {
        let m = demo().unwrap();
        // Worked by hand from the layer sizes: 608·256 + 256·128 + 2·(128·32)
        // for the encoder (two heads), 32·128 + 128·256 + 256·608 for the decoder.
        assert_eq!(
            crate::flops::macs_per_row(&m.package.encoder).unwrap(),
            196_608
        );
        assert_eq!(
            crate::flops::macs_per_row(&m.package.decoder).unwrap(),
            192_512
        );
        // Weights plus one bias per output.
        let biases = (256 + 128 + 32 + 32) + (128 + 256 + 608);
        assert_eq!(m.parameters, 196_608 + 192_512 + biases);
        let stand_in = synthetic("stand-in", &DEMO_HIDDEN, 7).unwrap();
        assert_eq!(
            stand_in.parameters, m.parameters,
            "the synthetic writer makes the demo's shape"
        );
        nudgebar_engine::Engine::new(stand_in.package).expect("the engine takes a synthetic model");
    }

    #[test]
    fn the_large_model_is_about_ten_times_the_demo() {
        let demo = demo().unwrap();
        let large = large().unwrap();
        let ratio = large.parameters as f64 / demo.parameters as f64;
        assert!(
            (8.0..=14.0).contains(&ratio),
            "{ratio:.1}× the demo's parameters"
        );
    }
}
