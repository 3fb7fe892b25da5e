//! Shaping takes beyond the sliders, through a CLAP host, on the built-in
//! demo model: key and scale, holds, aiming at a value, and blending toward
//! a kept take. Every setting goes in as a host parameter (typed text, by
//! stable id); what comes out is read from the plugin's published view (what
//! its editor shows), from the notes it plays and from the session it saves.
//!
//! The checks hold for any model meeting the contract, not for figures of
//! today's demo model (it may be retrained): targets are chosen from what
//! the plugin itself decoded, tolerances are the ones the plugin passed to
//! the engine.
//!
//! Debug build: nice-plug's `assert_process_allocs` aborts the test process
//! on any allocation inside `process()` while all of this runs.

mod plugin_support;

use nudgebar::params::ids;
use nudgebar::status::{Shared, WorkerView};
use nudgebar_engine::steer::{Interpolation, Outcome};
use nudgebar_engine::{Engine, NoteChoice, PitchMask};
use nudgebar_music::attributes::Attribute;
use nudgebar_music::{Phrase, TimeSignature};
use nudgebar_tests::host::{HostTransport, ParamSummary, Session, StateBlob};
use plugin_support::*;
use serde_json::Value;
use std::sync::{Arc, Mutex};

/// Plugins are made one at a time, so the newest instance the plugin
/// registered is the one this test just made.
static MAKING: Mutex<()> = Mutex::new(());

/// A playing session on the built-in demo model (no model folder), with
/// the instance's published view.
fn demo_session() -> (Session, Ids, Arc<Shared>) {
    let (plugin, shared) = {
        let _one_at_a_time = MAKING.lock().unwrap_or_else(|e| e.into_inner());
        let plugin = nudgebar();
        let shared = nudgebar::status::instances()
            .pop()
            .expect("the plugin registers its published view");
        (plugin, shared)
    };
    let mut plugin = plugin;
    let ids = Ids::of(&mut plugin);
    let mut transport = HostTransport::new(120.0, TimeSignature::FOUR_FOUR);
    transport.playing = true;
    let s = Session::start(plugin, SAMPLE_RATE, BLOCK, transport).unwrap();
    (s, ids, shared)
}

fn param(s: &mut Session, id: &str) -> ParamSummary {
    param_by_id(&mut s.plugin, id)
}

fn set(s: &mut Session, id: &str, text: &str) {
    let p = param(s, id);
    set_text(s, &p, text);
}

/// Runs the host until the worker has published a take set that `ready`
/// accepts and the audio thread plays that same set.
fn wait_for_set(
    s: &mut Session,
    shared: &Shared,
    what: &str,
    ready: impl Fn(&WorkerView) -> bool,
) -> Arc<WorkerView> {
    s.wait_for(what, WORKER_TIMEOUT, |_| {
        let v = shared.view();
        !shared.busy.load(std::sync::atomic::Ordering::Acquire)
            && !v.takes.is_empty()
            && ready(&v)
            && shared
                .audio
                .generation
                .load(std::sync::atomic::Ordering::Acquire)
                == v.generation
    })
    .unwrap();
    shared.view()
}

/// Keeps the selected take and returns its saved record.
fn keep_selected(s: &mut Session, ids: &Ids) -> Value {
    let before = kept_phrases(&mut s.plugin).len();
    pulse(s, &ids.keep).unwrap();
    wait_for_kept(s, before + 1);
    saved_session(&mut s.plugin)["kept"][before].clone()
}

fn captured(s: &mut Session, ids: &Ids, shared: &Shared) -> Arc<WorkerView> {
    capture_bar_one(s, ids, &ferry_call(TimeSignature::FOUR_FOUR));
    wait_for_set(s, shared, "the first takes", |v| v.prompt.is_some())
}

#[test]
fn with_a_key_every_note_of_every_take_is_in_its_scale() {
    let (mut s, ids, shared) = demo_session();
    let plain = captured(&mut s, &ids, &shared);

    // F# major pentatonic: F#, G#, A#, C#, D# (the major scale's degrees 1,
    // 2, 3, 5, 6 — handbook fact, from memory; the engine's interval sets
    // are checked against music21 in steer_scale.rs). The ferry call (G D C
    // B A G F) has none of them, so the takes can only get there by the mask.
    let in_scale = |p: u8| [6u8, 8, 10, 1, 3].contains(&(p % 12));
    let outside = plain
        .takes
        .iter()
        .flat_map(|t| &t.phrase.notes)
        .filter(|n| !in_scale(n.pitch))
        .count();
    assert!(
        outside > 0,
        "unconstrained takes already sit in F# major pentatonic; the check below would prove nothing"
    );

    set(&mut s, ids::KEY, "F#");
    set(&mut s, ids::SCALE, "Major pentatonic");
    let v = wait_for_set(&mut s, &shared, "takes in F# major pentatonic", |v| {
        v.report.key.as_deref() == Some("F# major pentatonic")
    });
    assert!(v.takes.len() >= 2, "{} takes", v.takes.len());
    for (i, t) in v.takes.iter().enumerate() {
        assert!(!t.phrase.notes.is_empty(), "take {} is silent", i + 1);
        for n in &t.phrase.notes {
            assert!(
                in_scale(n.pitch),
                "take {}: pitch {} is outside F# major pentatonic",
                i + 1,
                n.pitch
            );
        }
    }

    // What the track hears is the same: two bars of take 1, every note in the scale.
    let from = wait_for_take_notes(&mut s, &ids);
    let spb = s.samples_per_beat();
    s.run(8 * spb as u64).unwrap();
    let heard = s.notes_played(from, s.clock(), from);
    assert!(!heard.is_empty());
    assert!(heard.iter().all(|n| in_scale(n.pitch)), "heard {heard:?}");

    // The kept take remembers its key.
    let kept = keep_selected(&mut s, &ids);
    assert_eq!(kept["settings"]["shaping"]["key"], "F# major pentatonic");
    s.ledger.assert_clean("key and scale");
}

#[test]
fn a_held_attribute_stays_within_its_tolerance_on_every_take() {
    let (mut s, ids, shared) = demo_session();
    captured(&mut s, &ids, &shared);
    // Wide wander and the tightest leeway (×0.25: pitch range ±0.5 st, i.e.
    // the prompt's range exactly), so unheld takes do move the range.
    set(&mut s, ids::SPREAD, "1.5");
    set(&mut s, ids::TAKES, "6");
    set(&mut s, ids::HOLD_LEEWAY, "×0.25");
    let free = wait_for_set(&mut s, &shared, "six wide takes", |v| {
        v.steering
            .is_some_and(|m| m.takes == 6 && m.spread == 1.5 && m.leeway == 0.25)
    });
    let prompt_range = free.prompt_attributes.unwrap().pitch_range.unwrap();
    assert!(
        free.takes.iter().any(|t| t
            .attributes
            .pitch_range
            .is_none_or(|r| (r - prompt_range).abs() > 0.5)),
        "no unheld take moved the pitch range; the hold would prove nothing"
    );

    // Hold the range (slot 2 is the pitch range slider).
    set(&mut s, ids::HOLDS[1], "On");
    let v = wait_for_set(&mut s, &shared, "held takes", |v| v.report.holds.is_some());
    let holds = v.report.holds.as_ref().unwrap();
    assert_eq!(holds.held.len(), 1);
    assert_eq!(holds.held[0].attribute, Attribute::PitchRange);
    let tolerance = holds.held[0].tolerance;
    assert_eq!(tolerance, 0.5, "hold tolerance 2 st × leeway 0.25");
    assert_eq!(v.takes.len(), holds.found);
    for (i, t) in v.takes.iter().enumerate() {
        let r = t.attributes.pitch_range.expect("a held range is defined");
        assert!(
            (r - prompt_range).abs() <= tolerance + 1e-9,
            "take {}: range {r} vs prompt {prompt_range} (±{tolerance})",
            i + 1
        );
    }
    // The status says what holding cost: rejections and tries.
    let line = v
        .report
        .lines()
        .into_iter()
        .find(|l| l.text.starts_with("Holding pitch range"))
        .expect("a hold line in the report");
    assert!(
        line.text.contains(&format!("{} candidate", holds.rejected)),
        "{}",
        line.text
    );
    assert_eq!(line.warning, holds.missing > 0);
    if holds.limit_hit() {
        assert!(line.text.contains("limit"), "{}", line.text);
    }

    let kept = keep_selected(&mut s, &ids);
    assert_eq!(kept["settings"]["shaping"]["holds"][0][0], "pitch_range");
    s.ledger.assert_clean("holds");
}

#[test]
fn a_reachable_target_is_reached_and_an_unreachable_one_reported() {
    let (mut s, ids, shared) = demo_session();
    captured(&mut s, &ids, &shared);

    // A density the model certainly decodes: take 1 with the density slider
    // at +1, no wander. Aiming at it from 0, the search's doubling steps
    // (0.25, 0.5, 1) decode that same code.
    set(&mut s, ids::TAKES, "1");
    set(&mut s, ids::SPREAD, "0");
    set(&mut s, ids::AXES[0], "+1.00");
    let v = wait_for_set(&mut s, &shared, "the take at density +1", |v| {
        v.steering
            .is_some_and(|m| m.takes == 1 && m.spread == 0.0 && m.offsets[0] == 1.0)
    });
    let goal = v.takes[0].attributes.note_density.unwrap();
    set(&mut s, ids::AXES[0], "0.00");
    set(&mut s, ids::AIM_NOTES, &format!("{goal}"));
    set(&mut s, ids::AIM, "Note density");
    let v = wait_for_set(&mut s, &shared, "the aim", |v| {
        v.report
            .aim
            .as_ref()
            .is_some_and(|a| a.target.value == goal)
    });
    let aim = v.report.aim.as_ref().unwrap();
    assert_eq!(aim.outcome, Outcome::Reached, "{}", aim.summary);
    let got = v.takes[0].attributes.note_density.unwrap();
    assert!(
        (got - goal).abs() <= aim.target.tolerance,
        "{got} for {goal}"
    );
    assert!(aim.decodes <= aim.budget);
    let line = &v.report.lines()[0];
    assert!(
        line.text.starts_with("Reached note density"),
        "{}",
        line.text
    );
    assert!(!line.warning);
    let kept = keep_selected(&mut s, &ids);
    assert_eq!(kept["settings"]["shaping"]["aim"]["outcome"], "reached");

    // Out of reach: 32 notes in a bar of a grid with fewer steps than that.
    let steps = v.model.as_ref().unwrap().steps_per_measure;
    assert!(steps < 32, "the demo grid has {steps} steps per bar");
    set(&mut s, ids::AIM_NOTES, "32 notes");
    let v = wait_for_set(&mut s, &shared, "the unreachable aim", |v| {
        v.report
            .aim
            .as_ref()
            .is_some_and(|a| a.target.value == 32.0)
    });
    let aim = v.report.aim.as_ref().unwrap();
    assert_ne!(aim.outcome, Outcome::Reached, "{}", aim.summary);
    assert!(v.takes[0].attributes.note_density.unwrap() <= steps as f64);
    let line = &v.report.lines()[0];
    assert!(line.warning);
    assert!(line.text.contains("closest take measures"), "{}", line.text);
    s.ledger.assert_clean("aim");
}

#[test]
fn blend_ends_are_the_prompts_decode_and_the_kept_takes_decode() {
    let (mut s, ids, shared) = demo_session();
    captured(&mut s, &ids, &shared);
    let kept = keep_selected(&mut s, &ids);
    let kept_phrase: Phrase = serde_json::from_value(kept["phrase"].clone()).unwrap();
    let latent: Vec<f32> = kept["latent"]
        .as_array()
        .expect("a kept take saves its latent code")
        .iter()
        .map(|v| v.as_f64().unwrap() as f32)
        .collect();
    let prompt: Phrase =
        serde_json::from_value(saved_session(&mut s.plugin)["prompt"]["phrase"].clone()).unwrap();

    // The prompt's own decode, made by the plugin without any blend: no
    // wander, sliders at rest, one take.
    set(&mut s, ids::SPREAD, "0");
    set(&mut s, ids::TAKES, "1");
    let v = wait_for_set(&mut s, &shared, "the prompt's decode", |v| {
        v.steering.is_some_and(|m| m.takes == 1 && m.spread == 0.0)
    });
    let prompt_decode = v.takes[0].phrase.clone();

    set(&mut s, ids::TAKES, "4");
    set(&mut s, ids::BLEND_TOWARD, "Kept 1");
    set(&mut s, ids::BLEND, "100%");
    let v = wait_for_set(&mut s, &shared, "the blend at 100%", |v| {
        v.report.blend.as_ref().is_some_and(|b| b.amount == 1.0)
    });
    assert_eq!(
        v.takes[0].phrase, kept_phrase,
        "blend 100%: the kept take's decode"
    );
    assert!(v.takes.len() >= 2, "in-between takes fill the set");

    set(&mut s, ids::BLEND, "0%");
    let v = wait_for_set(&mut s, &shared, "the blend at 0%", |v| {
        v.report.blend.as_ref().is_some_and(|b| b.amount == 0.0)
    });
    assert_eq!(v.takes.len(), 1);
    assert_eq!(
        v.takes[0].phrase, prompt_decode,
        "blend 0%: the prompt's decode"
    );

    // The same ends from the engine itself (reference: the offline
    // `nudge blend` path), spherical too.
    let mut engine = Engine::new(nudgebar_demo_model::package()).unwrap();
    for kind in [Interpolation::Linear, Interpolation::Spherical] {
        let b = engine
            .blend(
                &prompt,
                &latent,
                &[0.0, 1.0],
                kind,
                &NoteChoice::Argmax,
                &PitchMask::default(),
            )
            .unwrap();
        assert_eq!(b.steps[0].take.phrase, prompt_decode, "{kind:?} at 0");
        assert_eq!(b.steps[1].take.phrase, kept_phrase, "{kind:?} at 1");
    }
    set(&mut s, ids::BLEND_PATH, "Spherical");
    set(&mut s, ids::BLEND, "100%");
    let v = wait_for_set(&mut s, &shared, "the spherical blend at 100%", |v| {
        v.report
            .blend
            .as_ref()
            .is_some_and(|b| b.amount == 1.0 && b.path == Interpolation::Spherical)
    });
    assert_eq!(v.takes[0].phrase, kept_phrase);
    s.ledger.assert_clean("blend");
}

#[test]
fn a_kept_take_saved_without_its_code_is_blended_toward_by_its_notes() {
    let (mut s, ids, shared) = demo_session();
    captured(&mut s, &ids, &shared);
    let kept = keep_selected(&mut s, &ids);
    let kept_phrase: Phrase = serde_json::from_value(kept["phrase"].clone()).unwrap();

    // Reopen the project as a session from before kept takes saved their
    // latent code (the field is simply absent).
    let mut blob = StateBlob::parse(&s.plugin.save_state().unwrap()).unwrap();
    let mut session = blob.field("session").unwrap();
    assert!(session["kept"][0]
        .as_object_mut()
        .unwrap()
        .remove("latent")
        .is_some());
    blob.set_field("session", &session);
    s.plugin.load_state(&blob.to_bytes()).unwrap();
    assert_eq!(kept_phrases(&mut s.plugin), vec![kept_phrase.clone()]);

    set(&mut s, ids::BLEND_TOWARD, "Kept 1");
    set(&mut s, ids::BLEND, "100%");
    let v = wait_for_set(&mut s, &shared, "a blend toward the code-less take", |v| {
        v.report
            .blend
            .as_ref()
            .is_some_and(|b| b.amount == 1.0 && b.reencoded)
    });
    assert!(v.request_error.is_none(), "{:?}", v.request_error);
    let line = v
        .report
        .lines()
        .into_iter()
        .find(|l| l.text.starts_with("Blending"))
        .expect("a blend line");
    assert!(line.text.contains("notes were encoded"), "{}", line.text);
    // Blending toward it still makes takes in the prompt's metre.
    assert!(v
        .takes
        .iter()
        .all(|t| t.phrase.time_signature == kept_phrase.time_signature));
    s.ledger.assert_clean("blend toward an older take");
}
