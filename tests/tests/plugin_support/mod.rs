//! What the Nudgebar plugin tests share: loading the plugin through the CLAP
//! host, finding its parameters by their stable ids, pointing it at a model
//! package, reading what it saved, and the capture → takes → audition steps.
//!
//! Everything goes through CLAP (parameters, state, note events), as a DAW
//! would: the tests see the plugin from the outside.

#![allow(dead_code)] // each test file uses its own part of this

use nice_plug::params::Params;
use nudgebar_music::{Note, Phrase, TimeSignature};
use nudgebar_tests::host::{HostTransport, HostedPlugin, ParamSummary, Session, StateBlob};
use nudgebar_tests::tiny_model;
use serde_json::Value;
use std::path::PathBuf;
use std::time::Duration;

pub const SAMPLE_RATE: f64 = 48_000.0;
pub const BLOCK: u32 = 256;

/// How long a test waits for the plugin's worker (model load + inference on
/// a debug build, on a busy 2-core machine). Generous on purpose: a wait
/// that times out is a failure, not a flaky skip.
pub const WORKER_TIMEOUT: Duration = Duration::from_secs(120);

/// The plugin, instantiated in-process from the crate's CLAP entry.
pub fn nudgebar() -> HostedPlugin {
    HostedPlugin::in_process(&nudgebar::clap_entry, Some(nudgebar::CLAP_ID))
        .expect("Nudgebar loads in-process")
}

/// The plugin's CLAP parameters, found by their stable string ids
/// (`nudgebar::params::ids`). CLAP sees hashes of those ids; going through
/// the parameter names the plugin's own `param_map` gives keeps the tests
/// independent of the hash.
pub struct Ids {
    pub axes: Vec<ParamSummary>,
    pub takes: ParamSummary,
    pub spread: ParamSummary,
    pub seed: ParamSummary,
    pub selected: ParamSummary,
    pub bars: ParamSummary,
    pub listen: ParamSummary,
    pub arm: ParamSummary,
    pub grab: ParamSummary,
    pub keep: ParamSummary,
    pub bypass: ParamSummary,
}

pub fn param_by_id(plugin: &mut HostedPlugin, id: &str) -> ParamSummary {
    let defaults = nudgebar::params::NudgebarParams::default();
    let name = defaults
        .param_map()
        .into_iter()
        .find(|(i, _, _)| i == id)
        .map(|(_, ptr, _)| unsafe { ptr.name() }.to_string())
        .unwrap_or_else(|| panic!("the plugin declares no parameter with id {id:?}"));
    plugin
        .param_named(&name)
        .unwrap_or_else(|| panic!("CLAP lists no parameter named {name:?} (id {id:?})"))
}

impl Ids {
    pub fn of(plugin: &mut HostedPlugin) -> Ids {
        use nudgebar::params::ids;
        let mut p = |id: &str| param_by_id(plugin, id);
        Ids {
            axes: ids::AXES.iter().map(|id| p(id)).collect(),
            takes: p(ids::TAKES),
            spread: p(ids::SPREAD),
            seed: p(ids::SEED),
            selected: p(ids::SELECTED),
            bars: p(ids::PROMPT_BARS),
            listen: p(ids::LISTEN),
            arm: p(ids::ARM),
            grab: p(ids::GRAB),
            keep: p(ids::KEEP),
            bypass: p(ids::BYPASS),
        }
    }
}

/// Sets a parameter from text, as a user typing into the host's field (the
/// CLAP value of a stepped nice-plug parameter is its step index, so text
/// is the unambiguous way in).
pub fn set_text(s: &mut Session, param: &ParamSummary, text: &str) {
    let value = s
        .plugin
        .text_to_value(param.id, text)
        .unwrap_or_else(|| panic!("{} does not accept the text {text:?}", param.name));
    s.set_param(param.id, value);
}

/// Fires an edge-triggered control (arm, grab, keep): on now, off one block later.
pub fn pulse(
    s: &mut Session,
    param: &ParamSummary,
) -> Result<(), nudgebar_tests::host::HarnessError> {
    s.set_param(param.id, param.max);
    s.process_block(BLOCK)?;
    s.set_param(param.id, param.min);
    s.process_block(BLOCK)?;
    Ok(())
}

/// The known-weights test model (tests/src/tiny_model.rs) written as a model
/// package folder, so the plugin can load it by path like a user's model.
pub fn tiny_model_folder(name: &str) -> PathBuf {
    let dir = nudgebar_tests::scratch_dir(name);
    let variant = tiny_model::Variant::default();
    std::fs::write(
        dir.join("manifest.json"),
        tiny_model::manifest_json().to_string(),
    )
    .unwrap();
    std::fs::write(dir.join("encoder.onnx"), tiny_model::encoder_bytes(variant)).unwrap();
    std::fs::write(dir.join("decoder.onnx"), tiny_model::decoder_bytes(variant)).unwrap();
    dir
}

/// Points the plugin at a model package folder through its saved session
/// (the documented `model_path`), as reopening a project that uses it does.
pub fn use_model_folder(plugin: &mut HostedPlugin, folder: &std::path::Path) {
    let mut blob = StateBlob::parse(&plugin.save_state().unwrap()).unwrap();
    let mut session = blob
        .field("session")
        .expect("the plugin saves a session field");
    session["model_path"] = Value::String(folder.to_string_lossy().into_owned());
    blob.set_field("session", &session);
    plugin.load_state(&blob.to_bytes()).unwrap();
}

/// The saved session (nice-plug field "session").
pub fn saved_session(plugin: &mut HostedPlugin) -> Value {
    StateBlob::parse(&plugin.save_state().unwrap())
        .unwrap()
        .field("session")
        .expect("session field")
}

/// The kept takes' phrases, from the saved session.
pub fn kept_phrases(plugin: &mut HostedPlugin) -> Vec<Phrase> {
    saved_session(plugin)["kept"]
        .as_array()
        .map(|takes| {
            takes
                .iter()
                .map(|t| {
                    serde_json::from_value(t["phrase"].clone()).expect("a kept take has a phrase")
                })
                .collect()
        })
        .unwrap_or_default()
}

/// A made-up Wrenmouth ferry call for one bar of `ts`: an opening leap,
/// then a "rope cell" (dotted eighth + sixteenth) and steps down.
pub fn ferry_call(ts: TimeSignature) -> Phrase {
    let cells: [(u8, f64, f64); 7] = [
        (67u8, 0.0, 0.75),
        (74, 0.75, 0.25),
        (72, 1.0, 0.5),
        (71, 1.5, 0.5),
        (69, 2.0, 0.75),
        (67, 2.75, 0.25),
        (65, 3.0, 0.5),
    ];
    let len = ts.quarters_per_measure();
    let notes = cells
        .iter()
        .filter(|c| c.1 < len)
        .map(|&(p, on, d)| Note::new(p, on, d.min(len - on), 96))
        .collect();
    Phrase::new(ts, 1, notes)
}

/// A playing session on the plugin, using the tiny model folder.
pub fn playing_session(tempo: f64, ts: TimeSignature, model: &std::path::Path) -> (Session, Ids) {
    let mut plugin = nudgebar();
    use_model_folder(&mut plugin, model);
    let ids = Ids::of(&mut plugin);
    let mut transport = HostTransport::new(tempo, ts);
    transport.playing = true;
    (
        Session::start(plugin, SAMPLE_RATE, BLOCK, transport).unwrap(),
        ids,
    )
}

/// Arms a capture during bar 0, plays `phrase` in bar 1, and runs to the
/// start of bar 2 (the capture is then complete). Returns the downbeat
/// sample of bar 1.
pub fn capture_bar_one(s: &mut Session, ids: &Ids, phrase: &Phrase) -> u64 {
    s.run_beats(0.5).unwrap();
    pulse(s, &ids.arm).unwrap();
    let downbeat = s.play_phrase_at_bar(phrase, 1);
    s.run_to_position(s.transport.bar_start(2)).unwrap();
    downbeat
}

/// Switches to hearing takes and waits until take notes come out.
pub fn wait_for_take_notes(s: &mut Session, ids: &Ids) -> u64 {
    set_text(s, &ids.listen, "Take");
    let from = s.clock();
    s.wait_for("the first take to sound", WORKER_TIMEOUT, |s| {
        s.timeline.iter().any(|e| {
            e.sample >= from && matches!(e.kind, nudgebar_tests::host::OutputKind::NoteOn { .. })
        })
    })
    .unwrap();
    from
}

/// Waits until the saved session holds `count` kept takes.
pub fn wait_for_kept(s: &mut Session, count: usize) {
    let mut polls = 0u32;
    s.wait_for("the kept take to be saved", WORKER_TIMEOUT, |s| {
        // Saving state every block would be slow; look every 16 blocks.
        polls += 1;
        polls % 16 == 0 && kept_phrases(&mut s.plugin).len() >= count
    })
    .unwrap();
}

/// Asserts `played` (notes the plugin sounded, in beats from a bar line) is
/// `expected` (a take), note for note, within one sample of timing.
pub fn assert_same_notes(played: &[Note], expected: &[Note], samples_per_beat: f64, context: &str) {
    let tolerance = 1.0 / samples_per_beat;
    assert_eq!(
        played.len(),
        expected.len(),
        "{context}: {} notes sounded, the take has {}\nplayed: {played:?}\ntake: {expected:?}",
        played.len(),
        expected.len()
    );
    for (p, e) in played.iter().zip(expected) {
        assert_eq!(p.pitch, e.pitch, "{context}: pitch of {p:?} vs take {e:?}");
        assert!(
            (p.onset - e.onset).abs() <= tolerance,
            "{context}: onset of {p:?} vs take {e:?}"
        );
        assert!(
            (p.duration - e.duration).abs() <= 2.0 * tolerance,
            "{context}: length of {p:?} vs take {e:?}"
        );
        assert_eq!(
            p.velocity, e.velocity,
            "{context}: velocity of {p:?} vs take {e:?}"
        );
    }
}
