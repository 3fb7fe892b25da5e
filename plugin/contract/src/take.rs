//! A take: what the engine made, as the plugin keeps it and the offline
//! command writes it. Lives here, beside the model contract, so saved
//! sessions can be read without the inference engine.

use nudgebar_music::attributes::Readout;
use nudgebar_music::Phrase;
use serde::{Deserialize, Serialize};

#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct Take {
    pub phrase: Phrase,
    pub attributes: Readout,
    /// Attributes of the take minus those of the prompt.
    pub change: Readout,
    /// The latent code(s) it was decoded from, one row per model input chunk.
    pub latent: Vec<f32>,
    /// The noise stream that made it; with the request it reproduces the take.
    pub stream: u64,
}
