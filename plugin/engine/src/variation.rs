//! Takes: encode the prompt, move its code along the axes by the slider
//! amounts, let each take wander on the uncontrolled dimensions, decode all
//! takes in one batch, guard against holes and duplicates, and measure what
//! actually changed.

use crate::codec::{HoleReport, NoteChoice, PitchMask};
use crate::engine::{Engine, Prepared};
use crate::error::EngineError;
pub use nudgebar_contract::take::Take;
use nudgebar_music::attributes::Readout;
use nudgebar_music::{Adjustments, Grid, Phrase};
use rand::SeedableRng;
use rand_chacha::ChaCha8Rng;
use rand_distr::{Distribution, StandardNormal};
use serde::{Deserialize, Serialize};

pub const MAX_TAKES: usize = 16;
/// Extra decode rounds for takes that came out empty or duplicated.
const RETRY_ROUNDS: u64 = 3;
/// A retried take wanders at least this far (in latent standard deviations),
/// so zero spread can still yield distinct takes.
const RETRY_MIN_SPREAD: f32 = 0.35;

/// What the user asks for.
#[derive(Debug, Clone, PartialEq)]
pub struct VariationRequest {
    /// One slider value per axis, in slider units (−1…1 spans the axis; beyond is extrapolation).
    pub offsets: Vec<f32>,
    /// 1 to 16.
    pub takes: usize,
    /// How far takes wander on the uncontrolled latent dimensions, in
    /// standard deviations of the prior.
    pub spread: f32,
    pub seed: u64,
    pub choice: NoteChoice,
    /// Pitches takes may use; all by default.
    pub mask: PitchMask,
}

impl Default for VariationRequest {
    fn default() -> Self {
        VariationRequest {
            offsets: Vec::new(),
            takes: 4,
            spread: 0.5,
            seed: 1,
            choice: NoteChoice::Argmax,
            mask: PitchMask::default(),
        }
    }
}

#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct Variation {
    /// The prompt as the model saw it.
    pub prompt: Phrase,
    pub prompt_attributes: Readout,
    pub adjustments: Adjustments,
    pub takes: Vec<Take>,
    pub holes: HoleReport,
    /// Takes that stayed identical to an earlier one after retries and were left out.
    pub duplicates_dropped: usize,
}

impl Engine {
    /// Makes takes from a prompt. Reproducible: the same prompt, model and
    /// request give the same takes; take k does not depend on how many
    /// takes were asked for.
    pub fn vary(
        &mut self,
        prompt: &Phrase,
        request: &VariationRequest,
    ) -> Result<Variation, EngineError> {
        check_request(request, self.axes().len())?;
        let prepared = self.prepare(prompt)?;
        let base = self.encode(&prepared)?;
        let offset = self.offset_for(&request.offsets);
        let free = self.free_dimensions();
        let chunks = prepared.layout.chunks();
        let size = self.latent_size();

        let mut holes = HoleReport::default();
        let mut done: Vec<Option<Take>> = vec![None; request.takes];
        let mut pending: Vec<usize> = (0..request.takes).collect();
        let mut round = 0u64;
        while !pending.is_empty() {
            let spread = if round == 0 {
                request.spread
            } else {
                request.spread.max(RETRY_MIN_SPREAD) * (1.0 + 0.5 * round as f32)
            };
            let mut codes = Vec::with_capacity(pending.len() * chunks * size);
            let mut streams = Vec::with_capacity(pending.len());
            for &t in &pending {
                let stream = t as u64 + round * MAX_TAKES as u64;
                let noise = noise(request.seed, stream, size, spread, &free);
                for c in 0..chunks {
                    codes.extend(
                        base.row(c)
                            .iter()
                            .zip(&offset)
                            .zip(&noise)
                            .map(|((b, o), n)| b + o + n),
                    );
                }
                streams.push(stream);
            }
            let logits = self.decode(&codes, pending.len() * chunks)?;
            let mut retry = Vec::new();
            for (i, &t) in pending.iter().enumerate() {
                let mut grid = self.read_take(
                    &logits,
                    i * chunks,
                    &prepared,
                    &request.choice,
                    streams[i],
                    &request.mask,
                    &mut holes,
                );
                let emptied = emptied_measures(&prepared.grid, &grid);
                if !emptied.is_empty() {
                    holes.emptied += 1;
                }
                let duplicate = done
                    .iter()
                    .flatten()
                    .any(|d| same_notes(&d.phrase, &grid.to_phrase()));
                let last_round = round == RETRY_ROUNDS;
                if (!emptied.is_empty() || duplicate) && !last_round {
                    holes.resampled += 1;
                    retry.push(t);
                    continue;
                }
                if !emptied.is_empty() {
                    let rows =
                        &logits[i * chunks * row_len(self)..(i + 1) * chunks * row_len(self)];
                    fill_empty_measures(self, rows, &prepared, &emptied, &request.mask, &mut grid);
                }
                if duplicate && last_round {
                    continue; // left out; counted below
                }
                done[t] = Some(self.measure_take(
                    &prepared,
                    grid,
                    codes[i * chunks * size..(i + 1) * chunks * size].to_vec(),
                    streams[i],
                ));
            }
            pending = retry;
            round += 1;
        }
        let duplicates_dropped = done.iter().filter(|t| t.is_none()).count();
        let prompt_phrase = prepared.grid.to_phrase();
        let prompt_attributes = Readout::of(&prompt_phrase);
        let mut takes: Vec<Take> = done.into_iter().flatten().collect();
        for t in &mut takes {
            t.change = t.attributes.minus(&prompt_attributes);
        }
        Ok(Variation {
            prompt: prompt_phrase,
            prompt_attributes,
            adjustments: prepared.adjustments,
            takes,
            holes,
            duplicates_dropped,
        })
    }

    /// Decodes the given latent rows and measures them as takes: the
    /// decode-then-measure step that target search, locks and blends reuse.
    pub fn takes_from_codes(
        &mut self,
        prepared: &Prepared,
        codes: &[f32],
        choice: &NoteChoice,
        mask: &PitchMask,
        holes: &mut HoleReport,
    ) -> Result<Vec<Take>, EngineError> {
        let chunks = prepared.layout.chunks();
        let per_take = chunks * self.latent_size();
        let count = codes.len() / per_take;
        let logits = self.decode(codes, count * chunks)?;
        let prompt_attributes = Readout::of(&prepared.grid.to_phrase());
        Ok((0..count)
            .map(|i| {
                let grid =
                    self.read_take(&logits, i * chunks, prepared, choice, i as u64, mask, holes);
                let mut take = self.measure_take(
                    prepared,
                    grid,
                    codes[i * per_take..(i + 1) * per_take].to_vec(),
                    i as u64,
                );
                take.change = take.attributes.minus(&prompt_attributes);
                take
            })
            .collect())
    }

    fn measure_take(
        &self,
        _prepared: &Prepared,
        grid: Grid,
        latent: Vec<f32>,
        stream: u64,
    ) -> Take {
        let phrase = grid.to_phrase();
        let attributes = Readout::of(&phrase);
        Take {
            phrase,
            change: Readout::default(),
            attributes,
            latent,
            stream,
        }
    }

    /// Latent dimensions no regularized axis owns: where takes may wander
    /// without undoing the sliders.
    pub fn free_dimensions(&self) -> Vec<bool> {
        let mut free = vec![true; self.latent_size()];
        for a in self.axes() {
            if let Some(d) = a.dimension {
                free[d] = false;
            }
        }
        free
    }
}

fn row_len(engine: &Engine) -> usize {
    let m = engine.manifest();
    m.grid.steps() * m.encoding.classes()
}

fn check_request(r: &VariationRequest, axes: usize) -> Result<(), EngineError> {
    if r.takes == 0 || r.takes > MAX_TAKES {
        return Err(EngineError::TakeCount(r.takes));
    }
    if r.offsets.len() > axes {
        return Err(EngineError::Setting(format!(
            "{} slider values were given, but this model has {axes} axes.",
            r.offsets.len()
        )));
    }
    if let Some(v) = r.offsets.iter().find(|v| !v.is_finite() || v.abs() > 4.0) {
        return Err(EngineError::Setting(format!("The slider value {v} is out of reach; use values between -4 and 4 (±1 is the axis's span).")));
    }
    if !r.spread.is_finite() || r.spread < 0.0 || r.spread > 4.0 {
        return Err(EngineError::Setting(format!(
            "The spread {} is out of reach; use 0 to 4.",
            r.spread
        )));
    }
    if let NoteChoice::Sample { temperature, .. } = r.choice {
        if !temperature.is_finite() || temperature <= 0.0 || temperature > 10.0 {
            return Err(EngineError::Setting(format!(
                "The sampling temperature {temperature} must be above 0 and at most 10."
            )));
        }
    }
    Ok(())
}

/// Gaussian noise of standard deviation `spread` on the free dimensions,
/// from its own ChaCha8 stream so each take is reproducible on its own.
fn noise(seed: u64, stream: u64, size: usize, spread: f32, free: &[bool]) -> Vec<f32> {
    let mut rng = ChaCha8Rng::seed_from_u64(seed);
    rng.set_stream(stream);
    (0..size)
        .map(|d| {
            let n: f32 = StandardNormal.sample(&mut rng);
            if free[d] {
                n * spread
            } else {
                0.0
            }
        })
        .collect()
}

/// Measures of the take that are silent where the prompt's are not.
fn emptied_measures(prompt: &Grid, take: &Grid) -> Vec<usize> {
    let spm = prompt.steps_per_measure;
    (0..prompt.measures as usize)
        .filter(|&m| {
            let has = |g: &Grid| g.notes.iter().any(|n| n.start / spm == m);
            has(prompt) && !has(take)
        })
        .collect()
}

fn same_notes(a: &Phrase, b: &Phrase) -> bool {
    a.notes.len() == b.notes.len()
        && a.notes.iter().zip(&b.notes).all(|(x, y)| {
            x.pitch == y.pitch
                && (x.onset - y.onset).abs() < 1e-9
                && (x.duration - y.duration).abs() < 1e-9
        })
}

/// Repair for a measure still empty after retries: place the single most
/// likely note the decoder offered in it (the live step and allowed pitch
/// whose logit beats that step's rest logit by the most), lasting one step.
fn fill_empty_measures(
    engine: &Engine,
    rows: &[f32],
    prepared: &Prepared,
    measures: &[usize],
    mask: &PitchMask,
    grid: &mut Grid,
) {
    let m = engine.manifest();
    let classes = m.encoding.classes();
    let steps = m.grid.steps();
    let layout = &prepared.layout;
    let lowest = m.encoding.lowest_pitch();
    let pitches = m.encoding.pitch_count();
    let rest = match m.encoding {
        crate::manifest::Encoding::Tokens { rest_token, .. } => Some(rest_token),
        _ => None,
    };
    for &measure in measures {
        let mut best: Option<(f32, usize, u8)> = None;
        for local in 0..layout.steps_per_measure {
            let step = measure * layout.steps_per_measure + local;
            let (row, s) = layout.to_model(step);
            let l = &rows[(row * steps + s) * classes..(row * steps + s + 1) * classes];
            let floor = rest.map(|r| l[r]).filter(|v| v.is_finite()).unwrap_or(0.0);
            for p in 0..pitches {
                let pitch = lowest + p as u8;
                if l[p].is_finite()
                    && mask.allows(pitch)
                    && best.is_none_or(|(v, _, _)| l[p] - floor > v)
                {
                    best = Some((l[p] - floor, step, pitch));
                }
            }
        }
        if let Some((_, start, pitch)) = best {
            let velocity = prepared.velocity_at(start);
            grid.notes.push(nudgebar_music::GridNote {
                pitch,
                start,
                steps: 1,
                velocity,
            });
        }
    }
    grid.notes
        .sort_by(|a, b| a.start.cmp(&b.start).then(a.pitch.cmp(&b.pitch)));
}
