//! Why a variation request failed: one sentence each. Nothing the user had
//! is lost when one of these comes back.

pub use nudgebar_contract::error::ModelError;

/// Why a variation request failed. Nothing the user had is lost.
#[derive(Debug, Clone, PartialEq, thiserror::Error)]
pub enum EngineError {
    #[error("The prompt is in {prompt}, but the model's grid holds only {model_steps} steps of {step} beats per measure, which cannot hold a {prompt} measure.")]
    MetreDoesNotFit {
        prompt: String,
        model_steps: usize,
        step: f64,
    },
    #[error("The prompt has {measures} measures; this model takes groups of {per_input}, so use a multiple of {per_input} measures.")]
    MeasuresDoNotFit { measures: u8, per_input: u8 },
    #[error("The prompt has {0} measures; Nudgebar takes 1 to 4.")]
    TooManyMeasures(u8),
    #[error("Ask for 1 to 16 takes (got {0}).")]
    TakeCount(usize),
    #[error("{0}")]
    Setting(String),
    #[error("The model failed while running: {0}.")]
    Inference(String),
}

impl From<tract_onnx::prelude::TractError> for EngineError {
    fn from(e: tract_onnx::prelude::TractError) -> Self {
        EngineError::Inference(format!("{e:#}"))
    }
}
