//! Reading prompts from, and writing takes to, Standard MIDI Files (SMF 1.0,
//! MIDI Manufacturers Association), with `midly` doing the byte-level work.
//!
//! Reading turns any format 0 or 1 file (any PPQ) into one [`Phrase`] timed
//! in quarter-note beats: notes from every track and channel are merged, the
//! phrase starts at the bar line of the first note, and at most
//! [`MAX_MEASURES`](crate::phrase::MAX_MEASURES) measures are kept. Whatever had to be interpreted or left
//! out is said in [`MidiImport::warnings`], one sentence each.

mod read;
mod write;

use crate::phrase::Phrase;

pub use read::read_smf;
pub use write::write_smf;

/// Largest file the reader accepts. A one-to-four-bar prompt is a few
/// hundred bytes; the cap keeps a wrong file (an audio file renamed, a whole
/// song library) from being parsed into memory at all.
pub const MAX_FILE_BYTES: usize = 4 * 1024 * 1024;

/// Tempo the SMF 1.0 specification assumes when a file has no tempo event:
/// 120 quarter notes per minute.
pub const DEFAULT_TEMPO_US_PER_QUARTER: u32 = 500_000;

/// A prompt read from a MIDI file.
#[derive(Debug, Clone, PartialEq)]
pub struct MidiImport {
    /// The notes, from the bar line of the first note, at most
    /// [`MAX_MEASURES`](crate::phrase::MAX_MEASURES) measures.
    pub phrase: Phrase,
    /// Tempo in force where the phrase starts (microseconds per quarter note).
    pub tempo_us_per_quarter: u32,
    /// The file's resolution, ticks per quarter note.
    pub ppq: u16,
    /// One sentence per thing the reader had to interpret or leave out.
    pub warnings: Vec<String>,
}

/// Why a MIDI file could not be read as a prompt.
#[derive(Debug, Clone, PartialEq, Eq, thiserror::Error)]
pub enum MidiFileError {
    #[error("The MIDI file is empty (0 bytes).")]
    Empty,
    #[error(
        "The file is {bytes} bytes, more than the {limit} bytes a prompt file may have; \
         export just the bars you want to vary."
    )]
    TooLarge { bytes: usize, limit: usize },
    #[error("This is not a readable Standard MIDI File ({0}); check that it is a .mid file and export it again.")]
    NotMidi(String),
    #[error(
        "The file is timed in SMPTE frames ({fps} per second) rather than beats; \
         export it again with musical (ticks per quarter note) timing."
    )]
    SmpteTiming { fps: u8 },
    #[error("The file declares 0 ticks per quarter note, so its note times mean nothing; export it again.")]
    ZeroResolution,
    #[error("The file holds no notes to use as a prompt.")]
    NoNotes,
}

#[cfg(test)]
mod tests;
