//! Why a model package was refused: each case one sentence a user can act
//! on, saying where the problem is and what was expected.

use std::path::PathBuf;

/// Why a model package was refused. The previous model stays active.
#[derive(Debug, Clone, PartialEq, thiserror::Error)]
pub enum ModelError {
    #[error("The model folder {0} cannot be read: {1}.")]
    FolderUnreadable(PathBuf, String),
    #[error("The model folder {folder} has no {file}; a package needs manifest.json plus the encoder and decoder files it names.")]
    MissingFile { folder: PathBuf, file: String },
    #[error("{file} is {size} bytes, more than the {limit}-byte limit for {what}; is this the right file?")]
    FileTooLarge {
        file: String,
        size: u64,
        limit: u64,
        what: &'static str,
    },
    #[error("{file} is not valid JSON (line {line}, column {column}): {detail}.")]
    ManifestSyntax {
        file: String,
        line: usize,
        column: usize,
        detail: String,
    },
    #[error("{file} is not a Nudgebar model manifest: its \"format\" is \"{found}\", expected \"nudgebar.model\".")]
    NotAManifest { file: String, found: String },
    #[error("{file} has manifest version {}, but this Nudgebar reads version 1; re-export the model or update Nudgebar.", found.map(|v| v.to_string()).unwrap_or_else(|| "(missing)".into()))]
    UnsupportedVersion { file: String, found: Option<u64> },
    #[error("{file} has a missing or mistyped field: {detail}.")]
    ManifestField { file: String, detail: String },
    #[error("The manifest is inconsistent: {0}.")]
    ManifestValue(String),
    #[error("The {which} file {file} is not a loadable ONNX model: {detail}.")]
    OnnxUnreadable {
        which: &'static str,
        file: String,
        detail: String,
    },
    #[error("The {which} graph cannot run in Nudgebar's inference engine (tract): {detail}.")]
    OnnxUnsupported { which: &'static str, detail: String },
    #[error("The manifest names {kind} \"{name}\" for the {which}, but the graph has no such {kind} (it has: {available}).")]
    TensorNotFound {
        which: &'static str,
        kind: &'static str,
        name: String,
        available: String,
    },
    #[error("The {which} {kind} \"{name}\" is {found}, but the manifest implies {expected}.")]
    TensorMismatch {
        which: &'static str,
        kind: &'static str,
        name: String,
        found: String,
        expected: String,
    },
    #[error("The {which} {kind} \"{name}\" has a fixed first dimension ({found}); Nudgebar runs all takes in one batch and needs a symbolic batch dimension there.")]
    FixedBatch {
        which: &'static str,
        kind: &'static str,
        name: String,
        found: String,
    },
    #[error("The {which} graph gives non-finite values (NaN or infinity) on a silent test input; its weights are probably broken.")]
    NonFiniteOutput { which: &'static str },
}
