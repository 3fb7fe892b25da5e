//! Building blocks for hostile cases: the known-weights graphs as editable
//! protobufs, small editors for their nodes, initializers and declared
//! inputs/outputs, and the ways a case reaches the loader.

use super::{Expect, Input};
use crate::tiny_model::{self, Variant};
use nudgebar_onnx::pb;
use prost::Message;
use serde_json::Value;
use std::path::{Path, PathBuf};

// Building blocks

pub(super) fn encoder_proto() -> pb::ModelProto {
    pb::ModelProto::decode(&tiny_model::encoder_bytes(Variant::default())[..])
        .expect("the known-weights encoder decodes")
}

pub(super) fn decoder_proto() -> pb::ModelProto {
    pb::ModelProto::decode(&tiny_model::decoder_bytes(Variant::default())[..])
        .expect("the known-weights decoder decodes")
}

pub(super) fn graph(m: &mut pb::ModelProto) -> &mut pb::GraphProto {
    m.graph
        .as_mut()
        .expect("the known-weights models have a graph")
}

pub(super) fn initializer<'a>(m: &'a mut pb::ModelProto, name: &str) -> &'a mut pb::TensorProto {
    graph(m)
        .initializer
        .iter_mut()
        .find(|t| t.name == name)
        .unwrap_or_else(|| panic!("no initializer {name}"))
}

pub(super) fn node<'a>(m: &'a mut pb::ModelProto, op: &str) -> &'a mut pb::NodeProto {
    graph(m)
        .node
        .iter_mut()
        .find(|n| n.op_type == op)
        .unwrap_or_else(|| panic!("no {op} node"))
}

/// Sets the dims of a graph input or output (by name) to these values;
/// `None` is the symbolic `name` given beside it.
pub(super) fn set_io_shape(m: &mut pb::ModelProto, io: &str, dims: &[Result<i64, &str>]) {
    use pb::tensor_shape_proto::dimension::Value as D;
    let g = graph(m);
    let info = g
        .input
        .iter_mut()
        .chain(g.output.iter_mut())
        .find(|v| v.name == io)
        .unwrap_or_else(|| panic!("no graph input/output {io}"));
    let Some(pb::type_proto::Value::TensorType(t)) =
        info.r#type.as_mut().and_then(|t| t.value.as_mut())
    else {
        panic!("{io} is not a tensor");
    };
    t.shape = Some(pb::TensorShapeProto {
        dim: dims
            .iter()
            .map(|d| pb::tensor_shape_proto::Dimension {
                value: Some(match d {
                    Ok(v) => D::DimValue(*v),
                    Err(s) => D::DimParam(s.to_string()),
                }),
                ..Default::default()
            })
            .collect(),
    });
}

pub(super) fn set_io_type(m: &mut pb::ModelProto, io: &str, elem: pb::tensor_proto::DataType) {
    let g = graph(m);
    let info = g
        .input
        .iter_mut()
        .chain(g.output.iter_mut())
        .find(|v| v.name == io)
        .unwrap_or_else(|| panic!("no graph input/output {io}"));
    if let Some(pb::type_proto::Value::TensorType(t)) =
        info.r#type.as_mut().and_then(|t| t.value.as_mut())
    {
        t.elem_type = elem as i32;
    }
}

/// Rewrites the f32 values of an initializer.
pub(super) fn map_f32(m: &mut pb::ModelProto, name: &str, f: impl Fn(usize, f32) -> f32) {
    let t = initializer(m, name);
    let values: Vec<u8> = t
        .raw_data
        .chunks_exact(4)
        .enumerate()
        .flat_map(|(i, b)| f(i, f32::from_le_bytes([b[0], b[1], b[2], b[3]])).to_le_bytes())
        .collect();
    t.raw_data = values;
}

/// Deterministic bytes (SplitMix64, Steele, Lea & Flood, "Fast splittable
/// pseudorandom number generators", OOPSLA 2014), so a failing case repeats.
pub fn noise_bytes(seed: u64, len: usize) -> Vec<u8> {
    let mut state = seed;
    let mut out = Vec::with_capacity(len + 8);
    while out.len() < len {
        state = state.wrapping_add(0x9e37_79b9_7f4a_7c15);
        let mut z = state;
        z = (z ^ (z >> 30)).wrapping_mul(0xbf58_476d_1ce4_e5b9);
        z = (z ^ (z >> 27)).wrapping_mul(0x94d0_49bb_1331_11eb);
        out.extend_from_slice(&(z ^ (z >> 31)).to_le_bytes());
    }
    out.truncate(len);
    out
}

pub(super) fn manifest() -> Value {
    tiny_model::manifest_json()
}

pub(super) fn parts(manifest: Value, encoder: Vec<u8>, decoder: Vec<u8>) -> Input {
    Input::Parts {
        manifest: manifest.to_string(),
        encoder,
        decoder,
    }
}

pub(super) fn with_encoder(encoder: Vec<u8>) -> Input {
    parts(
        manifest(),
        encoder,
        tiny_model::decoder_bytes(Variant::default()),
    )
}

pub(super) fn with_decoder(decoder: Vec<u8>) -> Input {
    parts(
        manifest(),
        tiny_model::encoder_bytes(Variant::default()),
        decoder,
    )
}

pub(super) fn edited_manifest(edit: impl FnOnce(&mut Value)) -> Input {
    let mut m = manifest();
    edit(&mut m);
    parts(
        m,
        tiny_model::encoder_bytes(Variant::default()),
        tiny_model::decoder_bytes(Variant::default()),
    )
}

pub(super) fn manifest_text(text: String) -> Input {
    Input::Parts {
        manifest: text,
        encoder: tiny_model::encoder_bytes(Variant::default()),
        decoder: tiny_model::decoder_bytes(Variant::default()),
    }
}

pub(super) fn edited_encoder(edit: impl FnOnce(&mut pb::ModelProto)) -> Input {
    let mut m = encoder_proto();
    edit(&mut m);
    with_encoder(m.encode_to_vec())
}

pub(super) fn edited_decoder(edit: impl FnOnce(&mut pb::ModelProto)) -> Input {
    let mut m = decoder_proto();
    edit(&mut m);
    with_decoder(m.encode_to_vec())
}

/// A valid package written to `dir` (emptied first), for the file-system cases.
pub(super) fn package_folder(scratch: &Path, name: &str) -> PathBuf {
    let dir = scratch.join(name);
    let _ = std::fs::remove_dir_all(&dir);
    tiny_model::package()
        .save(&dir)
        .expect("write the known-weights package");
    dir
}

pub(super) fn refused(variant: &'static str, words: &'static [&'static str]) -> Expect {
    Expect::Refused { variant, words }
}
