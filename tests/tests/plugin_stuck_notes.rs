//! Every note that starts also stops: with a take sounding, the host and the
//! user do everything that should cut it — switch take, switch what the track
//! hears, bypass, jump the play head, loop, stop, deactivate — and after each
//! one no note that was sounding before it may still sound.
//!
//! The rule comes from how a note stream is heard: a note-on without its
//! note-off hangs on the synth downstream (MIDI 1.0 Detailed Specification,
//! Note On / Note Off; CLAP `events.h` for the event form). The ledger in
//! `nudgebar_tests::host::ledger` pairs them up across blocks.
//!
//! Debug build: `assert_process_allocs` watches every `process()` here too.

mod plugin_support;

use nudgebar_music::TimeSignature;
use nudgebar_tests::host::{InputEvent, Session};
use plugin_support::*;
use std::time::Duration;

/// Processes blocks until a take note is sounding (bounded).
fn until_a_note_sounds(s: &mut Session, step: &str) {
    let what = format!("a take note to be sounding before {step}");
    s.wait_for(&what, Duration::from_secs(30), |s| {
        !s.ledger.sounding().is_empty()
    })
    .unwrap();
}

/// After the block in which something happened at sample `at`, no note that
/// started before `at` may still sound.
fn nothing_from_before(s: &Session, at: u64, what: &str) {
    let left: Vec<_> = s
        .ledger
        .sounding()
        .into_iter()
        .filter(|&(_, _, start)| start < at)
        .collect();
    assert!(
        left.is_empty(),
        "after {what}, notes from before are still sounding: {left:?}"
    );
}

#[test]
fn every_disruption_ends_the_sounding_notes() {
    let model = tiny_model_folder("plugin-stuck-notes");
    let (mut s, ids) = playing_session(126.0, TimeSignature::FOUR_FOUR, &model);
    let call = ferry_call(TimeSignature::FOUR_FOUR);
    capture_bar_one(&mut s, &ids, &call);
    wait_for_take_notes(&mut s, &ids);
    let mut disruptions = 0;

    // Take switch.
    until_a_note_sounds(&mut s, "the take switch");
    let at = s.clock();
    set_text(&mut s, &ids.selected, "2");
    s.process_block(BLOCK).unwrap();
    nothing_from_before(&s, at, "switching to take 2");
    disruptions += 1;

    // What the track hears: takes → input. Nothing is played in, so silence.
    set_text(&mut s, &ids.selected, "1");
    until_a_note_sounds(&mut s, "switching to the input");
    set_text(&mut s, &ids.listen, "Input");
    s.process_block(BLOCK).unwrap();
    assert!(
        s.ledger.sounding().is_empty(),
        "after switching to the input: {:?}",
        s.ledger.sounding()
    );
    disruptions += 1;

    // A key held while switching from the input to the takes: the plugin
    // ends the held input note itself. Releasing the key later must not
    // leave anything open either.
    s.schedule(s.clock(), InputEvent::note_on(50, 80));
    s.process_block(BLOCK).unwrap();
    assert_eq!(s.ledger.sounding().len(), 1, "the held key passes through");
    let at = s.clock();
    set_text(&mut s, &ids.listen, "Take");
    s.process_block(BLOCK).unwrap();
    nothing_from_before(&s, at, "switching to the takes with a key held");
    s.schedule(s.clock(), InputEvent::note_off(50));
    disruptions += 1;

    // Bypass.
    until_a_note_sounds(&mut s, "bypass");
    s.set_param(ids.bypass.id, ids.bypass.max);
    s.process_block(BLOCK).unwrap();
    assert!(
        s.ledger.sounding().is_empty(),
        "after bypass: {:?}",
        s.ledger.sounding()
    );
    s.set_param(ids.bypass.id, ids.bypass.min);
    disruptions += 1;

    // Play head jumps forward, mid-bar.
    until_a_note_sounds(&mut s, "a jump forward");
    let at = s.clock();
    let ahead = s.transport.position + 9.3;
    s.transport.jump_to(ahead);
    s.process_block(BLOCK).unwrap();
    nothing_from_before(&s, at, "a jump forward");
    disruptions += 1;

    // Play head jumps backwards.
    until_a_note_sounds(&mut s, "a jump backwards");
    let at = s.clock();
    s.transport.jump_to(4.6);
    s.process_block(BLOCK).unwrap();
    nothing_from_before(&s, at, "a jump backwards");
    disruptions += 1;

    // The host loops a stretch that ends mid-bar: each wrap is a jump back.
    let bar = s.transport.bar_number_at(s.transport.position) + 1;
    let start = s.transport.bar_start(bar);
    s.transport.loop_range = Some((start, start + 2.5));
    s.run_to_position(start).unwrap();
    for pass in 0..3 {
        // Run to just before the wrap with a take note sounding, then across it.
        s.run_to_position(start + 2.5 - 0.2).unwrap();
        let wrap = s.sample_at_position(start + 2.5);
        s.run(((0.4 * s.samples_per_beat()) as u64).max(BLOCK as u64))
            .unwrap();
        nothing_from_before(&s, wrap, &format!("loop wrap {pass}"));
        disruptions += 1;
    }
    s.transport.loop_range = None;

    // Transport stop.
    until_a_note_sounds(&mut s, "stop");
    s.transport.playing = false;
    s.process_block(BLOCK).unwrap();
    assert!(
        s.ledger.sounding().is_empty(),
        "after stop: {:?}",
        s.ledger.sounding()
    );
    disruptions += 1;

    // Deactivate while notes sound, then carry on at another sample rate.
    s.transport.playing = true;
    until_a_note_sounds(&mut s, "deactivation");
    let open = s.restart(44_100.0, 512).unwrap();
    assert!(
        !open.is_empty(),
        "a note was sounding at deactivation (the host ends it)"
    );
    // Nothing from before the deactivation sounds again, and the take
    // carries on (a host reactivates to change the sample rate or block
    // size; the composer should not have to touch anything).
    until_a_note_sounds(&mut s, "the end");
    s.run_beats(8.0).unwrap();
    disruptions += 1;

    s.transport.playing = false;
    s.process_block(512).unwrap();
    assert_eq!(s.ledger.require_silence(), 0);
    s.ledger.assert_clean("disruptions");
    assert!(
        s.ledger.note_ons > 40,
        "the takes really played ({} note-ons)",
        s.ledger.note_ons
    );
    assert_eq!(disruptions, 11);
}

/// A host deactivates and re-activates a plugin to change the sample rate or
/// block size. The takes being auditioned should keep playing afterwards.
#[test]
fn takes_play_again_after_reactivation() {
    let model = tiny_model_folder("plugin-reactivation");
    let (mut s, ids) = playing_session(120.0, TimeSignature::FOUR_FOUR, &model);
    capture_bar_one(&mut s, &ids, &ferry_call(TimeSignature::FOUR_FOUR));
    wait_for_take_notes(&mut s, &ids);
    s.restart(44_100.0, 512).unwrap();
    until_a_note_sounds(&mut s, "the end of the test");
}
