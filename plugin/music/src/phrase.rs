//! A phrase: a whole number of measures of notes in one time signature.
//! A captured prompt and every decoded take are phrases.

use crate::meter::TimeSignature;
use crate::note::Note;
use serde::{Deserialize, Serialize};

/// Longest prompt Nudgebar works with, in measures.
pub const MAX_MEASURES: u8 = 4;

/// A whole number of measures of notes, sorted by onset then pitch.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct Phrase {
    pub time_signature: TimeSignature,
    /// Number of measures the phrase spans (notes past the end are not kept).
    pub measures: u8,
    pub notes: Vec<Note>,
}

impl Phrase {
    /// A phrase from notes in any order; notes are sorted and notes that start
    /// at or after the last bar line are dropped (they belong to no measure).
    pub fn new(time_signature: TimeSignature, measures: u8, mut notes: Vec<Note>) -> Self {
        let len = time_signature.quarters_per_measure() * measures as f64;
        notes.retain(|n| n.onset >= 0.0 && n.onset < len - 1e-9 && n.duration > 0.0);
        notes.sort_by(|a, b| a.onset.total_cmp(&b.onset).then(a.pitch.cmp(&b.pitch)));
        Self {
            time_signature,
            measures,
            notes,
        }
    }

    pub fn empty(time_signature: TimeSignature, measures: u8) -> Self {
        Self {
            time_signature,
            measures,
            notes: Vec::new(),
        }
    }

    /// Length of one measure in beats.
    pub fn measure_len(&self) -> f64 {
        self.time_signature.quarters_per_measure()
    }

    /// Length of the whole phrase in beats.
    pub fn len_beats(&self) -> f64 {
        self.measure_len() * self.measures as f64
    }

    /// The notes that start in measure `index` (0-based), re-timed so that the
    /// measure starts at beat 0. Durations are kept as they are.
    pub fn measure(&self, index: u8) -> Phrase {
        let len = self.measure_len();
        let start = len * index as f64;
        let notes = self
            .notes
            .iter()
            .filter(|n| n.onset >= start - 1e-9 && n.onset < start + len - 1e-9)
            .map(|n| Note {
                onset: (n.onset - start).max(0.0),
                ..*n
            })
            .collect();
        Phrase {
            time_signature: self.time_signature,
            measures: 1,
            notes,
        }
    }

    /// Joins single measures one after another into one phrase.
    pub fn concat(time_signature: TimeSignature, measures: &[Phrase]) -> Phrase {
        let len = time_signature.quarters_per_measure();
        let mut notes = Vec::new();
        for (i, m) in measures.iter().enumerate() {
            let offset = len * i as f64;
            notes.extend(m.notes.iter().map(|n| Note {
                onset: n.onset + offset,
                ..*n
            }));
        }
        Phrase::new(time_signature, measures.len() as u8, notes)
    }

    pub fn is_empty(&self) -> bool {
        self.notes.is_empty()
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn measures_split_and_join_back() {
        let ts = TimeSignature::FOUR_FOUR;
        let p = Phrase::new(
            ts,
            2,
            vec![
                Note::new(64, 4.5, 0.5, 90),
                Note::new(60, 0.0, 1.0, 100),
                Note::new(67, 9.0, 1.0, 80),
            ],
        );
        assert_eq!(
            p.notes.len(),
            2,
            "a note after the last bar line is dropped"
        );
        assert_eq!(p.notes[0].pitch, 60, "notes are sorted by onset");
        let second = p.measure(1);
        assert_eq!(second.notes, vec![Note::new(64, 0.5, 0.5, 90)]);
        let joined = Phrase::concat(ts, &[p.measure(0), p.measure(1)]);
        assert_eq!(joined, p);
    }
}
