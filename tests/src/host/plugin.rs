//! One plugin instance, hosted: loading, the plugin's extensions seen from
//! the host (params, state, note ports, GUI), and the activation lifecycle.
//!
//! CLAP's threading rules (`include/clap/plugin.h`) are kept by declaring the
//! calling thread's role around each call (see `handlers::ThreadRole`):
//! activation, params, state and GUI are main-thread calls; `start_processing`,
//! `process`, `reset`, `stop_processing` and an active-plugin param flush are
//! audio-thread calls.

use super::events::OutputRecorder;
use super::handlers::{
    claim_main_thread, HarnessHost, HostMainThread, HostShared, LogEntry, RoleGuard, ThreadRole,
};
use clack_extensions::audio_ports::PluginAudioPorts;
use clack_extensions::gui::{GuiApiType, GuiConfiguration, GuiSize, PluginGui, Window};
use clack_extensions::note_ports::{NoteDialects, NotePortInfoBuffer, PluginNotePorts};
use clack_extensions::params::{ParamInfoBuffer, ParamInfoFlags, PluginParams};
use clack_extensions::state::PluginState;
use clack_host::entry::EntryDescriptor;
use clack_host::events::event_types::TransportEvent;
use clack_host::prelude::*;
use std::ffi::{CStr, CString};
use std::fmt;
use std::path::Path;
use std::sync::atomic::Ordering;

/// A harness failure, as a sentence.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct HarnessError(pub String);

impl fmt::Display for HarnessError {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        f.write_str(&self.0)
    }
}

impl std::error::Error for HarnessError {}

fn fail<T>(message: impl Into<String>) -> Result<T, HarnessError> {
    Err(HarnessError(message.into()))
}

/// What the plugin factory says about the plugin.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct PluginSummary {
    pub id: String,
    pub name: String,
    pub vendor: String,
    pub version: String,
    pub features: Vec<String>,
}

/// One parameter as `clap_plugin_params.get_info` describes it.
#[derive(Debug, Clone, PartialEq)]
pub struct ParamSummary {
    pub id: u32,
    pub name: String,
    pub module: String,
    pub min: f64,
    pub max: f64,
    pub default: f64,
    pub flags: ParamInfoFlags,
}

impl ParamSummary {
    pub fn is_stepped(&self) -> bool {
        self.flags.contains(ParamInfoFlags::IS_STEPPED)
    }
    pub fn is_bypass(&self) -> bool {
        self.flags.contains(ParamInfoFlags::IS_BYPASS)
    }
    pub fn is_automatable(&self) -> bool {
        self.flags.contains(ParamInfoFlags::IS_AUTOMATABLE)
    }
}

/// One note port as `clap_plugin_note_ports.get` describes it.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct NotePortSummary {
    pub id: u32,
    pub name: String,
    pub dialects: NoteDialects,
}

/// The audio configuration of an activation.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct AudioSetup {
    pub sample_rate: f64,
    pub min_frames: u32,
    pub max_frames: u32,
}

fn text(bytes: &[u8]) -> String {
    String::from_utf8_lossy(bytes).into_owned()
}

fn cstr_text(s: Option<&CStr>) -> String {
    s.map(|s| s.to_string_lossy().into_owned())
        .unwrap_or_default()
}

/// A plugin instance with the harness as its host.
pub struct HostedPlugin {
    instance: PluginInstance<HarnessHost>,
    processor: Option<PluginAudioProcessor<HarnessHost>>,
    setup: Option<AudioSetup>,
    summary: PluginSummary,
    params: Option<PluginParams>,
    state: Option<PluginState>,
    note_ports: Option<PluginNotePorts>,
    audio_ports: Option<PluginAudioPorts>,
    gui: Option<PluginGui>,
}

impl HostedPlugin {
    /// Instantiates a plugin from an entry compiled into this process (the
    /// plugin crate's exported `clap_entry`). `plugin_id` picks one plugin of
    /// the entry's factory; `None` takes the only one.
    pub fn in_process(
        entry: &'static EntryDescriptor,
        plugin_id: Option<&str>,
    ) -> Result<Self, HarnessError> {
        claim_main_thread();
        // The path is what the plugin's `init` receives as its bundle path;
        // an in-process entry has none, and an empty string is what CLAP hosts
        // pass when they have nothing better.
        let entry = unsafe { PluginEntry::load_from_raw(entry, c"") }.or_else(|e| {
            fail(format!(
                "the in-process CLAP entry failed to initialise: {e}"
            ))
        })?;
        Self::instantiate(entry, plugin_id)
    }

    /// Loads a `.clap` file with the dynamic loader and instantiates a plugin
    /// from it, as a DAW does.
    pub fn from_file(path: &Path, plugin_id: Option<&str>) -> Result<Self, HarnessError> {
        claim_main_thread();
        if !path.exists() {
            return fail(format!("there is no CLAP plugin at {}", path.display()));
        }
        let entry = unsafe { PluginEntry::load(path) }.or_else(|e| {
            fail(format!(
                "could not load the CLAP plugin {}: {e}",
                path.display()
            ))
        })?;
        Self::instantiate(entry, plugin_id)
    }

    fn instantiate(entry: PluginEntry, plugin_id: Option<&str>) -> Result<Self, HarnessError> {
        let Some(factory) = entry.get_plugin_factory() else {
            return fail("the CLAP entry has no plugin factory");
        };
        let descriptors: Vec<PluginSummary> = factory
            .plugin_descriptors()
            .map(|d| PluginSummary {
                id: cstr_text(d.id()),
                name: cstr_text(d.name()),
                vendor: cstr_text(d.vendor()),
                version: cstr_text(d.version()),
                features: d
                    .features()
                    .map(|f| f.to_string_lossy().into_owned())
                    .collect(),
            })
            .collect();
        let summary = match plugin_id {
            Some(id) => descriptors.iter().find(|d| d.id == id),
            None if descriptors.len() == 1 => descriptors.first(),
            None => None,
        };
        let Some(summary) = summary.cloned() else {
            let ids: Vec<&str> = descriptors.iter().map(|d| d.id.as_str()).collect();
            return fail(format!(
                "plugin {plugin_id:?} not found; the factory offers {ids:?}"
            ));
        };
        let id = CString::new(summary.id.clone()).expect("CLAP ids come from C strings");
        let host_info = HostInfo::new(
            "Nudgebar test host",
            "Nudgebar",
            "https://example.invalid",
            "0.1",
        )
        .expect("static host info has no NUL bytes");
        let mut instance = PluginInstance::<HarnessHost>::new(
            |_| HostShared::default(),
            |shared| HostMainThread::new(shared),
            &entry,
            &id,
            &host_info,
        )
        .or_else(|e| {
            fail(format!(
                "the plugin {} could not be instantiated: {e}",
                summary.id
            ))
        })?;

        let handle = instance.plugin_handle();
        let params = handle.get_extension::<PluginParams>();
        let state = handle.get_extension::<PluginState>();
        let note_ports = handle.get_extension::<PluginNotePorts>();
        let audio_ports = handle.get_extension::<PluginAudioPorts>();
        let gui = handle.get_extension::<PluginGui>();
        Ok(Self {
            instance,
            processor: None,
            setup: None,
            summary,
            params,
            state,
            note_ports,
            audio_ports,
            gui,
        })
    }

    pub fn summary(&self) -> &PluginSummary {
        &self.summary
    }

    // ----- parameters (`ext/params.h`) -----

    fn params_ext(&self) -> Result<PluginParams, HarnessError> {
        self.params
            .ok_or_else(|| HarnessError("the plugin has no CLAP params extension".into()))
    }

    /// Every parameter, in the plugin's order.
    pub fn params(&mut self) -> Vec<ParamSummary> {
        let Some(ext) = self.params else {
            return Vec::new();
        };
        let handle = self.instance.plugin_handle();
        let mut buffer = ParamInfoBuffer::new();
        (0..ext.count(&handle))
            .filter_map(|i| {
                ext.get_info(&handle, i, &mut buffer)
                    .map(|info| ParamSummary {
                        id: info.id.get(),
                        name: text(info.name),
                        module: text(info.module),
                        min: info.min_value,
                        max: info.max_value,
                        default: info.default_value,
                        flags: info.flags,
                    })
            })
            .collect()
    }

    /// The parameter whose name is `name`, ignoring case.
    pub fn param_named(&mut self, name: &str) -> Option<ParamSummary> {
        self.params()
            .into_iter()
            .find(|p| p.name.eq_ignore_ascii_case(name))
    }

    /// The current plain value of a parameter.
    pub fn param_value(&mut self, id: u32) -> Option<f64> {
        let ext = self.params?;
        ext.get_value(&self.instance.plugin_handle(), ClapId::new(id))
    }

    /// The plugin's text for a plain value (`value_to_text`).
    pub fn value_to_text(&mut self, id: u32, value: f64) -> Option<String> {
        let ext = self.params?;
        let mut buffer = [0u8; 256];
        let out = ext
            .value_to_text(
                &self.instance.plugin_handle(),
                ClapId::new(id),
                value,
                &mut buffer,
            )
            .ok()?;
        Some(text(out))
    }

    /// The plugin's text for the parameter's current value.
    pub fn param_text(&mut self, id: u32) -> Option<String> {
        let value = self.param_value(id)?;
        self.value_to_text(id, value)
    }

    /// The plain value the plugin reads from `text` (`text_to_value`).
    pub fn text_to_value(&mut self, id: u32, text: &str) -> Option<f64> {
        let ext = self.params?;
        let text = CString::new(text).ok()?;
        ext.text_to_value(&self.instance.plugin_handle(), ClapId::new(id), &text)
    }

    /// Sends parameter changes outside `process()` (`clap_plugin_params.flush`):
    /// on the main thread while inactive, as an audio-thread call while active
    /// and not processing. Returns what the plugin sent back.
    pub fn flush_params(&mut self, changes: &[(u32, f64)]) -> Result<OutputRecorder, HarnessError> {
        let ext = self.params_ext()?;
        let mut input = EventBuffer::with_capacity(changes.len());
        for &(id, value) in changes {
            super::events::InputEvent::ParamValue { id, value }.push_into(&mut input, 0);
        }
        let mut output = OutputRecorder::with_capacity(1024);
        let input_events = InputEvents::from_buffer(&input);
        let mut output_events = OutputEvents::from_buffer(&mut output);
        match self.processor.as_mut() {
            None => {
                let mut handle = self.instance.inactive_plugin_handle().expect("not active");
                ext.flush(&mut handle, &input_events, &mut output_events);
            }
            Some(processor) => {
                if processor.is_started() {
                    return fail("params flush while processing is not allowed by CLAP; send the change in a process block");
                }
                let _audio = RoleGuard::enter(ThreadRole::Audio);
                ext.flush_active(
                    &mut processor.plugin_handle(),
                    &input_events,
                    &mut output_events,
                );
            }
        }
        Ok(output)
    }

    // ----- state (`ext/state.h`) -----

    /// The plugin's state as the host would store it in a project.
    pub fn save_state(&mut self) -> Result<Vec<u8>, HarnessError> {
        let Some(ext) = self.state else {
            return fail("the plugin has no CLAP state extension");
        };
        let mut bytes = Vec::new();
        ext.save(&self.instance.plugin_handle(), &mut bytes)
            .or_else(|e| fail(format!("the plugin refused to save its state: {e}")))?;
        Ok(bytes)
    }

    /// Loads a state blob, as when a project is reopened.
    pub fn load_state(&mut self, bytes: &[u8]) -> Result<(), HarnessError> {
        let Some(ext) = self.state else {
            return fail("the plugin has no CLAP state extension");
        };
        let mut reader = bytes;
        ext.load(&self.instance.plugin_handle(), &mut reader)
            .or_else(|e| fail(format!("the plugin refused to load the state blob: {e}")))
    }

    // ----- ports (`ext/note-ports.h`, `ext/audio-ports.h`) -----

    pub fn note_ports(&mut self, is_input: bool) -> Vec<NotePortSummary> {
        let Some(ext) = self.note_ports else {
            return Vec::new();
        };
        let handle = self.instance.plugin_handle();
        let mut buffer = NotePortInfoBuffer::new();
        (0..ext.count(&handle, is_input))
            .filter_map(|i| {
                ext.get(&handle, i, is_input, &mut buffer)
                    .map(|p| NotePortSummary {
                        id: p.id.get(),
                        name: text(p.name),
                        dialects: p.supported_dialects,
                    })
            })
            .collect()
    }

    pub fn audio_port_count(&mut self, is_input: bool) -> u32 {
        let Some(ext) = self.audio_ports else {
            return 0;
        };
        ext.count(&self.instance.plugin_handle(), is_input)
    }

    // ----- lifecycle (`plugin.h`) -----

    /// Activates with the given audio configuration. The harness drives
    /// note-only plugins and passes no audio buffers.
    pub fn activate(
        &mut self,
        sample_rate: f64,
        min_frames: u32,
        max_frames: u32,
    ) -> Result<(), HarnessError> {
        if self.processor.is_some() {
            return fail("the plugin is already active");
        }
        let ports = self.audio_port_count(true) + self.audio_port_count(false);
        if ports > 0 {
            return fail(format!(
                "the harness drives note-only plugins, but this one has {ports} audio ports"
            ));
        }
        let config = PluginAudioConfiguration {
            sample_rate,
            min_frames_count: min_frames,
            max_frames_count: max_frames,
        };
        let stopped = self.instance.activate(|_, _| (), config).or_else(|e| {
            fail(format!(
                "the plugin refused to activate at {sample_rate} Hz: {e}"
            ))
        })?;
        self.processor = Some(stopped.into());
        self.setup = Some(AudioSetup {
            sample_rate,
            min_frames,
            max_frames,
        });
        Ok(())
    }

    /// Stops processing if needed, then deactivates.
    pub fn deactivate(&mut self) {
        self.stop_processing();
        if let Some(processor) = self.processor.take() {
            self.instance.deactivate(processor.into_stopped());
        }
        self.setup = None;
    }

    pub fn start_processing(&mut self) -> Result<(), HarnessError> {
        let Some(processor) = self.processor.as_mut() else {
            return fail("activate the plugin before starting processing");
        };
        if processor.is_started() {
            return Ok(());
        }
        let _audio = RoleGuard::enter(ThreadRole::Audio);
        processor
            .start_processing()
            .map(|_| ())
            .or_else(|e| fail(format!("start_processing failed: {e}")))
    }

    pub fn stop_processing(&mut self) {
        if let Some(processor) = self.processor.as_mut() {
            if processor.is_started() {
                let _audio = RoleGuard::enter(ThreadRole::Audio);
                let _ = processor.stop_processing();
            }
        }
    }

    /// `clap_plugin.reset`: clear buffers, end voices.
    pub fn reset(&mut self) {
        if let Some(processor) = self.processor.as_mut() {
            let _audio = RoleGuard::enter(ThreadRole::Audio);
            processor.reset();
        }
    }

    pub fn is_active(&self) -> bool {
        self.processor.is_some()
    }

    pub fn is_processing(&self) -> bool {
        self.processor.as_ref().is_some_and(|p| p.is_started())
    }

    pub fn audio_setup(&self) -> Option<AudioSetup> {
        self.setup
    }

    /// One `process()` call of `frames` samples. `input` must be sorted by
    /// time; `output` must have room (it never grows during the call).
    pub fn process(
        &mut self,
        frames: u32,
        steady_time: Option<u64>,
        transport: Option<&TransportEvent>,
        input: &EventBuffer,
        output: &mut OutputRecorder,
    ) -> Result<ProcessStatus, HarnessError> {
        let Some(setup) = self.setup else {
            return fail("activate the plugin before processing");
        };
        if frames == 0 || frames > setup.max_frames {
            return fail(format!(
                "a block of {frames} frames is outside 1..={} set at activation",
                setup.max_frames
            ));
        }
        let Some(processor) = self.processor.as_mut() else {
            return fail("the plugin is not active");
        };
        let processor = processor
            .as_started_mut()
            .or_else(|_| fail("call start_processing before process"))?;
        // No audio ports: empty buffer lists that still carry the frame count.
        // SAFETY: the lists are empty, so there are no channel pointers to be
        // valid; the frame count only sizes the block.
        let audio_in = unsafe { InputAudioBuffers::from_raw_buffers(&[], frames) };
        let mut audio_out = unsafe { OutputAudioBuffers::from_raw_buffers(&mut [], frames) };
        let input_events = InputEvents::from_buffer(input);
        let mut output_events = OutputEvents::from_buffer(output);
        let _audio = RoleGuard::enter(ThreadRole::Audio);
        processor
            .process(
                &audio_in,
                &mut audio_out,
                &input_events,
                &mut output_events,
                steady_time,
                transport,
            )
            .or_else(|e| fail(format!("process() failed: {e}")))
    }

    // ----- main-thread housekeeping -----

    /// Runs the plugin's `on_main_thread` if it asked for it
    /// (`clap_host.request_callback`). Returns whether it ran.
    pub fn pump_main_thread(&mut self) -> bool {
        let requested = self
            .instance
            .access_shared_handler(|s| s.callback_requested.swap(false, Ordering::AcqRel));
        if requested {
            self.instance.call_on_main_thread_callback();
        }
        requested
    }

    /// Whether the plugin asked to be restarted (and clears the request).
    pub fn take_restart_request(&mut self) -> bool {
        self.instance
            .access_shared_handler(|s| s.restart_requested.swap(false, Ordering::AcqRel))
    }

    /// Whether the plugin asked for a parameter flush (and clears the request).
    pub fn take_flush_request(&mut self) -> bool {
        self.instance
            .access_shared_handler(|s| s.flush_requested.swap(false, Ordering::AcqRel))
    }

    /// Log messages the plugin sent from non-audio threads so far.
    pub fn take_log(&mut self) -> Vec<LogEntry> {
        self.instance.access_shared_handler(|s| {
            std::mem::take(&mut *s.log.lock().unwrap_or_else(|e| e.into_inner()))
        })
    }

    /// Log calls the plugin made from inside `process()`.
    pub fn audio_thread_logs(&self) -> u32 {
        self.instance
            .access_shared_handler(|s| s.audio_thread_logs.load(Ordering::Relaxed))
    }

    /// How often the plugin marked its state dirty.
    pub fn dirty_marks(&self) -> u32 {
        self.instance.access_handler(|m| m.dirty_marks.get())
    }

    /// How often the plugin asked the host to rescan its parameters.
    pub fn param_rescans(&self) -> u32 {
        self.instance.access_handler(|m| m.param_rescans.get())
    }

    // ----- editor (`ext/gui.h`) -----

    pub fn has_gui(&self) -> bool {
        self.gui.is_some()
    }

    /// Creates the editor embedded in an X11 window of ours (`set_parent`),
    /// shows it and returns its size.
    ///
    /// # Safety
    /// `parent` must be a live X11 window id that outlives the editor (until
    /// [`Self::close_gui`]).
    pub unsafe fn open_gui_x11(&mut self, parent: u64) -> Result<GuiSize, HarnessError> {
        let Some(gui) = self.gui else {
            return fail("the plugin has no editor (no CLAP gui extension)");
        };
        let handle = self.instance.plugin_handle();
        let config = GuiConfiguration {
            api_type: GuiApiType::X11,
            is_floating: false,
        };
        if !gui.is_api_supported(&handle, config) {
            return fail("the plugin's editor does not support embedding in an X11 window");
        }
        gui.create(&handle, config)
            .or_else(|e| fail(format!("the editor could not be created: {e:?}")))?;
        unsafe { gui.set_parent(&handle, Window::from_x11_handle(parent as _)) }
            .or_else(|e| fail(format!("the editor refused its parent window: {e:?}")))?;
        gui.show(&handle)
            .or_else(|e| fail(format!("the editor could not be shown: {e:?}")))?;
        gui.get_size(&handle)
            .ok_or_else(|| HarnessError("the editor did not report its size".into()))
    }

    /// Hides and destroys the editor.
    pub fn close_gui(&mut self) {
        if let Some(gui) = self.gui {
            let handle = self.instance.plugin_handle();
            let _ = gui.hide(&handle);
            gui.destroy(&handle);
        }
    }
}

impl Drop for HostedPlugin {
    fn drop(&mut self) {
        // CLAP: a plugin must be deactivated before it is destroyed.
        self.deactivate();
    }
}
