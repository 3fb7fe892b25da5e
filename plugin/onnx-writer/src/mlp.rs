//! Multilayer perceptrons written as ONNX: the shape of Nudgebar's demo
//! encoder and decoder, and of the small known-weight models the tests build.
//!
//! Each layer is `MatMul` + `Add` (+ `Relu` / `Tanh`). `MatMul` rather than
//! `Gemm` because `MatMul` broadcasts over any leading dimensions, so the
//! same layer works on `[batch, n]` and `[batch, steps, n]`.

use crate::graph::{Attr, Dim, ElemType, GraphBuilder};

/// A fully connected layer: `y = x · weight + bias`.
#[derive(Debug, Clone, PartialEq)]
pub struct Dense {
    pub inputs: usize,
    pub outputs: usize,
    /// `[inputs, outputs]`, row-major (row `i` holds the weights leaving input `i`).
    pub weight: Vec<f32>,
    /// `[outputs]`.
    pub bias: Vec<f32>,
}

impl Dense {
    /// Checks that the weight and bias lengths match the declared sizes.
    pub fn new(inputs: usize, outputs: usize, weight: Vec<f32>, bias: Vec<f32>) -> Dense {
        assert_eq!(
            weight.len(),
            inputs * outputs,
            "weight must hold inputs × outputs values"
        );
        assert_eq!(bias.len(), outputs, "bias must hold one value per output");
        Dense {
            inputs,
            outputs,
            weight,
            bias,
        }
    }

    /// The layer on one input vector, in plain Rust: the reference the
    /// export tests compare tract against.
    pub fn apply(&self, x: &[f32]) -> Vec<f32> {
        assert_eq!(x.len(), self.inputs);
        let mut y = self.bias.clone();
        for (i, xi) in x.iter().enumerate() {
            let row = &self.weight[i * self.outputs..(i + 1) * self.outputs];
            for (yo, w) in y.iter_mut().zip(row) {
                *yo += xi * w;
            }
        }
        y
    }
}

/// The nonlinearity after a layer.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Activation {
    Identity,
    Relu,
    Tanh,
}

impl Activation {
    pub fn apply(self, v: f32) -> f32 {
        match self {
            Activation::Identity => v,
            Activation::Relu => v.max(0.0),
            Activation::Tanh => v.tanh(),
        }
    }
}

/// A dense layer and the activation that follows it.
#[derive(Debug, Clone, PartialEq)]
pub struct Layer {
    pub dense: Dense,
    pub activation: Activation,
}

impl Layer {
    pub fn apply(&self, x: &[f32]) -> Vec<f32> {
        self.dense
            .apply(x)
            .into_iter()
            .map(|v| self.activation.apply(v))
            .collect()
    }
}

/// Runs a stack of layers on one vector (plain Rust reference).
pub fn forward(layers: &[Layer], x: &[f32]) -> Vec<f32> {
    layers.iter().fold(x.to_vec(), |h, l| l.apply(&h))
}

/// A VAE encoder: input → hidden layers → mean head (and optionally a
/// log-variance head), both linear.
#[derive(Debug, Clone, PartialEq)]
pub struct EncoderSpec {
    pub input_name: String,
    /// Input shape without the batch dimension, e.g. `[16, 38]` for one-hot
    /// tokens (flattened inside the graph) or `[608]`.
    pub input_shape: Vec<usize>,
    pub hidden: Vec<Layer>,
    pub mean_name: String,
    pub mean: Dense,
    /// Name and head of the log-variance output, if the encoder has one.
    pub log_variance: Option<(String, Dense)>,
}

/// A VAE decoder: latent → hidden layers → linear logits, optionally
/// reshaped to `[batch, steps, classes]`.
#[derive(Debug, Clone, PartialEq)]
pub struct DecoderSpec {
    pub input_name: String,
    pub hidden: Vec<Layer>,
    pub output_name: String,
    pub output: Dense,
    /// `Some([steps, classes])` to reshape the flat logits per step.
    pub output_shape: Option<Vec<usize>>,
}

/// Writes the layers' initializers and nodes, from `input` on; returns the
/// name of the last value.
fn write_layers(g: &mut GraphBuilder, prefix: &str, input: &str, layers: &[Layer]) -> String {
    let mut current = input.to_string();
    for (i, layer) in layers.iter().enumerate() {
        let name = format!("{prefix}{i}");
        current = write_dense(g, &name, &current, &layer.dense, None);
        let act = match layer.activation {
            Activation::Identity => continue,
            Activation::Relu => "Relu",
            Activation::Tanh => "Tanh",
        };
        let out = format!("{name}_act");
        g.node(act, &[&current], &[&out], &[]);
        current = out;
    }
    current
}

/// One `MatMul` + `Add`; `output` names the result (else `<name>_out`).
fn write_dense(
    g: &mut GraphBuilder,
    name: &str,
    input: &str,
    d: &Dense,
    output: Option<&str>,
) -> String {
    let (w, b) = (format!("{name}_weight"), format!("{name}_bias"));
    let mm = format!("{name}_matmul");
    let out = output
        .map(str::to_string)
        .unwrap_or_else(|| format!("{name}_out"));
    g.initializer_f32(&w, &[d.inputs, d.outputs], &d.weight);
    g.initializer_f32(&b, &[d.outputs], &d.bias);
    g.node("MatMul", &[input, &w], &[&mm], &[]);
    g.node("Add", &[&mm, &b], &[&out], &[]);
    out
}

/// The encoder as a graph: inputs `[batch, ..input_shape]`, outputs
/// `[batch, latent]` mean (and log-variance).
pub fn encoder_graph(spec: &EncoderSpec) -> GraphBuilder {
    let mut g = GraphBuilder::new("encoder");
    let mut in_dims = vec![Dim::Batch];
    in_dims.extend(spec.input_shape.iter().map(|&d| Dim::Fixed(d)));
    g.input(&spec.input_name, ElemType::F32, &in_dims);
    let mut x = spec.input_name.clone();
    if spec.input_shape.len() > 1 {
        // Flatten keeps axis 0 (the batch) and folds the rest into one.
        g.node("Flatten", &[&x], &["flat_input"], &[("axis", Attr::Int(1))]);
        x = "flat_input".to_string();
    }
    let h = write_layers(&mut g, "enc", &x, &spec.hidden);
    let latent = spec.mean.outputs;
    write_dense(&mut g, "mean_head", &h, &spec.mean, Some(&spec.mean_name));
    g.output(
        &spec.mean_name,
        ElemType::F32,
        &[Dim::Batch, Dim::Fixed(latent)],
    );
    if let Some((name, head)) = &spec.log_variance {
        write_dense(&mut g, "log_variance_head", &h, head, Some(name));
        g.output(name, ElemType::F32, &[Dim::Batch, Dim::Fixed(head.outputs)]);
    }
    g
}

/// The decoder as a graph: input `[batch, latent]`, output `[batch, n]` or
/// `[batch, steps, classes]`.
pub fn decoder_graph(spec: &DecoderSpec) -> GraphBuilder {
    let mut g = GraphBuilder::new("decoder");
    let latent = spec
        .hidden
        .first()
        .map(|l| l.dense.inputs)
        .unwrap_or(spec.output.inputs);
    g.input(
        &spec.input_name,
        ElemType::F32,
        &[Dim::Batch, Dim::Fixed(latent)],
    );
    let h = write_layers(&mut g, "dec", &spec.input_name, &spec.hidden);
    match &spec.output_shape {
        None => {
            write_dense(
                &mut g,
                "logits_head",
                &h,
                &spec.output,
                Some(&spec.output_name),
            );
            g.output(
                &spec.output_name,
                ElemType::F32,
                &[Dim::Batch, Dim::Fixed(spec.output.outputs)],
            );
        }
        Some(shape) => {
            assert_eq!(
                shape.iter().product::<usize>(),
                spec.output.outputs,
                "output shape must hold every logit"
            );
            let flat = write_dense(&mut g, "logits_head", &h, &spec.output, None);
            // -1 lets Reshape infer the batch size, so the symbolic batch survives.
            let mut target = vec![-1i64];
            target.extend(shape.iter().map(|&d| d as i64));
            g.initializer_i64("logits_shape", &[target.len()], &target);
            g.node(
                "Reshape",
                &[&flat, "logits_shape"],
                &[&spec.output_name],
                &[],
            );
            let mut dims = vec![Dim::Batch];
            dims.extend(shape.iter().map(|&d| Dim::Fixed(d)));
            g.output(&spec.output_name, ElemType::F32, &dims);
        }
    }
    g
}
