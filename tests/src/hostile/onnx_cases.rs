//! Hostile ONNX files: broken bytes, broken graphs, graphs that break the
//! tensor contract, and broken or garbage-emitting weights.

use super::edit::*;
use super::{Case, Category, Expect};
use crate::tiny_model::{self, Variant};
use nudgebar_onnx::pb;
use prost::Message;

pub(super) fn onnx_bytes() -> Vec<Case> {
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

pub(super) fn graph_structure() -> Vec<Case> {
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

pub(super) fn tensor_contract() -> Vec<Case> {
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

pub(super) fn weights() -> Vec<Case> {
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
