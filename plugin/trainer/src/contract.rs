//! The demo model's side of the model contract: its grid, its token
//! encoding and which latent dimension is regularized for which attribute.
//! The trainer, the exporter and the proof all read these, so the manifest
//! cannot drift from what the network was trained on.

use nudgebar_engine::manifest::{Encoding, GridSpec, TokenInput};
use nudgebar_music::attributes::Attribute;
use nudgebar_music::TimeSignature;

/// Sixteenth-note steps of one 4/4 measure.
pub const STEPS: usize = 16;
/// Lowest and highest pitch token: C3 and B5, the corpus's horn range.
pub const LOWEST_PITCH: u8 = 48;
pub const HIGHEST_PITCH: u8 = 83;
/// Pitch tokens come first (token `i` = MIDI `LOWEST_PITCH + i`), then these two.
pub const HOLD_TOKEN: usize = 36;
pub const REST_TOKEN: usize = 37;
/// Token classes per step.
pub const CLASSES: usize = 38;
/// One-hot input values per measure.
pub const INPUT: usize = STEPS * CLASSES;
/// Length of the latent code.
pub const LATENT: usize = 32;

/// The regularized attributes; `REGULARIZED[r]` is tied to latent dimension `r`.
pub const REGULARIZED: [Attribute; 4] = [
    Attribute::NoteDensity,
    Attribute::PitchRange,
    Attribute::RhythmicComplexity,
    Attribute::Contour,
];

/// ONNX tensor names, written into both the graphs and the manifest.
pub const ENCODER_INPUT: &str = "tokens";
pub const ENCODER_MEAN: &str = "mean";
pub const ENCODER_LOG_VARIANCE: &str = "log_variance";
pub const DECODER_INPUT: &str = "code";
pub const DECODER_OUTPUT: &str = "logits";

pub fn grid_spec() -> GridSpec {
    GridSpec {
        steps_per_measure: STEPS,
        measures: 1,
        time_signature: TimeSignature::FOUR_FOUR,
    }
}

pub fn encoding() -> Encoding {
    Encoding::Tokens {
        lowest_pitch: LOWEST_PITCH,
        highest_pitch: HIGHEST_PITCH,
        hold_token: HOLD_TOKEN,
        rest_token: REST_TOKEN,
        input: TokenInput::OneHot,
    }
}
