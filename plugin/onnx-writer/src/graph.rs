//! A small builder for ONNX graphs, on top of the protobuf types tract ships
//! (`tract_onnx::pb`) and `prost` for the wire encoding. It writes exactly
//! what Nudgebar's models need: typed inputs/outputs with an optional
//! symbolic batch dimension, initializers, and nodes with attributes.

use prost::Message;
use tract_onnx::pb;
use tract_onnx::pb::tensor_shape_proto::dimension::Value as DimValue;

/// ONNX IR version written into every model. IR 8 is the one that goes with
/// opset 13–17 (ONNX "Versioning" document, IR version table).
pub const IR_VERSION: i64 = 8;
/// Default-domain operator set the graphs are written against.
pub const OPSET: i64 = 13;
/// The name of the symbolic batch dimension (`dim_param`).
pub const BATCH: &str = "batch";

/// One dimension of a graph input or output.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Dim {
    /// The symbolic batch dimension, written as `dim_param: "batch"`, so one
    /// file serves one take or sixteen.
    Batch,
    /// A fixed size.
    Fixed(usize),
}

/// Element types the writer knows.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum ElemType {
    F32,
    I64,
}

impl ElemType {
    fn proto(self) -> i32 {
        match self {
            ElemType::F32 => pb::tensor_proto::DataType::Float as i32,
            ElemType::I64 => pb::tensor_proto::DataType::Int64 as i32,
        }
    }
}

/// A node attribute value.
#[derive(Debug, Clone, PartialEq)]
pub enum Attr {
    Int(i64),
    Float(f32),
    Ints(Vec<i64>),
    Floats(Vec<f32>),
    Text(String),
}

impl Attr {
    fn proto(&self, name: &str) -> pb::AttributeProto {
        use pb::attribute_proto::AttributeType as T;
        let mut a = pb::AttributeProto {
            name: name.to_string(),
            ..Default::default()
        };
        match self {
            Attr::Int(i) => {
                a.r#type = T::Int as i32;
                a.i = *i;
            }
            Attr::Float(f) => {
                a.r#type = T::Float as i32;
                a.f = *f;
            }
            Attr::Ints(v) => {
                a.r#type = T::Ints as i32;
                a.ints = v.clone();
            }
            Attr::Floats(v) => {
                a.r#type = T::Floats as i32;
                a.floats = v.clone();
            }
            Attr::Text(s) => {
                a.r#type = T::String as i32;
                a.s = s.as_bytes().to_vec();
            }
        }
        a
    }
}

/// Builds one ONNX model (a single graph) step by step.
#[derive(Debug, Clone, Default)]
pub struct GraphBuilder {
    graph: pb::GraphProto,
    doc: String,
    metadata: Vec<(String, String)>,
}

impl GraphBuilder {
    pub fn new(name: &str) -> Self {
        GraphBuilder {
            graph: pb::GraphProto {
                name: name.to_string(),
                ..Default::default()
            },
            ..Default::default()
        }
    }

    /// A free-text description stored in the model's `doc_string`.
    pub fn doc(&mut self, text: &str) -> &mut Self {
        self.doc = text.to_string();
        self
    }

    /// A key/value pair stored in the model's `metadata_props`.
    pub fn metadata(&mut self, key: &str, value: &str) -> &mut Self {
        self.metadata.push((key.to_string(), value.to_string()));
        self
    }

    pub fn input(&mut self, name: &str, elem: ElemType, shape: &[Dim]) -> &mut Self {
        self.graph.input.push(value_info(name, elem, shape));
        self
    }

    pub fn output(&mut self, name: &str, elem: ElemType, shape: &[Dim]) -> &mut Self {
        self.graph.output.push(value_info(name, elem, shape));
        self
    }

    /// A constant f32 tensor, stored little-endian in `raw_data` as the ONNX
    /// spec prescribes for raw tensor content.
    pub fn initializer_f32(&mut self, name: &str, dims: &[usize], data: &[f32]) -> &mut Self {
        assert_eq!(
            dims.iter().product::<usize>(),
            data.len(),
            "initializer {name}: dims do not match data"
        );
        let raw = data.iter().flat_map(|v| v.to_le_bytes()).collect();
        self.push_initializer(name, ElemType::F32, dims, raw)
    }

    /// A constant i64 tensor (e.g. the target shape of a Reshape).
    pub fn initializer_i64(&mut self, name: &str, dims: &[usize], data: &[i64]) -> &mut Self {
        assert_eq!(
            dims.iter().product::<usize>(),
            data.len(),
            "initializer {name}: dims do not match data"
        );
        let raw = data.iter().flat_map(|v| v.to_le_bytes()).collect();
        self.push_initializer(name, ElemType::I64, dims, raw)
    }

    fn push_initializer(
        &mut self,
        name: &str,
        elem: ElemType,
        dims: &[usize],
        raw: Vec<u8>,
    ) -> &mut Self {
        self.graph.initializer.push(pb::TensorProto {
            name: name.to_string(),
            dims: dims.iter().map(|&d| d as i64).collect(),
            data_type: elem.proto(),
            raw_data: raw,
            ..Default::default()
        });
        self
    }

    /// A node of the default ONNX domain. Nodes must be added in
    /// topological order (the ONNX spec requires graphs to be sorted).
    pub fn node(
        &mut self,
        op_type: &str,
        inputs: &[&str],
        outputs: &[&str],
        attrs: &[(&str, Attr)],
    ) -> &mut Self {
        let index = self.graph.node.len();
        self.graph.node.push(pb::NodeProto {
            name: format!("{}_{index}", op_type.to_lowercase()),
            op_type: op_type.to_string(),
            input: inputs.iter().map(|s| s.to_string()).collect(),
            output: outputs.iter().map(|s| s.to_string()).collect(),
            attribute: attrs.iter().map(|(n, a)| a.proto(n)).collect(),
            ..Default::default()
        });
        self
    }

    /// The model as a protobuf message, for callers who want to tweak it
    /// (the hostile-model tests corrupt fields on purpose).
    pub fn to_model(&self) -> pb::ModelProto {
        pb::ModelProto {
            ir_version: IR_VERSION,
            opset_import: vec![pb::OperatorSetIdProto {
                domain: String::new(),
                version: OPSET,
            }],
            producer_name: "nudgebar".to_string(),
            producer_version: env!("CARGO_PKG_VERSION").to_string(),
            doc_string: self.doc.clone(),
            graph: Some(self.graph.clone()),
            metadata_props: self
                .metadata
                .iter()
                .map(|(k, v)| pb::StringStringEntryProto {
                    key: k.clone(),
                    value: v.clone(),
                })
                .collect(),
            ..Default::default()
        }
    }

    /// The serialized `.onnx` file content.
    pub fn to_bytes(&self) -> Vec<u8> {
        self.to_model().encode_to_vec()
    }
}

fn value_info(name: &str, elem: ElemType, shape: &[Dim]) -> pb::ValueInfoProto {
    let dim = shape
        .iter()
        .map(|d| pb::tensor_shape_proto::Dimension {
            value: Some(match d {
                Dim::Batch => DimValue::DimParam(BATCH.to_string()),
                Dim::Fixed(n) => DimValue::DimValue(*n as i64),
            }),
            ..Default::default()
        })
        .collect();
    pb::ValueInfoProto {
        name: name.to_string(),
        r#type: Some(pb::TypeProto {
            value: Some(pb::type_proto::Value::TensorType(pb::type_proto::Tensor {
                elem_type: elem.proto(),
                shape: Some(pb::TensorShapeProto { dim }),
            })),
            ..Default::default()
        }),
        ..Default::default()
    }
}
