//! The main job through a CLAP host: capture a bar in time with the host,
//! let the worker make takes, hear the selected take on the track and check
//! it sounds exactly as the take, locked to the host's bars — at several
//! tempos and time signatures.
//!
//! The model is the known-weights test model (tests/src/tiny_model.rs),
//! loaded by folder path as a user model would be, because its takes can be
//! worked out by hand: with the density slider at 0 the decoder sounds the
//! grid steps whose fill rank (`tiny_model::RANK`) is below
//! (number of prompt onsets − 0.5), each one sixteenth long.
//!
//! Debug build: nice-plug's `assert_process_allocs` aborts the test process
//! on any allocation inside the plugin's `process()` during all of this.

mod plugin_support;

use nudgebar_music::TimeSignature;
use nudgebar_tests::tiny_model;
use plugin_support::*;

/// The onsets (in beats) the tiny model decodes for a prompt with `onsets`
/// note onsets in a measure of `steps` sixteenths, slider at 0.
fn tiny_model_onsets(onsets: usize, steps: usize) -> Vec<f64> {
    tiny_model::expected_steps(onsets as f32 - 0.5, 0.0)
        .into_iter()
        .filter(|&s| s < steps)
        .map(|s| s as f64 * 0.25)
        .collect()
}

fn capture_then_hear_the_take(tempo: f64, ts: TimeSignature) {
    let context = format!("{tempo} BPM in {}/{}", ts.numerator, ts.denominator);
    let model = tiny_model_folder(&format!(
        "plugin-audition-{}-{}-{}",
        tempo, ts.numerator, ts.denominator
    ));
    let (mut s, ids) = playing_session(tempo, ts, &model);
    let spb = s.samples_per_beat();
    let bar_samples = (ts.quarters_per_measure() * spb).round() as u64;

    // 1. Capture bar 1. Listening to the input (the default), the played
    //    notes pass through unchanged while they are captured.
    let call = ferry_call(ts);
    let downbeat = capture_bar_one(&mut s, &ids, &call);

    // 2. Hear takes; wait for the worker.
    wait_for_take_notes(&mut s, &ids);
    let passed = s.notes_played(downbeat, downbeat + bar_samples, downbeat);
    assert_same_notes(
        &passed,
        &call.notes,
        spb,
        &format!("{context}, input passing through during capture"),
    );

    // 3. Two whole bars of the selected take (take 1), from the next-but-one
    //    bar line so the first is complete.
    let bar = s.transport.bar_number_at(s.transport.position) + 2;
    let first = s.sample_at_position(s.transport.bar_start(bar));
    s.run_to_position(s.transport.bar_start(bar + 2)).unwrap();

    // 4. Keep it; the saved session then holds exactly the take we heard.
    pulse(&mut s, &ids.keep).unwrap();
    wait_for_kept(&mut s, 1);
    let kept = kept_phrases(&mut s.plugin).remove(0);
    assert_eq!(
        kept.time_signature, ts,
        "{context}: the take is in the prompt's metre"
    );

    // The take itself, worked out by hand from the tiny model's weights.
    let steps = ts.sixteenths_per_measure();
    let onsets: Vec<f64> = kept.notes.iter().map(|n| n.onset).collect();
    assert_eq!(
        onsets,
        tiny_model_onsets(call.notes.len(), steps),
        "{context}: decoded onsets"
    );
    assert!(
        kept.notes.iter().all(|n| n.duration == 0.25),
        "{context}: one sixteenth each"
    );

    // 5. Each of the two bars sounds the take, aligned to the bar line.
    for k in 0..2 {
        let start = first + k * bar_samples;
        // Event times are whole samples and both sides round beats to
        // samples, so a note may land one sample either side of its exact
        // place (0.02 ms at 48 kHz); the window starts one sample early.
        let played = s.notes_played(start - 1, start + bar_samples - 1, start);
        assert_same_notes(
            &played,
            &kept.notes,
            spb,
            &format!("{context}, bar {} of the take", bar + k as i32),
        );
    }

    // 6. Nothing hangs once the transport stops.
    s.transport.playing = false;
    s.process_block(BLOCK).unwrap();
    assert_eq!(
        s.ledger.require_silence(),
        0,
        "{context}: notes left sounding after stop"
    );
    s.ledger.assert_clean(&context);
    assert_eq!(
        s.plugin.audio_thread_logs(),
        0,
        "{context}: the plugin logged from process()"
    );
}

#[test]
fn four_four_at_120() {
    capture_then_hear_the_take(120.0, TimeSignature::FOUR_FOUR);
}

#[test]
fn seven_eight_at_93() {
    capture_then_hear_the_take(93.0, TimeSignature::new(7, 8).unwrap());
}

#[test]
fn three_four_at_150() {
    capture_then_hear_the_take(150.0, TimeSignature::new(3, 4).unwrap());
}
