//! The demo VAE: a multilayer perceptron encoder and decoder over one
//! measure of one-hot tokens, in candle.
//!
//! Weights are stored `[inputs, outputs]` and applied as `x · W + b`, the
//! layout `nudgebar_onnx::Dense` writes as ONNX `MatMul` + `Add`, so export
//! is a copy and the trainer's forward pass is exactly the exported graph.

use anyhow::{ensure, Context, Result};
use candle_core::{CpuStorage, CustomOp1, DType, Device, Layout, Shape, Tensor, Var};
use nudgebar_onnx::{Activation, DecoderSpec, Dense, EncoderSpec, Layer};
use rand::{Rng, SeedableRng};
use rand_chacha::ChaCha8Rng;

use crate::contract::{
    CLASSES, DECODER_INPUT, DECODER_OUTPUT, ENCODER_INPUT, ENCODER_LOG_VARIANCE, ENCODER_MEAN,
    INPUT, LATENT, STEPS,
};

/// Layer widths. Hidden layers use ReLU; the heads are linear.
#[derive(Debug, Clone, PartialEq)]
pub struct Architecture {
    pub encoder_hidden: Vec<usize>,
    pub decoder_hidden: Vec<usize>,
}

impl Default for Architecture {
    /// About 390k weights: 1.6 MB of f32 for both files, under the 2 MB budget.
    fn default() -> Self {
        Architecture {
            encoder_hidden: vec![256, 128],
            decoder_hidden: vec![128, 256],
        }
    }
}

/// One dense layer as trainable candle variables.
pub struct Linear {
    pub weight: Var,
    pub bias: Var,
}

impl Linear {
    /// PyTorch's default initialization, U(−1/√in, 1/√in) for weights and
    /// bias, drawn from our own seeded stream so training is reproducible
    /// (candle's own random tensors are not seedable on the CPU).
    fn init(
        rng: &mut ChaCha8Rng,
        inputs: usize,
        outputs: usize,
        device: &Device,
    ) -> Result<Linear> {
        let bound = 1.0 / (inputs as f32).sqrt();
        let mut draw = |n: usize| {
            (0..n)
                .map(|_| rng.random_range(-bound..bound))
                .collect::<Vec<f32>>()
        };
        let w = draw(inputs * outputs);
        let b = draw(outputs);
        Linear::from_dense(&Dense::new(inputs, outputs, w, b), device)
    }

    fn from_dense(d: &Dense, device: &Device) -> Result<Linear> {
        Ok(Linear {
            weight: Var::from_tensor(&Tensor::from_slice(
                &d.weight,
                (d.inputs, d.outputs),
                device,
            )?)?,
            bias: Var::from_tensor(&Tensor::from_slice(&d.bias, d.outputs, device)?)?,
        })
    }

    pub fn forward(&self, x: &Tensor) -> Result<Tensor> {
        Ok(x.matmul(self.weight.as_tensor())?
            .broadcast_add(self.bias.as_tensor())?)
    }

    fn to_dense(&self) -> Result<Dense> {
        let (inputs, outputs) = self.weight.as_tensor().dims2()?;
        let weight = self.weight.as_tensor().flatten_all()?.to_vec1::<f32>()?;
        let bias = self.bias.as_tensor().to_vec1::<f32>()?;
        Ok(Dense::new(inputs, outputs, weight, bias))
    }
}

pub struct Vae {
    pub encoder: Vec<Linear>,
    pub mean: Linear,
    pub log_variance: Linear,
    pub decoder: Vec<Linear>,
    pub logits: Linear,
    pub device: Device,
}

impl Vae {
    pub fn new(arch: &Architecture, seed: u64) -> Result<Vae> {
        let device = Device::Cpu;
        let mut rng = ChaCha8Rng::seed_from_u64(seed);
        let mut stack = |sizes: &[usize]| -> Result<Vec<Linear>> {
            sizes
                .windows(2)
                .map(|w| Linear::init(&mut rng, w[0], w[1], &device))
                .collect()
        };
        let enc_sizes: Vec<usize> = std::iter::once(INPUT)
            .chain(arch.encoder_hidden.iter().copied())
            .collect();
        let dec_sizes: Vec<usize> = std::iter::once(LATENT)
            .chain(arch.decoder_hidden.iter().copied())
            .collect();
        let encoder = stack(&enc_sizes)?;
        let decoder = stack(&dec_sizes)?;
        let last_enc = *enc_sizes.last().expect("starts with INPUT");
        let last_dec = *dec_sizes.last().expect("starts with LATENT");
        let mean = Linear::init(&mut rng, last_enc, LATENT, &device)?;
        let log_variance = Linear::init(&mut rng, last_enc, LATENT, &device)?;
        let logits = Linear::init(&mut rng, last_dec, STEPS * CLASSES, &device)?;
        Ok(Vae {
            encoder,
            mean,
            log_variance,
            decoder,
            logits,
            device,
        })
    }

    /// Every trainable variable, for the optimizer.
    pub fn vars(&self) -> Vec<Var> {
        let layers = self
            .encoder
            .iter()
            .chain([&self.mean, &self.log_variance])
            .chain(self.decoder.iter())
            .chain([&self.logits]);
        layers
            .flat_map(|l| [l.weight.clone(), l.bias.clone()])
            .collect()
    }

    /// `[batch, INPUT]` one-hot → (mean, log-variance), each `[batch, LATENT]`.
    pub fn encode(&self, x: &Tensor) -> Result<(Tensor, Tensor)> {
        let mut h = x.clone();
        for l in &self.encoder {
            h = l.forward(&h)?.relu()?;
        }
        Ok((self.mean.forward(&h)?, self.log_variance.forward(&h)?))
    }

    /// `encode` with the weights held constant: gradients reach `x` but no
    /// encoder variable.
    pub fn encode_frozen(&self, x: &Tensor) -> Result<(Tensor, Tensor)> {
        let frozen = |l: &Linear, h: &Tensor| -> Result<Tensor> {
            Ok(h.matmul(&l.weight.as_tensor().detach())?
                .broadcast_add(&l.bias.as_tensor().detach())?)
        };
        let mut h = x.clone();
        for l in &self.encoder {
            h = frozen(l, &h)?.relu()?;
        }
        Ok((frozen(&self.mean, &h)?, frozen(&self.log_variance, &h)?))
    }

    /// `encode` for training, from the tokens themselves (`STEPS` per
    /// measure): the one-hot row's 1 for step k sits at `k · CLASSES +
    /// token`, so the first layer's product is a sum of gathered weight
    /// rows (`GatherSum`).
    pub fn encode_tokens(&self, tokens: &[u32]) -> Result<(Tensor, Tensor)> {
        let (first, rest) = self
            .encoder
            .split_first()
            .context("the encoder has a hidden layer")?;
        let op = GatherSum {
            ids: one_hot_indices(tokens),
            batch: tokens.len() / STEPS,
        };
        let mut h = first
            .weight
            .as_tensor()
            .apply_op1(op)?
            .broadcast_add(first.bias.as_tensor())?
            .relu()?;
        for l in rest {
            h = l.forward(&h)?.relu()?;
        }
        Ok((self.mean.forward(&h)?, self.log_variance.forward(&h)?))
    }

    /// `[batch, LATENT]` → logits `[batch, STEPS * CLASSES]`.
    pub fn decode(&self, z: &Tensor) -> Result<Tensor> {
        let mut h = z.clone();
        for l in &self.decoder {
            h = l.forward(&h)?.relu()?;
        }
        self.logits.forward(&h)
    }

    /// Plain-slice forward passes, for comparing with the exported graphs.
    pub fn encode_rows(&self, x: &[f32], rows: usize) -> Result<(Vec<f32>, Vec<f32>)> {
        let t = Tensor::from_slice(x, (rows, INPUT), &self.device)?;
        let (m, lv) = self.encode(&t)?;
        Ok((m.flatten_all()?.to_vec1()?, lv.flatten_all()?.to_vec1()?))
    }

    pub fn decode_rows(&self, z: &[f32], rows: usize) -> Result<Vec<f32>> {
        let t = Tensor::from_slice(z, (rows, LATENT), &self.device)?;
        Ok(self.decode(&t)?.flatten_all()?.to_vec1()?)
    }

    /// The network as ONNX writer specs: the encoder takes `[batch, 16, 38]`
    /// one-hot tokens and flattens them; the decoder's logits are reshaped
    /// to `[batch, 16, 38]`.
    pub fn to_specs(&self) -> Result<(EncoderSpec, DecoderSpec)> {
        let relu = |l: &Linear| -> Result<Layer> {
            Ok(Layer {
                dense: l.to_dense()?,
                activation: Activation::Relu,
            })
        };
        let encoder = EncoderSpec {
            input_name: ENCODER_INPUT.into(),
            input_shape: vec![STEPS, CLASSES],
            hidden: self.encoder.iter().map(relu).collect::<Result<_>>()?,
            mean_name: ENCODER_MEAN.into(),
            mean: self.mean.to_dense()?,
            log_variance: Some((ENCODER_LOG_VARIANCE.into(), self.log_variance.to_dense()?)),
        };
        let decoder = DecoderSpec {
            input_name: DECODER_INPUT.into(),
            hidden: self.decoder.iter().map(relu).collect::<Result<_>>()?,
            output_name: DECODER_OUTPUT.into(),
            output: self.logits.to_dense()?,
            output_shape: Some(vec![STEPS, CLASSES]),
        };
        Ok((encoder, decoder))
    }

    /// Rebuilds the network from writer specs (e.g. read back from the
    /// shipped ONNX files), so the trainer's forward pass can be compared
    /// with tract's on the model that is actually embedded.
    pub fn from_specs(encoder: &EncoderSpec, decoder: &DecoderSpec) -> Result<Vae> {
        let device = Device::Cpu;
        let lin = |d: &Dense| Linear::from_dense(d, &device);
        let (_, lv) = encoder
            .log_variance
            .as_ref()
            .context("the demo encoder has a log-variance head")?;
        ensure!(
            encoder
                .hidden
                .iter()
                .chain(&decoder.hidden)
                .all(|l| l.activation == Activation::Relu),
            "the demo network uses ReLU hidden layers"
        );
        Ok(Vae {
            encoder: encoder
                .hidden
                .iter()
                .map(|l| lin(&l.dense))
                .collect::<Result<_>>()?,
            mean: lin(&encoder.mean)?,
            log_variance: lin(lv)?,
            decoder: decoder
                .hidden
                .iter()
                .map(|l| lin(&l.dense))
                .collect::<Result<_>>()?,
            logits: lin(&decoder.output)?,
            device: device.clone(),
        })
    }

    /// Number of weights and biases.
    pub fn parameter_count(&self) -> usize {
        self.vars().iter().map(|v| v.as_tensor().elem_count()).sum()
    }
}

/// One-hot rows times a weight matrix, from the rows' indices: a one-hot
/// row with a 1 at each of `ids` picks those rows of the weight, so the
/// product is their sum — the same numbers as the matmul at a 38th of the
/// work. As a candle op it also spares the backward pass the gradient of the
/// constant input, which candle's matmul always computes. Together that was
/// about a third of the multiply-adds of a training step.
struct GatherSum {
    /// `batch × STEPS` row indices, measure by measure.
    ids: Vec<u32>,
    batch: usize,
}

impl GatherSum {
    fn measures(&self) -> impl Iterator<Item = (usize, &[u32])> {
        self.ids.chunks(STEPS).enumerate()
    }
}

impl CustomOp1 for GatherSum {
    fn name(&self) -> &'static str {
        "gather-sum"
    }

    fn cpu_fwd(
        &self,
        storage: &CpuStorage,
        layout: &Layout,
    ) -> candle_core::Result<(CpuStorage, Shape)> {
        let (_, width) = layout.shape().dims2()?;
        let (CpuStorage::F32(w), Some((start, end))) = (storage, layout.contiguous_offsets())
        else {
            candle_core::bail!("gather-sum wants a contiguous f32 weight");
        };
        let w = &w[start..end];
        let mut out = vec![0f32; self.batch * width];
        for (b, ids) in self.measures() {
            let dst = &mut out[b * width..(b + 1) * width];
            for &id in ids {
                let src = &w[id as usize * width..(id as usize + 1) * width];
                dst.iter_mut().zip(src).for_each(|(d, s)| *d += s);
            }
        }
        Ok((CpuStorage::F32(out), Shape::from((self.batch, width))))
    }

    /// d(loss)/d(weight row `id`) is the sum of the output gradients of
    /// every measure that picked it.
    fn bwd(
        &self,
        arg: &Tensor,
        _res: &Tensor,
        grad_res: &Tensor,
    ) -> candle_core::Result<Option<Tensor>> {
        let (rows, width) = arg.dims2()?;
        let g = grad_res.flatten_all()?.to_vec1::<f32>()?;
        let mut dw = vec![0f32; rows * width];
        for (b, ids) in self.measures() {
            let src = &g[b * width..(b + 1) * width];
            for &id in ids {
                let dst = &mut dw[id as usize * width..(id as usize + 1) * width];
                dst.iter_mut().zip(src).for_each(|(d, s)| *d += s);
            }
        }
        Ok(Some(Tensor::from_vec(dw, (rows, width), arg.device())?))
    }
}

/// Casts to f32 where candle might hand back another type.
pub fn scalar(t: &Tensor) -> Result<f32> {
    Ok(t.to_dtype(DType::F32)?.to_scalar::<f32>()?)
}

/// Where each token's 1 sits in its measure's one-hot row (`STEPS` tokens
/// per measure, measures back to back).
pub fn one_hot_indices(tokens: &[u32]) -> Vec<u32> {
    tokens
        .iter()
        .enumerate()
        .map(|(k, &t)| (k % STEPS * CLASSES) as u32 + t)
        .collect()
}

#[cfg(test)]
mod tests {
    use super::*;

    /// The gathered first layer must give what the exported graph computes
    /// (the one-hot product), and the same weight gradient as candle's
    /// autograd through that product.
    #[test]
    fn token_encoding_matches_the_one_hot_product_and_its_gradient() {
        let vae = Vae::new(&Architecture::default(), 7).unwrap();
        let batch = 3;
        let tokens: Vec<u32> = (0..batch * STEPS)
            .map(|k| ((k * 7 + k / STEPS) % CLASSES) as u32)
            .collect();
        let mut x = vec![0f32; batch * INPUT];
        for (k, &id) in one_hot_indices(&tokens).iter().enumerate() {
            x[k / STEPS * INPUT + id as usize] = 1.0;
        }
        let x = Tensor::from_vec(x, (batch, INPUT), &vae.device).unwrap();
        let (m1, v1) = vae.encode(&x).unwrap();
        let (m2, v2) = vae.encode_tokens(&tokens).unwrap();
        let diff = |a: &Tensor, b: &Tensor| -> f32 {
            (a - b)
                .unwrap()
                .abs()
                .unwrap()
                .flatten_all()
                .unwrap()
                .max(0)
                .unwrap()
                .to_scalar()
                .unwrap()
        };
        assert!(diff(&m1, &m2) < 1e-5 && diff(&v1, &v2) < 1e-5);
        // Any loss that reaches the first layer through both outputs.
        let loss = |m: &Tensor, v: &Tensor| (m.sqr().unwrap() + v).unwrap().sum_all().unwrap();
        let w = vae.encoder[0].weight.as_tensor();
        let g1 = loss(&m1, &v1).backward().unwrap();
        let g2 = loss(&m2, &v2).backward().unwrap();
        assert!(diff(g1.get(w).unwrap(), g2.get(w).unwrap()) < 1e-5);
    }
}
