//! Runs an ONNX file straight through tract, outside Nudgebar's engine, so
//! reference tests compare the raw graph with onnxruntime or a trainer.

use nudgebar_onnx::tract_onnx::{self, prelude::*};

/// Runs `bytes` on one f32 input of `shape`; returns every output as
/// (shape, values flattened row-major).
pub fn tract_run(bytes: &[u8], shape: &[usize], data: &[f32]) -> Vec<(Vec<usize>, Vec<f32>)> {
    let model = tract_onnx::onnx()
        .model_for_read(&mut &bytes[..])
        .expect("tract parses the file");
    let plan = model
        .into_optimized()
        .expect("optimizes")
        .into_runnable()
        .expect("runnable");
    let input = Tensor::from_shape(shape, data).unwrap();
    plan.run(tvec!(input.into()))
        .expect("tract runs the file")
        .into_iter()
        .map(|t| {
            (
                t.shape().to_vec(),
                t.to_plain_array_view::<f32>()
                    .unwrap()
                    .iter()
                    .copied()
                    .collect(),
            )
        })
        .collect()
}
