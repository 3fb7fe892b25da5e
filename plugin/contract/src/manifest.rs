//! The model manifest: the JSON file that tells Nudgebar how to talk to a
//! user's encoder and decoder. The schema is ours (documented in
//! DEVELOPERS.md, "The model contract") and versioned so old packages keep
//! loading when it grows.
//!
//! Parsing checks the manifest on its own (ranges, names, sizes that must
//! agree with each other); `graph_check` then checks it against the ONNX
//! graphs.

use crate::error::ModelError;
use nudgebar_music::attributes::Attribute;
use nudgebar_music::TimeSignature;
use serde::{Deserialize, Serialize};

/// The value of the manifest's `format` field.
pub const FORMAT: &str = "nudgebar.model";
/// The manifest version this build writes and reads.
pub const VERSION: u32 = 1;
/// Largest grid a model may declare, per phrase: beyond this the tensors stop
/// being "a few measures of melody" and a typo is far more likely.
pub const MAX_GRID_STEPS: usize = 4 * 96;
/// Largest latent size we accept; keeps absurd declarations from allocating.
pub const MAX_LATENT: usize = 4096;

#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct Manifest {
    /// Always [`FORMAT`]; tells a Nudgebar manifest from any other JSON.
    pub format: String,
    /// Schema version, [`VERSION`] for now.
    pub version: u32,
    /// Shown to the user ("Wrenmouth ferry calls, 16-step AR-VAE").
    pub name: String,
    #[serde(default)]
    pub description: String,
    /// The grid the model was trained on.
    pub grid: GridSpec,
    /// How a grid becomes the encoder's input and the decoder's output back
    /// into notes.
    pub encoding: Encoding,
    pub encoder: EncoderSpec,
    pub decoder: DecoderSpec,
    /// Length of the latent code.
    pub latent_size: usize,
    /// The sliders: one per controlled attribute.
    pub axes: Vec<AxisSpec>,
}

#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct GridSpec {
    /// Equal steps per measure (16 = sixteenths in 4/4).
    pub steps_per_measure: usize,
    /// Measures per model input (most melody VAEs take one).
    pub measures: u8,
    /// The metre the model was trained on.
    pub time_signature: TimeSignature,
}

impl GridSpec {
    pub fn steps(&self) -> usize {
        // Saturating: a hostile manifest may declare a step count whose
        // product overflows; `check` then refuses it as too large.
        self.steps_per_measure
            .saturating_mul(self.measures as usize)
    }
    /// Length of one step in quarter-note beats.
    pub fn step_beats(&self) -> f64 {
        self.time_signature.quarters_per_measure() / self.steps_per_measure as f64
    }
}

#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
#[serde(tag = "kind", rename_all = "snake_case", deny_unknown_fields)]
pub enum Encoding {
    /// One token per step: a pitch, "hold the previous note", or "rest".
    /// Pitch token `i` is MIDI pitch `lowest_pitch + i`.
    Tokens {
        lowest_pitch: u8,
        highest_pitch: u8,
        hold_token: usize,
        rest_token: usize,
        /// How the encoder takes the tokens.
        input: TokenInput,
    },
    /// A multi-hot grid of steps × pitches (polyphonic or drum models).
    /// Decoder outputs are logits; a cell sounds when sigmoid(logit) > threshold.
    PianoRoll {
        lowest_pitch: u8,
        highest_pitch: u8,
        threshold: f32,
        /// Whether a lit cell starts a one-step note (drums) or consecutive
        /// lit cells of a pitch form one held note (sustained parts).
        cells: RollCells,
    },
}

#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize, Deserialize)]
#[serde(rename_all = "snake_case")]
pub enum TokenInput {
    /// f32 one-hot, steps × classes (any shape with that many values after the batch).
    OneHot,
    /// i64 token indices, one per step.
    Indices,
}

#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize, Deserialize)]
#[serde(rename_all = "snake_case")]
pub enum RollCells {
    Onsets,
    Sustain,
}

impl Encoding {
    pub fn lowest_pitch(&self) -> u8 {
        match *self {
            Encoding::Tokens { lowest_pitch, .. } | Encoding::PianoRoll { lowest_pitch, .. } => {
                lowest_pitch
            }
        }
    }
    pub fn highest_pitch(&self) -> u8 {
        match *self {
            Encoding::Tokens { highest_pitch, .. } | Encoding::PianoRoll { highest_pitch, .. } => {
                highest_pitch
            }
        }
    }
    pub fn pitch_count(&self) -> usize {
        (self.highest_pitch() as usize + 1).saturating_sub(self.lowest_pitch() as usize)
    }
    /// Values per step the decoder emits: token classes, or roll pitches.
    pub fn classes(&self) -> usize {
        match self {
            Encoding::Tokens { .. } => self.pitch_count() + 2,
            Encoding::PianoRoll { .. } => self.pitch_count(),
        }
    }
    /// Values per step the encoder takes.
    pub fn input_per_step(&self) -> usize {
        match self {
            Encoding::Tokens {
                input: TokenInput::Indices,
                ..
            } => 1,
            _ => self.classes(),
        }
    }
    /// Whether the encoder's input tensor holds i64 indices rather than f32.
    pub fn input_is_indices(&self) -> bool {
        matches!(
            self,
            Encoding::Tokens {
                input: TokenInput::Indices,
                ..
            }
        )
    }
    pub fn is_monophonic(&self) -> bool {
        matches!(self, Encoding::Tokens { .. })
    }
}

#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct EncoderSpec {
    /// ONNX file name inside the package folder.
    pub file: String,
    /// Name of the graph input that takes the encoded grid.
    pub input: String,
    /// Name of the output holding the posterior mean (the latent code we steer).
    pub mean: String,
    /// Name of the log-variance output, when the encoder gives one; Nudgebar
    /// does not need it to steer, but reports it and checks its shape.
    #[serde(default)]
    pub log_variance: Option<String>,
}

#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct DecoderSpec {
    pub file: String,
    /// Name of the graph input that takes latent codes, [batch, latent_size].
    pub input: String,
    /// Name of the output holding logits, steps × classes per batch row.
    pub output: String,
}

#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct AxisSpec {
    /// The musical attribute this axis moves, by key ("note_density", …).
    pub attribute: String,
    /// Slider label; defaults to the attribute's own label when empty.
    #[serde(default)]
    pub label: String,
    /// Latent distance that a full slider throw (±1) moves the code.
    pub span: f32,
    /// The regularized latent dimension (AR-VAE models) …
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub dimension: Option<usize>,
    /// … or a direction in latent space (derived axes); normalised on load.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub direction: Option<Vec<f32>>,
    /// Slider values where the model is known to decode badly, from the
    /// model report (0–1 hole rate per slider position); optional.
    #[serde(default, skip_serializing_if = "Vec::is_empty")]
    pub hole_rate: Vec<f32>,
}

/// A control axis, resolved: the attribute it moves and the unit direction
/// in latent space a slider value of 1 moves by `span`.
#[derive(Debug, Clone, PartialEq)]
pub struct Axis {
    pub attribute: Attribute,
    pub label: String,
    pub span: f32,
    /// Unit vector of length latent_size.
    pub direction: Vec<f32>,
    /// The regularized dimension when the axis is one (so perturbation can
    /// leave it alone).
    pub dimension: Option<usize>,
    pub hole_rate: Vec<f32>,
}

impl Manifest {
    /// Parses and checks a manifest on its own. `where_` names the file for
    /// error messages.
    pub fn parse(json: &str, where_: &str) -> Result<Manifest, ModelError> {
        // Look at the format and version first, so a manifest from a newer
        // Nudgebar says so instead of failing on a field we do not know.
        let raw: serde_json::Value =
            serde_json::from_str(json).map_err(|e| ModelError::ManifestSyntax {
                file: where_.to_string(),
                line: e.line(),
                column: e.column(),
                detail: e.to_string(),
            })?;
        let format = raw.get("format").and_then(|f| f.as_str()).unwrap_or("");
        if format != FORMAT {
            return Err(ModelError::NotAManifest {
                file: where_.to_string(),
                found: format.to_string(),
            });
        }
        match raw.get("version").and_then(|v| v.as_u64()) {
            Some(v) if v == VERSION as u64 => {}
            other => {
                return Err(ModelError::UnsupportedVersion {
                    file: where_.to_string(),
                    found: other,
                })
            }
        }
        let manifest: Manifest =
            serde_json::from_value(raw).map_err(|e| ModelError::ManifestField {
                file: where_.to_string(),
                detail: e.to_string(),
            })?;
        manifest.check()?;
        Ok(manifest)
    }

    pub fn to_json(&self) -> String {
        serde_json::to_string_pretty(self).expect("a manifest always serializes")
    }

    /// Rules the manifest must keep on its own, before any graph is read.
    fn check(&self) -> Result<(), ModelError> {
        let bad = |what: String| Err(ModelError::ManifestValue(what));
        let g = &self.grid;
        if g.steps_per_measure == 0 || g.measures == 0 || g.steps() > MAX_GRID_STEPS {
            return bad(format!(
                "the grid declares {} steps per measure over {} measures; Nudgebar takes 1 to {} steps in all",
                g.steps_per_measure, g.measures, MAX_GRID_STEPS
            ));
        }
        if TimeSignature::new(g.time_signature.numerator, g.time_signature.denominator).is_err() {
            return bad(format!(
                "the grid's time signature {} is not a valid metre",
                g.time_signature
            ));
        }
        let (lo, hi) = (self.encoding.lowest_pitch(), self.encoding.highest_pitch());
        if lo > hi || hi > 127 {
            return bad(format!(
                "the encoding's pitch range {lo}..={hi} is empty or beyond MIDI's 0..=127"
            ));
        }
        match self.encoding {
            Encoding::Tokens {
                hold_token,
                rest_token,
                ..
            } => {
                let classes = self.encoding.classes();
                let pitches = self.encoding.pitch_count();
                for (name, t) in [("hold_token", hold_token), ("rest_token", rest_token)] {
                    if t < pitches || t >= classes {
                        return bad(format!(
                            "{name} is {t}, but with {pitches} pitch tokens (0..{pitches}) the hold and rest tokens must be {pitches} and {}",
                            pitches + 1
                        ));
                    }
                }
                if hold_token == rest_token {
                    return bad(format!(
                        "hold_token and rest_token are both {hold_token}; they must differ"
                    ));
                }
            }
            Encoding::PianoRoll { threshold, .. } => {
                if !(threshold > 0.0 && threshold < 1.0) {
                    return bad(format!("the piano-roll threshold is {threshold}; it must lie strictly between 0 and 1"));
                }
            }
        }
        if self.latent_size == 0 || self.latent_size > MAX_LATENT {
            return bad(format!(
                "latent_size is {}; Nudgebar takes 1 to {MAX_LATENT}",
                self.latent_size
            ));
        }
        if self.axes.is_empty() {
            return bad("the manifest declares no axes, so there would be nothing to steer".into());
        }
        let mut seen = Vec::new();
        for (i, axis) in self.axes.iter().enumerate() {
            let n = i + 1;
            let Some(attribute) = Attribute::from_key(&axis.attribute) else {
                let known: Vec<&str> = Attribute::ALL.iter().map(|a| a.key()).collect();
                return bad(format!(
                    "axis {n} controls \"{}\", which is not an attribute Nudgebar measures (known: {})",
                    axis.attribute,
                    known.join(", ")
                ));
            };
            if seen.contains(&attribute) {
                return bad(format!(
                    "two axes control {}; each attribute may have one axis",
                    attribute.key()
                ));
            }
            seen.push(attribute);
            if !(axis.span.is_finite() && axis.span > 0.0 && axis.span <= 1000.0) {
                return bad(format!(
                    "axis {n} ({}) has span {}; it must be a positive latent distance",
                    axis.attribute, axis.span
                ));
            }
            // Rates are shares of bad decodes; JSON numbers too large for
            // f32 arrive as infinity, which would not even save back.
            if axis.hole_rate.iter().any(|r| !(0.0..=1.0).contains(r)) {
                return bad(format!(
                    "axis {n} ({}) has a hole_rate entry outside 0 to 1; each entry is the share of bad decodes at one slider position",
                    axis.attribute
                ));
            }
            match (&axis.dimension, &axis.direction) {
                (Some(d), None) => {
                    if *d >= self.latent_size {
                        return bad(format!(
                            "axis {n} ({}) uses latent dimension {d}, but the latent code has only {} dimensions (0..{})",
                            axis.attribute, self.latent_size, self.latent_size
                        ));
                    }
                }
                (None, Some(v)) => {
                    if v.len() != self.latent_size {
                        return bad(format!(
                            "axis {n} ({}) has a direction of length {}, but latent_size is {}",
                            axis.attribute,
                            v.len(),
                            self.latent_size
                        ));
                    }
                    let norm: f32 = v.iter().map(|x| x * x).sum::<f32>().sqrt();
                    if !norm.is_finite() || norm < 1e-6 {
                        return bad(format!(
                            "axis {n} ({}) has a zero or non-finite direction",
                            axis.attribute
                        ));
                    }
                }
                _ => {
                    return bad(format!(
                        "axis {n} ({}) must give exactly one of \"dimension\" or \"direction\"",
                        axis.attribute
                    ))
                }
            }
        }
        for (what, name) in [
            ("encoder", &self.encoder.file),
            ("decoder", &self.decoder.file),
        ] {
            if name.is_empty() || name.contains('/') || name.contains('\\') || name.starts_with('.')
            {
                return bad(format!("the {what} file \"{name}\" must be a plain file name inside the package folder"));
            }
        }
        Ok(())
    }

    /// The axes with their directions resolved to unit vectors.
    pub fn resolved_axes(&self) -> Vec<Axis> {
        self.axes
            .iter()
            .map(|a| {
                let attribute = Attribute::from_key(&a.attribute).expect("checked on parse");
                let direction = match (&a.dimension, &a.direction) {
                    (Some(d), _) => {
                        let mut v = vec![0.0; self.latent_size];
                        v[*d] = 1.0;
                        v
                    }
                    (None, Some(v)) => {
                        let norm: f32 = v.iter().map(|x| x * x).sum::<f32>().sqrt();
                        v.iter().map(|x| x / norm).collect()
                    }
                    (None, None) => unreachable!("checked on parse"),
                };
                Axis {
                    attribute,
                    label: if a.label.is_empty() {
                        attribute.label().to_string()
                    } else {
                        a.label.clone()
                    },
                    span: a.span,
                    direction,
                    dimension: a.dimension,
                    hole_rate: a.hole_rate.clone(),
                }
            })
            .collect()
    }
}
