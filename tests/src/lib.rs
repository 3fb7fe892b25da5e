//! Shared helpers for Nudgebar's cross-crate tests.
//!
//! The reference checks run small Python scripts (in `tests/py/`) with
//! general-purpose libraries from PyPI (mido, pretty_midi, music21, onnx,
//! onnxruntime), installed by `cargo xtask test` into `target/pyref`.

pub mod cli;
pub mod host;
pub mod hostile;
pub mod pyref;
pub mod tiny_model;
pub mod tract_run;

use std::path::PathBuf;

/// The workspace root (the folder holding the top-level Cargo.toml).
pub fn workspace_root() -> PathBuf {
    PathBuf::from(env!("CARGO_MANIFEST_DIR")).parent().expect("tests/ has a parent").to_path_buf()
}

/// A fresh scratch folder under `target/test-scratch/<name>`, emptied first.
pub fn scratch_dir(name: &str) -> PathBuf {
    let dir = workspace_root().join("target").join("test-scratch").join(name);
    let _ = std::fs::remove_dir_all(&dir);
    std::fs::create_dir_all(&dir).expect("create scratch dir");
    dir
}
