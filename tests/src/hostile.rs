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

use crate::tiny_model::{self, Variant};
use nudgebar_engine::package::{MAX_MANIFEST_BYTES, MAX_ONNX_BYTES};
use nudgebar_engine::{Engine, ModelError, ModelOrigin, ModelPackage};
use nudgebar_onnx::pb;
use prost::Message;
use serde_json::{json, Value};
use std::path::{Path, PathBuf};

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

// ---------------------------------------------------------------------------
// Building blocks

fn encoder_proto() -> pb::ModelProto {
    pb::ModelProto::decode(&tiny_model::encoder_bytes(Variant::default())[..])
        .expect("the known-weights encoder decodes")
}

fn decoder_proto() -> pb::ModelProto {
    pb::ModelProto::decode(&tiny_model::decoder_bytes(Variant::default())[..])
        .expect("the known-weights decoder decodes")
}

fn graph(m: &mut pb::ModelProto) -> &mut pb::GraphProto {
    m.graph
        .as_mut()
        .expect("the known-weights models have a graph")
}

fn initializer<'a>(m: &'a mut pb::ModelProto, name: &str) -> &'a mut pb::TensorProto {
    graph(m)
        .initializer
        .iter_mut()
        .find(|t| t.name == name)
        .unwrap_or_else(|| panic!("no initializer {name}"))
}

fn node<'a>(m: &'a mut pb::ModelProto, op: &str) -> &'a mut pb::NodeProto {
    graph(m)
        .node
        .iter_mut()
        .find(|n| n.op_type == op)
        .unwrap_or_else(|| panic!("no {op} node"))
}

/// Sets the dims of a graph input or output (by name) to these values;
/// `None` is the symbolic `name` given beside it.
fn set_io_shape(m: &mut pb::ModelProto, io: &str, dims: &[Result<i64, &str>]) {
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

fn set_io_type(m: &mut pb::ModelProto, io: &str, elem: pb::tensor_proto::DataType) {
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
fn map_f32(m: &mut pb::ModelProto, name: &str, f: impl Fn(usize, f32) -> f32) {
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

fn manifest() -> Value {
    tiny_model::manifest_json()
}

fn parts(manifest: Value, encoder: Vec<u8>, decoder: Vec<u8>) -> Input {
    Input::Parts {
        manifest: manifest.to_string(),
        encoder,
        decoder,
    }
}

fn with_encoder(encoder: Vec<u8>) -> Input {
    parts(
        manifest(),
        encoder,
        tiny_model::decoder_bytes(Variant::default()),
    )
}

fn with_decoder(decoder: Vec<u8>) -> Input {
    parts(
        manifest(),
        tiny_model::encoder_bytes(Variant::default()),
        decoder,
    )
}

fn edited_manifest(edit: impl FnOnce(&mut Value)) -> Input {
    let mut m = manifest();
    edit(&mut m);
    parts(
        m,
        tiny_model::encoder_bytes(Variant::default()),
        tiny_model::decoder_bytes(Variant::default()),
    )
}

fn manifest_text(text: String) -> Input {
    Input::Parts {
        manifest: text,
        encoder: tiny_model::encoder_bytes(Variant::default()),
        decoder: tiny_model::decoder_bytes(Variant::default()),
    }
}

fn edited_encoder(edit: impl FnOnce(&mut pb::ModelProto)) -> Input {
    let mut m = encoder_proto();
    edit(&mut m);
    with_encoder(m.encode_to_vec())
}

fn edited_decoder(edit: impl FnOnce(&mut pb::ModelProto)) -> Input {
    let mut m = decoder_proto();
    edit(&mut m);
    with_decoder(m.encode_to_vec())
}

/// A valid package written to `dir` (emptied first), for the file-system cases.
fn package_folder(scratch: &Path, name: &str) -> PathBuf {
    let dir = scratch.join(name);
    let _ = std::fs::remove_dir_all(&dir);
    tiny_model::package()
        .save(&dir)
        .expect("write the known-weights package");
    dir
}

fn refused(variant: &'static str, words: &'static [&'static str]) -> Expect {
    Expect::Refused { variant, words }
}

// ---------------------------------------------------------------------------
// The cases

/// Every hostile case. File-system cases are written under `scratch`
/// (sparse files take no disk space); the rest live in memory.
pub fn cases(scratch: &Path) -> Vec<Case> {
    let mut all = Vec::new();
    all.extend(onnx_bytes());
    all.extend(graph_structure());
    all.extend(tensor_contract());
    all.extend(weights());
    all.extend(manifests());
    all.extend(absurd_sizes(scratch));
    all.extend(files(scratch));
    all
}

fn onnx_bytes() -> Vec<Case> {
    use Category::OnnxBytes as C;
    let decoder = tiny_model::decoder_bytes(Variant::default());
    let mut midi = Vec::new();
    midi.extend_from_slice(
        b"MThd\x00\x00\x00\x06\x00\x00\x00\x01\x01\xe0MTrk\x00\x00\x00\x04\x00\xff\x2f\x00",
    );
    let mut no_graph = encoder_proto();
    no_graph.graph = None;
    vec![
        Case {
            name: "empty encoder file",
            category: C,
            input: with_encoder(Vec::new()),
            expect: refused("OnnxUnreadable", &["encoder", "encoder.onnx"]),
        },
        Case {
            name: "decoder cut off halfway",
            category: C,
            input: with_decoder(decoder[..decoder.len() / 2].to_vec()),
            expect: refused("OnnxUnreadable", &["decoder", "decoder.onnx"]),
        },
        Case {
            name: "decoder cut off one byte short",
            category: C,
            input: with_decoder(decoder[..decoder.len() - 1].to_vec()),
            expect: refused("OnnxUnreadable", &["decoder.onnx"]),
        },
        Case {
            name: "4 KiB of random bytes as encoder",
            category: C,
            input: with_encoder(noise_bytes(0x5eed, 4096)),
            expect: refused("OnnxUnreadable", &["encoder.onnx"]),
        },
        Case {
            name: "a MIDI file chosen as decoder",
            category: C,
            input: with_decoder(midi),
            expect: refused("OnnxUnreadable", &["decoder.onnx"]),
        },
        Case {
            name: "the manifest chosen as encoder",
            category: C,
            input: with_encoder(manifest().to_string().into_bytes()),
            expect: refused("OnnxUnreadable", &["encoder.onnx"]),
        },
        Case {
            name: "ONNX model with no graph",
            category: C,
            input: with_encoder(no_graph.encode_to_vec()),
            expect: refused("OnnxUnreadable", &["encoder.onnx"]),
        },
    ]
}

fn graph_structure() -> Vec<Case> {
    use Category::GraphStructure as C;
    vec![
        Case {
            name: "operator no runtime knows",
            category: C,
            input: edited_decoder(|m| node(m, "Add").op_type = "FerryHorn".into()),
            expect: refused("OnnxUnsupported", &["decoder", "FerryHorn"]),
        },
        Case {
            name: "node reads a tensor nothing produces",
            category: C,
            input: edited_decoder(|m| node(m, "MatMul").input[0] = "kode".into()),
            expect: refused("OnnxUnreadable", &["decoder.onnx", "kode"]),
        },
        Case {
            name: "two nodes feeding each other (cycle)",
            category: C,
            input: edited_decoder(|m| node(m, "MatMul").input[0] = "flat".into()),
            expect: refused("OnnxUnsupported", &["decoder", "Loop detected"]),
        },
        Case {
            name: "initializer shorter than its dims",
            category: C,
            input: edited_encoder(|m| initializer(m, "w").raw_data.truncate(10)),
            expect: refused("OnnxUnreadable", &["encoder.onnx"]),
        },
        Case {
            name: "string-typed initializer with raw bytes",
            category: C,
            input: edited_decoder(|m| {
                initializer(m, "b").data_type = pb::tensor_proto::DataType::String as i32
            }),
            // tract-onnx 0.23 panics on this (`unimplemented!`); the engine
            // catches it and refuses the file.
            expect: refused("OnnxUnreadable", &["decoder.onnx", "raw tensor loading"]),
        },
        Case {
            name: "initializer of an unknown element type",
            category: C,
            input: edited_decoder(|m| initializer(m, "b").data_type = 977),
            expect: refused("OnnxUnreadable", &["decoder.onnx", "977"]),
        },
        Case {
            name: "initializer stored in an external file",
            category: C,
            input: edited_encoder(|m| {
                let t = initializer(m, "w");
                t.raw_data.clear();
                t.data_location = Some(pb::tensor_proto::DataLocation::External as i32);
                t.external_data = vec![pb::StringStringEntryProto {
                    key: "location".into(),
                    value: "weights.bin".into(),
                }];
            }),
            expect: refused("OnnxUnreadable", &["encoder.onnx", "external"]),
        },
        Case {
            name: "negative initializer dimension",
            category: C,
            input: edited_encoder(|m| initializer(m, "w").dims = vec![-64, -4]),
            expect: refused("OnnxUnreadable", &["encoder.onnx", "Negative"]),
        },
    ]
}

fn tensor_contract() -> Vec<Case> {
    use pb::tensor_proto::DataType;
    use Category::TensorContract as C;
    vec![
        Case {
            name: "decoder takes i64 codes",
            category: C,
            input: edited_decoder(|m| set_io_type(m, "code", DataType::Int64)),
            expect: refused("OnnxUnsupported", &["decoder"]),
        },
        Case {
            name: "decoder emits f64 logits",
            category: C,
            input: edited_decoder(|m| {
                graph(m).node.push(pb::NodeProto {
                    name: "widen".into(),
                    op_type: "Cast".into(),
                    input: vec!["logits_f32".into()],
                    output: vec!["logits".into()],
                    attribute: vec![pb::AttributeProto {
                        name: "to".into(),
                        r#type: pb::attribute_proto::AttributeType::Int as i32,
                        i: DataType::Double as i64,
                        ..Default::default()
                    }],
                    ..Default::default()
                });
                node(m, "Reshape").output[0] = "logits_f32".into();
                set_io_type(m, "logits", DataType::Double);
            }),
            expect: refused("TensorMismatch", &["decoder", "logits", "F64", "F32"]),
        },
        Case {
            name: "decoder output flattened to rank 1",
            category: C,
            input: edited_decoder(|m| {
                let shape = initializer(m, "shape");
                shape.dims = vec![1];
                shape.raw_data = (-1i64).to_le_bytes().to_vec();
                set_io_shape(m, "logits", &[Err("n")]);
            }),
            expect: refused("TensorMismatch", &["decoder", "logits", "rank 1"]),
        },
        Case {
            name: "symbolic step count in the encoder input",
            category: C,
            input: edited_encoder(|m| {
                set_io_shape(m, "grid", &[Err("batch"), Err("steps"), Ok(4)])
            }),
            // tract refuses the flattening Reshape before our shape check runs.
            expect: refused("OnnxUnsupported", &["encoder", "Sym(steps)", "invalid"]),
        },
        Case {
            name: "encoder with a second input",
            category: C,
            input: edited_encoder(|m| {
                let extra = graph(m).input[0].clone();
                graph(m).input.push(pb::ValueInfoProto {
                    name: "tempo".into(),
                    ..extra
                });
            }),
            expect: refused("TensorMismatch", &["encoder", "tempo", "single input"]),
        },
        Case {
            name: "decoder output transposed, batch last",
            category: C,
            input: edited_decoder(|m| {
                let n = node(m, "Reshape");
                n.op_type = "Transpose".into();
                n.input.truncate(1);
                n.attribute = vec![pb::AttributeProto {
                    name: "perm".into(),
                    r#type: pb::attribute_proto::AttributeType::Ints as i32,
                    ints: vec![1, 0],
                    ..Default::default()
                }];
            }),
            expect: refused(
                "FixedBatch",
                &["decoder", "logits", "[64, batch]", "symbolic batch"],
            ),
        },
        Case {
            // The shapes pass every check (first dimension symbolic, 64
            // values per row), but each input row comes out as two rows, so
            // the first real run gives twice the logits.
            name: "decoder that doubles the batch",
            category: C,
            input: edited_decoder(|m| {
                node(m, "Reshape").output[0] = "single".into();
                graph(m).node.push(pb::NodeProto {
                    name: "twice".into(),
                    op_type: "Concat".into(),
                    input: vec!["single".into(), "single".into()],
                    output: vec!["logits".into()],
                    attribute: vec![pb::AttributeProto {
                        name: "axis".into(),
                        r#type: pb::attribute_proto::AttributeType::Int as i32,
                        i: 0,
                        ..Default::default()
                    }],
                    ..Default::default()
                });
            }),
            expect: refused("OnnxUnsupported", &["decoder", "128 logits, expected 64"]),
        },
        Case {
            name: "batch size 1 baked into the decoder's reshape",
            category: C,
            input: edited_decoder(|m| {
                let shape = initializer(m, "shape");
                shape.raw_data = [1i64, 16, 4].iter().flat_map(|v| v.to_le_bytes()).collect();
            }),
            expect: refused("OnnxUnsupported", &["decoder", "Reshape volume mismatch"]),
        },
    ]
}

fn weights() -> Vec<Case> {
    use Category::Weights as C;
    vec![
        Case {
            name: "NaN in the encoder's weights",
            category: C,
            input: edited_encoder(|m| map_f32(m, "w", |i, v| if i == 7 { f32::NAN } else { v })),
            expect: refused("NonFiniteOutput", &["encoder", "NaN"]),
        },
        Case {
            name: "infinite decoder bias",
            category: C,
            input: edited_decoder(|m| {
                map_f32(m, "b", |i, v| if i == 9 { f32::INFINITY } else { v })
            }),
            expect: refused("NonFiniteOutput", &["decoder", "infinity"]),
        },
        Case {
            name: "decoder logits near f32::MAX",
            category: C,
            input: edited_decoder(|m| {
                map_f32(m, "w", |_, v| v * 1e36);
                map_f32(m, "b", |_, v| v * 1e36);
            }),
            expect: Expect::LoadsButDecodesGarbage,
        },
        Case {
            name: "decoder with all logits equal",
            category: C,
            input: edited_decoder(|m| {
                map_f32(m, "w", |_, _| 0.0);
                map_f32(m, "b", |_, _| 0.0);
            }),
            expect: Expect::LoadsButDecodesGarbage,
        },
        Case {
            name: "decoder that overflows to infinity on busy prompts only",
            category: C,
            // Silence encodes to z0 = -0.5 (finite logits, so the load-time
            // check passes); a prompt with a few notes pushes z0·1e38 past f32::MAX.
            input: edited_decoder(|m| map_f32(m, "w", |_, v| v * 1e38)),
            expect: Expect::LoadsButDecodesGarbage,
        },
    ]
}

fn manifests() -> Vec<Case> {
    use Category::Manifest as C;
    vec![
        Case {
            name: "manifest version 0",
            category: C,
            input: edited_manifest(|m| m["version"] = json!(0)),
            expect: refused("UnsupportedVersion", &["version 0", "version 1"]),
        },
        Case {
            name: "manifest without a version",
            category: C,
            input: edited_manifest(|m| {
                m.as_object_mut().unwrap().remove("version");
            }),
            expect: refused("UnsupportedVersion", &["(missing)"]),
        },
        Case {
            name: "version written as text",
            category: C,
            input: edited_manifest(|m| m["version"] = json!("1")),
            expect: refused("UnsupportedVersion", &["manifest version"]),
        },
        Case {
            name: "a JSON array instead of an object",
            category: C,
            input: manifest_text("[1, 2, 3]".into()),
            expect: refused("NotAManifest", &["nudgebar.model"]),
        },
        Case {
            name: "unknown encoding kind",
            category: C,
            input: edited_manifest(|m| m["encoding"]["kind"] = json!("waveform")),
            expect: refused("ManifestField", &["waveform"]),
        },
        Case {
            name: "misspelt field",
            category: C,
            input: edited_manifest(|m| {
                let v = m.as_object_mut().unwrap().remove("latent_size").unwrap();
                m["latent_sise"] = v;
            }),
            expect: refused("ManifestField", &["latent_sise"]),
        },
        Case {
            name: "pitch beyond MIDI's 127",
            category: C,
            input: edited_manifest(|m| m["encoding"]["highest_pitch"] = json!(200)),
            expect: refused("ManifestValue", &["200", "0..=127"]),
        },
        Case {
            name: "encoder file outside the package folder",
            category: C,
            input: edited_manifest(|m| m["encoder"]["file"] = json!("../../encoder.onnx")),
            expect: refused("ManifestValue", &["../../encoder.onnx", "plain file name"]),
        },
        Case {
            name: "time signature 4/5",
            category: C,
            input: edited_manifest(|m| m["grid"]["time_signature"]["denominator"] = json!(5)),
            expect: refused("ManifestValue", &["time signature", "4/5"]),
        },
        Case {
            name: "zero direction vector",
            category: C,
            input: edited_manifest(|m| {
                m["axes"][1] = json!({ "attribute": "contour", "span": 1.0, "direction": [0.0, 0.0, 0.0, 0.0] })
            }),
            expect: refused("ManifestValue", &["axis 2", "zero"]),
        },
        Case {
            // Found by the manifest fuzz target: a number too large for f32
            // parsed as infinity, and the manifest could not be saved back.
            name: "hole rate too large for f32",
            category: C,
            input: edited_manifest(|m| m["axes"][0]["hole_rate"] = json!([0.0, 4.4e66])),
            expect: refused("ManifestValue", &["axis 1", "hole_rate", "0 to 1"]),
        },
        Case {
            name: "piano-roll threshold of 1.5",
            category: C,
            input: edited_manifest(
                |m| m["encoding"] = json!({ "kind": "piano_roll", "lowest_pitch": 60, "highest_pitch": 63, "threshold": 1.5, "cells": "onsets" }),
            ),
            expect: refused("ManifestValue", &["threshold", "1.5"]),
        },
        Case {
            name: "manifest starting with a byte-order mark",
            category: C,
            input: manifest_text(format!("\u{feff}{}", manifest())),
            expect: refused("ManifestSyntax", &["manifest.json", "line 1"]),
        },
        Case {
            name: "JSON nested 100 000 deep",
            category: C,
            input: manifest_text(format!(
                "{{\"format\": {}{}}}",
                "[".repeat(100_000),
                "]".repeat(100_000)
            )),
            expect: refused("ManifestSyntax", &["manifest.json", "recursion limit"]),
        },
    ]
}

fn absurd_sizes(scratch: &Path) -> Vec<Case> {
    use Category::AbsurdSizes as C;
    let sparse_onnx = package_folder(scratch, "sparse-encoder");
    std::fs::OpenOptions::new()
        .write(true)
        .open(sparse_onnx.join("encoder.onnx"))
        .and_then(|f| f.set_len(MAX_ONNX_BYTES + 1))
        .expect("make a sparse encoder file");
    let sparse_manifest = package_folder(scratch, "sparse-manifest");
    std::fs::OpenOptions::new()
        .write(true)
        .open(sparse_manifest.join("manifest.json"))
        .and_then(|f| f.set_len(MAX_MANIFEST_BYTES * 64))
        .expect("make a sparse manifest");
    vec![
        Case {
            name: "latent_size of a billion",
            category: C,
            input: edited_manifest(|m| m["latent_size"] = json!(1_000_000_000u64)),
            expect: refused("ManifestValue", &["latent_size is 1000000000"]),
        },
        Case {
            name: "a million steps per measure",
            category: C,
            input: edited_manifest(|m| m["grid"]["steps_per_measure"] = json!(1_000_000)),
            expect: refused("ManifestValue", &["1000000 steps per measure"]),
        },
        Case {
            name: "steps per measure × measures overflows",
            category: C,
            input: edited_manifest(|m| {
                m["grid"]["steps_per_measure"] = json!(u64::MAX / 2);
                m["grid"]["measures"] = json!(4);
            }),
            expect: refused("ManifestValue", &["steps per measure over 4 measures"]),
        },
        Case {
            name: "300 measures (beyond a byte)",
            category: C,
            input: edited_manifest(|m| m["grid"]["measures"] = json!(300)),
            expect: refused("ManifestField", &["300"]),
        },
        Case {
            name: "a direction vector with 10^5 entries",
            category: C,
            input: edited_manifest(|m| {
                m["axes"][1] =
                    json!({ "attribute": "contour", "span": 1.0, "direction": vec![0.5; 100_000] })
            }),
            expect: refused("ManifestValue", &["length 100000", "latent_size is 4"]),
        },
        Case {
            name: "initializer claiming 2^40 values",
            category: C,
            input: edited_encoder(|m| initializer(m, "w").dims = vec![1 << 20, 1 << 20]),
            expect: refused("OnnxUnreadable", &["encoder.onnx"]),
        },
        Case {
            name: "initializer dims whose product overflows",
            category: C,
            input: edited_encoder(|m| initializer(m, "w").dims = vec![1 << 40, 1 << 40, 1 << 40]),
            expect: refused("OnnxUnreadable", &["encoder.onnx"]),
        },
        Case {
            name: "encoder file one byte over the 256 MiB cap (sparse)",
            category: C,
            input: Input::Folder(sparse_onnx),
            expect: refused(
                "FileTooLarge",
                &["encoder.onnx", "268435457 bytes", "limit"],
            ),
        },
        Case {
            name: "a 64 MiB manifest (sparse)",
            category: C,
            input: Input::Folder(sparse_manifest),
            expect: refused("FileTooLarge", &["manifest.json", "limit"]),
        },
    ]
}

fn files(scratch: &Path) -> Vec<Case> {
    use Category::Files as C;
    let mut all = Vec::new();

    let missing = scratch.join("no-such-package");
    let _ = std::fs::remove_dir_all(&missing);
    all.push(Case {
        name: "folder that does not exist",
        category: C,
        input: Input::Folder(missing),
        expect: refused("FolderUnreadable", &["no-such-package", "cannot be read"]),
    });

    let empty = scratch.join("empty-package");
    let _ = std::fs::remove_dir_all(&empty);
    std::fs::create_dir_all(&empty).expect("make an empty folder");
    all.push(Case {
        name: "empty folder",
        category: C,
        input: Input::Folder(empty),
        expect: refused("MissingFile", &["manifest.json"]),
    });

    let latin1 = package_folder(scratch, "latin1-manifest");
    let mut text = std::fs::read(latin1.join("manifest.json")).unwrap();
    let at = text.windows(5).position(|w| w == b"known").unwrap();
    text[at] = 0xe9; // "é" in Latin-1, invalid alone in UTF-8
    std::fs::write(latin1.join("manifest.json"), text).unwrap();
    all.push(Case {
        name: "manifest saved in Latin-1, not UTF-8",
        category: C,
        input: Input::Folder(latin1),
        expect: refused("ManifestSyntax", &["manifest.json", "UTF-8"]),
    });

    let dir_manifest = package_folder(scratch, "manifest-is-a-folder");
    std::fs::remove_file(dir_manifest.join("manifest.json")).unwrap();
    std::fs::create_dir(dir_manifest.join("manifest.json")).unwrap();
    all.push(Case {
        name: "manifest.json is a folder",
        category: C,
        input: Input::Folder(dir_manifest),
        expect: refused("FolderUnreadable", &["manifest.json", "folder"]),
    });

    let dir_encoder = package_folder(scratch, "encoder-is-a-folder");
    std::fs::remove_file(dir_encoder.join("encoder.onnx")).unwrap();
    std::fs::create_dir(dir_encoder.join("encoder.onnx")).unwrap();
    all.push(Case {
        name: "encoder.onnx is a folder",
        category: C,
        input: Input::Folder(dir_encoder),
        expect: refused("FolderUnreadable", &["encoder.onnx", "folder"]),
    });

    #[cfg(unix)]
    {
        let dangling = package_folder(scratch, "dangling-link");
        std::fs::remove_file(dangling.join("decoder.onnx")).unwrap();
        std::os::unix::fs::symlink("moved-away/decoder.onnx", dangling.join("decoder.onnx"))
            .unwrap();
        all.push(Case {
            name: "decoder.onnx is a dangling symlink",
            category: C,
            input: Input::Folder(dangling),
            expect: refused(
                "FolderUnreadable",
                &["decoder.onnx", "link", "no longer exists"],
            ),
        });

        // A named pipe: opening it for reading blocks until a writer
        // appears, so a loader that opens it hangs the worker for good.
        let fifo = package_folder(scratch, "fifo-encoder");
        std::fs::remove_file(fifo.join("encoder.onnx")).unwrap();
        let made = std::process::Command::new("mkfifo")
            .arg(fifo.join("encoder.onnx"))
            .status()
            .expect("run mkfifo");
        assert!(made.success(), "mkfifo failed");
        all.push(Case {
            name: "encoder.onnx is a named pipe (FIFO)",
            category: C,
            input: Input::Folder(fifo),
            expect: refused("FolderUnreadable", &["encoder.onnx", "not a regular file"]),
        });

        let device = package_folder(scratch, "device-decoder");
        std::fs::remove_file(device.join("decoder.onnx")).unwrap();
        std::os::unix::fs::symlink("/dev/zero", device.join("decoder.onnx")).unwrap();
        all.push(Case {
            name: "decoder.onnx links to /dev/zero (endless device)",
            category: C,
            input: Input::Folder(device),
            expect: refused("FolderUnreadable", &["decoder.onnx", "not a regular file"]),
        });
    }
    all
}
