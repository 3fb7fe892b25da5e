//! The engine: one loaded model, checked and planned, and the primitives
//! every feature is built from — prepare a prompt, encode it, decode latent
//! codes, read logits back into notes. `variation.rs` composes them into
//! takes; later features (targets, locks, blends) compose them differently.

use crate::codec::{self, Chooser, HoleReport, InputRows, NoteChoice, PitchMask};
use crate::error::{EngineError, ModelError};
use crate::fit::{self, Layout};
use crate::graph_check::{self, Which};
use crate::manifest::{Axis, Manifest};
use crate::network::{self, Batch, Network};
use crate::package::{ModelIdentity, ModelPackage};
use nudgebar_music::{Adjustments, Grid, GridNote, Phrase};

/// A prompt made ready for the model.
#[derive(Debug, Clone)]
pub struct Prepared {
    pub layout: Layout,
    /// The prompt as the model sees it (quantized, in range, monophonic if needed).
    pub grid: Grid,
    pub adjustments: Adjustments,
}

impl Prepared {
    /// The velocity a decoded note at `step` gets: the prompt's velocity at
    /// the same step if it had a note there, otherwise the prompt's median,
    /// so takes keep the prompt's accents.
    pub fn velocity_at(&self, step: usize) -> u8 {
        if let Some(n) = self.grid.notes.iter().find(|n| n.start == step) {
            return n.velocity;
        }
        let mut v: Vec<u8> = self.grid.notes.iter().map(|n| n.velocity).collect();
        v.sort_unstable();
        v.get(v.len() / 2).copied().unwrap_or(96)
    }
}

/// Latent codes for a batch of rows, row-major [rows × latent_size].
#[derive(Debug, Clone, PartialEq)]
pub struct Latents {
    pub rows: usize,
    pub size: usize,
    pub mean: Vec<f32>,
    pub log_variance: Option<Vec<f32>>,
}

impl Latents {
    pub fn row(&self, i: usize) -> &[f32] {
        &self.mean[i * self.size..(i + 1) * self.size]
    }
}

pub struct Engine {
    package: ModelPackage,
    axes: Vec<Axis>,
    encoder: Network,
    decoder: Network,
    has_log_variance: bool,
}

impl Engine {
    /// Checks the package's graphs against its manifest, builds the
    /// optimized plans, and runs each graph once on silence to catch broken
    /// weights before a user's first request does.
    pub fn new(package: ModelPackage) -> Result<Engine, ModelError> {
        let m = &package.manifest;
        let enc_model = graph_check::load_typed(Which::Encoder, &m.encoder.file, &package.encoder)?;
        let dec_model = graph_check::load_typed(Which::Decoder, &m.decoder.file, &package.decoder)?;
        let enc_ports = graph_check::check_encoder(&enc_model, m)?;
        let dec_ports = graph_check::check_decoder(&dec_model, m)?;
        let plan_err = |which: Which| {
            move |e: tract_onnx::prelude::TractError| ModelError::OnnxUnsupported {
                which: which.name(),
                detail: format!("{e}"),
            }
        };
        let encoder = Network::build(enc_model, &enc_ports).map_err(plan_err(Which::Encoder))?;
        let decoder = Network::build(dec_model, &dec_ports).map_err(plan_err(Which::Decoder))?;
        let mut engine = Engine {
            axes: m.resolved_axes(),
            has_log_variance: m.encoder.log_variance.is_some(),
            package,
            encoder,
            decoder,
        };
        engine.smoke_test()?;
        Ok(engine)
    }

    fn smoke_test(&mut self) -> Result<(), ModelError> {
        let m = self.package.manifest.clone();
        let silent = Phrase::empty(m.grid.time_signature, m.grid.measures);
        let prepared = self
            .prepare(&silent)
            .map_err(|e| ModelError::OnnxUnsupported {
                which: "encoder",
                detail: e.to_string().trim_end_matches('.').to_string(),
            })?;
        let latents = self
            .encode(&prepared)
            .map_err(|e| ModelError::OnnxUnsupported {
                which: "encoder",
                detail: e.to_string().trim_end_matches('.').to_string(),
            })?;
        if latents.mean.iter().any(|v| !v.is_finite()) {
            return Err(ModelError::NonFiniteOutput { which: "encoder" });
        }
        let logits =
            self.decode(&latents.mean, latents.rows)
                .map_err(|e| ModelError::OnnxUnsupported {
                    which: "decoder",
                    detail: e.to_string().trim_end_matches('.').to_string(),
                })?;
        if logits.iter().any(|v| !v.is_finite()) {
            return Err(ModelError::NonFiniteOutput { which: "decoder" });
        }
        Ok(())
    }

    pub fn manifest(&self) -> &Manifest {
        &self.package.manifest
    }
    pub fn package(&self) -> &ModelPackage {
        &self.package
    }
    pub fn identity(&self) -> &ModelIdentity {
        self.package.identity()
    }
    pub fn axes(&self) -> &[Axis] {
        &self.axes
    }
    pub fn latent_size(&self) -> usize {
        self.package.manifest.latent_size
    }

    /// Fits a prompt to the model (see `fit`).
    pub fn prepare(&self, prompt: &Phrase) -> Result<Prepared, EngineError> {
        let m = &self.package.manifest;
        let layout = fit::layout_for(prompt, &m.grid)?;
        let (grid, adjustments) = fit::fit_prompt(prompt, &layout, &m.encoding);
        Ok(Prepared {
            layout,
            grid,
            adjustments,
        })
    }

    /// Encodes a prepared prompt: one latent row per model input chunk.
    pub fn encode(&mut self, prepared: &Prepared) -> Result<Latents, EngineError> {
        let m = &self.package.manifest;
        let rows = prepared.layout.chunks();
        let outputs = match codec::input_rows(&prepared.grid, &prepared.layout, &m.encoding) {
            InputRows::F32(x) => self.encoder.run(rows, Batch::F32(&x))?,
            InputRows::I64(x) => self.encoder.run(rows, Batch::I64(&x))?,
        };
        let size = m.latent_size;
        let mean = network::as_f32(&outputs[0])?.to_vec();
        let log_variance = if self.has_log_variance {
            Some(network::as_f32(&outputs[1])?.to_vec())
        } else {
            None
        };
        if mean.len() != rows * size {
            return Err(EngineError::Inference(format!(
                "the encoder gave {} values for {rows} rows of {size}",
                mean.len()
            )));
        }
        Ok(Latents {
            rows,
            size,
            mean,
            log_variance,
        })
    }

    /// Decodes `rows` latent codes in one batched call; returns the logits,
    /// row-major [rows × steps × classes].
    pub fn decode(&mut self, codes: &[f32], rows: usize) -> Result<Vec<f32>, EngineError> {
        let m = &self.package.manifest;
        if codes.len() != rows * m.latent_size {
            return Err(EngineError::Inference(format!(
                "{} latent values do not make {rows} rows of {}",
                codes.len(),
                m.latent_size
            )));
        }
        let outputs = self.decoder.run(rows, Batch::F32(codes))?;
        let logits = network::as_f32(&outputs[0])?.to_vec();
        let expected = rows * m.grid.steps() * m.encoding.classes();
        if logits.len() != expected {
            return Err(EngineError::Inference(format!(
                "the decoder gave {} logits, expected {expected}",
                logits.len()
            )));
        }
        Ok(logits)
    }

    /// Reads the logits of one take (its `layout.chunks()` consecutive rows,
    /// starting at row `first_row`) into a grid on the prompt's metre.
    pub fn read_take(
        &self,
        logits: &[f32],
        first_row: usize,
        prepared: &Prepared,
        choice: &NoteChoice,
        stream: u64,
        mask: &PitchMask,
        holes: &mut HoleReport,
    ) -> Grid {
        let m = &self.package.manifest;
        let row_len = m.grid.steps() * m.encoding.classes();
        let mut chooser = Chooser::new(choice, stream, mask);
        let mut notes: Vec<GridNote> = Vec::new();
        for chunk in 0..prepared.layout.chunks() {
            let row = &logits[(first_row + chunk) * row_len..(first_row + chunk + 1) * row_len];
            notes.extend(codec::read_row(
                row,
                chunk,
                &prepared.layout,
                &m.encoding,
                &mut chooser,
                holes,
            ));
        }
        for n in &mut notes {
            n.velocity = prepared.velocity_at(n.start);
        }
        Grid {
            notes,
            ..prepared.layout.empty_grid()
        }
    }

    /// The latent offset for slider values (one per axis; missing ones are 0).
    pub fn offset_for(&self, sliders: &[f32]) -> Vec<f32> {
        let mut v = vec![0.0; self.latent_size()];
        for (axis, s) in self.axes.iter().zip(sliders) {
            for (o, d) in v.iter_mut().zip(&axis.direction) {
                *o += s * axis.span * d;
            }
        }
        v
    }
}
