//! Nudgebar's benchmarks (`cargo xtask bench`): what a request costs next
//! to onnxruntime and to the model's FLOP bound, what the audio thread
//! costs per `process()` call in instructions, how costs grow, and whether
//! take sets keep up with a dragged slider.
//!
//! Figures are ratios against references measured in the same run (and
//! instruction counts, which do not depend on the machine's load); nothing
//! here asserts a wall-clock time.
//!
//! - [`models`]: the demo model (or its stand-in) and the ~10× synthetic one;
//! - [`timing`]: rounds of calls, best and median;
//! - [`flops`]: multiply-adds counted from the ONNX graph, the measured FMA peak;
//! - [`ort`]: the same batches in onnxruntime (`tests/py/ort_bench.py`);
//! - [`engine_rows`], [`growth`], [`dragging`]: the engine-side sections;
//! - [`probe`], [`callgrind`]: the audio-thread scenarios and their counts;
//! - [`report`]: the tables.

pub mod callgrind;
pub mod dragging;
pub mod engine_rows;
pub mod flops;
pub mod growth;
pub mod models;
pub mod ort;
pub mod probe;
pub mod report;
pub mod timing;

use std::path::PathBuf;

/// The workspace root.
pub fn root() -> PathBuf {
    nudgebar_tests::workspace_root()
}

/// Where the bench writes its JSON, tables and scratch files.
pub fn out_dir() -> PathBuf {
    root().join("target/bench")
}
