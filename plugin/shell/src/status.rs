//! What the editor (and tests) can see of a running instance, read-only.
//!
//! Two parts, for the two threads that know things:
//! - the worker publishes a [`WorkerView`] — model, prompt, takes, errors —
//!   as an immutable `Arc` swapped in under a mutex. Readers clone the `Arc`
//!   (a pointer copy under a briefly held lock) and read at leisure. Only
//!   the worker and the editor take this lock; the audio thread never does.
//! - the audio thread publishes a few facts as atomics ([`AudioFacts`]):
//!   capture progress, what is playing, events the host could not take.

use crate::capture::CaptureStatus;
use crate::params::Steering;
use crate::shaping::SetReport;
use nudgebar_engine::{HoleReport, ModelIdentity};
use nudgebar_music::attributes::{Attribute, Readout};
use nudgebar_music::Phrase;
use parking_lot::Mutex;
use std::path::PathBuf;
use std::sync::atomic::{AtomicBool, AtomicU32, AtomicU64, Ordering};
use std::sync::{Arc, Weak};

/// One control axis of the loaded model, as the editor labels it.
#[derive(Debug, Clone, PartialEq)]
pub struct AxisView {
    pub attribute: Attribute,
    pub label: String,
    pub span: f32,
    /// Slider slot (0–5) that drives it, if any.
    pub slot: Option<usize>,
    /// Hole rate across the slider range, from the model report (may be empty).
    pub hole_rate: Vec<f32>,
}

/// The model in use.
#[derive(Debug, Clone, PartialEq)]
pub struct ModelView {
    pub identity: ModelIdentity,
    pub description: String,
    /// `None` for the built-in demo model.
    pub folder: Option<PathBuf>,
    pub axes: Vec<AxisView>,
    pub steps_per_measure: usize,
}

/// One take of the current set.
#[derive(Debug, Clone, PartialEq)]
pub struct TakeView {
    pub phrase: Phrase,
    pub attributes: Readout,
    pub change: Readout,
}

/// The worker's latest word.
#[derive(Debug, Clone, Default, PartialEq)]
pub struct WorkerView {
    pub model: Option<ModelView>,
    /// Why the last model load failed (the previous model stays in use).
    pub model_error: Option<String>,
    /// The prompt as the model saw it (quantized), with its attributes.
    pub prompt: Option<Phrase>,
    pub prompt_attributes: Option<Readout>,
    /// What fitting the prompt to the model changed, as sentences.
    pub adjustments: Vec<String>,
    /// Generation of the take set these takes belong to (matches the audio side).
    pub generation: u64,
    pub takes: Vec<TakeView>,
    /// The settings these takes were made with.
    pub steering: Option<Steering>,
    /// How the set was shaped beyond the sliders (key, holds, aim, blend).
    pub report: SetReport,
    pub holes: HoleReport,
    /// Why the last request failed (inference error or a caught panic).
    pub request_error: Option<String>,
    /// Other things the user should read: what a state load dropped, a keep
    /// or export result.
    pub messages: Vec<String>,
    /// Files written by the last export.
    pub exported: Vec<PathBuf>,
}

/// Facts the audio thread publishes, as atomics.
#[derive(Debug, Default)]
pub struct AudioFacts {
    /// Encoded [`CaptureStatus`]: 0 idle, 1 waiting, 2 recording.
    capture: AtomicU32,
    /// Bar being recorded (1-based) and of how many, when recording.
    capture_bar: AtomicU32,
    /// Count of "use last bars" requests that found nothing played.
    pub grabs_empty: AtomicU32,
    /// Count of prompts handed to the worker.
    pub prompts_sent: AtomicU32,
    /// Generation of the take set the audio thread holds.
    pub generation: AtomicU64,
    /// Output events the host's queue refused (should stay 0).
    pub events_refused: AtomicU32,
    /// Keep requests the worker queue refused (full; retry).
    pub keeps_refused: AtomicU32,
    /// True while a take is sounding.
    pub auditioning: AtomicBool,
    /// Blocks processed so far: tells the editor the audio thread has run
    /// since a parameter changed (see `editor/press.rs`).
    pub blocks: AtomicU64,
}

impl AudioFacts {
    pub fn set_capture(&self, status: CaptureStatus) {
        let (code, bar) = match status {
            CaptureStatus::Idle => (0, 0),
            CaptureStatus::Waiting => (1, 0),
            CaptureStatus::Recording { bar, of } => (2, (bar as u32) << 8 | of as u32),
        };
        self.capture.store(code, Ordering::Relaxed);
        self.capture_bar.store(bar, Ordering::Relaxed);
    }

    pub fn capture(&self) -> CaptureStatus {
        match self.capture.load(Ordering::Relaxed) {
            1 => CaptureStatus::Waiting,
            2 => {
                let b = self.capture_bar.load(Ordering::Relaxed);
                CaptureStatus::Recording {
                    bar: (b >> 8) as u8,
                    of: (b & 0xff) as u8,
                }
            }
            _ => CaptureStatus::Idle,
        }
    }
}

/// Everything shared between the plugin object, the worker and the editor.
#[derive(Debug, Default)]
pub struct Shared {
    view: Mutex<Arc<WorkerView>>,
    /// True while the worker is loading a model or making takes.
    pub busy: AtomicBool,
    /// Bumped whenever the worker publishes a view.
    pub view_version: AtomicU64,
    pub audio: AudioFacts,
}

impl Shared {
    /// The latest worker view (editor, tests; never the audio thread).
    pub fn view(&self) -> Arc<WorkerView> {
        self.view.lock().clone()
    }

    /// Publishes a new view (worker).
    pub(crate) fn publish(&self, view: WorkerView) {
        let old = std::mem::replace(&mut *self.view.lock(), Arc::new(view));
        self.view_version.fetch_add(1, Ordering::AcqRel);
        // The old view is freed here, after the lock is released.
        drop(old);
    }
}

/// Instances alive in this process, oldest first, so an in-process host —
/// the CLAP test harness — can read what an instance's editor would show.
/// Touched only when an instance is made (main thread) and by such readers,
/// never by `process()`.
static INSTANCES: Mutex<Vec<Weak<Shared>>> = Mutex::new(Vec::new());

/// Lists a new instance's shared status (called when the plugin is made).
pub(crate) fn register(shared: &Arc<Shared>) {
    let mut all = INSTANCES.lock();
    all.retain(|w| w.strong_count() > 0);
    all.push(Arc::downgrade(shared));
}

/// The shared status of every live instance in this process, oldest first.
pub fn instances() -> Vec<Arc<Shared>> {
    INSTANCES.lock().iter().filter_map(Weak::upgrade).collect()
}
