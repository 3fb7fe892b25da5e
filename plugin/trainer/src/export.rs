//! From trained weights to a model package: the ONNX files (written with
//! `nudgebar_onnx`), the manifest (the engine's own `Manifest` type, so it is
//! valid by construction and checked again by loading it), and the slider
//! spans, read off the latent distribution of the training corpus.

use crate::contract::{
    self, DECODER_INPUT, DECODER_OUTPUT, ENCODER_INPUT, ENCODER_LOG_VARIANCE, ENCODER_MEAN, LATENT,
    REGULARIZED,
};
use crate::dataset::Dataset;
use crate::vae::Vae;
use anyhow::{anyhow, ensure, Context, Result};
use nudgebar_engine::manifest::{self, AxisSpec, Manifest};
use nudgebar_engine::{Engine, ModelOrigin, ModelPackage};
use nudgebar_onnx::{
    decoder_graph, encoder_graph, pb, Activation, DecoderSpec, Dense, EncoderSpec, Layer,
};
use prost::Message;

/// A full slider throw (±1) moves the regularized dimension by this many
/// standard deviations of the corpus's latent means. Two deviations reach
/// from a typical call to the corpus's extremes without leaving the region
/// the decoder was trained on by much.
pub const SPAN_DEVIATIONS: f32 = 2.0;

pub const ENCODER_FILE: &str = "encoder.onnx";
pub const DECODER_FILE: &str = "decoder.onnx";

/// Slider labels: short words a musician reads at a glance.
fn label(r: usize) -> &'static str {
    ["Density", "Range", "Syncopation", "Contour"][r]
}

/// Mean and standard deviation of each latent mean over the dataset.
pub fn latent_statistics(vae: &Vae, data: &Dataset) -> Result<Vec<(f32, f32)>> {
    let mut sum = vec![0f64; LATENT];
    let mut sq = vec![0f64; LATENT];
    for start in (0..data.rows).step_by(512) {
        let rows = (data.rows - start).min(512);
        let x = &data.inputs[start * contract::INPUT..(start + rows) * contract::INPUT];
        let (mu, _) = vae.encode_rows(x, rows)?;
        for row in mu.chunks(LATENT) {
            for (d, v) in row.iter().enumerate() {
                sum[d] += *v as f64;
                sq[d] += (*v as f64).powi(2);
            }
        }
    }
    let n = data.rows.max(1) as f64;
    Ok((0..LATENT)
        .map(|d| {
            let mean = sum[d] / n;
            (
                mean as f32,
                (sq[d] / n - mean * mean).max(0.0).sqrt() as f32,
            )
        })
        .collect())
}

/// The manifest for a trained network, with spans from `stats`.
pub fn manifest(stats: &[(f32, f32)], description: &str) -> Manifest {
    Manifest {
        format: manifest::FORMAT.to_string(),
        version: manifest::VERSION,
        name: "Wrenmouth ferry calls (demo)".to_string(),
        description: description.to_string(),
        grid: contract::grid_spec(),
        encoding: contract::encoding(),
        encoder: manifest::EncoderSpec {
            file: ENCODER_FILE.into(),
            input: ENCODER_INPUT.into(),
            mean: ENCODER_MEAN.into(),
            log_variance: Some(ENCODER_LOG_VARIANCE.into()),
        },
        decoder: manifest::DecoderSpec {
            file: DECODER_FILE.into(),
            input: DECODER_INPUT.into(),
            output: DECODER_OUTPUT.into(),
        },
        latent_size: LATENT,
        axes: REGULARIZED
            .iter()
            .enumerate()
            .map(|(r, a)| AxisSpec {
                attribute: a.key().to_string(),
                label: label(r).to_string(),
                // Rounded so the manifest reads well; 3 decimals is far below what a slider resolves.
                span: ((SPAN_DEVIATIONS * stats[r].1) * 1000.0).round() / 1000.0,
                dimension: Some(r),
                direction: None,
                hole_rate: Vec::new(),
            })
            .collect(),
    }
}

/// Writes the network and manifest as a package, and loads it into the
/// engine once so a package that Nudgebar would refuse is never written.
pub fn package(vae: &Vae, manifest: &Manifest) -> Result<ModelPackage> {
    let (enc, dec) = vae.to_specs()?;
    let mut enc_graph = encoder_graph(&enc);
    enc_graph.doc(&format!(
        "Nudgebar demo encoder: one 4/4 measure of one-hot tokens to a {LATENT}-dimensional latent mean and log-variance."
    ));
    let mut dec_graph = decoder_graph(&dec);
    dec_graph.doc(&format!(
        "Nudgebar demo decoder: a {LATENT}-dimensional latent code to per-step token logits."
    ));
    let json = manifest.to_json();
    let package = ModelPackage::from_parts(
        &json,
        enc_graph.to_bytes(),
        dec_graph.to_bytes(),
        ModelOrigin::Embedded,
    )
    .map_err(|e| anyhow!("the trained package's manifest was refused: {e}"))?;
    Engine::new(package.clone())
        .map_err(|e| anyhow!("the trained package was refused by the engine: {e}"))?;
    Ok(package)
}

/// Reads back the weights of an MLP written by `nudgebar_onnx`, so a shipped
/// package can be rebuilt in the trainer and compared with tract.
pub fn specs_from_onnx(encoder: &[u8], decoder: &[u8]) -> Result<(EncoderSpec, DecoderSpec)> {
    let enc = Weights::parse(encoder, "encoder")?;
    let dec = Weights::parse(decoder, "decoder")?;
    let encoder = EncoderSpec {
        input_name: ENCODER_INPUT.into(),
        input_shape: vec![contract::STEPS, contract::CLASSES],
        hidden: enc.hidden("enc")?,
        mean_name: ENCODER_MEAN.into(),
        mean: enc.dense("mean_head")?,
        log_variance: Some((ENCODER_LOG_VARIANCE.into(), enc.dense("log_variance_head")?)),
    };
    let decoder = DecoderSpec {
        input_name: DECODER_INPUT.into(),
        hidden: dec.hidden("dec")?,
        output_name: DECODER_OUTPUT.into(),
        output: dec.dense("logits_head")?,
        output_shape: Some(vec![contract::STEPS, contract::CLASSES]),
    };
    Ok((encoder, decoder))
}

struct Weights(Vec<pb::TensorProto>);

impl Weights {
    fn parse(bytes: &[u8], what: &str) -> Result<Weights> {
        let model = pb::ModelProto::decode(bytes)
            .with_context(|| format!("the {what} is not an ONNX file"))?;
        Ok(Weights(model.graph.context("no graph")?.initializer))
    }

    fn tensor(&self, name: &str) -> Result<(Vec<usize>, Vec<f32>)> {
        let t = self
            .0
            .iter()
            .find(|t| t.name == name)
            .with_context(|| format!("no initializer {name}"))?;
        ensure!(
            t.raw_data.len() % 4 == 0,
            "initializer {name} is not f32 data"
        );
        let data = t
            .raw_data
            .chunks(4)
            .map(|b| f32::from_le_bytes([b[0], b[1], b[2], b[3]]))
            .collect();
        Ok((t.dims.iter().map(|&d| d as usize).collect(), data))
    }

    fn dense(&self, name: &str) -> Result<Dense> {
        let (dims, w) = self.tensor(&format!("{name}_weight"))?;
        let (_, b) = self.tensor(&format!("{name}_bias"))?;
        ensure!(dims.len() == 2, "{name} weight is not a matrix");
        Ok(Dense::new(dims[0], dims[1], w, b))
    }

    fn hidden(&self, prefix: &str) -> Result<Vec<Layer>> {
        let mut layers = Vec::new();
        while self
            .0
            .iter()
            .any(|t| t.name == format!("{prefix}{}_weight", layers.len()))
        {
            let dense = self.dense(&format!("{prefix}{}", layers.len()))?;
            layers.push(Layer {
                dense,
                activation: Activation::Relu,
            });
        }
        Ok(layers)
    }
}
