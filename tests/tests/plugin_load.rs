//! Loading Nudgebar the two ways a host does — from the crate's exported
//! `clap_entry` in this process, and by `dlopen` of the bundled
//! `Nudgebar.clap` — and what it tells the host about itself: note ports,
//! no audio ports, every parameter, and text conversions that round-trip.
//!
//! CLAP references: `ext/params.h` (`value_to_text` / `text_to_value`),
//! `ext/note-ports.h`, `ext/audio-ports.h`, `plugin-features.h`
//! ("note-effect").

mod plugin_support;

use clack_extensions::note_ports::NoteDialects;
use nudgebar_music::TimeSignature;
use nudgebar_tests::host::{bundled_clap, HostTransport, HostedPlugin, ParamSummary, Session};
use plugin_support::*;

fn describes_itself(p: &mut HostedPlugin) {
    assert_eq!(p.summary().id, nudgebar::CLAP_ID);
    assert_eq!(p.summary().name, "Nudgebar");
    assert!(
        p.summary().features.iter().any(|f| f == "note-effect"),
        "features: {:?}",
        p.summary().features
    );
    let ins = p.note_ports(true);
    let outs = p.note_ports(false);
    assert_eq!((ins.len(), outs.len()), (1, 1), "one note port each way");
    for port in ins.iter().chain(&outs) {
        assert!(
            port.dialects.contains(NoteDialects::CLAP),
            "{port:?} speaks CLAP notes"
        );
    }
    assert_eq!(
        p.audio_port_count(true) + p.audio_port_count(false),
        0,
        "a pure note effect"
    );
    // Every documented parameter id resolves to a CLAP parameter.
    let ids = Ids::of(p);
    assert_eq!(ids.axes.len(), nudgebar::params::AXIS_SLOTS);
    assert!(
        ids.bypass.is_bypass(),
        "the bypass parameter is flagged as such for the host"
    );
    assert!(
        p.params()
            .iter()
            .all(|x| x.is_automatable() || x.is_bypass()),
        "every parameter can be automated"
    );
}

#[test]
fn loads_in_process() {
    let mut p = nudgebar();
    describes_itself(&mut p);
}

/// Value → text → value for one parameter. Stepped parameters (integers,
/// choices, switches) must come back to the same step; continuous ones
/// are walked in 200 steps and must come back to a value whose text is the
/// same (the text shows the value to the parameter's display precision).
fn round_trips(p: &mut HostedPlugin, param: &ParamSummary) -> usize {
    let mut checked = 0;
    let values: Vec<f64> = if param.is_stepped() {
        // Every step; for a parameter with very many steps (the seed), 2001
        // of them spread evenly, ends included.
        let (lo, hi) = (param.min as i64, param.max as i64);
        let stride = ((hi - lo) / 2000).max(1) as usize;
        (lo..=hi)
            .step_by(stride)
            .chain([hi])
            .map(|v| v as f64)
            .collect()
    } else {
        (0..=200)
            .map(|i| param.min + (param.max - param.min) * i as f64 / 200.0)
            .collect()
    };
    for v in values {
        let text = p
            .value_to_text(param.id, v)
            .unwrap_or_else(|| panic!("{}: no text for {v}", param.name));
        let back = p
            .text_to_value(param.id, &text)
            .unwrap_or_else(|| panic!("{}: {text:?} does not parse back", param.name));
        if param.is_stepped() {
            // nice-plug keeps normalized values as f32, so a parameter with
            // many steps (the seed has 100,000) comes back a hair off its
            // step; it must still be nearest to the same step.
            assert!(
                back.round() == v && (back - v).abs() < 0.01,
                "{}: {v} → {text:?} → {back}",
                param.name
            );
        } else {
            let again = p.value_to_text(param.id, back).unwrap();
            assert_eq!(
                again, text,
                "{}: {v} → {text:?} → {back} → {again:?}",
                param.name
            );
        }
        assert!(
            (param.min..=param.max).contains(&back),
            "{}: {text:?} parsed outside the range",
            param.name
        );
        checked += 1;
    }
    checked
}

#[test]
fn every_parameter_round_trips_its_text() {
    let mut p = nudgebar();
    let mut checked = 0;
    for param in p.params() {
        checked += round_trips(&mut p, &param);
        // Text a user might mistype is refused, never turned into a value
        // outside the range.
        for junk in ["", "banana", "NaN", "inf", "-inf", "1e999", "++1"] {
            if let Some(v) = p.text_to_value(param.id, junk) {
                assert!(
                    (param.min..=param.max).contains(&v),
                    "{}: {junk:?} gave {v}",
                    param.name
                );
            }
        }
    }
    assert!(checked > 100, "only {checked} values were checked");
}

#[test]
fn the_bundled_clap_file_loads_and_plays() {
    // What a DAW loads: target/bundled/Nudgebar.clap, built by
    // `cargo xtask bundle nudgebar` (done here if needed).
    let path = bundled_clap("nudgebar", "Nudgebar").unwrap_or_else(|e| panic!("{e}"));
    let mut from_file = HostedPlugin::from_file(&path, Some(nudgebar::CLAP_ID)).unwrap();
    describes_itself(&mut from_file);
    // Same parameters as the in-process build.
    let mut in_process = nudgebar();
    let names = |p: &mut HostedPlugin| {
        p.params()
            .into_iter()
            .map(|x| (x.id, x.name))
            .collect::<Vec<_>>()
    };
    assert_eq!(names(&mut from_file), names(&mut in_process));

    // And it plays: listening to the input, a played call passes through on
    // the samples it was played (this bundle is a debug build, so its own
    // copy of `assert_process_allocs` guards its process()).
    let mut transport = HostTransport::new(108.0, TimeSignature::FOUR_FOUR);
    transport.playing = true;
    let mut s = Session::start(from_file, SAMPLE_RATE, BLOCK, transport).unwrap();
    let call = ferry_call(TimeSignature::FOUR_FOUR);
    let downbeat = s.play_phrase_at_bar(&call, 1);
    s.run_to_position(s.transport.bar_start(3)).unwrap();
    let played = s.notes_played(downbeat, u64::MAX, downbeat);
    assert_same_notes(
        &played,
        &call.notes,
        s.samples_per_beat(),
        "bundled plugin, input passing through",
    );
    assert_eq!(s.ledger.require_silence(), 0);
    s.ledger.assert_clean("bundled plugin");
}
