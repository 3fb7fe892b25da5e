//! The Standard MIDI File reader (`nudgebar_music::midi_file::read_smf`) on
//! arbitrary bytes: a prompt or a `MidiFileError`, never a panic. A prompt it
//! returns must be one the rest of Nudgebar can use: 1–4 measures, notes in
//! MIDI range inside the phrase, measurable, and writable as a file that
//! reads back.
#![no_main]

use libfuzzer_sys::fuzz_target;
use nudgebar_music::attributes::Readout;
use nudgebar_music::midi_file::{read_smf, write_smf};
use nudgebar_music::MAX_MEASURES;

fuzz_target!(|data: &[u8]| {
    let Ok(import) = read_smf(data) else {
        return;
    };
    let phrase = &import.phrase;
    assert!((1..=MAX_MEASURES).contains(&phrase.measures));
    assert!(import.ppq > 0 && import.tempo_us_per_quarter > 0);
    let len = phrase.len_beats();
    for n in &phrase.notes {
        assert!(n.pitch <= 127 && n.velocity <= 127, "{n:?}");
        assert!(n.onset.is_finite() && n.onset >= 0.0 && n.onset < len, "{n:?}");
        assert!(n.duration.is_finite() && n.duration > 0.0, "{n:?}");
    }
    let _ = Readout::of(phrase);
    let bytes = write_smf(&[("fuzz", phrase)], import.tempo_us_per_quarter, import.ppq);
    read_smf(&bytes).expect("a prompt we read must read back after writing");
});
