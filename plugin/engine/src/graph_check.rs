//! Checks a manifest against the encoder and decoder graphs it names:
//! tensor names, ranks, sizes, dtypes, the latent size and the symbolic batch
//! dimension. Each mismatch is one sentence saying what and where.

use crate::error::ModelError;
use crate::manifest::Manifest;
use tract_onnx::prelude::*;

/// Which graph a check is about, for messages.
#[derive(Debug, Clone, Copy)]
pub enum Which {
    Encoder,
    Decoder,
}

impl Which {
    pub fn name(self) -> &'static str {
        match self {
            Which::Encoder => "encoder",
            Which::Decoder => "decoder",
        }
    }
}

/// The outlets a network is run through, found by the manifest's names.
pub struct Ports {
    pub input: usize,
    pub outputs: Vec<OutletId>,
}

/// Reads ONNX bytes into tract's typed form.
///
/// tract answers almost every malformed file with an error, but a few it
/// meets with a panic (tract-onnx 0.23 has `unimplemented!` for a
/// string-typed initializer stored as raw bytes). A user's file must not take
/// the worker down, so a panic here is refused like any unreadable file.
pub fn load_typed(which: Which, file: &str, bytes: &[u8]) -> Result<TypedModel, ModelError> {
    let unreadable = |detail: String| ModelError::OnnxUnreadable {
        which: which.name(),
        file: file.to_string(),
        detail,
    };
    let inference = std::panic::catch_unwind(|| tract_onnx::onnx().model_for_read(&mut &bytes[..]))
        .map_err(|panic| {
            unreadable(format!(
                "the ONNX reader gave up on it ({})",
                panic_text(&*panic)
            ))
        })?
        .map_err(|e| unreadable(first_line(&e)))?;
    let unsupported = |detail: String| ModelError::OnnxUnsupported {
        which: which.name(),
        detail,
    };
    std::panic::catch_unwind(std::panic::AssertUnwindSafe(|| inference.into_typed()))
        .map_err(|panic| unsupported(format!("tract gave up on it ({})", panic_text(&*panic))))?
        .map_err(|e| unsupported(first_line(&e)))
}

/// The message of a caught panic, for the refusal sentence.
fn panic_text(panic: &(dyn std::any::Any + Send)) -> String {
    panic
        .downcast_ref::<&str>()
        .map(|s| s.to_string())
        .or_else(|| panic.downcast_ref::<String>().cloned())
        .unwrap_or_else(|| "no message".into())
        .lines()
        .next()
        .unwrap_or("")
        .trim_end_matches('.')
        .to_string()
}

/// tract errors carry a chain of context; the deepest cause is what a user
/// can act on ("unsupported op X"), the outer ones name nodes.
fn first_line(e: &TractError) -> String {
    let chain: Vec<String> = e.chain().map(|c| c.to_string()).collect();
    let text = chain.join(": ");
    let text = text
        .lines()
        .next()
        .unwrap_or("")
        .trim_end_matches('.')
        .to_string();
    if text.len() > 300 {
        format!(
            "{}…",
            &text[..text
                .char_indices()
                .take_while(|(i, _)| *i < 300)
                .last()
                .map(|(i, _)| i)
                .unwrap_or(0)]
        )
    } else {
        text
    }
}

/// Checks the encoder graph and returns its ports (input, then mean and
/// optionally log-variance outputs).
pub fn check_encoder(model: &TypedModel, m: &Manifest) -> Result<Ports, ModelError> {
    let which = Which::Encoder;
    let input = find_input(model, which, &m.encoder.input)?;
    let fact = model
        .input_fact(input)
        .map_err(|e| unsupported(which, &e))?;
    let (dtype, expected_dtype) = if m.encoding.input_is_indices() {
        (fact.datum_type, DatumType::I64)
    } else {
        (fact.datum_type, DatumType::F32)
    };
    if dtype != expected_dtype {
        return Err(ModelError::TensorMismatch {
            which: which.name(),
            kind: "input",
            name: m.encoder.input.clone(),
            found: format!("of type {dtype:?}"),
            expected: format!("{expected_dtype:?} for a {} encoding", encoding_name(m)),
        });
    }
    let per_row = m.grid.steps() * m.encoding.input_per_step();
    check_batched(
        which,
        "input",
        &m.encoder.input,
        &fact.shape,
        per_row,
        &format!(
            "{} steps × {} values per step",
            m.grid.steps(),
            m.encoding.input_per_step()
        ),
    )?;
    let mut outputs = vec![find_output(model, which, &m.encoder.mean)?];
    if let Some(lv) = &m.encoder.log_variance {
        outputs.push(find_output(model, which, lv)?);
    }
    let names: Vec<&String> = std::iter::once(&m.encoder.mean)
        .chain(m.encoder.log_variance.as_ref())
        .collect();
    for (outlet, name) in outputs.iter().zip(names) {
        let fact = model
            .outlet_fact(*outlet)
            .map_err(|e| unsupported(which, &e))?;
        check_f32(which, "output", name, fact)?;
        check_batched(
            which,
            "output",
            name,
            &fact.shape,
            m.latent_size,
            &format!("the latent size {}", m.latent_size),
        )?;
    }
    Ok(Ports { input, outputs })
}

/// Checks the decoder graph and returns its ports (latent input, logits output).
pub fn check_decoder(model: &TypedModel, m: &Manifest) -> Result<Ports, ModelError> {
    let which = Which::Decoder;
    let input = find_input(model, which, &m.decoder.input)?;
    let fact = model
        .input_fact(input)
        .map_err(|e| unsupported(which, &e))?;
    check_f32(which, "input", &m.decoder.input, fact)?;
    check_batched(
        which,
        "input",
        &m.decoder.input,
        &fact.shape,
        m.latent_size,
        &format!("the latent size {}", m.latent_size),
    )?;
    let output = find_output(model, which, &m.decoder.output)?;
    let fact = model
        .outlet_fact(output)
        .map_err(|e| unsupported(which, &e))?;
    check_f32(which, "output", &m.decoder.output, fact)?;
    let per_row = m.grid.steps() * m.encoding.classes();
    check_batched(
        which,
        "output",
        &m.decoder.output,
        &fact.shape,
        per_row,
        &format!(
            "{} steps × {} classes",
            m.grid.steps(),
            m.encoding.classes()
        ),
    )?;
    Ok(Ports {
        input,
        outputs: vec![output],
    })
}

fn encoding_name(m: &Manifest) -> &'static str {
    match m.encoding {
        crate::manifest::Encoding::Tokens {
            input: crate::manifest::TokenInput::OneHot,
            ..
        } => "one-hot token",
        crate::manifest::Encoding::Tokens { .. } => "token-index",
        crate::manifest::Encoding::PianoRoll { .. } => "piano-roll",
    }
}

fn unsupported(which: Which, e: &TractError) -> ModelError {
    ModelError::OnnxUnsupported {
        which: which.name(),
        detail: first_line(e),
    }
}

fn find_input(model: &TypedModel, which: Which, name: &str) -> Result<usize, ModelError> {
    let inputs = model.input_outlets().map_err(|e| unsupported(which, &e))?;
    let names: Vec<String> = inputs
        .iter()
        .map(|o| model.node(o.node).name.clone())
        .collect();
    let Some(ix) = names.iter().position(|n| n == name) else {
        return Err(ModelError::TensorNotFound {
            which: which.name(),
            kind: "input",
            name: name.to_string(),
            available: names.join(", "),
        });
    };
    if names.len() > 1 {
        let others: Vec<&String> = names.iter().filter(|n| *n != name).collect();
        return Err(ModelError::TensorMismatch {
            which: which.name(),
            kind: "graph",
            name: name.to_string(),
            found: format!(
                "accompanied by other inputs ({})",
                others
                    .iter()
                    .map(|s| s.as_str())
                    .collect::<Vec<_>>()
                    .join(", ")
            ),
            expected: "a single input".into(),
        });
    }
    Ok(ix)
}

fn find_output(model: &TypedModel, which: Which, name: &str) -> Result<OutletId, ModelError> {
    if let Some(outlet) = model.find_outlet_label(name) {
        return Ok(outlet);
    }
    let available: Vec<String> = model
        .output_outlets()
        .map(|outs| {
            outs.iter()
                .map(|o| {
                    model
                        .outlet_label(*o)
                        .map(str::to_string)
                        .unwrap_or_else(|| model.node(o.node).name.clone())
                })
                .collect()
        })
        .unwrap_or_default();
    Err(ModelError::TensorNotFound {
        which: which.name(),
        kind: "output",
        name: name.to_string(),
        available: available.join(", "),
    })
}

fn check_f32(
    which: Which,
    kind: &'static str,
    name: &str,
    fact: &TypedFact,
) -> Result<(), ModelError> {
    if fact.datum_type != DatumType::F32 {
        return Err(ModelError::TensorMismatch {
            which: which.name(),
            kind,
            name: name.to_string(),
            found: format!("of type {:?}", fact.datum_type),
            expected: "F32".into(),
        });
    }
    Ok(())
}

/// A batched tensor: rank ≥ 2, first dimension symbolic, the rest concrete
/// and multiplying to `per_row`.
fn check_batched(
    which: Which,
    kind: &'static str,
    name: &str,
    shape: &ShapeFact,
    per_row: usize,
    meaning: &str,
) -> Result<(), ModelError> {
    let dims: Vec<TDim> = shape.iter().cloned().collect();
    let shown = format!(
        "[{}]",
        dims.iter()
            .map(|d| d.to_string())
            .collect::<Vec<_>>()
            .join(", ")
    );
    if dims.len() < 2 {
        return Err(ModelError::TensorMismatch {
            which: which.name(),
            kind,
            name: name.to_string(),
            found: format!("of rank {} {shown}", dims.len()),
            expected: format!("rank 2 or more: a batch dimension, then {meaning}"),
        });
    }
    if dims[0].as_i64().is_some() {
        return Err(ModelError::FixedBatch {
            which: which.name(),
            kind,
            name: name.to_string(),
            found: shown,
        });
    }
    let mut product: i64 = 1;
    for d in &dims[1..] {
        match d.as_i64() {
            Some(v) => product = product.saturating_mul(v),
            None => {
                return Err(ModelError::TensorMismatch {
                    which: which.name(),
                    kind,
                    name: name.to_string(),
                    found: format!("shaped {shown} with a symbolic dimension after the batch"),
                    expected: format!("fixed sizes holding {meaning}"),
                })
            }
        }
    }
    if product != per_row as i64 {
        return Err(ModelError::TensorMismatch {
            which: which.name(),
            kind,
            name: name.to_string(),
            found: format!("shaped {shown} ({product} values per batch row)"),
            expected: format!("{per_row} values per row ({meaning})"),
        });
    }
    Ok(())
}
