//! Nudgebar as a CLAP and VST3 note-effect plugin.
//!
//! Where things live:
//! - the audio thread: [`Nudgebar::process`] here, delegating to
//!   [`clock`] (host transport → musical time), [`capture`] (prompt
//!   capture), [`audition`] (the selected take, looped on the host's bars)
//!   and [`voices`] (every note-on gets its note-off). All fixed-capacity:
//!   `process()` never allocates, frees, locks or waits — checked by
//!   nice-plug's `assert_process_allocs` in debug builds.
//! - the worker thread: [`worker`] owns the model (engine) and the session
//!   edits; [`link`] holds the bounded channels between the threads and
//!   [`buffers`] the take/prompt buffers that cross them.
//! - what is saved with the project: [`state`]; parameters: [`params`].
//! - kept takes to MIDI files: [`export`]; presets: [`presets`].
//! - what the editor may read: [`status`]; the editor window: [`editor`].
//!
//! For hosts and the test harness: CLAP id [`CLAP_ID`], one note input
//! and one note output port, no audio ports. Parameter ids are listed in
//! [`params::ids`]; the saved state holds nice-plug's parameter map plus one
//! persisted field, `"session"` (see [`state::SessionState`]).

pub mod audition;
pub mod buffers;
pub mod capture;
pub mod clock;
pub mod editor;
pub mod export;
pub mod link;
pub mod params;
pub mod presets;
pub mod shape_params;
pub mod shaping;
pub mod state;
pub mod status;
pub mod voices;
pub mod worker;

use audition::{Audition, CueKind, Want};
use buffers::TakeSet;
use capture::Capture;
use clock::{Clock, HostTime};
use crossbeam_channel::Sender;
use link::{AudioLink, Command, WorkerLink};
use nice_plug::midi::VoiceID;
use nice_plug::prelude::*;
use params::NudgebarParams;
use status::Shared;
use std::sync::atomic::Ordering;
use std::sync::Arc;
use voices::{KeyAction, NoteSink, Source, Voices};
use worker::{BuiltinModel, WorkerHandle};

/// The plugin's CLAP id.
pub const CLAP_ID: &str = "org.nudgebar.nudgebar";

/// How many input events one block may bring before nice-plug's queue would
/// have to grow (the reliability suite sends 10,000 in one block).
const EVENT_CAPACITY: usize = 16_384;

pub struct Nudgebar {
    /// Parameters and the persisted session, shared with worker and editor.
    params: Arc<NudgebarParams>,
    /// What the worker and the audio thread publish for the editor.
    shared: Arc<Shared>,
    /// Command sender for the editor and main thread.
    commands: Sender<Command>,
    /// The editor's window threads, waited for when the plugin is destroyed.
    window_threads: Arc<editor::window_threads::WindowThreads>,
    /// The audio thread's channel ends.
    link: AudioLink,
    /// The worker's channel ends, until the worker starts (first activation:
    /// hosts create instances just to scan them, and those should not load
    /// a model).
    worker_link: Option<WorkerLink>,
    /// The running worker; joined when the plugin is dropped.
    worker: Option<WorkerHandle>,
    /// Where the built-in model comes from.
    builtin: BuiltinModel,
    /// Host transport → musical time.
    clock: Clock,
    /// Prompt capture (ring of recent notes, armed capture).
    capture: Capture,
    /// Playback of the selected take.
    audition: Audition,
    /// Every sounding output note, for the stuck-note guarantee.
    voices: Voices,
    /// The take set being auditioned, from the worker.
    takes: Option<Box<TakeSet>>,
    /// Previous values of the trigger parameters, for edge detection.
    triggers: Triggers,
    /// Whether input notes passed last block (to stop them on a mode switch).
    passed_input: bool,
    /// Set by `reset()`: the next block first stops whatever was sounding
    /// before (notes cannot be sent while deactivated, CLAP 1.2 `plugin.h`:
    /// events only flow through `process()`).
    resumed: bool,
}

/// Off→on detection for the trigger parameters.
#[derive(Debug, Default, Clone, Copy)]
struct Triggers {
    arm: bool,
    grab: bool,
    keep: bool,
}

impl Triggers {
    fn read(params: &NudgebarParams) -> Triggers {
        Triggers {
            arm: params.arm.value(),
            grab: params.grab.value(),
            keep: params.keep.value(),
        }
    }

    /// Returns which triggers went from off to on, and remembers the values.
    fn edges(&mut self, now: Triggers) -> Triggers {
        let fired = Triggers {
            arm: now.arm && !self.arm,
            grab: now.grab && !self.grab,
            keep: now.keep && !self.keep,
        };
        *self = now;
        fired
    }
}

impl Drop for Nudgebar {
    fn drop(&mut self) {
        // The host may unload the library right after destroying us; an
        // editor window thread still tearing down its OpenGL display would
        // then run code that is gone (editor/window_threads.rs). CLAP hosts
        // close the editor before destroying the plugin, so this normally
        // waits a few milliseconds; the bound keeps a host from hanging.
        self.window_threads
            .wait_until_ended(std::time::Duration::from_secs(3));
    }
}

impl Default for Nudgebar {
    fn default() -> Self {
        Self::with_builtin_model(Arc::new(builtin_model))
    }
}

/// The model used when none is chosen: the demo model compiled into the
/// plugin, so the sliders work on a fresh machine.
fn builtin_model() -> Result<nudgebar_engine::ModelPackage, nudgebar_engine::ModelError> {
    Ok(nudgebar_demo_model::package())
}

impl Nudgebar {
    /// A plugin whose built-in model comes from `builtin` (tests use small
    /// generated models).
    pub fn with_builtin_model(builtin: BuiltinModel) -> Self {
        let params = Arc::new(NudgebarParams::default());
        let (link, worker_link, commands) = link::channels();
        let shared = Arc::new(Shared::default());
        status::register(&shared);
        Self {
            triggers: Triggers::read(&params),
            params,
            shared,
            commands,
            window_threads: Arc::default(),
            link,
            worker_link: Some(worker_link),
            worker: None,
            builtin,
            clock: Clock::new(),
            capture: Capture::default(),
            audition: Audition::default(),
            voices: Voices::default(),
            takes: None,
            passed_input: true,
            resumed: false,
        }
    }

    /// The shared status (for the editor and in-process tests).
    pub fn shared(&self) -> Arc<Shared> {
        self.shared.clone()
    }

    /// A command sender to the worker (for the editor and in-process tests).
    pub fn commands(&self) -> Sender<Command> {
        self.commands.clone()
    }

    /// The parameters and session.
    pub fn params_arc(&self) -> Arc<NudgebarParams> {
        self.params.clone()
    }

    fn start_worker(&mut self) {
        if let Some(link) = self.worker_link.take() {
            self.worker = Some(worker::spawn(
                link,
                self.params.clone(),
                self.shared.clone(),
                self.builtin.clone(),
            ));
        }
    }
}

/// Sends to the host, counting what its queue refuses.
struct HostOut<'a, C> {
    context: &'a mut C,
    refused: u32,
}

impl<C: ProcessContext<Nudgebar>> NoteSink for HostOut<'_, C> {
    fn send(&mut self, event: NoteEvent<()>) {
        if self.context.try_send_event(event).is_err() {
            self.refused += 1;
        }
    }
}

fn host_time(t: &Transport) -> HostTime {
    HostTime {
        playing: t.playing,
        sample_rate: t.sample_rate as f64,
        tempo: t.tempo,
        time_signature: t.time_sig_numerator.zip(t.time_sig_denominator),
        pos_beats: t.pos_beats(),
        bar_start_beats: t.bar_start_pos_beats,
        bar_number: t.bar_number,
    }
}

impl Plugin for Nudgebar {
    const NAME: &'static str = "Nudgebar";
    const VENDOR: &'static str = "Nudgebar";
    const URL: &'static str = "https://nudgebar.invalid";
    const EMAIL: &'static str = "nudgebar@nudgebar.invalid";
    const VERSION: &'static str = env!("CARGO_PKG_VERSION");

    /// A pure note effect: no audio in or out.
    const AUDIO_IO_LAYOUTS: &'static [AudioIOLayout] = &[];
    /// Controllers (sustain, modulation, pitch bend) pass through with the notes.
    const MIDI_INPUT: MidiConfig = MidiConfig::MidiCCs;
    const MIDI_OUTPUT: MidiConfig = MidiConfig::MidiCCs;
    const SAMPLE_ACCURATE_AUTOMATION: bool = false;
    const INPUT_EVENT_CAPACITY: usize = EVENT_CAPACITY;

    type Editor = editor::NudgebarEditor;
    type SysExMessage = ();
    type BackgroundTask = ();

    fn params(&self) -> Arc<dyn Params> {
        self.params.clone()
    }

    fn editor(&mut self, _async_executor: AsyncExecutor<Self>) -> Option<Self::Editor> {
        editor::create(
            self.params.clone(),
            self.shared.clone(),
            self.commands.clone(),
            self.window_threads.clone(),
        )
    }

    fn activate(
        &mut self,
        _layout: &AudioIOLayout,
        _config: &BufferConfig,
        _context: &mut impl ActivateContext<Self>,
    ) -> bool {
        self.start_worker();
        // A restored "on" trigger must not fire by itself.
        self.triggers = Triggers::read(&self.params);
        true
    }

    fn reset(&mut self) {
        // Called after activate and from the audio thread: no allocation.
        self.clock.reset();
        self.resumed = true;
    }

    fn process(
        &mut self,
        buffer: &mut Buffer,
        _aux: &mut AuxiliaryBuffers,
        context: &mut impl ProcessContext<Self>,
    ) -> ProcessStatus {
        let frames = buffer.samples() as u32;
        let clock = self.clock.advance(&host_time(context.transport()), frames);
        let mut out = HostOut {
            context,
            refused: 0,
        };

        // 1. Anything left sounding from before a deactivation stops now.
        if std::mem::take(&mut self.resumed) {
            self.voices.stop_source(&mut out, Source::Take, 0);
            self.voices.stop_source(&mut out, Source::Input, 0);
            self.audition.clear();
        }

        // 2. Newest takes from the worker; the replaced set goes back to it.
        self.link.adopt_takes(&mut self.takes);
        self.link.retry_prompt();

        // 3. Controls: listen mode, bypass, triggers.
        let bypass = self.params.bypass.value();
        let listen = self.params.listen.value();
        let passes_input = bypass || listen.passes_input();
        if self.passed_input && !passes_input {
            self.voices.stop_source(&mut out, Source::Input, 0);
        }
        self.passed_input = passes_input;
        self.capture.begin_block(&clock);
        let bars = self.params.prompt_bars.value().clamp(1, 4) as u8;
        let fired = self.triggers.edges(Triggers::read(&self.params));
        if fired.arm {
            self.capture.arm(&clock, 0, bars);
        }
        if fired.grab {
            match self.capture.grab_recent(&clock, 0, bars) {
                Ok(prompt) => self.send_prompt(prompt),
                Err(_) => {
                    self.shared
                        .audio
                        .grabs_empty
                        .fetch_add(1, Ordering::Relaxed);
                }
            }
        }
        if fired.keep {
            if let Some(set) = &self.takes {
                let keep = Command::Keep {
                    generation: set.generation,
                    take: self.params.selected_index(),
                };
                if !self.link.send(keep) {
                    self.shared
                        .audio
                        .keeps_refused
                        .fetch_add(1, Ordering::Relaxed);
                }
            }
        }

        // 4. Plan the take's notes for this block.
        let want = (!bypass && listen.plays_take())
            .then(|| {
                self.takes.as_ref().map(|s| Want {
                    generation: s.generation,
                    take: self.params.selected_index(),
                })
            })
            .flatten();
        self.audition.plan(&clock, self.takes.as_deref(), want);

        // 5. Input and take notes, merged in time order, through the guard.
        let mut cue = 0;
        while let Some(event) = out.context.next_event() {
            let timing = event.timing();
            while let Some(c) = self.audition.cues().get(cue).filter(|c| c.timing <= timing) {
                apply_cue(c.kind, c.timing, &mut self.voices, &mut out);
                cue += 1;
            }
            self.observe(&clock, &event);
            voices::pass_input(event, passes_input, &mut self.voices, &mut out);
        }
        for c in &self.audition.cues()[cue..] {
            apply_cue(c.kind, c.timing, &mut self.voices, &mut out);
        }

        // 6. A finished capture goes to the worker.
        if let Some(prompt) = self.capture.end_block(&clock) {
            self.send_prompt(prompt);
        }

        // 7. What the editor shows.
        let facts = &self.shared.audio;
        facts.blocks.fetch_add(1, Ordering::Release);
        facts.set_capture(self.capture.status(&clock));
        facts.generation.store(
            self.takes.as_ref().map_or(0, |s| s.generation),
            Ordering::Relaxed,
        );
        facts
            .auditioning
            .store(self.audition.is_sounding(), Ordering::Relaxed);
        if out.refused > 0 {
            facts
                .events_refused
                .fetch_add(out.refused, Ordering::Relaxed);
        }
        ProcessStatus::KeepAlive
    }
}

impl Nudgebar {
    /// Feeds an input key action to the capture.
    fn observe(&mut self, clock: &clock::BlockClock, event: &NoteEvent<()>) {
        match voices::key_action(event) {
            Some(KeyAction::Down {
                timing,
                channel,
                key,
                velocity,
                ..
            }) => {
                let v = (velocity * 127.0).round().clamp(1.0, 127.0) as u8;
                self.capture.note_on(clock, timing, channel, key, v);
            }
            Some(KeyAction::Up {
                timing,
                channel,
                key,
            }) => self.capture.note_off(clock, timing, channel, key),
            None => {}
        }
    }

    fn send_prompt(&mut self, prompt: buffers::PromptCapture) {
        self.link.send_prompt(prompt);
        self.shared
            .audio
            .prompts_sent
            .fetch_add(1, Ordering::Relaxed);
    }
}

fn apply_cue(kind: CueKind, timing: u32, voices: &mut Voices, out: &mut impl NoteSink) {
    match kind {
        CueKind::StopAll => voices.stop_source(out, Source::Take, timing),
        CueKind::Stop { channel, key } => voices.stop(out, Source::Take, timing, channel, key),
        CueKind::Start {
            channel,
            key,
            velocity,
        } => voices.start(
            out,
            Source::Take,
            timing,
            channel,
            key,
            velocity as f32 / 127.0,
            VoiceID::Wildcard,
        ),
    }
}

impl ClapPlugin for Nudgebar {
    const CLAP_ID: &'static str = CLAP_ID;
    const CLAP_DESCRIPTION: Option<&'static str> = Some("Captures a phrase and offers steerable model-made variations of it, in time with the host.");
    const CLAP_MANUAL_URL: Option<&'static str> = None;
    const CLAP_SUPPORT_URL: Option<&'static str> = None;
    const CLAP_FEATURES: &'static [ClapFeature] = &[ClapFeature::NoteEffect, ClapFeature::Utility];
}

impl Vst3Plugin for Nudgebar {
    /// Sixteen ASCII bytes, fixed forever: hosts identify the plugin by it.
    const VST3_CLASS_ID: [u8; 16] = *b"NudgebarNoteFx01";
    const VST3_SUBCATEGORIES: &'static [Vst3SubCategory] =
        &[Vst3SubCategory::Instrument, Vst3SubCategory::Tools];
}

nice_export_clap!(Nudgebar);
nice_export_vst3!(Nudgebar);
