//! A single note, timed in quarter-note beats.

use serde::{Deserialize, Serialize};

/// One note of a phrase. Times are in quarter-note beats from the start of
/// the phrase (see `meter` for why beats are quarter notes).
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
pub struct Note {
    /// MIDI note number, 0–127 (60 = middle C).
    pub pitch: u8,
    /// Start, in beats from the start of the phrase.
    pub onset: f64,
    /// Length in beats; always > 0 for a sounding note.
    pub duration: f64,
    /// MIDI velocity, 1–127.
    pub velocity: u8,
}

impl Note {
    pub fn new(pitch: u8, onset: f64, duration: f64, velocity: u8) -> Self {
        Self {
            pitch,
            onset,
            duration,
            velocity,
        }
    }

    /// End of the note, in beats from the start of the phrase.
    pub fn end(&self) -> f64 {
        self.onset + self.duration
    }
}
