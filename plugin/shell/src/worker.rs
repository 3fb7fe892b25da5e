//! The background thread that owns the model.
//!
//! It loads models (the built-in demo model, or a package folder the user
//! chose), turns captured prompts and slider settings into takes with the
//! engine, keeps and exports takes, and publishes what it knows for the
//! editor. Nothing here runs on the audio thread; the audio thread talks to
//! it only through `link.rs`.
//!
//! Slider changes coalesce by construction: the worker reads the parameters
//! (atomics) whenever it is free and compares them with the settings of the
//! takes it made last, so however fast a slider moves, only the latest
//! position is ever computed and no queue grows.
//!
//! Faults: model loading and inference run under `catch_unwind`. A panic
//! or error becomes a sentence in the view; a failed load keeps the previous
//! model; after an inference panic the model is rebuilt from its package.

use crate::buffers::{PromptCapture, TakeSet};
use crate::export;
use crate::link::{Command, WorkerLink};
use crate::params::{AxisBinding, NudgebarParams, Steering};
use crate::shaping::{self, BlendTarget, SetReport};
use crate::state::{KeptTake, SavedPrompt, TakeSettings, MAX_KEPT};
use crate::status::{AxisView, ModelView, Shared, TakeView};
use crossbeam_channel::select;
use nudgebar_engine::{Engine, ModelError, ModelPackage, Variation};
use nudgebar_music::Phrase;
use std::collections::VecDeque;
use std::panic::{catch_unwind, AssertUnwindSafe};
use std::path::{Path, PathBuf};
use std::sync::atomic::{AtomicBool, Ordering};
use std::sync::Arc;
use std::thread::JoinHandle;
use std::time::Duration;

/// How often an idle worker looks at the sliders and the session: fast
/// enough that a dragged slider feels immediate (one 60 Hz frame).
const POLL: Duration = Duration::from_millis(15);

/// Take sets kept for reuse; extra ones returned by the audio thread are freed.
const POOL: usize = 3;

/// Recent requests remembered so "keep" can find the take the composer heard
/// even if a newer set has just been made.
const RECENT: usize = 4;

/// Where the built-in model comes from (the embedded demo model in the
/// plugin; tests may supply their own).
pub type BuiltinModel = Arc<dyn Fn() -> Result<ModelPackage, ModelError> + Send + Sync>;

/// The running worker; stopping and joining happen on drop, on the thread
/// that drops the plugin (never the audio thread).
pub struct WorkerHandle {
    stop: Arc<AtomicBool>,
    thread: Option<JoinHandle<()>>,
}

impl Drop for WorkerHandle {
    fn drop(&mut self) {
        self.stop.store(true, Ordering::Release);
        if let Some(t) = self.thread.take() {
            // Joined so the thread is gone before the plugin's library can
            // be unloaded; it notices `stop` within one POLL or one request.
            let _ = t.join();
        }
    }
}

/// Starts the worker thread.
pub fn spawn(
    link: WorkerLink,
    params: Arc<NudgebarParams>,
    shared: Arc<Shared>,
    builtin: BuiltinModel,
) -> WorkerHandle {
    let stop = Arc::new(AtomicBool::new(false));
    let flag = stop.clone();
    let thread = std::thread::Builder::new()
        .name("nudgebar-worker".into())
        .spawn(move || Worker::new(link, params, shared, builtin).run(&flag))
        .ok();
    WorkerHandle { stop, thread }
}

/// A request as made: the variation and the settings that made it.
struct Made {
    generation: u64,
    variation: Variation,
    steering: Steering,
    offsets: Vec<(String, f32)>,
    tempo: f64,
    /// How it was shaped beyond the sliders.
    report: SetReport,
}

/// Everything a take set depends on: when any of it changes, new takes.
#[derive(Debug, Clone, Copy, PartialEq)]
struct RequestKey {
    prompt: u64,
    model: u64,
    steering: Steering,
    /// Fingerprint of the kept take a blend heads for (a blend is remade
    /// when that take is removed or reloaded).
    blend_target: Option<u64>,
}

struct Worker {
    link: WorkerLink,
    params: Arc<NudgebarParams>,
    shared: Arc<Shared>,
    builtin: BuiltinModel,
    engine: Option<Engine>,
    /// Folder of the active model (`None`: built-in).
    model_folder: Option<PathBuf>,
    /// Bumped on every model change.
    model_version: u64,
    prompt: Option<SavedPrompt>,
    /// MIDI channel the prompt was played on; takes play on it too.
    channel: u8,
    prompt_version: u64,
    /// Host loads of the session already taken in.
    seen_loads: u64,
    /// What the latest takes were made from.
    last_request: Option<RequestKey>,
    generation: u64,
    recent: VecDeque<Made>,
    pool: Vec<Box<TakeSet>>,
    view: crate::status::WorkerView,
}

impl Worker {
    fn new(
        link: WorkerLink,
        params: Arc<NudgebarParams>,
        shared: Arc<Shared>,
        builtin: BuiltinModel,
    ) -> Worker {
        Worker {
            link,
            params,
            shared,
            builtin,
            engine: None,
            model_folder: None,
            model_version: 0,
            prompt: None,
            channel: 0,
            prompt_version: 0,
            seen_loads: u64::MAX,
            last_request: None,
            generation: 0,
            recent: VecDeque::new(),
            pool: Vec::new(),
            view: Default::default(),
        }
    }

    fn run(mut self, stop: &AtomicBool) {
        while !stop.load(Ordering::Acquire) {
            self.sync_session();
            self.refresh();
            let wait = if self.wants_request() {
                Duration::ZERO
            } else {
                POLL
            };
            select! {
                recv(self.link.commands) -> c => match c {
                    Ok(c) => self.command(c),
                    // The plugin is gone.
                    Err(_) => return,
                },
                recv(self.link.prompts) -> p => if let Ok(p) = p { self.captured(p) },
                recv(self.link.spent) -> s => if let Ok(s) = s { self.reclaim(s) },
                default(wait) => {}
            }
        }
    }

    // ----- session and model -----

    /// Takes in a session the host loaded (prompt, model folder, report).
    fn sync_session(&mut self) {
        let loads = self.params.session.loads();
        if loads == self.seen_loads {
            return;
        }
        let first = self.seen_loads == u64::MAX;
        self.seen_loads = loads;
        let (prompt, folder, report) = self.params.session.read(|s| {
            (
                s.prompt.clone(),
                s.model_path.clone(),
                s.load_report.clone(),
            )
        });
        if prompt.is_some() || !first {
            self.prompt = prompt;
            self.prompt_version += 1;
        }
        self.view.messages = report;
        let folder = folder.map(PathBuf::from);
        if self.engine.is_none() || folder != self.model_folder {
            if let Err(e) = self.load_model(folder.clone()) {
                let fallback = if self.engine.is_none() && folder.is_some() {
                    self.load_model(None).err()
                } else {
                    None
                };
                self.view.model_error = Some(match fallback {
                    None if folder.is_some() => format!("{e} The saved model folder is kept in the project, so it loads again once it is back."),
                    None => e,
                    Some(e2) => format!("{e} The built-in model could not be loaded either: {e2}"),
                });
            }
        }
        self.publish();
    }

    /// Loads a model package (`None`: the built-in one). On failure the
    /// current model stays and the error sentence is returned.
    fn load_model(&mut self, folder: Option<PathBuf>) -> Result<(), String> {
        self.shared.busy.store(true, Ordering::Release);
        let builtin = self.builtin.clone();
        let outcome = catch_unwind(AssertUnwindSafe(|| {
            let package = match &folder {
                Some(f) => ModelPackage::load(f)?,
                None => builtin()?,
            };
            Engine::new(package)
        }));
        self.shared.busy.store(false, Ordering::Release);
        let engine = match outcome {
            Ok(Ok(engine)) => engine,
            Ok(Err(e)) => return Err(format!("{e} The previous model stays in use.")),
            Err(panic) => {
                return Err(format!(
                    "Loading the model crashed ({}); the previous model stays in use. The package is probably damaged.",
                    panic_text(&panic)
                ))
            }
        };
        let attributes: Vec<_> = engine.axes().iter().map(|a| a.attribute).collect();
        let binding = AxisBinding::for_axes(&attributes);
        self.view.model = Some(ModelView {
            identity: engine.identity().clone(),
            description: engine.manifest().description.clone(),
            folder: folder.clone(),
            axes: engine
                .axes()
                .iter()
                .enumerate()
                .map(|(i, a)| AxisView {
                    attribute: a.attribute,
                    label: a.label.clone(),
                    span: a.span,
                    slot: binding.slot_of(i),
                    hole_rate: a.hole_rate.clone(),
                })
                .collect(),
            steps_per_measure: engine.manifest().grid.steps_per_measure,
        });
        self.view.model_error = None;
        self.engine = Some(engine);
        self.model_folder = folder;
        self.model_version += 1;
        Ok(())
    }

    // ----- takes -----

    fn wants_request(&self) -> bool {
        self.engine.is_some()
            && self.prompt.is_some()
            && self.last_request != Some(self.request_key())
    }

    /// The request the current settings ask for: what the takes depend on.
    fn request_key(&self) -> RequestKey {
        let steering = self.params.steering();
        RequestKey {
            prompt: self.prompt_version,
            model: self.model_version,
            steering,
            blend_target: steering.blend.map(|b| self.kept_fingerprint(b.toward)),
        }
    }

    /// A fingerprint of kept take `index` (0 when there is none), so a blend
    /// is remade when the take it heads for changes (removed, reloaded).
    fn kept_fingerprint(&self, index: usize) -> u64 {
        use std::hash::{Hash, Hasher};
        self.params.session.read(|s| {
            let Some(k) = s.kept.get(index) else {
                return 0;
            };
            let mut h = std::collections::hash_map::DefaultHasher::new();
            k.name.hash(&mut h);
            for v in &k.latent {
                v.to_bits().hash(&mut h);
            }
            for n in &k.phrase.notes {
                (n.pitch, n.onset.to_bits(), n.duration.to_bits()).hash(&mut h);
            }
            h.finish() | 1
        })
    }

    /// The kept take a blend heads for, with its latent code when it was
    /// made by the model loaded now.
    fn blend_target(&self, index: usize) -> Option<BlendTarget> {
        let fingerprint = self.engine.as_ref()?.identity().fingerprint.clone();
        self.params.session.read(|s| {
            s.kept.get(index).map(|k| BlendTarget {
                index,
                name: k.name.clone(),
                latent: if k.model.fingerprint == fingerprint {
                    k.latent.iter().map(|v| *v as f32).collect()
                } else {
                    Vec::new()
                },
                phrase: k.phrase.clone(),
            })
        })
    }

    /// Makes takes if the prompt, model or sliders changed since last time.
    fn refresh(&mut self) {
        if !self.wants_request() {
            return;
        }
        let key = self.request_key();
        // Recorded before running: a failing request is not retried in a
        // loop, only when something changes (or on Regenerate).
        self.last_request = Some(key);
        let steering = key.steering;
        let blend_target = steering.blend.and_then(|b| self.blend_target(b.toward));
        let (Some(engine), Some(prompt)) = (self.engine.as_mut(), self.prompt.as_ref()) else {
            return;
        };
        let attributes: Vec<_> = engine.axes().iter().map(|a| a.attribute).collect();
        let offsets =
            AxisBinding::for_axes(&attributes).offsets(&steering.offsets, attributes.len());
        let named: Vec<(String, f32)> = attributes
            .iter()
            .zip(&offsets)
            .map(|(a, o)| (a.key().to_string(), *o))
            .collect();
        let planned = shaping::plan(&steering, &attributes, blend_target);

        self.shared.busy.store(true, Ordering::Release);
        let phrase = prompt.phrase.clone();
        let tempo = prompt.tempo;
        let outcome = catch_unwind(AssertUnwindSafe(|| shaping::run(engine, &phrase, &planned)));
        self.shared.busy.store(false, Ordering::Release);
        match outcome {
            Ok(Ok((variation, report))) => self.deliver(variation, steering, named, tempo, report),
            Ok(Err(e)) => {
                self.view.request_error = Some(e.to_string());
                self.publish();
            }
            Err(panic) => {
                self.view.request_error = Some(format!(
                    "The model failed while making takes ({}); MIDI keeps passing and your prompt and kept takes are safe. Try other settings or another model.",
                    panic_text(&panic)
                ));
                // The engine may have been left mid-run: rebuild it.
                let package = self.engine.take().map(|e| e.package().clone());
                if let Some(Ok(Ok(engine))) =
                    package.map(|p| catch_unwind(AssertUnwindSafe(|| Engine::new(p))))
                {
                    self.engine = Some(engine);
                } else {
                    let _ = self.load_model(None);
                }
                self.publish();
            }
        }
    }

    /// Sends a new set to the audio thread and shows it.
    fn deliver(
        &mut self,
        variation: Variation,
        steering: Steering,
        offsets: Vec<(String, f32)>,
        tempo: f64,
        report: SetReport,
    ) {
        self.generation += 1;
        let mut set = self.pool.pop().unwrap_or_else(TakeSet::boxed);
        let phrases: Vec<&Phrase> = variation.takes.iter().map(|t| &t.phrase).collect();
        let cut = set.fill(
            self.generation,
            variation.prompt.time_signature,
            variation.prompt.measures,
            &phrases,
            self.channel,
        );
        // Coalesce: a set the audio thread has not picked up is replaced.
        while let Ok(stale) = self.link.takes_back.try_recv() {
            self.reclaim(stale);
        }
        if let Err(e) = self.link.takes.try_send(set) {
            self.reclaim(e.into_inner());
        }

        self.view.generation = self.generation;
        self.view.takes = variation
            .takes
            .iter()
            .map(|t| TakeView {
                phrase: t.phrase.clone(),
                attributes: t.attributes.clone(),
                change: t.change.clone(),
            })
            .collect();
        self.view.steering = Some(steering);
        self.view.report = report.clone();
        self.view.prompt = Some(variation.prompt.clone());
        self.view.prompt_attributes = Some(variation.prompt_attributes.clone());
        self.view.adjustments = variation.adjustments.sentences();
        self.view.holes = variation.holes.clone();
        self.view.request_error = (cut > 0).then(|| format!("{cut} notes did not fit the playback buffer and are not heard (they are still kept and exported)."));
        self.recent.push_back(Made {
            generation: self.generation,
            variation,
            steering,
            offsets,
            tempo,
            report,
        });
        while self.recent.len() > RECENT {
            self.recent.pop_front();
        }
        self.publish();
    }

    fn reclaim(&mut self, set: Box<TakeSet>) {
        if self.pool.len() < POOL {
            self.pool.push(set);
        }
        // Otherwise it is freed here, on the worker.
    }

    // ----- prompts and commands -----

    fn captured(&mut self, capture: PromptCapture) {
        if capture.notes.is_empty() {
            self.view.messages = vec!["The captured bars were silent, so the previous prompt is kept. Play something and capture again.".into()];
            self.publish();
            return;
        }
        let mut counts = [0u32; 16];
        for n in &capture.notes {
            counts[n.channel as usize & 15] += 1;
        }
        self.channel = (0..16)
            .max_by_key(|&c| (counts[c], std::cmp::Reverse(c)))
            .unwrap_or(0) as u8;
        let mut messages = Vec::new();
        if capture.notes_cut > 0 {
            messages.push(
                "More notes were played than a prompt holds; the latest ones were left out."
                    .to_string(),
            );
        }
        self.view.messages = messages;
        self.set_prompt(capture.to_phrase(), capture.tempo);
    }

    fn set_prompt(&mut self, phrase: Phrase, tempo: f64) {
        let saved = SavedPrompt { phrase, tempo };
        self.params.session.edit(|s| s.prompt = Some(saved.clone()));
        self.prompt = Some(saved);
        self.prompt_version += 1;
        self.publish();
    }

    fn command(&mut self, command: Command) {
        match command {
            Command::Keep { generation, take } => self.keep(generation, take),
            Command::Forget { index } => {
                let removed = self
                    .params
                    .session
                    .edit(|s| (index < s.kept.len()).then(|| s.kept.remove(index)));
                self.view.messages = vec![match removed {
                    Some(t) => format!("\"{}\" was removed from the kept takes.", t.name),
                    None => "There is no such kept take.".into(),
                }];
            }
            Command::Export => self.export(&export::export_folder()),
            Command::LoadModel(folder) => match self.load_model(Some(folder.clone())) {
                Ok(()) => self
                    .params
                    .session
                    .edit(|s| s.model_path = Some(folder.to_string_lossy().into_owned())),
                Err(e) => self.view.model_error = Some(e),
            },
            Command::UseBuiltinModel => match self.load_model(None) {
                Ok(()) => self.params.session.edit(|s| s.model_path = None),
                Err(e) => self.view.model_error = Some(e),
            },
            Command::SetPrompt { phrase, tempo } => self.set_prompt(phrase, tempo),
            Command::Regenerate => self.last_request = None,
        }
        self.publish();
    }

    fn keep(&mut self, generation: u64, take: usize) {
        let Some(made) = self.recent.iter().find(|m| m.generation == generation) else {
            self.view.messages = vec![
                "That set of takes has been replaced; select the take again and keep it.".into(),
            ];
            return;
        };
        let Some(t) = made.variation.takes.get(take) else {
            self.view.messages = vec![format!(
                "There is no take {} in this set (it has {}).",
                take + 1,
                made.variation.takes.len()
            )];
            return;
        };
        let Some(model) = self.engine.as_ref().map(|e| e.identity().clone()) else {
            return;
        };
        let kept = KeptTake {
            name: format!("Take {} · seed {}", take + 1, made.steering.seed),
            phrase: t.phrase.clone(),
            settings: TakeSettings {
                offsets: made.offsets.clone(),
                takes: made.steering.takes,
                spread: made.steering.spread,
                seed: made.steering.seed,
                index: take,
                shaping: made.report.record(),
            },
            latent: t.latent.iter().map(|v| *v as f64).collect(),
            stream: t.stream,
            model,
            attributes: t.attributes.clone(),
            change: t.change.clone(),
            tempo: made.tempo,
        };
        let message = self.params.session.edit(|s| {
            if s.kept
                .iter()
                .any(|k| k.phrase == kept.phrase && k.settings == kept.settings)
            {
                "This take is already kept.".to_string()
            } else if s.kept.len() >= MAX_KEPT {
                format!("{MAX_KEPT} takes are kept already; export and remove some first.")
            } else {
                let name = format!("{} (#{})", kept.name, s.kept.len() + 1);
                s.kept.push(KeptTake {
                    name: name.clone(),
                    ..kept
                });
                format!("Kept \"{name}\".")
            }
        });
        self.view.messages = vec![message];
    }

    fn export(&mut self, folder: &Path) {
        let kept = self.params.session.read(|s| s.kept.clone());
        match export::export_kept(&kept, folder) {
            Ok(files) => {
                self.view.messages = vec![format!(
                    "{} kept take(s) written to {}.",
                    files.len(),
                    folder.display()
                )];
                self.view.exported = files;
            }
            Err(e) => self.view.messages = vec![e.to_string()],
        }
    }

    fn publish(&self) {
        self.shared.publish(self.view.clone());
    }
}

/// The text of a caught panic.
fn panic_text(panic: &Box<dyn std::any::Any + Send>) -> String {
    if let Some(s) = panic.downcast_ref::<&str>() {
        s.to_string()
    } else if let Some(s) = panic.downcast_ref::<String>() {
        s.clone()
    } else {
        "an internal error".to_string()
    }
}
