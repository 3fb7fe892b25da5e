//! Axes for any VAE: the attribute-vector method. Encode a corpus of the
//! user's own phrases; for each attribute, rank the phrases by it, and take
//! the mean latent code of the top group minus that of the bottom group
//! (quartiles by default). Normalised, that difference is the axis's
//! direction; its length is the axis's span, so a full slider throw moves a
//! prompt as far as the bottom group lies from the top. (The method is the
//! latent "attribute vector" of e.g. Larsen et al., "Autoencoding beyond
//! pixels using a learned similarity metric", ICML 2016, and Roberts et al.,
//! "A Hierarchical Latent Vector Model for Learning Long-Term Structure in
//! Music", ICML 2018.)
//!
//! A derived axis is only as good as its steering, so each one is measured
//! straight away: Spearman ρ between slider and measured attribute over a
//! sweep, averaged over prompts from the corpus (`steer::sweep`).

use crate::engine::Engine;
use crate::error::EngineError;
use crate::manifest::{AxisSpec, Manifest};
use crate::package::{ModelOrigin, ModelPackage};
use crate::steer::sweep::{self, Steering};
use nudgebar_music::attributes::{self, Attribute};
use nudgebar_music::Phrase;
use serde::{Deserialize, Serialize};

/// Fewest phrases with a defined value an attribute needs: below this the
/// two groups are a couple of phrases each and the difference is mostly noise.
pub const MIN_WINDOWS: usize = 8;

#[derive(Debug, Clone, PartialEq)]
pub struct DeriveOptions {
    /// Attributes to derive axes for.
    pub attributes: Vec<Attribute>,
    /// Share of the ranked phrases in each of the top and bottom groups.
    pub group_fraction: f64,
    /// Corpus phrases the steering is measured on.
    pub check_prompts: usize,
    /// Slider values per sweep, from −1 to 1.
    pub check_points: usize,
}

impl Default for DeriveOptions {
    fn default() -> Self {
        DeriveOptions {
            attributes: Attribute::ALL.to_vec(),
            group_fraction: 0.25,
            check_prompts: 8,
            check_points: 9,
        }
    }
}

/// One derived axis and how it was made.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct DerivedAxis {
    pub attribute: Attribute,
    /// Phrases in each group.
    pub group_size: usize,
    /// Mean attribute value of the bottom and the top group.
    pub low_mean: f64,
    pub high_mean: f64,
    /// Latent distance between the groups' mean codes (the axis's span).
    pub span: f32,
    pub direction: Vec<f32>,
    pub steering: Steering,
}

/// An attribute no axis could be derived for, and why (a sentence).
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct Skipped {
    pub attribute: Attribute,
    pub reason: String,
}

#[derive(Debug, Clone)]
pub struct Derivation {
    /// The input manifest with the derived axes in place of any axis for
    /// the same attribute; other axes are kept as they were.
    pub manifest: Manifest,
    pub axes: Vec<DerivedAxis>,
    pub skipped: Vec<Skipped>,
    /// Model-sized pieces of the corpus that were encoded.
    pub windows: usize,
    /// Corpus phrases the model could not take (wrong metre), with why.
    pub unusable: Vec<String>,
}

impl Derivation {
    /// The package with the derived manifest, ready to save or load.
    pub fn package(&self, from: &ModelPackage) -> Result<ModelPackage, EngineError> {
        ModelPackage::from_parts(
            &self.manifest.to_json(),
            from.encoder.clone(),
            from.decoder.clone(),
            ModelOrigin::Embedded,
        )
        .map_err(|e| EngineError::Setting(format!("The derived manifest is not valid: {e}")))
    }
}

/// Cuts a phrase into pieces of the model's input length (whole measures);
/// silent pieces are left out, they say nothing about any attribute.
fn windows(phrase: &Phrase, per_input: u8) -> Vec<Phrase> {
    let per = per_input.max(1);
    (0..phrase.measures / per)
        .map(|w| {
            let bars: Vec<Phrase> = (0..per).map(|k| phrase.measure(w * per + k)).collect();
            Phrase::concat(phrase.time_signature, &bars)
        })
        .filter(|p| !p.is_empty())
        .collect()
}

/// Derives axes from `corpus` for `engine`'s model. See the module docs.
pub fn derive_axes(
    engine: &mut Engine,
    corpus: &[Phrase],
    options: &DeriveOptions,
) -> Result<Derivation, EngineError> {
    if !(options.group_fraction > 0.0 && options.group_fraction <= 0.5) {
        return Err(EngineError::Setting(format!(
            "The group share {} must be above 0 and at most 0.5 (0.25 = quartiles).",
            options.group_fraction
        )));
    }
    let per_input = engine.manifest().grid.measures;
    let size = engine.latent_size();
    let mut codes: Vec<Vec<f32>> = Vec::new();
    let mut pieces: Vec<Phrase> = Vec::new();
    let mut unusable = Vec::new();
    for (i, phrase) in corpus.iter().enumerate() {
        for w in windows(phrase, per_input) {
            let prepared = match engine.prepare(&w) {
                Ok(p) => p,
                Err(e) => {
                    unusable.push(format!("phrase {}: {e}", i + 1));
                    break;
                }
            };
            let z = engine.encode(&prepared)?;
            // A piece the layout splits into several rows reads as their mean.
            let mut mean = vec![0.0f32; size];
            for r in 0..z.rows {
                for (m, v) in mean.iter_mut().zip(z.row(r)) {
                    *m += v / z.rows as f32;
                }
            }
            codes.push(mean);
            pieces.push(prepared.grid.to_phrase());
        }
    }

    let mut derived = Vec::new();
    let mut skipped = Vec::new();
    for &attribute in &options.attributes {
        let mut ranked: Vec<(f64, usize)> = pieces
            .iter()
            .enumerate()
            .filter_map(|(i, p)| attributes::measure(attribute, p).map(|v| (v, i)))
            .collect();
        let skip = |reason: String| Skipped { attribute, reason };
        if ranked.len() < MIN_WINDOWS {
            skipped.push(skip(format!(
                "only {} of the {} phrases define {}; at least {MIN_WINDOWS} are needed",
                ranked.len(),
                pieces.len(),
                attribute.label().to_lowercase()
            )));
            continue;
        }
        ranked.sort_by(|a, b| a.0.total_cmp(&b.0));
        let k = ((ranked.len() as f64 * options.group_fraction).floor() as usize).max(1);
        let (low, high) = (&ranked[..k], &ranked[ranked.len() - k..]);
        let mean_of = |g: &[(f64, usize)]| g.iter().map(|x| x.0).sum::<f64>() / g.len() as f64;
        let (low_mean, high_mean) = (mean_of(low), mean_of(high));
        if high_mean - low_mean < 1e-9 {
            skipped.push(skip(format!(
                "the phrases hardly differ in {} (top and bottom groups both average {low_mean:.2})",
                attribute.label().to_lowercase()
            )));
            continue;
        }
        let centroid = |g: &[(f64, usize)]| {
            let mut c = vec![0.0f64; size];
            for &(_, i) in g {
                for (s, v) in c.iter_mut().zip(&codes[i]) {
                    *s += *v as f64 / g.len() as f64;
                }
            }
            c
        };
        let d: Vec<f64> = centroid(high)
            .iter()
            .zip(centroid(low))
            .map(|(h, l)| h - l)
            .collect();
        let norm = d.iter().map(|x| x * x).sum::<f64>().sqrt();
        if !norm.is_finite() || norm < 1e-6 {
            skipped.push(skip(format!(
                "the model encodes phrases with low and high {} to the same place, so there is no direction to follow",
                attribute.label().to_lowercase()
            )));
            continue;
        }
        derived.push(DerivedAxis {
            attribute,
            group_size: k,
            low_mean,
            high_mean,
            span: norm as f32,
            direction: d.iter().map(|x| (x / norm) as f32).collect(),
            steering: Steering {
                mean_rho: 0.0,
                per_prompt: Vec::new(),
            },
        });
    }

    let mut manifest = engine.manifest().clone();
    manifest
        .axes
        .retain(|a| !derived.iter().any(|d| d.attribute.key() == a.attribute));
    for d in &derived {
        manifest.axes.push(AxisSpec {
            attribute: d.attribute.key().to_string(),
            label: d.attribute.label().to_string(),
            span: d.span,
            dimension: None,
            direction: Some(d.direction.clone()),
            hole_rate: Vec::new(),
        });
    }
    let mut derivation = Derivation {
        manifest,
        axes: derived,
        skipped,
        windows: pieces.len(),
        unusable,
    };
    if derivation.axes.is_empty() {
        return Ok(derivation);
    }

    // Measure how each new axis steers, with the derived manifest loaded.
    let package = derivation.package(engine.package())?;
    let mut steered = Engine::new(package)
        .map_err(|e| EngineError::Setting(format!("The derived model does not load: {e}")))?;
    let step = (pieces.len() / options.check_prompts.max(1)).max(1);
    let prompts: Vec<Phrase> = pieces
        .iter()
        .step_by(step)
        .take(options.check_prompts.max(1))
        .cloned()
        .collect();
    let sliders = sweep::slider_grid(1.0, options.check_points);
    for d in &mut derivation.axes {
        let axis = steered
            .axes()
            .iter()
            .position(|a| a.attribute == d.attribute)
            .expect("derived axes are in the derived manifest");
        d.steering = sweep::steering(&mut steered, &prompts, axis, &sliders)?;
    }
    Ok(derivation)
}
