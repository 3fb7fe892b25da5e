//! What a project keeps: save → load → save gives the same bytes, kept takes
//! and the prompt survive into a fresh instance (a reopened project), and a
//! state loaded while the plugin is playing is taken in safely.
//!
//! CLAP `ext/state.h`: `save`/`load` are main-thread calls; the host may
//! call them while the audio thread processes.

mod plugin_support;

use nudgebar_music::TimeSignature;
use nudgebar_tests::host::{raw_blob, StateBlob};
use plugin_support::*;

/// Note-ons whose song position lies in the last complete bar.
fn note_ons_in_last_bar(s: &nudgebar_tests::host::Session) -> usize {
    let bar = s.transport.bar_number_at(s.transport.position);
    let (from, to) = (s.transport.bar_start(bar - 1), s.transport.bar_start(bar));
    s.timeline
        .iter()
        .filter(|e| matches!(e.kind, nudgebar_tests::host::OutputKind::NoteOn { .. }))
        .filter(|e| e.position.is_some_and(|p| p >= from && p < to))
        .count()
}

#[test]
fn a_fresh_instance_saves_what_it_loaded() {
    let mut a = nudgebar();
    let blob = a.save_state().unwrap();
    let mut b = nudgebar();
    b.load_state(&blob).unwrap();
    assert_eq!(
        b.save_state().unwrap(),
        blob,
        "save → load → save is byte-identical"
    );
}

#[test]
fn kept_takes_and_the_prompt_survive_a_reopened_project() {
    let model = tiny_model_folder("plugin-state-keep");
    let ts = TimeSignature::new(3, 4).unwrap();
    let (mut s, ids) = playing_session(110.0, ts, &model);
    let call = ferry_call(ts);
    capture_bar_one(&mut s, &ids, &call);
    wait_for_take_notes(&mut s, &ids);
    s.run_beats(3.0).unwrap();
    pulse(&mut s, &ids.keep).unwrap();
    wait_for_kept(&mut s, 1);
    // A second, different take: push the density slider and wait until the
    // denser take is what sounds, then keep that one too.
    let before = note_ons_in_last_bar(&s);
    set_text(&mut s, &ids.axes[0], "+0.50");
    s.wait_for("a denser take to sound", WORKER_TIMEOUT, |s| {
        note_ons_in_last_bar(s) > before
    })
    .unwrap();
    pulse(&mut s, &ids.keep).unwrap();
    wait_for_kept(&mut s, 2);

    // Saved while playing, as a host autosave does.
    let blob = s.plugin.save_state().unwrap();
    let session = StateBlob::parse(&blob).unwrap().field("session").unwrap();
    let prompt: nudgebar_music::Phrase =
        serde_json::from_value(session["prompt"]["phrase"].clone()).unwrap();
    assert_eq!(
        prompt.notes.len(),
        call.notes.len(),
        "the captured prompt is saved"
    );
    let kept = kept_phrases(&mut s.plugin);
    assert_eq!(kept.len(), 2);
    assert!(
        kept[1].notes.len() > kept[0].notes.len(),
        "the second kept take is the denser one"
    );

    // Reopen: a fresh instance, the same bytes.
    let mut reopened = nudgebar();
    reopened.load_state(&blob).unwrap();
    assert_eq!(kept_phrases(&mut reopened), kept, "kept takes survive");
    // The prompt survives, note for note (the bytes are compared in
    // `reopened_project_saves_byte_identical_state`).
    let reloaded: nudgebar_music::Phrase =
        serde_json::from_value(saved_session(&mut reopened)["prompt"]["phrase"].clone()).unwrap();
    assert_eq!(reloaded.notes.len(), prompt.notes.len());
    for (a, b) in reloaded.notes.iter().zip(&prompt.notes) {
        assert_eq!((a.pitch, a.velocity), (b.pitch, b.velocity));
        assert!(
            (a.onset - b.onset).abs() < 1e-12 && (a.duration - b.duration).abs() < 1e-12,
            "{a:?} vs {b:?}"
        );
    }
    let reopened_ids = Ids::of(&mut reopened);
    assert_eq!(
        reopened.param_text(reopened_ids.axes[0].id).as_deref(),
        Some("+0.50"),
        "slider settings survive"
    );

    // Loading while processing: the playing instance takes in an older
    // state (no kept takes) between two blocks, keeps playing, hangs nothing.
    let mut empty = StateBlob::parse(&blob).unwrap();
    let mut bare = session.clone();
    bare["kept"] = serde_json::json!([]);
    empty.set_field("session", &bare);
    s.plugin.load_state(&empty.to_bytes()).unwrap();
    s.run_beats(6.0).unwrap();
    assert!(
        kept_phrases(&mut s.plugin).is_empty(),
        "the loaded state replaced the session"
    );
    s.transport.playing = false;
    s.process_block(BLOCK).unwrap();
    assert_eq!(s.ledger.require_silence(), 0);
    s.ledger.assert_clean("loading state while playing");
}

#[test]
fn a_broken_blob_changes_nothing_and_a_damaged_take_is_dropped_alone() {
    let model = tiny_model_folder("plugin-state-broken");
    let ts = TimeSignature::FOUR_FOUR;
    let (mut s, ids) = playing_session(120.0, ts, &model);
    capture_bar_one(&mut s, &ids, &ferry_call(ts));
    wait_for_take_notes(&mut s, &ids);
    s.run_beats(2.0).unwrap();
    pulse(&mut s, &ids.keep).unwrap();
    wait_for_kept(&mut s, 1);
    let good = s.plugin.save_state().unwrap();

    // Not JSON at all: refused, the session stays as it was.
    assert!(s
        .plugin
        .load_state(&raw_blob(b"\x00\x01 not a project"))
        .is_err());
    assert_eq!(
        s.plugin.save_state().unwrap(),
        good,
        "a refused blob changes nothing"
    );

    // One of two kept takes damaged: the other survives.
    let mut blob = StateBlob::parse(&good).unwrap();
    let mut session = blob.field("session").unwrap();
    let take = session["kept"][0].clone();
    let mut broken = take.clone();
    broken["phrase"] = serde_json::json!("a ferry horn, not a phrase");
    session["kept"] = serde_json::json!([broken, take]);
    blob.set_field("session", &session);
    s.plugin.load_state(&blob.to_bytes()).unwrap();
    let kept = kept_phrases(&mut s.plugin);
    assert_eq!(kept.len(), 1, "the readable take is kept");
    assert_eq!(serde_json::to_value(&kept[0]).unwrap(), take["phrase"]);
    s.run_beats(2.0).unwrap();
    s.ledger.assert_clean("loading damaged state");
}

/// Save → load → save must give the same bytes even when the captured
/// prompt holds onsets with 17 significant digits (as captured at an odd
/// tempo). serde_json parses such numbers up to one unit in the last place
/// off unless its `float_roundtrip` feature is on (the workspace turns it on;
/// this test is what noticed it was missing).
#[test]
fn reopened_project_saves_byte_identical_state() {
    let model = tiny_model_folder("plugin-state-bytes");
    let ts = TimeSignature::new(3, 4).unwrap();
    let (mut s, ids) = playing_session(110.0, ts, &model);
    capture_bar_one(&mut s, &ids, &ferry_call(ts));
    s.wait_for("the prompt to be saved", WORKER_TIMEOUT, |s| {
        !saved_session(&mut s.plugin)["prompt"].is_null()
    })
    .unwrap();
    let blob = s.plugin.save_state().unwrap();
    let mut reopened = nudgebar();
    reopened.load_state(&blob).unwrap();
    let again = reopened.save_state().unwrap();
    assert!(
        again == blob,
        "save → load → save changed the state:\n{}\n{}",
        String::from_utf8_lossy(&blob[8..]),
        String::from_utf8_lossy(&again[8..])
    );
}
