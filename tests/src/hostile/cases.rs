//! Every hostile case, gathered from the per-kind lists.

use super::{file_cases, manifest_cases, onnx_cases, Case};
use std::path::Path;

/// Every hostile case. File-system cases are written under `scratch`
/// (sparse files take no disk space); the rest live in memory.
pub fn cases(scratch: &Path) -> Vec<Case> {
    let mut all = Vec::new();
    all.extend(onnx_cases::onnx_bytes());
    all.extend(onnx_cases::graph_structure());
    all.extend(onnx_cases::tensor_contract());
    all.extend(onnx_cases::weights());
    all.extend(manifest_cases::manifests());
    all.extend(manifest_cases::absurd_sizes(scratch));
    all.extend(file_cases::files(scratch));
    all
}
