//! One ONNX graph made runnable: the optimized tract plan, built once per
//! model, and one reusable state, so a request does not re-plan or
//! re-allocate the graph's bookkeeping.

use crate::error::EngineError;
use crate::graph_check::Ports;
use tract_onnx::prelude::*;

/// An input batch: f32 values (one-hot, piano roll, latent codes) or i64 token indices.
pub enum Batch<'a> {
    F32(&'a [f32]),
    I64(&'a [i64]),
}

pub struct Network {
    /// Kept alongside the state so the plan outlives every run.
    _plan: Arc<TypedSimplePlan>,
    state: TypedSimpleState,
    /// Shape of one batch row (every dimension after the batch).
    row_shape: Vec<usize>,
}

impl Network {
    /// Optimizes `model` for the ports found by `graph_check` and builds its plan.
    pub fn build(mut model: TypedModel, ports: &Ports) -> TractResult<Network> {
        let row_shape = model
            .input_fact(ports.input)?
            .shape
            .iter()
            .skip(1)
            .map(|d| d.to_i64().map(|v| v as usize))
            .collect::<Result<Vec<_>, _>>()
            .map_err(|_| TractError::msg("input has a symbolic dimension after the batch"))?;
        model.select_output_outlets(&ports.outputs)?;
        let plan = model.into_optimized()?.into_runnable()?;
        let state = TypedSimpleState::new(&plan)?;
        Ok(Network {
            _plan: plan,
            state,
            row_shape,
        })
    }

    /// Values per batch row of the input.
    pub fn row_len(&self) -> usize {
        self.row_shape.iter().product()
    }

    /// Runs one batch of `rows` rows; returns the outputs in port order.
    pub fn run(&mut self, rows: usize, input: Batch<'_>) -> Result<TVec<TValue>, EngineError> {
        let mut shape = Vec::with_capacity(self.row_shape.len() + 1);
        shape.push(rows);
        shape.extend_from_slice(&self.row_shape);
        let tensor = match input {
            Batch::F32(data) => Tensor::from_shape(&shape, data)?,
            Batch::I64(data) => Tensor::from_shape(&shape, data)?,
        };
        Ok(self.state.run(tvec!(tensor.into_tvalue()))?)
    }
}

/// The values of an f32 output as one flat, row-major slice.
pub fn as_f32(value: &TValue) -> Result<&[f32], EngineError> {
    Ok(value.try_as_plain_ram()?.as_slice::<f32>()?)
}
