//! One ONNX graph made runnable: optimized tract plans, built once per
//! model, each with one reusable state, so a request does not re-plan or
//! re-allocate the graph's bookkeeping.
//!
//! The graph keeps its symbolic batch dimension in one general plan that
//! runs any batch size. Batch sizes that are actually used also get a plan
//! of their own, specialised to that size on first use: with every shape
//! known, tract picks its matrix kernels for that size when it plans (a
//! 16-row decode of the demo model's shape runs about 15% faster; see
//! `cargo xtask bench`). Only a few sizes occur (takes × prompt bars, plus
//! resampled takes), and the cache is capped so an odd caller cannot grow
//! it. A size tract cannot specialise keeps using the general plan, which
//! was checked when the model loaded.

use crate::error::EngineError;
use crate::graph_check::Ports;
use std::collections::HashMap;
use tract_onnx::prelude::*;

/// An input batch: f32 values (one-hot, piano roll, latent codes) or i64 token indices.
pub enum Batch<'a> {
    F32(&'a [f32]),
    I64(&'a [i64]),
}

/// Batch sizes given a plan of their own; beyond these the general plan
/// runs (a request asks for at most 16 takes of 4 bars = 64 rows).
const MAX_FIXED_PLANS: usize = 8;

/// A plan and its reusable state.
struct Runner {
    /// Kept alongside the state so the plan outlives every run.
    _plan: Arc<TypedSimplePlan>,
    state: TypedSimpleState,
}

impl Runner {
    fn new(model: TypedModel) -> TractResult<Runner> {
        let plan = model.into_optimized()?.into_runnable()?;
        let state = TypedSimpleState::new(&plan)?;
        Ok(Runner { _plan: plan, state })
    }
}

pub struct Network {
    /// The graph (outputs selected, not yet optimized) with its symbolic
    /// batch, kept to specialise plans from.
    model: TypedModel,
    /// The batch dimension's symbol, if the batch is symbolic.
    batch: Option<Symbol>,
    /// Runs any batch size.
    general: Runner,
    /// Plans for single batch sizes, made on first use (`None`: that size
    /// could not be specialised and runs on the general plan).
    fixed: Vec<(usize, Option<Runner>)>,
    /// Shape of one batch row (every dimension after the batch).
    row_shape: Vec<usize>,
}

impl Network {
    /// Optimizes `model` for the ports found by `graph_check` and builds its plan.
    pub fn build(mut model: TypedModel, ports: &Ports) -> TractResult<Network> {
        let input = model.input_fact(ports.input)?.clone();
        let row_shape = input
            .shape
            .iter()
            .skip(1)
            .map(|d| d.to_i64().map(|v| v as usize))
            .collect::<Result<Vec<_>, _>>()
            .map_err(|_| TractError::msg("input has a symbolic dimension after the batch"))?;
        let batch = match input.shape.iter().next() {
            Some(TDim::Sym(s)) => Some(s.clone()),
            _ => None,
        };
        model.select_output_outlets(&ports.outputs)?;
        let general = Runner::new(model.clone())?;
        Ok(Network {
            model,
            batch,
            general,
            fixed: Vec::new(),
            row_shape,
        })
    }

    /// Values per batch row of the input.
    pub fn row_len(&self) -> usize {
        self.row_shape.iter().product()
    }

    /// The plan for `rows`: a specialised one (made now if new and there is
    /// room), else the general one. A graph whose batch is fixed has only
    /// the general plan.
    fn runner(&mut self, rows: usize) -> &mut Runner {
        let Some(batch) = self.batch.clone() else {
            return &mut self.general;
        };
        let i = match self.fixed.iter().position(|(n, _)| *n == rows) {
            Some(i) => i,
            None if self.fixed.len() < MAX_FIXED_PLANS => {
                let sized = self
                    .model
                    .set_symbols(&HashMap::from([(batch, TDim::Val(rows as i64))]))
                    .and_then(Runner::new)
                    .ok();
                self.fixed.push((rows, sized));
                self.fixed.len() - 1
            }
            None => return &mut self.general,
        };
        match &mut self.fixed[i].1 {
            Some(runner) => runner,
            None => &mut self.general,
        }
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
        let runner = self.runner(rows);
        Ok(runner.state.run(tvec!(tensor.into_tvalue()))?)
    }
}

/// The values of an f32 output as one flat, row-major slice.
pub fn as_f32(value: &TValue) -> Result<&[f32], EngineError> {
    Ok(value.try_as_plain_ram()?.as_slice::<f32>()?)
}
