//! Nudgebar's musical ground: notes and measures timed in quarter-note beats,
//! quantization onto a model's grid, the musical attributes the sliders are
//! measured by, and Standard MIDI File reading and writing.
//!
//! Nothing here knows about models or plugins.

pub mod grid;
pub mod meter;
pub mod note;
pub mod phrase;

pub use grid::{quantize, Adjustments, Grid, GridNote};
pub use meter::{MeterError, TimeSignature};
pub use note::Note;
pub use phrase::{Phrase, MAX_MEASURES};
