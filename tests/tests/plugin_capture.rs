//! Capturing the prompt, checked against the notes the host played in:
//! armed from the next bar line with the transport playing, "use what I
//! just played" with no arming, and free playing with the transport stopped
//! (at the host's tempo) or with no transport at all (at 120 BPM, the
//! Standard MIDI File default tempo of 500,000 µs per quarter note, SMF 1.0).
//!
//! The prompt is read back from the plugin's saved session, so this is what
//! a reopened project would make its takes from.

mod plugin_support;

use nudgebar_music::{Phrase, TimeSignature};
use nudgebar_tests::host::{HostTransport, Session};
use plugin_support::*;

/// Waits for the worker to store the captured prompt, and returns it with
/// the tempo it was stored with.
fn saved_prompt(s: &mut Session) -> (Phrase, f64) {
    s.wait_for("the prompt to be saved", WORKER_TIMEOUT, |s| {
        !saved_session(&mut s.plugin)["prompt"].is_null()
    })
    .unwrap();
    let prompt = saved_session(&mut s.plugin)["prompt"].clone();
    let phrase = serde_json::from_value(prompt["phrase"].clone()).expect("a saved prompt phrase");
    (
        phrase,
        prompt["tempo"].as_f64().expect("a saved prompt tempo"),
    )
}

fn stopped_session(tempo: f64, ts: TimeSignature, present: bool) -> (Session, Ids) {
    let mut plugin = nudgebar();
    let ids = Ids::of(&mut plugin);
    let mut transport = HostTransport::new(tempo, ts);
    transport.present = present;
    (
        Session::start(plugin, SAMPLE_RATE, BLOCK, transport).unwrap(),
        ids,
    )
}

#[test]
fn use_what_i_just_played_without_arming() {
    let ts = TimeSignature::new(7, 8).unwrap();
    let mut plugin = nudgebar();
    let ids = Ids::of(&mut plugin);
    let mut transport = HostTransport::new(132.0, ts);
    transport.playing = true;
    let mut s = Session::start(plugin, SAMPLE_RATE, BLOCK, transport).unwrap();
    let call = ferry_call(ts);
    s.play_phrase_at_bar(&call, 1);
    // Two more bars of silence, then "use last bars": the latest complete
    // bar with notes is bar 1.
    s.run_to_position(s.transport.bar_start(3) + 0.4).unwrap();
    pulse(&mut s, &ids.grab).unwrap();
    let (prompt, tempo) = saved_prompt(&mut s);
    assert_eq!(tempo, 132.0);
    assert_eq!(prompt.time_signature, ts);
    assert_same_notes(
        &prompt.notes,
        &call.notes,
        s.samples_per_beat(),
        "grabbed bar",
    );
}

#[test]
fn free_playing_with_the_transport_stopped_uses_the_host_tempo() {
    let (mut s, ids) = stopped_session(100.0, TimeSignature::FOUR_FOUR, true);
    s.run(3000).unwrap();
    pulse(&mut s, &ids.arm).unwrap();
    // The first note after arming is the downbeat; start it off any block edge.
    let start = s.clock() + 12_345;
    let call = ferry_call(TimeSignature::FOUR_FOUR);
    s.play_phrase_at_sample(&call, start);
    s.run_beats(6.0).unwrap();
    let (prompt, tempo) = saved_prompt(&mut s);
    assert_eq!(tempo, 100.0);
    assert_same_notes(
        &prompt.notes,
        &call.notes,
        s.samples_per_beat(),
        "free capture at 100 BPM",
    );
    // The played notes passed through meanwhile.
    assert_eq!(s.ledger.finished.len(), call.notes.len());
    s.ledger.assert_clean("free capture");
}

#[test]
fn free_playing_without_any_transport_counts_120_bpm() {
    let (mut s, ids) = stopped_session(120.0, TimeSignature::FOUR_FOUR, false);
    pulse(&mut s, &ids.arm).unwrap();
    let start = s.clock() + 777;
    let call = ferry_call(TimeSignature::FOUR_FOUR);
    // Played at 120 BPM (the harness' tempo), heard at the 120 BPM default.
    s.play_phrase_at_sample(&call, start);
    s.run_beats(6.0).unwrap();
    let (prompt, tempo) = saved_prompt(&mut s);
    assert_eq!(tempo, 120.0);
    assert_same_notes(
        &prompt.notes,
        &call.notes,
        s.samples_per_beat(),
        "capture with no transport",
    );
}
