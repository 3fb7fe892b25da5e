//! Blend: in-between takes on the way from the prompt to a kept take, by
//! moving the latent code from the prompt's toward the take's. Linear
//! interpolation is the plain straight line; spherical interpolation
//! ("slerp", Shoemake, "Animating rotation with quaternion curves",
//! SIGGRAPH 1985; proposed for VAE latents by White, "Sampling Generative
//! Networks", arXiv 2016) keeps the in-between codes at a norm typical of
//! the prior, where a straight line would cut through the less-visited
//! middle of a Gaussian latent space.

use crate::codec::{HoleReport, NoteChoice, PitchMask};
use crate::engine::Engine;
use crate::error::EngineError;
use crate::variation::Take;
use nudgebar_music::attributes::Readout;
use nudgebar_music::Phrase;
use serde::{Deserialize, Serialize};

#[derive(Debug, Clone, Copy, Default, PartialEq, Eq, Serialize, Deserialize)]
#[serde(rename_all = "snake_case")]
pub enum Interpolation {
    #[default]
    Linear,
    Spherical,
}

/// The point `t` of the way from `a` to `b` (t = 0 gives `a`, 1 gives `b`
/// exactly). Spherical interpolation falls back to linear where the two
/// codes point (almost) the same or opposite ways, where slerp is undefined.
pub fn interpolate(a: &[f32], b: &[f32], t: f32, kind: Interpolation) -> Vec<f32> {
    if t == 0.0 {
        return a.to_vec();
    }
    if t == 1.0 {
        return b.to_vec();
    }
    let lerp = || a.iter().zip(b).map(|(x, y)| x + t * (y - x)).collect();
    if kind == Interpolation::Linear {
        return lerp();
    }
    let dot: f64 = a
        .iter()
        .zip(b)
        .map(|(x, y)| (*x as f64) * (*y as f64))
        .sum();
    let na: f64 = a.iter().map(|x| (*x as f64).powi(2)).sum::<f64>().sqrt();
    let nb: f64 = b.iter().map(|x| (*x as f64).powi(2)).sum::<f64>().sqrt();
    if na < 1e-9 || nb < 1e-9 {
        return lerp();
    }
    let omega = (dot / (na * nb)).clamp(-1.0, 1.0).acos();
    let so = omega.sin();
    if so.abs() < 1e-6 {
        return lerp();
    }
    let t = t as f64;
    let (wa, wb) = (((1.0 - t) * omega).sin() / so, (t * omega).sin() / so);
    a.iter()
        .zip(b)
        .map(|(x, y)| (wa * *x as f64 + wb * *y as f64) as f32)
        .collect()
}

/// One in-between take and how far along it is.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct BlendStep {
    /// 0 = the prompt's code, 1 = the kept take's.
    pub amount: f32,
    pub take: Take,
}

#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct Blend {
    pub prompt_attributes: Readout,
    pub kind: Interpolation,
    pub steps: Vec<BlendStep>,
    pub holes: HoleReport,
}

impl Engine {
    /// Decodes takes at `amounts` of the way from the prompt's code to
    /// `toward` (a kept take's `latent`, made from this prompt).
    pub fn blend(
        &mut self,
        prompt: &Phrase,
        toward: &[f32],
        amounts: &[f32],
        kind: Interpolation,
        choice: &NoteChoice,
        mask: &PitchMask,
    ) -> Result<Blend, EngineError> {
        if amounts.is_empty() || amounts.len() > crate::variation::MAX_TAKES {
            return Err(EngineError::Setting(format!(
                "Ask for 1 to {} blend steps (got {}).",
                crate::variation::MAX_TAKES,
                amounts.len()
            )));
        }
        if let Some(a) = amounts.iter().find(|a| !(0.0..=1.0).contains(*a)) {
            return Err(EngineError::Setting(format!(
                "The blend amount {a} must lie between 0 (the prompt) and 1 (the kept take)."
            )));
        }
        let prepared = self.prepare(prompt)?;
        let base = self.encode(&prepared)?;
        if toward.len() != base.mean.len() || toward.iter().any(|v| !v.is_finite()) {
            return Err(EngineError::Setting(format!(
                "The kept take's latent code ({} values) does not fit this prompt on this model ({} values); blend toward a take made from this prompt with the model loaded now.",
                toward.len(),
                base.mean.len()
            )));
        }
        // Interpolate each model input row on its own: each is one code.
        let size = base.size;
        let mut codes = Vec::with_capacity(amounts.len() * base.mean.len());
        for &t in amounts {
            for r in 0..base.rows {
                let row = r * size..(r + 1) * size;
                codes.extend(interpolate(&base.mean[row.clone()], &toward[row], t, kind));
            }
        }
        let mut holes = HoleReport::default();
        let takes = self.takes_from_codes(&prepared, &codes, choice, mask, &mut holes)?;
        Ok(Blend {
            prompt_attributes: Readout::of(&prepared.grid.to_phrase()),
            kind,
            steps: amounts
                .iter()
                .zip(takes)
                .map(|(&amount, take)| BlendStep { amount, take })
                .collect(),
            holes,
        })
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn slerp_keeps_the_norm_between_codes_of_equal_norm() {
        // Worked example: unit vectors 90° apart; halfway is (1,1)/√2, norm 1,
        // where the straight line's midpoint has norm 1/√2.
        let (a, b) = ([1.0f32, 0.0], [0.0f32, 1.0]);
        let s = interpolate(&a, &b, 0.5, Interpolation::Spherical);
        assert!((s[0] - 0.5f32.sqrt()).abs() < 1e-6 && (s[1] - 0.5f32.sqrt()).abs() < 1e-6);
        let l = interpolate(&a, &b, 0.5, Interpolation::Linear);
        assert_eq!(l, vec![0.5, 0.5]);
        // A third of the way: the angle is 30°.
        let s = interpolate(&a, &b, 1.0 / 3.0, Interpolation::Spherical);
        assert!((s[0] - 30f32.to_radians().cos()).abs() < 1e-6);
        assert!((s[1] - 30f32.to_radians().sin()).abs() < 1e-6);
    }

    #[test]
    fn parallel_codes_fall_back_to_a_straight_line() {
        let s = interpolate(&[1.0, 1.0], &[2.0, 2.0], 0.5, Interpolation::Spherical);
        assert_eq!(s, vec![1.5, 1.5]);
        assert_eq!(
            interpolate(&[0.0, 0.0], &[2.0, 2.0], 0.25, Interpolation::Spherical),
            vec![0.5, 0.5]
        );
    }
}
