//! The plugin's session loader (`nudgebar_contract::session`), fed
//! arbitrary bytes as a host hands back a saved project. It must never
//! panic, and what it keeps must be kept whole: saving the loaded session
//! and loading that text again gives the same session with nothing more to
//! report. Each kept phrase then goes where the plugin sends it: measured,
//! quantized to common grids, and written as a MIDI file that reads back.
#![no_main]

use libfuzzer_sys::fuzz_target;
use nudgebar_contract::session::SessionState;
use nudgebar_music::attributes::Readout;
use nudgebar_music::midi_file::{read_smf, write_smf};
use nudgebar_music::quantize;

fuzz_target!(|data: &[u8]| {
    let Ok(text) = std::str::from_utf8(data) else {
        return;
    };
    let loaded = SessionState::load_lenient(text);

    let saved = serde_json::to_string(&loaded).expect("a loaded session saves");
    let again = SessionState::load_lenient(&saved);
    assert!(
        again.load_report.is_empty(),
        "a session the loader kept reports problems when loaded again: {:?}\n{saved}",
        again.load_report
    );
    assert_eq!(
        SessionState { load_report: Vec::new(), ..loaded },
        again,
        "save → load changed the session"
    );

    let phrases = again
        .prompt
        .iter()
        .map(|p| (p.phrase.clone(), p.tempo))
        .chain(again.kept.iter().map(|t| (t.phrase.clone(), t.tempo)));
    for (phrase, tempo) in phrases {
        let _ = Readout::of(&phrase);
        for steps in [12, 16, 24] {
            let _ = quantize(&phrase, steps);
        }
        let us_per_quarter = (60_000_000.0 / tempo).round() as u32;
        let bytes = write_smf(&[("kept take", &phrase)], us_per_quarter, 480);
        if !phrase.notes.is_empty() {
            read_smf(&bytes).expect("a phrase we wrote must read back");
        }
    }
});
