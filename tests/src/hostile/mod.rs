//! Hostile model packages: a generator of broken, absurd and booby-trapped
//! packages built from the known-weights model (`tiny_model`), for the
//! reliability tests (tests/tests/hostile_models.rs).
//!
//! Each [`Case`] says what it breaks, which [`Category`] it belongs to (the
//! rows of the README's reliability table) and what Nudgebar must do with
//! it: refuse it with a given `ModelError` variant whose sentence names the
//! problem, or — for graphs that are valid but decode garbage — load it and
//! still make sane takes. ONNX files are corrupted at the protobuf level
//! (`tract_onnx::pb` decoded and re-encoded with `prost`), so each case
//! breaks exactly one thing.

mod cases;
mod edit;
mod file_cases;
mod manifest_cases;
mod onnx_cases;

pub use cases::cases;
pub use edit::noise_bytes;

use nudgebar_engine::{Engine, ModelError, ModelOrigin, ModelPackage};
use std::path::PathBuf;

/// The kinds of hostile input, one row each in the reliability table.
#[derive(Debug, Clone, Copy, PartialEq, Eq, PartialOrd, Ord)]
pub enum Category {
    /// Files that are not ONNX at all, or broken at the byte level.
    OnnxBytes,
    /// ONNX that decodes but whose graph cannot be built or run.
    GraphStructure,
    /// Graphs whose tensors disagree with what the manifest promises.
    TensorContract,
    /// NaN/inf weights and decoders that emit garbage.
    Weights,
    /// Manifests that are wrong in themselves.
    Manifest,
    /// Declared or actual sizes far beyond anything sensible.
    AbsurdSizes,
    /// Folders and files that are missing, of the wrong kind, or traps.
    Files,
}

impl Category {
    pub const ALL: [Category; 7] = [
        Category::OnnxBytes,
        Category::GraphStructure,
        Category::TensorContract,
        Category::Weights,
        Category::Manifest,
        Category::AbsurdSizes,
        Category::Files,
    ];

    pub fn label(self) -> &'static str {
        match self {
            Category::OnnxBytes => "ONNX bytes (truncated, random, empty, wrong file)",
            Category::GraphStructure => {
                "Graph structure (unknown ops, cycles, broken initializers)"
            }
            Category::TensorContract => "Tensor contract (names, ranks, sizes, dtypes vs manifest)",
            Category::Weights => "Weights and outputs (NaN/inf, garbage logits)",
            Category::Manifest => "Manifest (version, schema, values, JSON itself)",
            Category::AbsurdSizes => "Absurd sizes (declared and on disk)",
            Category::Files => "Files and folders (missing, wrong kind, traps)",
        }
    }
}

/// How a hostile package reaches the loader.
#[derive(Debug, Clone)]
pub enum Input {
    /// Bytes in memory, loaded with `ModelPackage::from_parts`.
    Parts {
        manifest: String,
        encoder: Vec<u8>,
        decoder: Vec<u8>,
    },
    /// A folder on disk, loaded with `ModelPackage::load`.
    Folder(PathBuf),
}

/// What Nudgebar must do with a case.
#[derive(Debug, Clone)]
pub enum Expect {
    /// Refused: the `ModelError` variant (by name) and words its sentence
    /// must contain, so the user learns what is wrong and where.
    Refused {
        variant: &'static str,
        words: &'static [&'static str],
    },
    /// The graphs are valid, so the package loads; its decoder emits
    /// garbage, and variation must still return sane takes or a clear error.
    LoadsButDecodesGarbage,
}

#[derive(Debug, Clone)]
pub struct Case {
    pub name: &'static str,
    pub category: Category,
    pub input: Input,
    pub expect: Expect,
}

/// The `ModelError` variant's name, for matching against [`Expect::Refused`].
pub fn variant_name(e: &ModelError) -> &'static str {
    match e {
        ModelError::FolderUnreadable(..) => "FolderUnreadable",
        ModelError::MissingFile { .. } => "MissingFile",
        ModelError::FileTooLarge { .. } => "FileTooLarge",
        ModelError::ManifestSyntax { .. } => "ManifestSyntax",
        ModelError::NotAManifest { .. } => "NotAManifest",
        ModelError::UnsupportedVersion { .. } => "UnsupportedVersion",
        ModelError::ManifestField { .. } => "ManifestField",
        ModelError::ManifestValue(_) => "ManifestValue",
        ModelError::OnnxUnreadable { .. } => "OnnxUnreadable",
        ModelError::OnnxUnsupported { .. } => "OnnxUnsupported",
        ModelError::TensorNotFound { .. } => "TensorNotFound",
        ModelError::TensorMismatch { .. } => "TensorMismatch",
        ModelError::FixedBatch { .. } => "FixedBatch",
        ModelError::NonFiniteOutput { .. } => "NonFiniteOutput",
    }
}

/// Loads a case the way the plugin's worker does: read the package, then
/// check and plan its graphs.
pub fn load(input: &Input) -> Result<Engine, ModelError> {
    let package = match input {
        Input::Parts {
            manifest,
            encoder,
            decoder,
        } => ModelPackage::from_parts(
            manifest,
            encoder.clone(),
            decoder.clone(),
            ModelOrigin::Embedded,
        ),
        Input::Folder(dir) => ModelPackage::load(dir),
    }?;
    Engine::new(package)
}
