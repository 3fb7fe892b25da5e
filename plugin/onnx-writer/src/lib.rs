//! Writes small ONNX models with the protobuf types tract ships
//! (`tract_onnx::pb`) and `prost`: Nudgebar's demo encoder and decoder, and
//! the known-weight models the tests build.
//!
//! [`GraphBuilder`] is the general tool (typed inputs/outputs with a symbolic
//! batch dimension, initializers, nodes with attributes; opset 13, IR 8);
//! [`encoder_graph`] and [`decoder_graph`] write multilayer perceptrons.

pub mod graph;
pub mod mlp;

pub use graph::{Attr, Dim, ElemType, GraphBuilder, BATCH, IR_VERSION, OPSET};
pub use mlp::{
    decoder_graph, encoder_graph, forward, Activation, DecoderSpec, Dense, EncoderSpec, Layer,
};

/// Re-exported so tests can load what they wrote with the same tract the
/// engine uses, without a second dependency line to keep in step.
pub use tract_onnx;
/// Re-exported so callers can edit a model before writing it.
pub use tract_onnx::pb;

#[cfg(test)]
mod tests;
