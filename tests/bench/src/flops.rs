//! The FLOP bound: how long a batch would take if every multiply-add of the
//! model ran at this CPU core's peak rate.
//!
//! - Work: multiply-accumulates (MACs) per batch row, counted from the ONNX
//!   graph itself — each `MatMul`/`Gemm` against a 2-D weight initializer
//!   `[k, n]` costs `k·n` MACs per row. Element-wise ops (bias, ReLU) are a
//!   rounding error next to that and are left out, which makes the bound
//!   slightly optimistic (a stricter target, not a looser one).
//! - Peak: measured in the same run with a loop of independent fused
//!   multiply-adds on the widest vectors this CPU offers (AVX-512, else
//!   AVX2+FMA), on one thread — the same single-core budget the engine and
//!   onnxruntime get. A measured peak, rather than cores × GHz × lanes × FMA
//!   units from /proc/cpuinfo, already includes the clock this (shared,
//!   virtualised) core really runs at and how many FMA pipes it has.

use anyhow::{bail, Context, Result};
use nudgebar_onnx::pb;
use prost::Message;
use std::hint::black_box;
use std::time::Instant;

pub fn read_graph(bytes: &[u8]) -> Result<pb::GraphProto> {
    let model = pb::ModelProto::decode(bytes).context("the ONNX file does not decode")?;
    model.graph.context("the ONNX file has no graph")
}

/// Multiply-accumulates per batch row of an MLP-style graph. Refuses graphs
/// with operators whose cost this count does not know, rather than
/// reporting a bound that is wrong.
pub fn macs_per_row(bytes: &[u8]) -> Result<u64> {
    let graph = read_graph(bytes)?;
    let dims = |name: &str| {
        graph
            .initializer
            .iter()
            .find(|t| t.name == name)
            .map(|t| t.dims.clone())
    };
    let mut macs = 0u64;
    for node in &graph.node {
        match node.op_type.as_str() {
            "MatMul" | "Gemm" => {
                let weight = node.input.get(1).and_then(|n| dims(n));
                match weight.as_deref() {
                    Some([k, n]) => macs += (*k as u64) * (*n as u64),
                    _ => bail!(
                        "{} node {:?} does not multiply by a 2-D weight; its cost is not counted",
                        node.op_type,
                        node.name
                    ),
                }
            }
            "Add" | "Relu" | "Tanh" | "Sigmoid" | "Flatten" | "Reshape" | "Identity" => {}
            other => bail!("operator {other} is not costed by the FLOP count"),
        }
    }
    Ok(macs)
}

/// Peak single-core f32 throughput, in FLOP/s (one FMA = 2 FLOP), with the
/// instruction set it was measured on.
#[derive(Debug, Clone, serde::Serialize)]
pub struct Peak {
    pub flops_per_second: f64,
    pub isa: &'static str,
    pub lanes: usize,
}

/// Best of many short runs of the FMA loop (each about 10 ms): the best
/// is the one least disturbed by other work on a shared machine, and a
/// peak measured too low would make the bound look easier than it is.
pub fn measure_peak() -> Peak {
    let mut best: Option<Peak> = None;
    for _ in 0..40 {
        let p = peak_once();
        if best
            .as_ref()
            .is_none_or(|b| p.flops_per_second > b.flops_per_second)
        {
            best = Some(p);
        }
    }
    best.expect("seven runs were made")
}

fn peak_once() -> Peak {
    const ROUNDS: u64 = 4_000_000;
    #[cfg(target_arch = "x86_64")]
    {
        if std::arch::is_x86_feature_detected!("avx512f") {
            let t = Instant::now();
            // SAFETY: the CPU reports AVX-512F.
            black_box(unsafe { x86::fma512(ROUNDS) });
            return Peak {
                flops_per_second: flop(ROUNDS, 16) / t.elapsed().as_secs_f64(),
                isa: "AVX-512 FMA",
                lanes: 16,
            };
        }
        if std::arch::is_x86_feature_detected!("avx2") && std::arch::is_x86_feature_detected!("fma")
        {
            let t = Instant::now();
            // SAFETY: the CPU reports AVX2 and FMA.
            black_box(unsafe { x86::fma256(ROUNDS) });
            return Peak {
                flops_per_second: flop(ROUNDS, 8) / t.elapsed().as_secs_f64(),
                isa: "AVX2 FMA",
                lanes: 8,
            };
        }
    }
    let t = Instant::now();
    black_box(scalar(ROUNDS));
    Peak {
        flops_per_second: flop(ROUNDS, 1) / t.elapsed().as_secs_f64(),
        isa: "scalar",
        lanes: 1,
    }
}

/// Accumulators kept in flight: enough independent FMAs to cover the
/// FMA latency (4–5 cycles) on two pipes, so the loop is throughput-bound.
const CHAINS: usize = 12;

fn flop(rounds: u64, lanes: usize) -> f64 {
    rounds as f64 * CHAINS as f64 * lanes as f64 * 2.0
}

fn scalar(rounds: u64) -> f32 {
    let mut acc = [0.5f32; CHAINS];
    let (a, b) = (black_box(0.999_999f32), black_box(1e-7f32));
    for _ in 0..rounds {
        for x in &mut acc {
            *x = x.mul_add(a, b);
        }
    }
    acc.iter().sum()
}

#[cfg(target_arch = "x86_64")]
mod x86 {
    use super::CHAINS;
    use std::arch::x86_64::*;

    #[target_feature(enable = "avx512f")]
    pub unsafe fn fma512(rounds: u64) -> f32 {
        let a = _mm512_set1_ps(std::hint::black_box(0.999_999));
        let b = _mm512_set1_ps(std::hint::black_box(1e-7));
        let mut acc = [_mm512_set1_ps(0.5); CHAINS];
        for _ in 0..rounds {
            for x in &mut acc {
                *x = _mm512_fmadd_ps(*x, a, b);
            }
        }
        acc.iter().map(|v| _mm512_reduce_add_ps(*v)).sum()
    }

    #[target_feature(enable = "avx2,fma")]
    pub unsafe fn fma256(rounds: u64) -> f32 {
        let a = _mm256_set1_ps(std::hint::black_box(0.999_999));
        let b = _mm256_set1_ps(std::hint::black_box(1e-7));
        let mut acc = [_mm256_set1_ps(0.5); CHAINS];
        for _ in 0..rounds {
            for x in &mut acc {
                *x = _mm256_fmadd_ps(*x, a, b);
            }
        }
        let mut out = [0f32; 8];
        let mut sum = _mm256_setzero_ps();
        for v in acc {
            sum = _mm256_add_ps(sum, v);
        }
        _mm256_storeu_ps(out.as_mut_ptr(), sum);
        out.iter().sum()
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use nudgebar_onnx::{decoder_graph, Activation, DecoderSpec, Dense, Layer};

    #[test]
    fn macs_are_the_weight_matrix_sizes() {
        // 3 → 5 (ReLU) → 7: 15 + 35 MACs per row, counted by hand.
        let spec = DecoderSpec {
            input_name: "code".into(),
            hidden: vec![Layer {
                dense: Dense::new(3, 5, vec![0.1; 15], vec![0.0; 5]),
                activation: Activation::Relu,
            }],
            output_name: "logits".into(),
            output: Dense::new(5, 7, vec![0.1; 35], vec![0.0; 7]),
            output_shape: None,
        };
        assert_eq!(macs_per_row(&decoder_graph(&spec).to_bytes()).unwrap(), 50);
    }

    #[test]
    fn unknown_operators_are_refused() {
        let mut g = nudgebar_onnx::GraphBuilder::new("conv");
        g.input(
            "x",
            nudgebar_onnx::ElemType::F32,
            &[nudgebar_onnx::Dim::Batch],
        )
        .node("Conv", &["x", "x"], &["y"], &[]);
        assert!(macs_per_row(&g.to_bytes()).is_err());
    }
}
