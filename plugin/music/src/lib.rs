//! Nudgebar's musical ground: notes and measures timed in quarter-note beats,
//! quantization onto a model's grid, the musical attributes the sliders are
//! measured by, Standard MIDI File reading and writing, and the demo prompts.
//!
//! Nothing here knows about models or plugins.

pub mod attributes;
pub mod demo_prompts;
pub mod grid;
pub mod meter;
pub mod midi_file;
pub mod note;
pub mod phrase;
pub mod rhythm;

pub use attributes::{measure, Attribute, Readout};
pub use grid::{quantize, Adjustments, Grid, GridNote};
pub use meter::{MeterError, TimeSignature};
pub use midi_file::{read_smf, write_smf, MidiFileError, MidiImport};
pub use note::Note;
pub use phrase::{Phrase, MAX_MEASURES};
