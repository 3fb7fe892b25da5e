//! Quantization: fitting a phrase onto a model's step grid, and saying what
//! had to change to make it fit.

use crate::meter::TimeSignature;
use crate::note::Note;
use crate::phrase::Phrase;
use serde::{Deserialize, Serialize};

/// A note placed on a step grid. Steps count from the start of the phrase.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize, Deserialize)]
pub struct GridNote {
    pub pitch: u8,
    /// First step the note sounds on.
    pub start: usize,
    /// Number of steps it sounds for (≥ 1).
    pub steps: usize,
    pub velocity: u8,
}

impl GridNote {
    pub fn end(&self) -> usize {
        self.start + self.steps
    }
}

/// A phrase quantized to `steps_per_measure` equal steps per measure.
#[derive(Debug, Clone, PartialEq, Eq, Serialize, Deserialize)]
pub struct Grid {
    pub time_signature: TimeSignature,
    pub measures: u8,
    pub steps_per_measure: usize,
    /// Sorted by start, then pitch; no two notes share start and pitch.
    pub notes: Vec<GridNote>,
}

/// What quantization and fitting to a model changed, counted per kind so the
/// user can be told in plain words (see [`Adjustments::sentences`]).
#[derive(Debug, Clone, Default, PartialEq, Eq, Serialize, Deserialize)]
pub struct Adjustments {
    /// Notes whose onset or end moved to the nearest grid step.
    pub snapped: usize,
    /// Notes that landed on the same step and pitch as another and were merged.
    pub merged: usize,
    /// Notes that rang past their bar line and were cut there.
    pub clipped_at_bar_line: usize,
    /// Notes whose onset rounded onto the phrase's final bar line and were dropped.
    pub dropped_past_end: usize,
    /// Notes moved by whole octaves into the model's pitch range.
    pub octave_shifted: usize,
    /// Notes removed or shortened because a monophonic model takes one note at a time.
    pub overlaps_removed: usize,
}

impl Adjustments {
    pub fn is_empty(&self) -> bool {
        *self == Adjustments::default()
    }

    pub fn add(&mut self, other: &Adjustments) {
        self.snapped += other.snapped;
        self.merged += other.merged;
        self.clipped_at_bar_line += other.clipped_at_bar_line;
        self.dropped_past_end += other.dropped_past_end;
        self.octave_shifted += other.octave_shifted;
        self.overlaps_removed += other.overlaps_removed;
    }

    /// One sentence per kind of change that happened.
    pub fn sentences(&self) -> Vec<String> {
        let mut out = Vec::new();
        let mut say = |n: usize, one: &str, many: &str| {
            if n == 1 {
                out.push(one.to_string());
            } else if n > 1 {
                out.push(many.replace("{n}", &n.to_string()));
            }
        };
        say(
            self.snapped,
            "1 note was moved to the nearest grid step.",
            "{n} notes were moved to the nearest grid step.",
        );
        say(
            self.merged,
            "1 note doubled another on the same step and was merged into it.",
            "{n} notes doubled others on the same step and were merged.",
        );
        say(
            self.clipped_at_bar_line,
            "1 note rang past its bar line and was cut there.",
            "{n} notes rang past their bar lines and were cut there.",
        );
        say(
            self.dropped_past_end,
            "1 note started too close to the end to fit and was left out.",
            "{n} notes started too close to the end to fit and were left out.",
        );
        say(
            self.octave_shifted,
            "1 note was outside the model's pitch range and was moved by octaves into it.",
            "{n} notes were outside the model's pitch range and were moved by octaves into it.",
        );
        say(
            self.overlaps_removed,
            "1 overlapping note was trimmed because the model plays one note at a time.",
            "{n} overlapping notes were trimmed because the model plays one note at a time.",
        );
        out
    }
}

/// Snaps a phrase onto `steps_per_measure` steps per measure. Onsets and ends
/// round to the nearest step; every note keeps at least one step; notes are
/// cut at the bar line of the measure they start in, because models see one
/// measure at a time.
pub fn quantize(phrase: &Phrase, steps_per_measure: usize) -> (Grid, Adjustments) {
    let mut adj = Adjustments::default();
    let step_len = phrase.measure_len() / steps_per_measure as f64;
    let total = steps_per_measure * phrase.measures as usize;
    let mut notes: Vec<GridNote> = Vec::with_capacity(phrase.notes.len());
    for n in &phrase.notes {
        let start_f = n.onset / step_len;
        let end_f = n.end() / step_len;
        let start = start_f.round().max(0.0) as usize;
        let mut end = (end_f.round() as usize).max(start + 1);
        if (start_f - start as f64).abs() > 1e-6 || (end_f - end as f64).abs() > 1e-6 {
            adj.snapped += 1;
        }
        if start >= total {
            adj.dropped_past_end += 1;
            continue;
        }
        let bar_end = (start / steps_per_measure + 1) * steps_per_measure;
        if end > bar_end {
            end = bar_end;
            adj.clipped_at_bar_line += 1;
        }
        let g = GridNote {
            pitch: n.pitch,
            start,
            steps: end - start,
            velocity: n.velocity,
        };
        if let Some(prev) = notes
            .iter_mut()
            .find(|p| p.start == g.start && p.pitch == g.pitch)
        {
            prev.steps = prev.steps.max(g.steps);
            prev.velocity = prev.velocity.max(g.velocity);
            adj.merged += 1;
        } else {
            notes.push(g);
        }
    }
    notes.sort_by(|a, b| a.start.cmp(&b.start).then(a.pitch.cmp(&b.pitch)));
    let grid = Grid {
        time_signature: phrase.time_signature,
        measures: phrase.measures,
        steps_per_measure,
        notes,
    };
    (grid, adj)
}

impl Grid {
    /// Total number of steps in the phrase.
    pub fn total_steps(&self) -> usize {
        self.steps_per_measure * self.measures as usize
    }

    /// Length of one step in beats.
    pub fn step_len(&self) -> f64 {
        self.time_signature.quarters_per_measure() / self.steps_per_measure as f64
    }

    /// Back to beat-timed notes.
    pub fn to_phrase(&self) -> Phrase {
        let step = self.step_len();
        let notes = self
            .notes
            .iter()
            .map(|g| {
                Note::new(
                    g.pitch,
                    g.start as f64 * step,
                    g.steps as f64 * step,
                    g.velocity,
                )
            })
            .collect();
        Phrase::new(self.time_signature, self.measures, notes)
    }

    /// The notes of measure `index`, with steps counted from that measure's start.
    pub fn measure(&self, index: u8) -> Grid {
        let lo = index as usize * self.steps_per_measure;
        let hi = lo + self.steps_per_measure;
        let notes = self
            .notes
            .iter()
            .filter(|n| n.start >= lo && n.start < hi)
            .map(|n| GridNote {
                start: n.start - lo,
                steps: n.steps.min(hi - n.start),
                ..*n
            })
            .collect();
        Grid {
            measures: 1,
            notes,
            ..self.clone()
        }
    }

    /// Joins one-measure grids in order.
    pub fn concat(parts: &[Grid]) -> Option<Grid> {
        let first = parts.first()?;
        let mut notes = Vec::new();
        for (i, p) in parts.iter().enumerate() {
            let off = i * first.steps_per_measure;
            notes.extend(p.notes.iter().map(|n| GridNote {
                start: n.start + off,
                ..*n
            }));
        }
        Some(Grid {
            measures: parts.len() as u8,
            notes,
            ..first.clone()
        })
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn quantize_snaps_clips_merges_and_reports() {
        let ts = TimeSignature::FOUR_FOUR;
        let phrase = Phrase::new(
            ts,
            1,
            vec![
                Note::new(60, 0.02, 0.98, 100), // snapped onto step 0
                Note::new(60, 0.0, 0.5, 90),    // same step and pitch: merged
                Note::new(64, 3.5, 2.0, 80),    // rings past the bar line: clipped
                Note::new(67, 3.95, 0.1, 80),   // rounds onto the last bar line: dropped
            ],
        );
        let (grid, adj) = quantize(&phrase, 16);
        assert_eq!(
            grid.notes,
            vec![
                GridNote {
                    pitch: 60,
                    start: 0,
                    steps: 4,
                    velocity: 100
                },
                GridNote {
                    pitch: 64,
                    start: 14,
                    steps: 2,
                    velocity: 80
                },
            ]
        );
        assert_eq!(adj.merged, 1);
        assert_eq!(adj.clipped_at_bar_line, 1);
        assert_eq!(adj.dropped_past_end, 1);
        assert_eq!(adj.snapped, 2);
        assert_eq!(adj.sentences().len(), 4);
    }

    #[test]
    fn grid_round_trips_through_phrase() {
        let ts = TimeSignature::new(6, 8).unwrap();
        let phrase = Phrase::new(
            ts,
            2,
            vec![Note::new(62, 0.5, 0.25, 70), Note::new(65, 3.0, 1.5, 90)],
        );
        let (grid, adj) = quantize(&phrase, 12);
        assert!(adj.is_empty());
        assert_eq!(grid.to_phrase(), phrase);
        let joined = Grid::concat(&[grid.measure(0), grid.measure(1)]).unwrap();
        assert_eq!(joined, grid);
    }
}
