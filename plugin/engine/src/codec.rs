//! Between notes and tensors: a fitted prompt becomes encoder input rows,
//! and a decoder's logits become notes again — choosing each step's token
//! (argmax or sampled, optionally under a pitch mask) and catching decodes
//! that are not valid music for the encoding (the hole guard's first line).

use crate::fit::Layout;
use crate::manifest::Encoding;
use nudgebar_music::{Grid, GridNote};
use rand::Rng;
use rand_chacha::ChaCha8Rng;
use serde::{Deserialize, Serialize};

/// Encoder input for a batch of rows.
pub enum InputRows {
    F32(Vec<f32>),
    I64(Vec<i64>),
}

/// Counts of invalid decodes, so the user sees how often the model misbehaved.
#[derive(Debug, Clone, Copy, Default, PartialEq, Eq, Serialize, Deserialize)]
pub struct HoleReport {
    /// A hold token with no sounding note to hold; replaced by the best other token.
    pub dangling_holds: usize,
    /// A decoded pitch outside the declared range (a validated model cannot
    /// produce one; counted as a guard against manifest/graph drift).
    pub out_of_range: usize,
    /// Steps whose logits held NaN or infinity; those classes were ignored.
    pub non_finite: usize,
    /// Takes that decoded to an empty measure where the prompt had notes.
    pub emptied: usize,
    /// Takes decoded again with fresh noise (after emptiness or duplication).
    pub resampled: usize,
}

impl HoleReport {
    pub fn total(&self) -> usize {
        self.dangling_holds + self.out_of_range + self.non_finite + self.emptied
    }
    pub fn add(&mut self, o: &HoleReport) {
        self.dangling_holds += o.dangling_holds;
        self.out_of_range += o.out_of_range;
        self.non_finite += o.non_finite;
        self.emptied += o.emptied;
        self.resampled += o.resampled;
    }
}

/// How each step's token is chosen from the logits.
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
#[serde(tag = "kind", rename_all = "snake_case")]
pub enum NoteChoice {
    /// The most likely token: same latent, same notes.
    Argmax,
    /// Drawn from softmax(logits / temperature), with its own seed.
    Sample { temperature: f32, seed: u64 },
}

impl Default for NoteChoice {
    fn default() -> Self {
        NoteChoice::Argmax
    }
}

/// Which MIDI pitches a take may use (key/scale constraints); all by default.
#[derive(Debug, Clone, PartialEq)]
pub struct PitchMask(pub [bool; 128]);

impl Default for PitchMask {
    fn default() -> Self {
        PitchMask([true; 128])
    }
}

impl PitchMask {
    pub fn allows(&self, pitch: u8) -> bool {
        self.0[pitch as usize & 127]
    }
}

/// Encodes the fitted prompt grid into `layout.chunks()` input rows.
pub fn input_rows(grid: &Grid, layout: &Layout, enc: &Encoding) -> InputRows {
    let steps = layout.model.steps();
    let chunks = layout.chunks();
    match *enc {
        Encoding::Tokens {
            lowest_pitch,
            hold_token,
            rest_token,
            ..
        } => {
            let mut tokens = vec![rest_token; chunks * steps];
            for n in &grid.notes {
                let (row, s) = layout.to_model(n.start);
                tokens[row * steps + s] = (n.pitch - lowest_pitch) as usize;
                for k in 1..n.steps {
                    let (r2, s2) = layout.to_model(n.start + k);
                    if r2 == row {
                        tokens[r2 * steps + s2] = hold_token;
                    }
                }
            }
            if enc.input_is_indices() {
                InputRows::I64(tokens.into_iter().map(|t| t as i64).collect())
            } else {
                let classes = enc.classes();
                let mut x = vec![0.0f32; chunks * steps * classes];
                for (i, t) in tokens.into_iter().enumerate() {
                    x[i * classes + t] = 1.0;
                }
                InputRows::F32(x)
            }
        }
        Encoding::PianoRoll {
            lowest_pitch,
            cells,
            ..
        } => {
            let pitches = enc.pitch_count();
            let mut x = vec![0.0f32; chunks * steps * pitches];
            for n in &grid.notes {
                let lit = match cells {
                    crate::manifest::RollCells::Onsets => 1,
                    crate::manifest::RollCells::Sustain => n.steps,
                };
                for k in 0..lit {
                    let (row, s) = layout.to_model(n.start + k);
                    x[(row * steps + s) * pitches + (n.pitch - lowest_pitch) as usize] = 1.0;
                }
            }
            InputRows::F32(x)
        }
    }
}

/// Turns one decoder row (chunk `chunk` of a take) into notes on the
/// prompt's grid, counting invalid decodes into `holes`. Velocities are
/// left at 0 for the caller to fill.
pub fn read_row(
    logits: &[f32],
    chunk: usize,
    layout: &Layout,
    enc: &Encoding,
    choice: &mut Chooser<'_>,
    holes: &mut HoleReport,
) -> Vec<GridNote> {
    let classes = enc.classes();
    let mut notes = Vec::new();
    match *enc {
        Encoding::Tokens {
            lowest_pitch,
            hold_token,
            rest_token,
            ..
        } => {
            let pitches = enc.pitch_count();
            let mut open: Option<GridNote> = None;
            for s in 0..layout.model.steps() {
                if !layout.is_live(s) {
                    notes.extend(open.take());
                    continue;
                }
                let step = &logits[s * classes..(s + 1) * classes];
                if step.iter().any(|v| !v.is_finite()) {
                    holes.non_finite += 1;
                }
                let allowed = |c: usize, with_hold: bool| -> bool {
                    if !step[c].is_finite() {
                        return false;
                    }
                    if c < pitches {
                        return choice.mask.allows(lowest_pitch + c as u8);
                    }
                    c == rest_token || (c == hold_token && with_hold)
                };
                let mut token = choice.pick(step, |c| allowed(c, true));
                if token == Some(hold_token) && open.is_none() {
                    holes.dangling_holds += 1;
                    token = choice.pick(step, |c| allowed(c, false));
                }
                match token {
                    Some(t) if t == hold_token => {
                        if let Some(n) = open.as_mut() {
                            n.steps += 1;
                        }
                    }
                    Some(t) if t < pitches => {
                        notes.extend(open.take());
                        let pitch = lowest_pitch as usize + t;
                        if pitch > enc.highest_pitch() as usize {
                            holes.out_of_range += 1;
                            continue;
                        }
                        open = Some(GridNote {
                            pitch: pitch as u8,
                            start: layout.to_prompt(chunk, s),
                            steps: 1,
                            velocity: 0,
                        });
                    }
                    _ => notes.extend(open.take()), // rest, or nothing valid at all
                }
            }
            notes.extend(open.take());
        }
        Encoding::PianoRoll {
            lowest_pitch,
            threshold,
            cells,
            ..
        } => {
            let pitches = classes;
            let cut = (threshold / (1.0 - threshold)).ln(); // sigmoid(l) > t ⇔ l > logit(t)
            let mut open: Vec<Option<GridNote>> = vec![None; pitches];
            for s in 0..layout.model.steps() {
                let live = layout.is_live(s);
                let step = &logits[s * pitches..(s + 1) * pitches];
                if live && step.iter().any(|v| !v.is_finite()) {
                    holes.non_finite += 1;
                }
                for p in 0..pitches {
                    let pitch = lowest_pitch + p as u8;
                    let on = live
                        && step[p].is_finite()
                        && choice.mask.allows(pitch)
                        && choice.cell_on(step[p], cut);
                    let continuing =
                        on && cells == crate::manifest::RollCells::Sustain && open[p].is_some();
                    if continuing {
                        if let Some(n) = open[p].as_mut() {
                            n.steps += 1;
                        }
                        continue;
                    }
                    notes.extend(open[p].take());
                    if on {
                        open[p] = Some(GridNote {
                            pitch,
                            start: layout.to_prompt(chunk, s),
                            steps: 1,
                            velocity: 0,
                        });
                    }
                }
            }
            notes.extend(open.into_iter().flatten());
        }
    }
    notes.sort_by(|a, b| a.start.cmp(&b.start).then(a.pitch.cmp(&b.pitch)));
    notes
}

/// Picks tokens: argmax, or sampling with a seeded generator.
pub struct Chooser<'a> {
    pub mask: &'a PitchMask,
    temperature: Option<f32>,
    rng: Option<ChaCha8Rng>,
}

impl<'a> Chooser<'a> {
    pub fn new(choice: &NoteChoice, stream: u64, mask: &'a PitchMask) -> Chooser<'a> {
        use rand::SeedableRng;
        match *choice {
            NoteChoice::Argmax => Chooser {
                mask,
                temperature: None,
                rng: None,
            },
            NoteChoice::Sample { temperature, seed } => {
                let mut rng = ChaCha8Rng::seed_from_u64(seed);
                rng.set_stream(stream);
                Chooser {
                    mask,
                    temperature: Some(temperature.max(1e-3)),
                    rng: Some(rng),
                }
            }
        }
    }

    /// The chosen class among those `allowed`, or None when none is.
    fn pick(&mut self, logits: &[f32], allowed: impl Fn(usize) -> bool) -> Option<usize> {
        let best = (0..logits.len())
            .filter(|&c| allowed(c))
            .max_by(|&a, &b| logits[a].total_cmp(&logits[b]))?;
        let (Some(t), Some(rng)) = (self.temperature, self.rng.as_mut()) else {
            return Some(best);
        };
        // Softmax relative to the best logit keeps exp() finite.
        let top = logits[best];
        let total: f64 = (0..logits.len())
            .filter(|&c| allowed(c))
            .map(|c| (((logits[c] - top) / t) as f64).exp())
            .sum();
        let mut u = rng.random::<f64>() * total;
        for c in (0..logits.len()).filter(|&c| allowed(c)) {
            u -= (((logits[c] - top) / t) as f64).exp();
            if u <= 0.0 {
                return Some(c);
            }
        }
        Some(best)
    }

    fn cell_on(&mut self, logit: f32, cut: f32) -> bool {
        match (self.temperature, self.rng.as_mut()) {
            (Some(t), Some(rng)) => rng.random::<f32>() < 1.0 / (1.0 + (-logit / t).exp()),
            _ => logit > cut,
        }
    }
}
