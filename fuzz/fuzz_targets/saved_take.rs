//! The tract-free half of the plugin's saved state: a take as a session
//! stores it (`nudgebar_contract::Take`: phrase, attribute readouts, latent
//! code), read from arbitrary JSON, cleaned the way the session loader
//! cleans phrases, then measured, quantized and written as a MIDI file.
//! None of it may panic, whatever numbers the blob holds.
//!
//! The session loader itself (plugin/shell/src/state.rs) lives in the plugin
//! crate, which pulls in nice-plug and tract; fuzzing it there would rebuild
//! tract with fuzzing instrumentation (about ten minutes on two cores), so
//! this target covers the types and musical code the loader hands its data to.
#![no_main]

use libfuzzer_sys::fuzz_target;
use nudgebar_contract::Take;
use nudgebar_music::attributes::Readout;
use nudgebar_music::midi_file::{read_smf, write_smf};
use nudgebar_music::{quantize, Note, Phrase, TimeSignature, MAX_MEASURES};

fuzz_target!(|data: &[u8]| {
    let Ok(take) = serde_json::from_slice::<Take>(data) else {
        return;
    };
    // What the session loader keeps: a real metre, 1–4 measures, notes with
    // finite, non-negative times and MIDI-range values.
    let p = &take.phrase;
    let Ok(ts) = TimeSignature::new(p.time_signature.numerator, p.time_signature.denominator)
    else {
        return;
    };
    if !(1..=MAX_MEASURES).contains(&p.measures) {
        return;
    }
    let notes: Vec<Note> = p
        .notes
        .iter()
        .filter(|n| {
            n.pitch <= 127
                && (1..=127).contains(&n.velocity)
                && n.onset.is_finite()
                && n.duration.is_finite()
                && n.onset >= 0.0
                && n.duration > 0.0
        })
        .copied()
        .collect();
    let phrase = Phrase::new(ts, p.measures, notes);
    let readout = Readout::of(&phrase);
    let _ = readout.minus(&take.attributes);
    for steps in [12, 16, 24] {
        let _ = quantize(&phrase, steps);
    }
    let bytes = write_smf(&[("kept take", &phrase)], 500_000, 480);
    if !phrase.notes.is_empty() {
        read_smf(&bytes).expect("a kept take we wrote must read back");
    }
});
