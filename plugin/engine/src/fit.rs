//! Fitting a prompt to a model: quantize to the model's step length, move
//! notes into its pitch range, make it monophonic for token models, and lay
//! its measures out in the model's input chunks.
//!
//! A prompt in another metre fits when its measure is a whole number of the
//! model's steps and no longer than the model's measure: a 3/4 measure on a
//! 16-step 4/4 model fills the first 12 steps, the rest stays silent and is
//! ignored on the way back.

use crate::error::EngineError;
use crate::manifest::{Encoding, GridSpec};
use nudgebar_music::{quantize, Adjustments, Grid, GridNote, Phrase, TimeSignature, MAX_MEASURES};

/// Where the prompt's steps sit in the model's input rows.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Layout {
    /// The prompt's metre and length.
    pub time_signature: TimeSignature,
    pub measures: u8,
    /// Steps a prompt measure takes on the model's grid (≤ model steps per measure).
    pub steps_per_measure: usize,
    /// The model's grid.
    pub model: GridSpec,
}

impl Layout {
    /// Model input rows one prompt needs (one per group of `model.measures` measures).
    pub fn chunks(&self) -> usize {
        self.measures as usize / self.model.measures as usize
    }
    /// Steps of the prompt in all.
    pub fn total_steps(&self) -> usize {
        self.steps_per_measure * self.measures as usize
    }
    /// The model-row and step-in-row of prompt step `step`.
    pub fn to_model(&self, step: usize) -> (usize, usize) {
        let measure = step / self.steps_per_measure;
        let within = step % self.steps_per_measure;
        let per_chunk = self.model.measures as usize;
        (
            measure / per_chunk,
            (measure % per_chunk) * self.model.steps_per_measure + within,
        )
    }
    /// Whether model step `s` of a row carries prompt music (not padding).
    pub fn is_live(&self, s: usize) -> bool {
        s % self.model.steps_per_measure < self.steps_per_measure
    }
    /// Prompt step of model step `s` in row `chunk` (only for live steps).
    pub fn to_prompt(&self, chunk: usize, s: usize) -> usize {
        let measure = chunk * self.model.measures as usize + s / self.model.steps_per_measure;
        measure * self.steps_per_measure + s % self.model.steps_per_measure
    }
    /// An empty grid in the prompt's metre and length.
    pub fn empty_grid(&self) -> Grid {
        Grid {
            time_signature: self.time_signature,
            measures: self.measures,
            steps_per_measure: self.steps_per_measure,
            notes: Vec::new(),
        }
    }
}

/// Works out the layout for a prompt, or says why it cannot fit.
pub fn layout_for(phrase: &Phrase, model: &GridSpec) -> Result<Layout, EngineError> {
    if phrase.measures == 0 || phrase.measures > MAX_MEASURES {
        return Err(EngineError::TooManyMeasures(phrase.measures));
    }
    if phrase.measures % model.measures != 0 {
        return Err(EngineError::MeasuresDoNotFit {
            measures: phrase.measures,
            per_input: model.measures,
        });
    }
    let step = model.step_beats();
    let exact = phrase.time_signature.quarters_per_measure() / step;
    let steps = exact.round() as usize;
    if (exact - steps as f64).abs() > 1e-6 || steps == 0 || steps > model.steps_per_measure {
        return Err(EngineError::MetreDoesNotFit {
            prompt: phrase.time_signature.to_string(),
            model_steps: model.steps_per_measure,
            step,
        });
    }
    Ok(Layout {
        time_signature: phrase.time_signature,
        measures: phrase.measures,
        steps_per_measure: steps,
        model: *model,
    })
}

/// Quantizes and fits a prompt; returns its grid (in the prompt's metre on the
/// model's step length) and everything that was changed.
pub fn fit_prompt(phrase: &Phrase, layout: &Layout, encoding: &Encoding) -> (Grid, Adjustments) {
    let (mut grid, mut adj) = quantize(phrase, layout.steps_per_measure);
    let (lo, hi) = (
        encoding.lowest_pitch() as i32,
        encoding.highest_pitch() as i32,
    );
    for n in &mut grid.notes {
        let mut p = n.pitch as i32;
        if p < lo || p > hi {
            while p < lo {
                p += 12;
            }
            while p > hi {
                p -= 12;
            }
            // A range narrower than an octave may have no octave of the note in it.
            p = p.clamp(lo, hi);
            n.pitch = p as u8;
            adj.octave_shifted += 1;
        }
    }
    if encoding.is_monophonic() {
        adj.overlaps_removed += make_monophonic(&mut grid.notes);
    }
    dedupe_same_step_pitch(&mut grid.notes, &mut adj);
    (grid, adj)
}

/// Keeps the top voice: at equal onsets the highest note wins (the "skyline"
/// melody-extraction rule, Uitdenbogerd & Zobel, "Manipulation of music for
/// melody matching", ACM Multimedia 1998); a note still sounding when the
/// next starts is cut there. Returns how many notes were removed or cut.
fn make_monophonic(notes: &mut Vec<GridNote>) -> usize {
    notes.sort_by(|a, b| a.start.cmp(&b.start).then(b.pitch.cmp(&a.pitch)));
    let mut changed = 0;
    let mut out: Vec<GridNote> = Vec::with_capacity(notes.len());
    for n in notes.drain(..) {
        if let Some(prev) = out.last_mut() {
            if prev.start == n.start {
                changed += 1; // lower note at the same onset
                continue;
            }
            if prev.end() > n.start {
                prev.steps = n.start - prev.start;
                changed += 1;
            }
        }
        out.push(n);
    }
    *notes = out;
    changed
}

/// Octave shifting can land two notes on one step and pitch; keep one.
fn dedupe_same_step_pitch(notes: &mut Vec<GridNote>, adj: &mut Adjustments) {
    notes.sort_by(|a, b| a.start.cmp(&b.start).then(a.pitch.cmp(&b.pitch)));
    let before = notes.len();
    notes.dedup_by(|b, a| {
        if a.start == b.start && a.pitch == b.pitch {
            a.steps = a.steps.max(b.steps);
            true
        } else {
            false
        }
    });
    adj.merged += before - notes.len();
}

#[cfg(test)]
mod tests {
    use super::*;
    use nudgebar_music::Note;

    fn model() -> GridSpec {
        GridSpec {
            steps_per_measure: 16,
            measures: 1,
            time_signature: TimeSignature::FOUR_FOUR,
        }
    }

    #[test]
    fn three_four_fills_twelve_of_sixteen_steps() {
        let p = Phrase::new(TimeSignature::new(3, 4).unwrap(), 2, vec![]);
        let l = layout_for(&p, &model()).unwrap();
        assert_eq!(l.steps_per_measure, 12);
        assert_eq!(l.chunks(), 2);
        assert_eq!(l.to_model(13), (1, 1));
        assert_eq!(l.to_prompt(1, 1), 13);
        assert!(l.is_live(11) && !l.is_live(12));
    }

    #[test]
    fn five_four_does_not_fit_a_four_four_grid() {
        let p = Phrase::new(TimeSignature::new(5, 4).unwrap(), 1, vec![]);
        assert!(matches!(
            layout_for(&p, &model()),
            Err(EngineError::MetreDoesNotFit { .. })
        ));
    }

    #[test]
    fn chords_become_their_top_note_and_range_is_folded_by_octaves() {
        let enc = Encoding::Tokens {
            lowest_pitch: 48,
            highest_pitch: 83,
            hold_token: 36,
            rest_token: 37,
            input: crate::manifest::TokenInput::OneHot,
        };
        let p = Phrase::new(
            TimeSignature::FOUR_FOUR,
            1,
            vec![
                Note::new(60, 0.0, 2.0, 90),
                Note::new(64, 0.0, 1.0, 90),
                Note::new(96, 1.0, 1.0, 90),
            ],
        );
        let l = layout_for(&p, &model()).unwrap();
        let (g, adj) = fit_prompt(&p, &l, &enc);
        assert_eq!(adj.octave_shifted, 1);
        assert_eq!(adj.overlaps_removed, 1);
        assert_eq!(
            g.notes
                .iter()
                .map(|n| (n.pitch, n.start, n.steps))
                .collect::<Vec<_>>(),
            vec![(64, 0, 4), (72, 4, 4)]
        );
    }
}
