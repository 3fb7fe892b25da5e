//! Checks of the CLAP test host itself, against a small fixture plugin built
//! here with nice-plug (the framework Nudgebar uses): if the harness loses
//! events, mis-times them or cannot see a hanging note, the Nudgebar plugin
//! tests would prove nothing. The fixture echoes notes, and can be told to
//! misbehave (drop its note-offs, allocate in `process()`), so the checks are
//! seen to fail when they should.

use nice_plug::midi::Key;
use nice_plug::prelude::*;
use nudgebar_music::{Note, Phrase, TimeSignature};
use nudgebar_tests::host::{
    HostTransport, HostedPlugin, InputEvent, Session, StateBlob, Violation,
};
use std::sync::Arc;
use std::time::Duration;

/// The fixture: a note effect that passes notes through, transposed.
struct Echo {
    params: Arc<EchoParams>,
}

#[derive(Params)]
struct EchoParams {
    /// Semitones added to every note.
    #[id = "transpose"]
    transpose: IntParam,
    /// Misbehaviour: swallow note-offs (hanging notes downstream).
    #[id = "leak"]
    leak: BoolParam,
    /// Misbehaviour: allocate inside `process()`.
    #[id = "alloc"]
    alloc: BoolParam,
    /// A persisted field, to see it survive save → load.
    #[persist = "memo"]
    memo: std::sync::Mutex<String>,
}

impl Default for Echo {
    fn default() -> Self {
        Self {
            params: Arc::new(EchoParams {
                transpose: IntParam::new("Transpose", 0, IntRange::Linear { min: -24, max: 24 })
                    .with_unit(" st"),
                leak: BoolParam::new("Leak", false),
                alloc: BoolParam::new("Alloc", false),
                memo: std::sync::Mutex::new("slack tide".to_string()),
            }),
        }
    }
}

impl Plugin for Echo {
    const NAME: &'static str = "Harness Echo";
    const VENDOR: &'static str = "Nudgebar tests";
    const URL: &'static str = "https://nudgebar.invalid";
    const EMAIL: &'static str = "tests@nudgebar.invalid";
    const VERSION: &'static str = "0.0.1";
    const AUDIO_IO_LAYOUTS: &'static [AudioIOLayout] = &[];
    const MIDI_INPUT: MidiConfig = MidiConfig::Basic;
    const MIDI_OUTPUT: MidiConfig = MidiConfig::Basic;
    type Editor = ();
    type SysExMessage = ();
    type BackgroundTask = ();

    fn params(&self) -> Arc<dyn Params> {
        self.params.clone()
    }

    fn process(
        &mut self,
        _: &mut Buffer,
        _: &mut AuxiliaryBuffers,
        context: &mut impl ProcessContext<Self>,
    ) -> ProcessStatus {
        let shift = self.params.transpose.value();
        let leak = self.params.leak.value();
        let shifted = |key: Key| match key {
            Key::Number(k) => Key::Number((k as i32 + shift).clamp(0, 127) as u8),
            Key::Wildcard => Key::Wildcard,
        };
        while let Some(event) = context.next_event() {
            let out = match event {
                NoteEvent::NoteOn {
                    timing,
                    voice_id,
                    channel,
                    key,
                    velocity,
                } => NoteEvent::NoteOn {
                    timing,
                    voice_id,
                    channel,
                    key: shifted(key),
                    velocity,
                },
                NoteEvent::NoteOff {
                    timing,
                    voice_id,
                    channel,
                    key,
                    velocity,
                } if !leak => NoteEvent::NoteOff {
                    timing,
                    voice_id,
                    channel,
                    key: shifted(key),
                    velocity,
                },
                _ => continue,
            };
            // The fixture's output fits easily in the harness' list; a refusal
            // would show up in the ledger as missing notes.
            let _ = context.try_send_event(out);
        }
        if self.params.alloc.value() {
            std::hint::black_box(vec![0u8; 4096]);
        }
        ProcessStatus::Normal
    }
}

impl ClapPlugin for Echo {
    const CLAP_ID: &'static str = "org.nudgebar.tests.echo";
    const CLAP_DESCRIPTION: Option<&'static str> = None;
    const CLAP_MANUAL_URL: Option<&'static str> = None;
    const CLAP_SUPPORT_URL: Option<&'static str> = None;
    const CLAP_FEATURES: &'static [ClapFeature] = &[ClapFeature::NoteEffect];
}

nice_export_clap!(Echo);

fn load() -> HostedPlugin {
    HostedPlugin::in_process(&clap_entry, Some(Echo::CLAP_ID))
        .expect("the fixture loads in-process")
}

fn param_id(plugin: &mut HostedPlugin, name: &str) -> u32 {
    plugin
        .param_named(name)
        .unwrap_or_else(|| panic!("fixture has a {name} parameter"))
        .id
}

/// A made-up ferry call (Wrenmouth "bell cell" of even eighths after an
/// opening leap), in `ts`.
fn ferry_call(ts: TimeSignature) -> Phrase {
    let len = ts.quarters_per_measure();
    let pitches = [62u8, 69, 67, 67, 65, 64, 62];
    let notes = (0..)
        .map(|i| i as f64 * 0.5)
        .take_while(|&onset| onset < len)
        .zip(pitches.iter().cycle())
        .map(|(onset, &pitch)| Note::new(pitch, onset, 0.5, 90))
        .collect();
    Phrase::new(ts, 1, notes)
}

#[test]
fn loads_and_describes_itself() {
    let mut p = load();
    assert_eq!(p.summary().id, "org.nudgebar.tests.echo");
    assert_eq!(p.summary().name, "Harness Echo");
    assert_eq!(p.note_ports(true).len(), 1);
    assert_eq!(p.note_ports(false).len(), 1);
    assert_eq!(p.audio_port_count(true) + p.audio_port_count(false), 0);
    let names: Vec<String> = p.params().into_iter().map(|x| x.name).collect();
    assert_eq!(names, ["Transpose", "Leak", "Alloc"]);
}

#[test]
fn notes_come_back_on_the_sample_they_were_sent() {
    // Two tempos, two metres, a block size that does not divide the bar, and
    // a transposition so the output is the plugin's, not an echo of the input.
    for (tempo, ts, block) in [
        (120.0, TimeSignature::FOUR_FOUR, 256),
        (97.0, TimeSignature::new(7, 8).unwrap(), 333),
    ] {
        let mut plugin = load();
        let transpose = param_id(&mut plugin, "Transpose");
        let mut transport = HostTransport::new(tempo, ts);
        transport.playing = true;
        let mut s = Session::start(plugin, 48_000.0, block, transport).unwrap();
        // CLAP sees nice-plug's stepped parameters as 0..steps, so go through
        // the plugin's own text conversion, as a user typing "5" would.
        let five = s.plugin.text_to_value(transpose, "5").unwrap();
        s.set_param(transpose, five);
        let phrase = ferry_call(ts);
        let downbeat = s.play_phrase_at_bar(&phrase, 1);
        s.run_to_position(s.transport.bar_start(3)).unwrap();

        let played = s.notes_played(0, u64::MAX, downbeat);
        assert_eq!(
            played.len(),
            phrase.notes.len(),
            "{tempo} BPM {ts:?}: every note came back"
        );
        let spb = s.samples_per_beat();
        for (got, sent) in played.iter().zip(&phrase.notes) {
            assert_eq!(got.pitch, sent.pitch + 5);
            // Whole samples: the harness rounds each scheduled time to a sample.
            assert!(
                (got.onset - sent.onset).abs() * spb <= 0.5,
                "{got:?} vs {sent:?}"
            );
            assert!(
                (got.duration - sent.duration).abs() * spb <= 1.0,
                "{got:?} vs {sent:?}"
            );
            assert_eq!(got.velocity, sent.velocity);
        }
        // The song position the harness records for the first note is bar 1's downbeat.
        let first = s.timeline.first().unwrap();
        assert!((first.position.unwrap() - s.transport.bar_start(1)).abs() * spb <= 0.5);
        assert_eq!(s.ledger.require_silence(), 0);
        s.ledger.assert_clean("fixture echo");
    }
}

#[test]
fn a_plugin_that_drops_note_offs_is_caught() {
    let mut plugin = load();
    let leak = param_id(&mut plugin, "Leak");
    let mut transport = HostTransport::new(120.0, TimeSignature::FOUR_FOUR);
    transport.playing = true;
    let mut s = Session::start(plugin, 44_100.0, 512, transport).unwrap();
    s.set_param(leak, 1.0);
    s.play_phrase_at_bar(&ferry_call(TimeSignature::FOUR_FOUR), 0);
    s.run_beats(6.0).unwrap();
    let stuck = s.ledger.require_silence();
    assert_eq!(stuck, 8, "all eight notes of the call were left hanging");
    assert!(s
        .ledger
        .violations
        .iter()
        .any(|v| matches!(v, Violation::Stuck { key: 62, .. })));
    assert!(!s.ledger.hard_violations().is_empty());
}

#[test]
fn parameter_text_round_trips_through_clap() {
    let mut p = load();
    for param in p.params() {
        let mut value = param.min;
        while value <= param.max {
            let text = p.value_to_text(param.id, value).expect("value_to_text");
            let back = p
                .text_to_value(param.id, &text)
                .unwrap_or_else(|| panic!("{text:?} did not parse"));
            assert!(
                // nice-plug keeps values as f32, hence the tolerance.
                (back - value).abs() < 1e-6,
                "{}: {value} → {text:?} → {back}",
                param.name
            );
            value += 1.0;
        }
    }
    let transpose = p.param_named("Transpose").unwrap();
    // nice-plug shows a stepped parameter to CLAP as 0..steps; the ends of
    // that range are the ends of the musical range.
    assert_eq!(
        p.value_to_text(transpose.id, transpose.min).as_deref(),
        Some("-24 st")
    );
    assert_eq!(
        p.value_to_text(transpose.id, transpose.max).as_deref(),
        Some("24 st")
    );
}

#[test]
fn state_survives_save_and_load() {
    let mut a = load();
    let transpose = param_id(&mut a, "Transpose");
    let minus_three = a.text_to_value(transpose, "-3 st").unwrap();
    a.flush_params(&[(transpose, minus_three)]).unwrap();
    assert_eq!(a.param_text(transpose).as_deref(), Some("-3 st"));
    let blob = a.save_state().unwrap();
    let mut b = load();
    b.load_state(&blob).unwrap();
    assert_eq!(b.param_value(transpose), Some(minus_three));
    assert_eq!(
        b.save_state().unwrap(),
        blob,
        "save → load → save is byte-identical"
    );
    // The persisted field is in the blob, and a field edited in the blob is
    // what the plugin saves after loading it.
    let mut parsed = StateBlob::parse(&blob).unwrap();
    assert_eq!(parsed.field("memo").unwrap(), "slack tide");
    parsed.set_field("memo", &serde_json::json!("lock keeper"));
    b.load_state(&parsed.to_bytes()).unwrap();
    assert_eq!(
        StateBlob::parse(&b.save_state().unwrap())
            .unwrap()
            .field("memo")
            .unwrap(),
        "lock keeper"
    );
}

#[test]
fn waiting_gives_up_with_a_sentence() {
    let transport = HostTransport::new(120.0, TimeSignature::FOUR_FOUR);
    let mut s = Session::start(load(), 48_000.0, 256, transport).unwrap();
    let err = s
        .wait_for("a miracle", Duration::from_millis(50), |_| false)
        .unwrap_err();
    assert!(err.0.contains("a miracle"), "{err}");
    assert!(s.clock() > 0, "blocks kept being processed while waiting");
}

/// Run only as a child process by `allocation_in_process_aborts` below.
#[test]
#[ignore = "aborts the process on purpose; run by allocation_in_process_aborts"]
fn child_allocates_in_process() {
    let mut plugin = load();
    let alloc = param_id(&mut plugin, "Alloc");
    let transport = HostTransport::new(120.0, TimeSignature::FOUR_FOUR);
    let mut s = Session::start(plugin, 48_000.0, 256, transport).unwrap();
    s.set_param(alloc, 1.0);
    s.run(1024).unwrap();
    s.schedule(s.clock(), InputEvent::note_on(60, 100));
    s.run(1024).unwrap();
}

#[test]
fn allocation_in_process_aborts() {
    // nice-plug's `assert_process_allocs` (on for the whole workspace in
    // debug builds) must abort on an allocation inside process(); this is
    // what makes the plugin tests' "no allocation" claim checkable. Run the
    // misbehaving fixture in a child process and watch it die.
    if !cfg!(debug_assertions) {
        return; // the check only exists in debug builds, by design
    }
    let out = std::process::Command::new(std::env::current_exe().unwrap())
        .args([
            "--ignored",
            "--exact",
            "child_allocates_in_process",
            "--nocapture",
            "--test-threads=1",
        ])
        .output()
        .unwrap();
    let stderr = String::from_utf8_lossy(&out.stderr);
    assert!(
        !out.status.success(),
        "the allocating fixture should have been aborted"
    );
    assert!(
        stderr.to_lowercase().contains("alloc"),
        "abort message names the allocation:\n{stderr}"
    );
}
