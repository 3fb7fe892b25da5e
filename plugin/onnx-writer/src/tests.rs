//! The written graphs, loaded and run by tract, against outputs worked out
//! by hand (and, for larger layers, by the plain-Rust `forward`).

use super::*;
use tract_onnx::prelude::*;

/// Loads bytes with tract, fixes the batch to `batch`, and runs `input`.
fn run(bytes: &[u8], input: Tensor) -> TVec<Tensor> {
    let model = tract_onnx::onnx()
        .model_for_read(&mut &bytes[..])
        .expect("tract parses the model");
    let plan = model
        .into_optimized()
        .expect("optimizes with a symbolic batch")
        .into_runnable()
        .expect("runnable");
    plan.run(tvec!(input.into()))
        .expect("runs")
        .into_iter()
        .map(|v| v.into_tensor())
        .collect()
}

fn floats(t: &Tensor) -> Vec<f32> {
    t.to_plain_array_view::<f32>()
        .unwrap()
        .iter()
        .copied()
        .collect()
}

#[test]
fn hand_built_graph_with_attributes_runs() {
    // y = Transpose(x, perm=[0,2,1]) for x of shape [batch, 2, 3].
    let mut g = GraphBuilder::new("transpose");
    g.input(
        "x",
        ElemType::F32,
        &[Dim::Batch, Dim::Fixed(2), Dim::Fixed(3)],
    )
    .output(
        "y",
        ElemType::F32,
        &[Dim::Batch, Dim::Fixed(3), Dim::Fixed(2)],
    )
    .node(
        "Transpose",
        &["x"],
        &["y"],
        &[("perm", Attr::Ints(vec![0, 2, 1]))],
    );
    let x = Tensor::from_shape(&[1, 2, 3], &[1.0f32, 2., 3., 4., 5., 6.]).unwrap();
    let out = run(&g.to_bytes(), x);
    assert_eq!(out[0].shape(), &[1, 3, 2]);
    assert_eq!(floats(&out[0]), vec![1., 4., 2., 5., 3., 6.]);
}

#[test]
fn batch_dimension_is_symbolic_in_the_file() {
    let g = decoder_graph(&tiny_decoder());
    let model = g.to_model();
    let input = &model.graph.as_ref().unwrap().input[0];
    let Some(pb::type_proto::Value::TensorType(t)) = &input.r#type.as_ref().unwrap().value else {
        panic!()
    };
    let first = &t.shape.as_ref().unwrap().dim[0];
    assert_eq!(
        first.value,
        Some(pb::tensor_shape_proto::dimension::Value::DimParam(
            "batch".into()
        ))
    );
    assert_eq!(model.opset_import[0].version, 13);
    assert_eq!(model.ir_version, 8);
}

/// latent 2 → hidden 2 (ReLU) → 6 logits reshaped to [3 steps, 2 classes].
fn tiny_decoder() -> DecoderSpec {
    DecoderSpec {
        input_name: "z".into(),
        hidden: vec![Layer {
            // h0 = relu(z0 - z1), h1 = relu(z0 + z1 + 1)
            dense: Dense::new(2, 2, vec![1., 1., -1., 1.], vec![0., 1.]),
            activation: Activation::Relu,
        }],
        output_name: "logits".into(),
        // logits[k] = h0 * k + h1 * (5 - k) + 0.5 k
        output: Dense::new(
            2,
            6,
            vec![0., 1., 2., 3., 4., 5., 5., 4., 3., 2., 1., 0.],
            vec![0., 0.5, 1., 1.5, 2., 2.5],
        ),
        output_shape: Some(vec![3, 2]),
    }
}

#[test]
fn decoder_matches_hand_computation_for_two_batch_sizes() {
    let bytes = decoder_graph(&tiny_decoder()).to_bytes();
    // z = (2, 1): h = (relu(1), relu(4)) = (1, 4); logits[k] = k + 4(5-k) + 0.5k = 20 - 2.5k.
    // z = (-1, 3): h = (relu(-4), relu(3)) = (0, 3); logits[k] = 3(5-k) + 0.5k = 15 - 2.5k.
    let expected_a: Vec<f32> = (0..6).map(|k| 20.0 - 2.5 * k as f32).collect();
    let expected_b: Vec<f32> = (0..6).map(|k| 15.0 - 2.5 * k as f32).collect();
    let one = run(&bytes, Tensor::from_shape(&[1, 2], &[2.0f32, 1.0]).unwrap());
    assert_eq!(one[0].shape(), &[1, 3, 2]);
    assert_eq!(floats(&one[0]), expected_a);
    let two = run(
        &bytes,
        Tensor::from_shape(&[2, 2], &[2.0f32, 1.0, -1.0, 3.0]).unwrap(),
    );
    assert_eq!(two[0].shape(), &[2, 3, 2]);
    assert_eq!(floats(&two[0]), [expected_a, expected_b].concat());
}

#[test]
fn encoder_flattens_and_gives_mean_and_log_variance() {
    // input [batch, 2, 2] → flat 4 → tanh hidden 3 → mean 2, log-variance 2.
    let hidden = Layer {
        dense: Dense::new(
            4,
            3,
            (0..12).map(|i| (i as f32 - 6.0) * 0.1).collect(),
            vec![0.1, -0.2, 0.3],
        ),
        activation: Activation::Tanh,
    };
    let mean = Dense::new(3, 2, vec![1., -1., 0.5, 0.5, -2., 1.], vec![0., 0.25]);
    let logvar = Dense::new(3, 2, vec![0.3, 0.1, -0.4, 0.2, 0.0, 1.0], vec![-1., 0.]);
    let spec = EncoderSpec {
        input_name: "tokens".into(),
        input_shape: vec![2, 2],
        hidden: vec![hidden.clone()],
        mean_name: "mean".into(),
        mean: mean.clone(),
        log_variance: Some(("log_variance".into(), logvar.clone())),
    };
    let x = [1.0f32, 0.0, 0.0, 1.0];
    let out = run(
        &encoder_graph(&spec).to_bytes(),
        Tensor::from_shape(&[1, 2, 2], &x).unwrap(),
    );
    let h = hidden.apply(&x);
    // Hidden unit 0 by hand: x·col0 + b = (-0.6)*1 + (0.3)*1 + 0.1 = -0.2 → tanh(-0.2).
    assert!((h[0] - (-0.2f32).tanh()).abs() < 1e-6);
    for (got, want) in floats(&out[0]).iter().zip(mean.apply(&h)) {
        assert!((got - want).abs() < 1e-5, "mean {got} vs {want}");
    }
    for (got, want) in floats(&out[1]).iter().zip(logvar.apply(&h)) {
        assert!((got - want).abs() < 1e-5, "log-variance {got} vs {want}");
    }
}

#[test]
fn metadata_and_doc_survive_the_round_trip() {
    use prost::Message;
    let mut g = decoder_graph(&tiny_decoder());
    g.doc("a tiny decoder").metadata("trained_by", "a test");
    let back = pb::ModelProto::decode(&g.to_bytes()[..]).unwrap();
    assert_eq!(back.doc_string, "a tiny decoder");
    assert_eq!(back.metadata_props[0].value, "a test");
}
