//! The plugin's lifecycle as hosts really drive it (the lifecycle category
//! of a CLAP validator's checks): processing from the first block, before
//! the worker has a model; deactivate/activate cycles at changing sample
//! rates and block sizes; `reset` in the middle of playing; a block of
//! 10,000 events; and no transport at all. Through it all the note stream
//! stays whole: every note-on the plugin sends is ended (MIDI 1.0 Detailed
//! Specification, Note On / Note Off; CLAP `plugin.h` for activate,
//! deactivate, reset and process), and what the player sends is heard.
//!
//! Debug build: `assert_process_allocs` watches every `process()` here too.

mod plugin_support;

use nudgebar_music::TimeSignature;
use nudgebar_tests::host::{HostTransport, InputEvent, Session};
use plugin_support::*;

/// Note-ons in the output from sample `from` on.
fn note_ons_since(s: &Session, from: u64) -> usize {
    s.timeline
        .iter()
        .filter(|e| e.sample >= from)
        .filter(|e| matches!(e.kind, nudgebar_tests::host::OutputKind::NoteOn { .. }))
        .count()
}

/// Plays `count` short notes from now on, one per 100 samples, and runs
/// until they are over; returns the sample the first one starts at.
fn play_short_notes(s: &mut Session, count: u8) -> u64 {
    let at = s.clock();
    for i in 0..count {
        let on = at + 100 * i as u64;
        s.schedule(on, InputEvent::note_on(60 + i, 90));
        s.schedule(on + 60, InputEvent::note_off(60 + i));
    }
    s.run(100 * count as u64 + s.max_block() as u64).unwrap();
    at
}

#[test]
fn the_player_is_heard_from_the_first_block_while_the_model_loads() {
    let model = tiny_model_folder("plugin-lifecycle-first-block");
    let mut plugin = nudgebar();
    use_model_folder(&mut plugin, &model);
    let ids = Ids::of(&mut plugin);
    let mut transport = HostTransport::new(120.0, TimeSignature::FOUR_FOUR);
    transport.playing = true;
    let mut s = Session::start(plugin, SAMPLE_RATE, BLOCK, transport).unwrap();

    // Block one, straight after activation: the worker is still loading
    // the model, and the input passes through on its own samples.
    s.schedule(17, InputEvent::note_on(64, 100));
    s.schedule(200, InputEvent::note_off(64));
    s.process_block(BLOCK).unwrap();
    let heard: Vec<_> = s.ledger.finished.iter().map(|n| (n.key, n.start, n.end)).collect();
    assert_eq!(heard, vec![(64, 17, 200)], "the first block passes the player through");

    // A capture armed right away is not lost to the model load: its takes come.
    capture_bar_one(&mut s, &ids, &ferry_call(TimeSignature::FOUR_FOUR));
    wait_for_take_notes(&mut s, &ids);
    s.transport.playing = false;
    s.process_block(BLOCK).unwrap();
    assert_eq!(s.ledger.require_silence(), 0);
    s.ledger.assert_clean("processing while the model loads");
}

#[test]
fn activation_cycles_sample_rates_and_resets_keep_the_stream_whole() {
    let model = tiny_model_folder("plugin-lifecycle-cycles");
    let (mut s, ids) = playing_session(120.0, TimeSignature::FOUR_FOUR, &model);
    capture_bar_one(&mut s, &ids, &ferry_call(TimeSignature::FOUR_FOUR));
    wait_for_take_notes(&mut s, &ids);
    // Hear the take and the player together: both sources are live.
    set_text(&mut s, &ids.listen, "Take + input");

    // (sample rate, largest block) pairs a host may switch between,
    // including a one-frame block and the 4096 some hosts use offline.
    let setups = [
        (44_100.0, 512),
        (96_000.0, 4096),
        (22_050.0, 1),
        (192_000.0, 64),
        (48_000.0, 256),
        (88_200.0, 1024),
    ];
    for (cycle, &(rate, block)) in setups.iter().cycle().take(18).enumerate() {
        // A held player note across the deactivation: the host ends it.
        let from = s.clock();
        s.schedule(from, InputEvent::note_on(50, 80));
        s.run(block as u64 * 3).unwrap();
        s.restart(rate, block).unwrap();
        // The late note-off the player sends after the restart must not
        // become an orphan or a second note.
        let now = s.clock();
        s.schedule(now, InputEvent::note_off(50));
        s.run(block as u64 * 2).unwrap();

        // The player is heard at the new rate.
        let at = play_short_notes(&mut s, 3);
        let heard = s
            .ledger
            .finished
            .iter()
            .filter(|n| n.start >= at && (60..63).contains(&n.key))
            .count();
        assert_eq!(heard, 3, "cycle {cycle} at {rate} Hz / {block}: player notes heard");

        // reset() between two blocks while notes sound (CLAP: clears all
        // processing state); what sounded is ended, nothing hangs.
        if cycle % 2 == 0 {
            let now = s.clock();
            s.schedule(now, InputEvent::note_on(55, 80));
            s.run(block as u64 * 2).unwrap();
            s.plugin.reset();
            let now = s.clock();
            s.schedule(now + 5, InputEvent::note_off(55));
            s.run(block as u64 * 2).unwrap();
        }
        let hard: Vec<_> = s.ledger.hard_violations().into_iter().cloned().collect();
        assert!(hard.is_empty(), "cycle {cycle} at {rate} Hz / {block}: {hard:?}");
    }
    // The take still plays after all that, at the last setup.
    let from = s.clock();
    s.wait_for("the take to play again", WORKER_TIMEOUT, |s| {
        note_ons_since(s, from) > 0
    })
    .unwrap();
    s.transport.playing = false;
    s.process_block(BLOCK).unwrap();
    assert_eq!(s.ledger.require_silence(), 0);
    s.ledger.assert_clean("activation cycles");
}

#[test]
fn a_block_of_ten_thousand_events_is_passed_whole() {
    let model = tiny_model_folder("plugin-lifecycle-flood");
    let (mut s, _ids) = playing_session(120.0, TimeSignature::FOUR_FOUR, &model);
    s.run(BLOCK as u64 * 4).unwrap();
    // 5,000 note-on/off pairs in one 4096-frame block: 128 keys × 16
    // channels cycled, each note lasting a few frames.
    s.restart(SAMPLE_RATE, 4096).unwrap();
    let start = s.clock();
    for i in 0..5_000u64 {
        // On in 0..4094, off one frame later: both in the block, off after on.
        let at = start + (i * 4094 / 5_000);
        let key = (i % 128) as u8;
        let channel = ((i / 128) % 16) as u8;
        s.schedule(
            at,
            InputEvent::NoteOn {
                channel,
                key,
                velocity: 0.5,
            },
        );
        s.schedule(
            at + 1,
            InputEvent::NoteOff {
                channel,
                key,
                velocity: 0.0,
            },
        );
    }
    s.process_block(4096).unwrap();
    let ons = note_ons_since(&s, start);
    assert_eq!(ons, 5_000, "every note of the flood is passed on");
    s.run(4096).unwrap();
    assert_eq!(s.ledger.require_silence(), 0);
    s.ledger.assert_clean("10,000 events in one block");
}

#[test]
fn without_a_transport_the_player_is_heard() {
    let model = tiny_model_folder("plugin-lifecycle-no-transport");
    let mut plugin = nudgebar();
    use_model_folder(&mut plugin, &model);
    let ids = Ids::of(&mut plugin);
    let mut transport = HostTransport::new(120.0, TimeSignature::FOUR_FOUR);
    transport.present = false;
    let mut s = Session::start(plugin, SAMPLE_RATE, BLOCK, transport).unwrap();
    set_text(&mut s, &ids.listen, "Take + input");
    let at = play_short_notes(&mut s, 4);
    let heard = s.ledger.finished.iter().filter(|n| n.start >= at).count();
    assert_eq!(heard, 4, "input passes without a transport");
    assert_eq!(s.ledger.require_silence(), 0);
    s.ledger.assert_clean("no transport");
}
