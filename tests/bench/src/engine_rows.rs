//! Engine rows: model load, encode, decode of 1 and 16 takes, a full
//! request and a target-mode request, each beside onnxruntime on the same
//! batch and beside the model's FLOP bound.

use crate::flops::{self, Peak};
use crate::models::BenchModel;
use crate::ort::{self, OrtCase, OrtServer};
use crate::timing::{self, Timing};
use anyhow::{anyhow, Result};
use nudgebar_engine::codec::{self, InputRows};
use nudgebar_engine::steer::{Target, DEFAULT_BUDGET};
use nudgebar_engine::{Engine, ModelPackage, VariationRequest};
use nudgebar_music::attributes::Attribute;
use nudgebar_music::Phrase;
use serde::Serialize;
use std::hint::black_box;
use std::path::Path;

/// One row of the engine table. Rows beside onnxruntime were timed in
/// alternating rounds with it; ratios are of the best rounds.
#[derive(Debug, Clone, Serialize)]
pub struct EngineRow {
    pub name: String,
    pub nudgebar: Timing,
    pub onnxruntime: Option<Timing>,
    /// Nudgebar's best round over onnxruntime's best round.
    pub ratio_to_onnxruntime: Option<f64>,
    /// Time the row's multiply-adds take at the measured peak, µs.
    pub flop_bound_us: Option<f64>,
    /// Nudgebar's best round over the FLOP bound.
    pub ratio_to_flop_bound: Option<f64>,
    /// Largest difference between Nudgebar's and onnxruntime's outputs.
    pub max_abs_diff: Option<f32>,
    pub note: String,
}

#[derive(Debug, Clone, Serialize)]
pub struct EngineReport {
    pub model: String,
    pub parameters: usize,
    pub encoder_macs_per_row: u64,
    pub decoder_macs_per_row: u64,
    pub peak: Peak,
    pub onnxruntime_version: String,
    pub rows: Vec<EngineRow>,
}

/// The request every "full request" row makes: all four sliders moved, 16
/// takes, some wander, the engine's default note choice.
pub fn full_request(axes: usize, takes: usize) -> VariationRequest {
    VariationRequest {
        offsets: [0.6, -0.3, 0.4, 0.2][..axes.min(4)].to_vec(),
        takes,
        spread: 0.5,
        seed: 20,
        ..Default::default()
    }
}

pub fn load_engine(package: &ModelPackage) -> Result<Engine> {
    Engine::new(package.clone()).map_err(|e| anyhow!("the bench model does not load: {e}"))
}

/// Runs every engine row for `model` on `prompt` (one bar).
pub fn run(
    model: &BenchModel,
    prompt: &Phrase,
    peak: &Peak,
    python: &Path,
    scratch: &Path,
) -> Result<EngineReport> {
    let package = &model.package;
    let m = &package.manifest;
    let enc_macs = flops::macs_per_row(&package.encoder)?;
    let dec_macs = flops::macs_per_row(&package.decoder)?;
    let bound =
        |macs: u64, rows: usize| 2.0 * macs as f64 * rows as f64 / peak.flops_per_second * 1e6;

    // Model load: the manifest check, both graphs checked, optimised and
    // planned, and the engine's smoke run — what the worker does on load.
    let json = m.to_json();
    let load = timing::once_each(9, || {
        let p = ModelPackage::from_parts(
            &json,
            package.encoder.clone(),
            package.decoder.clone(),
            package.origin.clone(),
        )
        .expect("the package loaded once already");
        black_box(Engine::new(p).expect("the engine was built once already"));
    });

    let mut engine = load_engine(package)?;
    let prepared = engine.prepare(prompt).map_err(|e| anyhow!("{e}"))?;
    let one_hot = match codec::input_rows(&prepared.grid, &prepared.layout, &m.encoding) {
        InputRows::F32(x) => x,
        InputRows::I64(_) => return Err(anyhow!("the bench models take one-hot input")),
    };
    let latents = engine.encode(&prepared).map_err(|e| anyhow!("{e}"))?;
    let size = m.latent_size;
    let request = full_request(engine.axes().len(), 16);
    let offset = engine.offset_for(&request.offsets);
    // 16 codes around the prompt's: the slider offset plus a small, fixed
    // per-take wander, as a request makes them.
    let codes16: Vec<f32> = (0..16)
        .flat_map(|t| {
            let base = latents.row(0).to_vec();
            let offset = offset.clone();
            (0..size).map(move |d| base[d] + offset[d] + 0.05 * ((t * size + d) % 7) as f32 - 0.15)
        })
        .collect();
    let codes1 = codes16[..size].to_vec();

    // Calls per round, from Nudgebar's own speed; onnxruntime makes the same.
    let n_encode = timing::calibrate(|| {
        black_box(engine.encode(&prepared).expect("encode ran once"));
    });
    let n_decode1 = timing::calibrate(|| {
        black_box(engine.decode(&codes1, 1).expect("decode ran once"));
    });
    let n_decode16 = timing::calibrate(|| {
        black_box(engine.decode(&codes16, 16).expect("decode ran once"));
    });
    let t_request = timing::measure(|| {
        black_box(engine.vary(prompt, &request).expect("the request ran once"));
    });
    let variation = engine.vary(prompt, &request).map_err(|e| anyhow!("{e}"))?;
    let target = target_request(&mut engine, prompt, &request)?;

    // The same batches in onnxruntime, on the same input bytes, round for
    // round alternating with Nudgebar's.
    let dir = scratch.join(format!("ort-{}", slug(&model.name)));
    std::fs::create_dir_all(&dir)?;
    let enc_path = dir.join("encoder.onnx");
    let dec_path = dir.join("decoder.onnx");
    std::fs::write(&enc_path, &package.encoder)?;
    std::fs::write(&dec_path, &package.decoder)?;
    let case = |name: &str,
                model: &Path,
                input_name: &str,
                input: Vec<f32>,
                shape: Vec<usize>,
                iterations: u32| OrtCase {
        name: name.into(),
        model: model.to_path_buf(),
        input_name: input_name.into(),
        input,
        shape,
        iterations,
    };
    let mut ort = OrtServer::start(
        python,
        &dir,
        vec![
            case(
                "encode",
                &enc_path,
                &m.encoder.input,
                one_hot,
                vec![1, crate::models::STEPS, crate::models::CLASSES],
                n_encode,
            ),
            case(
                "decode 1",
                &dec_path,
                &m.decoder.input,
                codes1.clone(),
                vec![1, size],
                n_decode1,
            ),
            case(
                "decode 16",
                &dec_path,
                &m.decoder.input,
                codes16.clone(),
                vec![16, size],
                n_decode16,
            ),
        ],
    )?;
    let pairs = [
        ort.interleave(0, |n| {
            timing::round(n, &mut || {
                black_box(engine.encode(&prepared).expect("encode ran once"));
            })
        })?,
        ort.interleave(1, |n| {
            timing::round(n, &mut || {
                black_box(engine.decode(&codes1, 1).expect("decode ran once"));
            })
        })?,
        ort.interleave(2, |n| {
            timing::round(n, &mut || {
                black_box(engine.decode(&codes16, 16).expect("decode ran once"));
            })
        })?,
    ];
    let ort_outputs = [ort.output(0)?, ort.output(1)?, ort.output(2)?];
    let version = ort.version.clone();
    drop(ort);
    let ours = [
        latents.mean.clone(),
        engine.decode(&codes1, 1).map_err(|e| anyhow!("{e}"))?,
        engine.decode(&codes16, 16).map_err(|e| anyhow!("{e}"))?,
    ];

    let compared = |name: &str, i: usize, macs: u64, rows: usize, note: &str| {
        let (t, o) = pairs[i];
        let b = bound(macs, rows);
        EngineRow {
            name: name.into(),
            nudgebar: t,
            onnxruntime: Some(o),
            ratio_to_onnxruntime: Some(t.best_us / o.best_us),
            flop_bound_us: Some(b),
            ratio_to_flop_bound: Some(t.best_us / b),
            max_abs_diff: Some(ort::max_abs_diff(&ours[i], &ort_outputs[i])),
            note: note.into(),
        }
    };
    let alone = |name: &str, t: Timing, bound_us: Option<f64>, note: String| EngineRow {
        name: name.into(),
        nudgebar: t,
        onnxruntime: None,
        ratio_to_onnxruntime: None,
        flop_bound_us: bound_us,
        ratio_to_flop_bound: bound_us.map(|b| t.best_us / b),
        max_abs_diff: None,
        note,
    };
    let decoded_rows = variation.takes.len() + variation.holes.resampled as usize;
    let mut rows = vec![
        alone(
            "model load",
            load,
            None,
            "manifest + graph checks + optimised plans + smoke run".into(),
        ),
        compared(
            "encode 1 bar",
            0,
            enc_macs,
            1,
            "engine: one-hot built from the grid + encoder",
        ),
        compared("decode 1 take", 1, dec_macs, 1, ""),
        compared("decode 16 takes", 2, dec_macs, 16, "one batch of 16 rows"),
        alone(
            "full request, 16 takes",
            t_request,
            Some(bound(enc_macs, 1) + bound(dec_macs, decoded_rows)),
            format!(
                "encode + offsets + decode + hole guard + attributes; {} takes, {} resampled",
                variation.takes.len(),
                variation.holes.resampled
            ),
        ),
    ];
    rows.push(match target {
        Some((t, decodes, outcome)) => alone(
            "target-mode request",
            t,
            Some(bound(enc_macs, 1) + bound(dec_macs, decodes)),
            format!("aim note density at 8 notes: {decodes} single-take decodes. {outcome}"),
        ),
        None => alone(
            "target-mode request",
            Timing {
                iterations: 0,
                rounds: 0,
                best_us: f64::NAN,
                median_us: f64::NAN,
            },
            None,
            "the model has no density axis to aim along".into(),
        ),
    });
    Ok(EngineReport {
        model: model.name.clone(),
        parameters: model.parameters,
        encoder_macs_per_row: enc_macs,
        decoder_macs_per_row: dec_macs,
        peak: peak.clone(),
        onnxruntime_version: version,
        rows,
    })
}

/// Target mode: search the density axis for a take of 8 notes. Returns
/// the timing, how many decodes one search makes and how it ended.
fn target_request(
    engine: &mut Engine,
    prompt: &Phrase,
    request: &VariationRequest,
) -> Result<Option<(Timing, usize, String)>> {
    if !engine
        .axes()
        .iter()
        .any(|a| a.attribute == Attribute::NoteDensity)
    {
        return Ok(None);
    }
    let target = Target {
        attribute: Attribute::NoteDensity,
        value: 8.0,
        tolerance: 0.5,
    };
    let budget = DEFAULT_BUDGET;
    let result = engine
        .aim(prompt, &target, request, budget)
        .map_err(|e| anyhow!("{e}"))?;
    let t = timing::measure(|| {
        black_box(
            engine
                .aim(prompt, &target, request, budget)
                .expect("the search ran once"),
        );
    });
    Ok(Some((t, result.decodes, result.summary())))
}

pub fn slug(name: &str) -> String {
    name.chars()
        .map(|c| {
            if c.is_ascii_alphanumeric() {
                c.to_ascii_lowercase()
            } else {
                '-'
            }
        })
        .collect()
}
