//! Fixed-capacity note buffers that cross between the audio thread and the
//! worker. Their capacity is set at compile time so the audio thread can fill
//! and read them without allocating; boxes of them are allocated and freed
//! on the worker only (see `link.rs`).

use crate::params::MAX_TAKES;
use arrayvec::ArrayVec;
use nudgebar_music::{Note, Phrase, TimeSignature};

/// Most notes a captured prompt keeps. Four bars of sixteenth-note chords of
/// four notes come to 256; anything denser is cut and the cut counted.
pub const MAX_PROMPT_NOTES: usize = 256;

/// Most notes one take can hold (4 bars of a 16-step polyphonic grid with
/// four voices; the demo model is monophonic and needs at most 64).
pub const MAX_TAKE_NOTES: usize = 256;

/// A note timed in beats from the start of its phrase.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct RtNote {
    pub start: f64,
    pub length: f64,
    pub key: u8,
    /// MIDI velocity 1–127.
    pub velocity: u8,
    /// MIDI channel 0–15.
    pub channel: u8,
}

/// How a prompt was captured.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum CaptureKind {
    /// Armed, then recorded from the next bar line (or first note).
    Armed,
    /// "Use what I just played": taken from the recent-bars memory.
    Recent,
}

/// A prompt as the audio thread captured it: sent by value to the worker.
#[derive(Debug, Clone)]
pub struct PromptCapture {
    pub kind: CaptureKind,
    pub time_signature: TimeSignature,
    pub bars: u8,
    /// Host tempo at capture time, for exported files.
    pub tempo: f64,
    pub notes: ArrayVec<RtNote, MAX_PROMPT_NOTES>,
    /// Notes that did not fit in `notes`.
    pub notes_cut: u32,
}

impl PromptCapture {
    /// The captured notes as a [`Phrase`] (worker side: allocates).
    pub fn to_phrase(&self) -> Phrase {
        let notes = self
            .notes
            .iter()
            .map(|n| Note::new(n.key, n.start, n.length, n.velocity))
            .collect();
        Phrase::new(self.time_signature, self.bars, notes)
    }
}

/// One take, ready for the audio thread: notes sorted by start.
#[derive(Debug, Clone, Default)]
pub struct RtTake {
    pub notes: ArrayVec<RtNote, MAX_TAKE_NOTES>,
}

impl RtTake {
    /// Fills from a phrase (worker side). Notes beyond the capacity are cut;
    /// the number cut is returned so it can be reported.
    pub fn fill(&mut self, phrase: &Phrase, channel: u8) -> usize {
        self.notes.clear();
        let mut cut = 0;
        for n in &phrase.notes {
            let note = RtNote {
                start: n.onset,
                length: n.duration,
                key: n.pitch.min(127),
                velocity: n.velocity.clamp(1, 127),
                channel: channel.min(15),
            };
            if self.notes.try_push(note).is_err() {
                cut += 1;
            }
        }
        self.notes
            .sort_unstable_by(|a, b| a.start.total_cmp(&b.start).then(a.key.cmp(&b.key)));
        cut
    }
}

/// A set of takes for one request: what the audio thread auditions from.
/// Always travels boxed (it is large); see `link.rs` for who frees it.
#[derive(Debug, Clone)]
pub struct TakeSet {
    /// Increases with every new set, so the audio thread can tell a new set
    /// from the one it plays (and stop the old notes).
    pub generation: u64,
    pub time_signature: TimeSignature,
    pub bars: u8,
    pub takes: ArrayVec<RtTake, MAX_TAKES>,
}

impl TakeSet {
    /// An empty set, boxed without building the large value on the stack.
    pub fn boxed() -> Box<TakeSet> {
        Box::new(TakeSet {
            generation: 0,
            time_signature: TimeSignature::FOUR_FOUR,
            bars: 1,
            takes: ArrayVec::new(),
        })
    }

    /// Loop length in beats.
    pub fn len_beats(&self) -> f64 {
        self.time_signature.quarters_per_measure() * self.bars.max(1) as f64
    }

    /// Refills from phrases (worker side). Returns how many notes were cut.
    pub fn fill(
        &mut self,
        generation: u64,
        time_signature: TimeSignature,
        bars: u8,
        phrases: &[&Phrase],
        channel: u8,
    ) -> usize {
        self.generation = generation;
        self.time_signature = time_signature;
        self.bars = bars.max(1);
        self.takes.clear();
        let mut cut = 0;
        for phrase in phrases.iter().take(MAX_TAKES) {
            let mut take = RtTake::default();
            cut += take.fill(phrase, channel);
            self.takes.push(take);
        }
        cut
    }
}
