//! The worker thread end to end, without a host: a captured prompt in, take
//! sets out on the audio thread's channel, keep, export to real MIDI files,
//! model loading and its failures, slider coalescing.

mod support;

use arrayvec::ArrayVec;
use nice_plug::prelude::Params;
use nudgebar::buffers::{CaptureKind, PromptCapture, RtNote, TakeSet};
use nudgebar::link::{channels, Command};
use nudgebar::params::NudgebarParams;
use nudgebar::status::{Shared, WorkerView};
use nudgebar::worker::{spawn, BuiltinModel};
use nudgebar_engine::{Engine, VariationRequest};
use nudgebar_music::midi_file::read_smf;
use nudgebar_music::TimeSignature;
use std::sync::Arc;
use std::time::{Duration, Instant};

fn builtin() -> BuiltinModel {
    Arc::new(|| Ok(support::package()))
}

/// Waits until the published view satisfies `done` (or fails after 60 s:
/// tract plans for the tiny model build in milliseconds, but CI is shared).
fn wait_for(shared: &Shared, what: &str, done: impl Fn(&WorkerView) -> bool) -> Arc<WorkerView> {
    let start = Instant::now();
    loop {
        let view = shared.view();
        if done(&view) {
            return view;
        }
        assert!(
            start.elapsed() < Duration::from_secs(60),
            "timed out waiting for {what}: {view:#?}"
        );
        std::thread::sleep(Duration::from_millis(5));
    }
}

fn prompt() -> PromptCapture {
    let mut notes = ArrayVec::new();
    for (i, key) in [60u8, 64, 67, 65, 62].iter().enumerate() {
        notes.push(RtNote {
            start: i as f64 * 0.75,
            length: 0.5,
            key: *key,
            velocity: 96,
            channel: 3,
        });
    }
    PromptCapture {
        kind: CaptureKind::Armed,
        time_signature: TimeSignature::FOUR_FOUR,
        bars: 1,
        tempo: 104.0,
        notes,
        notes_cut: 0,
    }
}

fn set_param(params: &NudgebarParams, id: &str, plain: f32) {
    for (pid, ptr, _) in params.param_map() {
        if pid == id {
            unsafe { ptr._internal_set_normalized_value(ptr.preview_normalized(plain)) };
            return;
        }
    }
    panic!("no parameter {id}");
}

#[test]
fn a_captured_prompt_becomes_takes_that_can_be_kept_and_exported() {
    let (mut audio, worker_link, commands) = channels();
    let params = Arc::new(NudgebarParams::default());
    let shared = Arc::new(Shared::default());
    set_param(&params, "takes", 5.0);
    let takes_rx = worker_link.takes_back.clone();
    let handle = spawn(worker_link, params.clone(), shared.clone(), builtin());
    wait_for(&shared, "the model", |v| v.model.is_some());

    audio.send_prompt(prompt());
    let view = wait_for(&shared, "takes", |v| !v.takes.is_empty());
    // The set on the audio channel is the one the view shows.
    let set: Box<TakeSet> = takes_rx
        .recv_timeout(Duration::from_secs(10))
        .expect("a take set");
    assert_eq!(set.generation, view.generation);
    assert_eq!(set.takes.len(), view.takes.len());
    assert!((1..=5).contains(&view.takes.len()));
    for (rt, take) in set.takes.iter().zip(&view.takes) {
        assert_eq!(rt.notes.len(), take.phrase.notes.len());
        for (a, b) in rt.notes.iter().zip(&take.phrase.notes) {
            assert_eq!((a.key, a.start, a.length), (b.pitch, b.onset, b.duration));
            assert_eq!(a.channel, 3, "takes play on the prompt's channel");
        }
    }
    // The prompt is saved in the session.
    assert_eq!(
        params.session.read(|s| s.prompt.as_ref().map(|p| p.tempo)),
        Some(104.0)
    );

    // Reproducible: the engine itself, given the same prompt and settings,
    // makes the same takes (same order, same notes).
    let mut engine = Engine::new(support::package()).unwrap();
    let direct = engine
        .vary(
            &prompt().to_phrase(),
            &VariationRequest {
                offsets: vec![0.0; 4],
                takes: 5,
                spread: 0.5,
                seed: 1,
                ..Default::default()
            },
        )
        .unwrap();
    let direct: Vec<_> = direct.takes.iter().map(|t| t.phrase.clone()).collect();
    let shown: Vec<_> = view.takes.iter().map(|t| t.phrase.clone()).collect();
    assert_eq!(shown, direct);

    // Keep the last take (twice: the second is refused as a duplicate), then
    // export. (Random weights make few distinct takes, so "last" may be 0.)
    let last = view.takes.len() - 1;
    commands
        .send(Command::Keep {
            generation: view.generation,
            take: last,
        })
        .unwrap();
    commands
        .send(Command::Keep {
            generation: view.generation,
            take: last,
        })
        .unwrap();
    wait_for(&shared, "the duplicate keep", |v| {
        v.messages.iter().any(|m| m.contains("already kept"))
    });
    let kept = params.session.read(|s| s.kept.clone());
    assert_eq!(kept.len(), 1);
    assert_eq!(kept[0].phrase, view.takes[last].phrase);
    assert_eq!(kept[0].settings.index, last);
    assert_eq!(kept[0].tempo, 104.0);

    let out = std::env::temp_dir().join(format!("nudgebar-export-{}", std::process::id()));
    let _ = std::fs::remove_dir_all(&out);
    let files = nudgebar::export::export_kept(&kept, &out).unwrap();
    assert_eq!(files.len(), 1);
    let import = read_smf(&std::fs::read(&files[0]).unwrap()).unwrap();
    // 104 BPM → 576,923 µs per quarter (SMF tempo meta event, rounded).
    assert_eq!(import.tempo_us_per_quarter, 576_923);
    assert_eq!(import.phrase.notes.len(), kept[0].phrase.notes.len());
    for (a, b) in import.phrase.notes.iter().zip(&kept[0].phrase.notes) {
        assert_eq!(a.pitch, b.pitch);
        assert!((a.onset - b.onset).abs() < 1e-9 && (a.duration - b.duration).abs() < 1e-9);
    }
    // Exporting again writes the same file, not a copy.
    assert_eq!(nudgebar::export::export_kept(&kept, &out).unwrap(), files);
    std::fs::remove_dir_all(&out).unwrap();
    drop(handle);
    drop(audio);
}

#[test]
fn a_bad_model_folder_keeps_the_previous_model_and_says_why() {
    let (audio, worker_link, commands) = channels();
    let params = Arc::new(NudgebarParams::default());
    let shared = Arc::new(Shared::default());
    let handle = spawn(worker_link, params.clone(), shared.clone(), builtin());
    let before = wait_for(&shared, "the model", |v| v.model.is_some())
        .model
        .clone()
        .unwrap();

    let missing = std::env::temp_dir().join("nudgebar-no-such-model-folder");
    commands.send(Command::LoadModel(missing.clone())).unwrap();
    let view = wait_for(&shared, "the load error", |v| v.model_error.is_some());
    let error = view.model_error.clone().unwrap();
    assert!(
        error.contains("nudgebar-no-such-model-folder") && error.contains("previous model stays"),
        "{error}"
    );
    assert_eq!(view.model.as_ref().unwrap(), &before);
    assert_eq!(
        params.session.read(|s| s.model_path.clone()),
        None,
        "a failed choice is not saved"
    );

    // A good folder loads and is remembered.
    let good = std::env::temp_dir().join(format!("nudgebar-good-model-{}", std::process::id()));
    support::write_folder(&good);
    commands.send(Command::LoadModel(good.clone())).unwrap();
    let view = wait_for(&shared, "the folder model", |v| {
        v.model.as_ref().is_some_and(|m| m.folder.is_some())
    });
    assert!(view.model_error.is_none());
    assert_eq!(
        params.session.read(|s| s.model_path.clone()),
        Some(good.to_string_lossy().into_owned())
    );
    std::fs::remove_dir_all(&good).unwrap();
    drop(handle);
    drop(audio);
}

#[test]
fn a_panicking_model_loader_is_caught_and_reported() {
    let (audio, worker_link, _commands) = channels();
    let params = Arc::new(NudgebarParams::default());
    let shared = Arc::new(Shared::default());
    // A project with a prompt and two kept takes (the committed blob of
    // session version 1), opened before the worker starts.
    let blob: serde_json::Value = serde_json::from_str(
        &std::fs::read_to_string(
            std::path::Path::new(env!("CARGO_MANIFEST_DIR"))
                .join("../../tests/fixtures/state/session-v1.json"),
        )
        .unwrap(),
    )
    .unwrap();
    let session = nudgebar::state::SessionState::load_lenient(
        blob["fields"]["session"].as_str().unwrap(),
    );
    assert_eq!(session.kept.len(), 2);
    params.session.load(session.clone());
    let panicking: BuiltinModel = Arc::new(|| panic!("weights on fire"));
    let handle = spawn(worker_link, params.clone(), shared.clone(), panicking);
    let view = wait_for(&shared, "the error", |v| v.model_error.is_some());
    let error = view.model_error.clone().unwrap();
    assert!(
        error.contains("crashed") && error.contains("weights on fire"),
        "{error}"
    );
    assert!(view.model.is_none());
    drop(handle);
    drop(audio);
    // Nothing of the project was lost to the crash: the prompt and kept
    // takes are still there and still what the host would save.
    params.session.read(|now| {
        assert_eq!(now.prompt, session.prompt);
        assert_eq!(now.kept, session.kept);
    });
}

#[test]
fn dragging_a_slider_coalesces_to_the_latest_value() {
    let (mut audio, worker_link, _commands) = channels();
    let params = Arc::new(NudgebarParams::default());
    let shared = Arc::new(Shared::default());
    let takes_back = worker_link.takes_back.clone();
    let handle = spawn(worker_link, params.clone(), shared.clone(), builtin());
    wait_for(&shared, "the model", |v| v.model.is_some());
    audio.send_prompt(prompt());
    wait_for(&shared, "takes", |v| !v.takes.is_empty());

    // A drag: 200 slider positions, one per millisecond — faster than any
    // request can run, so most must be skipped, never queued.
    for i in 0..200 {
        set_param(&params, "axis1", -1.0 + i as f32 / 100.0);
        std::thread::sleep(Duration::from_millis(1));
        assert!(
            takes_back.len() <= 1,
            "the takes channel holds at most one set"
        );
    }
    let final_value = params.axis1.value();
    // Once the worker is idle again, the takes shown are those of the final value.
    std::thread::sleep(Duration::from_millis(300));
    let view = wait_for(&shared, "idle", |_| {
        !shared.busy.load(std::sync::atomic::Ordering::Acquire)
    });
    let mut engine = Engine::new(support::package()).unwrap();
    let direct = engine
        .vary(
            &prompt().to_phrase(),
            &VariationRequest {
                offsets: vec![final_value, 0.0, 0.0, 0.0],
                takes: 4,
                spread: 0.5,
                seed: 1,
                ..Default::default()
            },
        )
        .unwrap();
    let shown: Vec<_> = view.takes.iter().map(|t| t.phrase.clone()).collect();
    let direct: Vec<_> = direct.takes.iter().map(|t| t.phrase.clone()).collect();
    assert_eq!(shown, direct);
    assert!(
        view.generation < 200,
        "coalesced: {} sets for 200 positions",
        view.generation
    );
    drop(handle);
}

#[test]
fn a_session_loaded_by_the_host_brings_its_prompt_and_model_folder() {
    use nudgebar::state::{SavedPrompt, SessionState};
    let (audio, worker_link, _commands) = channels();
    let params = Arc::new(NudgebarParams::default());
    let shared = Arc::new(Shared::default());
    let handle = spawn(worker_link, params.clone(), shared.clone(), builtin());
    wait_for(&shared, "the model", |v| v.model.is_some());

    // A project saved with a model folder that exists: its model and prompt come back.
    let folder =
        std::env::temp_dir().join(format!("nudgebar-session-model-{}", std::process::id()));
    support::write_folder(&folder);
    let saved = SessionState {
        prompt: Some(SavedPrompt {
            phrase: prompt().to_phrase(),
            tempo: 88.0,
        }),
        model_path: Some(folder.to_string_lossy().into_owned()),
        ..SessionState::default()
    };
    params.session.load(saved.clone());
    let view = wait_for(&shared, "takes from the loaded prompt", |v| {
        !v.takes.is_empty() && v.model.as_ref().is_some_and(|m| m.folder.is_some())
    });
    assert_eq!(
        view.prompt.as_ref().unwrap().notes.len(),
        prompt().notes.len()
    );
    // Loading does not rewrite the session: a save right after gives it back.
    assert_eq!(params.session.read(|s| s.clone()), saved);

    // A project whose model folder has gone missing: the folder stays in
    // the session (so nothing is lost when the drive comes back) and the
    // user is told.
    std::fs::remove_dir_all(&folder).unwrap();
    params.session.load(SessionState {
        model_path: Some("/nonexistent/nudgebar-model".into()),
        ..saved
    });
    let view = wait_for(&shared, "the missing-folder error", |v| {
        v.model_error.is_some()
    });
    assert!(
        view.model_error
            .as_ref()
            .unwrap()
            .contains("kept in the project"),
        "{:?}",
        view.model_error
    );
    assert_eq!(
        params.session.read(|s| s.model_path.clone()).as_deref(),
        Some("/nonexistent/nudgebar-model")
    );
    drop(handle);
    drop(audio);
}
