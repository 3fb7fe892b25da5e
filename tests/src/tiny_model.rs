//! A tiny model package with known weights, written by the tests themselves,
//! so the engine's plumbing can be checked against results worked out by hand.
//!
//! Grid: 4/4, 16 steps, one measure. Tokens: pitches 60..=61 (two pitch
//! tokens: 0 = C4, 1 = C♯4), hold = 2, rest = 3; one-hot input [batch, 16, 4].
//! Latent size 4.
//!
//! Encoder (linear): z0 = (number of onsets) − 0.5; z1 = (#C4 onsets −
//! #C♯4 onsets); z2 = z3 = 0. Log-variance is all zeros.
//!
//! Decoder (linear, closed form): at step s the pitch-token logits are
//! `z0 − RANK[s] ± 0.01·z1` (+ for C4, − for C♯4), rest is 0 and hold is
//! −100. So the argmax puts a note on exactly the steps whose rank is below
//! `z0 + 0.01·|z1|`, each one step long, on C4 when z1 > 0 and C♯4 when
//! z1 < 0. Dimensions 2 and 3 do nothing.

use nudgebar_engine::{ModelOrigin, ModelPackage};
use nudgebar_onnx::{Attr, Dim, ElemType, GraphBuilder};

pub const STEPS: usize = 16;
pub const CLASSES: usize = 4;
pub const LATENT: usize = 4;
pub const HOLD: usize = 2;
pub const REST: usize = 3;

/// Order in which steps fill as z0 grows: downbeat, beat 3, beats 2 and 4,
/// then the off-beat eighths, then the sixteenths.
pub const RANK: [usize; STEPS] = [0, 8, 4, 10, 2, 12, 6, 14, 1, 13, 5, 11, 3, 15, 7, 9];

/// What to break, for the contract tests.
#[derive(Debug, Clone, Copy, Default, PartialEq)]
pub struct Variant {
    /// Fix the batch dimension at 1 instead of leaving it symbolic.
    pub fixed_batch: bool,
    /// Put a NaN into the decoder's bias.
    pub nan_bias: bool,
    /// Make the hold token the best choice everywhere (a decoder full of holes).
    pub hold_everywhere: bool,
    /// Latent size the graphs are built with (LATENT unless changed).
    pub latent: Option<usize>,
}

pub fn manifest_json() -> serde_json::Value {
    serde_json::json!({
        "format": "nudgebar.model",
        "version": 1,
        "name": "known-weights test model",
        "description": "Linear encoder and decoder with hand-set weights.",
        "grid": { "steps_per_measure": 16, "measures": 1, "time_signature": { "numerator": 4, "denominator": 4 } },
        "encoding": { "kind": "tokens", "lowest_pitch": 60, "highest_pitch": 61, "hold_token": 2, "rest_token": 3, "input": "one_hot" },
        "encoder": { "file": "encoder.onnx", "input": "grid", "mean": "mean", "log_variance": "log_variance" },
        "decoder": { "file": "decoder.onnx", "input": "code", "output": "logits" },
        "latent_size": 4,
        "axes": [
            { "attribute": "note_density", "label": "Density", "span": 4.0, "dimension": 0 },
            { "attribute": "contour", "label": "Contour", "span": 1.0, "dimension": 2 }
        ]
    })
}

fn batch(v: Variant) -> Dim {
    if v.fixed_batch {
        Dim::Fixed(1)
    } else {
        Dim::Batch
    }
}

pub fn encoder_bytes(v: Variant) -> Vec<u8> {
    let latent = v.latent.unwrap_or(LATENT);
    let mut w = vec![0.0f32; STEPS * CLASSES * latent];
    for s in 0..STEPS {
        for (c, sign) in [(0usize, 1.0f32), (1, -1.0)] {
            let row = (s * CLASSES + c) * latent;
            w[row] = 1.0; // z0 counts onsets
            w[row + 1] = sign; // z1: C4 minus C#4
        }
    }
    let mut bias = vec![0.0f32; latent];
    bias[0] = -0.5;
    let mut g = GraphBuilder::new("tiny_encoder");
    g.input(
        "grid",
        ElemType::F32,
        &[batch(v), Dim::Fixed(STEPS), Dim::Fixed(CLASSES)],
    )
    .output("mean", ElemType::F32, &[batch(v), Dim::Fixed(latent)])
    .output(
        "log_variance",
        ElemType::F32,
        &[batch(v), Dim::Fixed(latent)],
    )
    .initializer_i64("flat_shape", &[2], &[-1, (STEPS * CLASSES) as i64])
    .initializer_f32("w", &[STEPS * CLASSES, latent], &w)
    .initializer_f32("b", &[latent], &bias)
    .initializer_f32(
        "w_lv",
        &[STEPS * CLASSES, latent],
        &vec![0.0; STEPS * CLASSES * latent],
    )
    .node("Reshape", &["grid", "flat_shape"], &["flat"], &[])
    .node("MatMul", &["flat", "w"], &["mw"], &[])
    .node("Add", &["mw", "b"], &["mean"], &[])
    .node("MatMul", &["flat", "w_lv"], &["log_variance"], &[]);
    g.to_bytes()
}

pub fn decoder_bytes(v: Variant) -> Vec<u8> {
    let latent = v.latent.unwrap_or(LATENT);
    let row = STEPS * CLASSES;
    let mut w = vec![0.0f32; latent * row];
    let mut bias = vec![0.0f32; row];
    for s in 0..STEPS {
        let at = |c: usize| s * CLASSES + c;
        w[at(0)] = 1.0; // z0 → both pitch tokens
        w[at(1)] = 1.0;
        w[row + at(0)] = 0.01; // z1 → C4 up, C#4 down; small, so it barely moves the onset threshold
        w[row + at(1)] = -0.01;
        bias[at(0)] = -(RANK[s] as f32);
        bias[at(1)] = -(RANK[s] as f32);
        bias[at(HOLD)] = if v.hold_everywhere { 100.0 } else { -100.0 };
        bias[at(REST)] = 0.0;
    }
    if v.nan_bias {
        bias[5 * CLASSES + REST] = f32::NAN;
    }
    let mut g = GraphBuilder::new("tiny_decoder");
    g.input("code", ElemType::F32, &[batch(v), Dim::Fixed(latent)])
        .output(
            "logits",
            ElemType::F32,
            &[batch(v), Dim::Fixed(STEPS), Dim::Fixed(CLASSES)],
        )
        .initializer_f32("w", &[latent, row], &w)
        .initializer_f32("b", &[row], &bias)
        .initializer_i64("shape", &[3], &[-1, STEPS as i64, CLASSES as i64])
        .node("MatMul", &["code", "w"], &["mw"], &[])
        .node("Add", &["mw", "b"], &["flat"], &[])
        .node(
            "Reshape",
            &["flat", "shape"],
            &["logits"],
            &[("allowzero", Attr::Int(0))],
        );
    g.to_bytes()
}

/// The package with a manifest edited by `edit` and graphs built per `variant`.
pub fn package_with(
    variant: Variant,
    edit: impl FnOnce(&mut serde_json::Value),
) -> Result<ModelPackage, nudgebar_engine::ModelError> {
    let mut m = manifest_json();
    edit(&mut m);
    ModelPackage::from_parts(
        &m.to_string(),
        encoder_bytes(variant),
        decoder_bytes(variant),
        ModelOrigin::Embedded,
    )
}

pub fn package() -> ModelPackage {
    package_with(Variant::default(), |_| {}).expect("the known-weights manifest is valid")
}

/// Expected decode in closed form: the steps that sound for latent (z0, z1), in step order.
pub fn expected_steps(z0: f32, z1: f32) -> Vec<usize> {
    let mut steps: Vec<usize> = (0..STEPS)
        .filter(|&s| (RANK[s] as f32) < z0 + 0.01 * z1.abs())
        .collect();
    steps.sort_unstable();
    steps
}
