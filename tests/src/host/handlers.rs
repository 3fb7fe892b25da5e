//! The host's side of the CLAP callbacks: what the plugin may ask of us.
//!
//! Everything a plugin can call from its audio thread (thread-check,
//! `request_callback`, `request_flush`, log) is answered with atomics or a
//! thread-local, never an allocation or a lock: those callbacks run inside the
//! plugin's `process()`, where nice-plug's `assert_process_allocs` would abort
//! on any allocation — ours included.

use clack_extensions::gui::{GuiSize, HostGui, HostGuiImpl};
use clack_extensions::log::{HostLog, HostLogImpl, LogSeverity};
use clack_extensions::note_ports::{
    HostNotePorts, HostNotePortsImpl, NoteDialects, NotePortRescanFlags,
};
use clack_extensions::params::{
    HostParams, HostParamsImplMainThread, HostParamsImplShared, ParamClearFlags, ParamRescanFlags,
};
use clack_extensions::state::{HostState, HostStateImpl};
use clack_extensions::thread_check::{HostThreadCheck, HostThreadCheckImpl};
use clack_host::prelude::*;
use std::cell::Cell;
use std::sync::atomic::{AtomicBool, AtomicU32, AtomicU64, Ordering};
use std::sync::Mutex;

/// Which role the current OS thread plays for the host right now.
///
/// A real host calls `process()` on a dedicated audio thread. The harness
/// drives everything from the test's thread for determinism, so it declares
/// the role around each call instead: CLAP's thread-check extension
/// (`ext/thread-check.h`) only asks "is *this* thread the main/audio thread",
/// and answering by role keeps the plugin's own checks truthful (nice-plug,
/// for one, runs GUI tasks inline when it believes it is on the main thread,
/// which inside `process()` would allocate).
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum ThreadRole {
    /// A thread the host does not own (the plugin's worker, for instance).
    Other,
    /// The host's main thread: instantiation, params, state, GUI.
    Main,
    /// Inside `process()`.
    Audio,
}

thread_local! {
    // const-initialised so reading it never allocates, even the first time.
    static ROLE: Cell<ThreadRole> = const { Cell::new(ThreadRole::Other) };
}

/// The role of the calling thread.
pub fn current_role() -> ThreadRole {
    ROLE.with(|r| r.get())
}

/// Sets the calling thread's role until the guard is dropped.
pub(crate) struct RoleGuard(ThreadRole);

impl RoleGuard {
    pub(crate) fn enter(role: ThreadRole) -> Self {
        RoleGuard(ROLE.with(|r| r.replace(role)))
    }
}

impl Drop for RoleGuard {
    fn drop(&mut self) {
        let previous = self.0;
        ROLE.with(|r| r.set(previous));
    }
}

/// Marks the calling thread as the host's main thread for good (the thread
/// that creates a plugin instance is its main thread).
pub(crate) fn claim_main_thread() {
    ROLE.with(|r| r.set(ThreadRole::Main));
}

/// One message the plugin sent through the CLAP log extension.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct LogEntry {
    pub severity: String,
    pub message: String,
}

/// Host state shared by every thread of one plugin instance.
#[derive(Default)]
pub struct HostShared {
    /// The plugin asked for `on_main_thread` (CLAP `clap_host.request_callback`).
    pub callback_requested: AtomicBool,
    /// The plugin asked to be deactivated and re-activated.
    pub restart_requested: AtomicBool,
    /// The plugin asked to be activated / to start processing.
    pub process_requested: AtomicBool,
    /// The plugin asked for a parameter flush (`clap_host_params.request_flush`).
    pub flush_requested: AtomicBool,
    /// Editor window requests (`clap_host_gui`): last requested size packed
    /// as width << 32 | height, and how many show/hide/closed calls came in.
    pub gui_resize_request: AtomicU64,
    pub gui_show_requests: AtomicU32,
    pub gui_hide_requests: AtomicU32,
    pub gui_closed: AtomicU32,
    /// Log calls made from inside `process()`. They are counted, not stored:
    /// storing a message would allocate on the audio thread, and a plugin
    /// that logs from `process()` is worth flagging anyway.
    pub audio_thread_logs: AtomicU32,
    /// Log messages from every other thread.
    pub log: Mutex<Vec<LogEntry>>,
}

impl<'a> SharedHandler<'a> for HostShared {
    fn request_restart(&self) {
        self.restart_requested.store(true, Ordering::Release);
    }
    fn request_process(&self) {
        self.process_requested.store(true, Ordering::Release);
    }
    fn request_callback(&self) {
        self.callback_requested.store(true, Ordering::Release);
    }
}

impl HostThreadCheckImpl for HostShared {
    fn is_main_thread(&self) -> bool {
        current_role() == ThreadRole::Main
    }
    fn is_audio_thread(&self) -> bool {
        current_role() == ThreadRole::Audio
    }
}

impl HostParamsImplShared for HostShared {
    fn request_flush(&self) {
        self.flush_requested.store(true, Ordering::Release);
    }
}

impl HostLogImpl for HostShared {
    fn log(&self, severity: LogSeverity, message: &str) {
        if current_role() == ThreadRole::Audio {
            self.audio_thread_logs.fetch_add(1, Ordering::Relaxed);
            return;
        }
        let entry = LogEntry {
            severity: format!("{severity}"),
            message: message.to_string(),
        };
        self.log
            .lock()
            .unwrap_or_else(|e| e.into_inner())
            .push(entry);
    }
}

impl HostGuiImpl for HostShared {
    fn resize_hints_changed(&self) {}
    fn request_resize(&self, new_size: GuiSize) -> Result<(), HostError> {
        let packed = ((new_size.width as u64) << 32) | new_size.height as u64;
        self.gui_resize_request.store(packed, Ordering::Release);
        Ok(())
    }
    fn request_show(&self) -> Result<(), HostError> {
        self.gui_show_requests.fetch_add(1, Ordering::Relaxed);
        Ok(())
    }
    fn request_hide(&self) -> Result<(), HostError> {
        self.gui_hide_requests.fetch_add(1, Ordering::Relaxed);
        Ok(())
    }
    fn closed(&self, _was_destroyed: bool) {
        self.gui_closed.fetch_add(1, Ordering::Relaxed);
    }
}

/// Host state that only the main thread touches.
pub struct HostMainThread<'a> {
    pub shared: &'a HostShared,
    /// `clap_host_state.mark_dirty` calls: the plugin says its state changed.
    pub dirty_marks: Cell<u32>,
    /// `clap_host_params.rescan` calls and the union of their flags.
    pub param_rescans: Cell<u32>,
    pub param_rescan_flags: Cell<u32>,
    /// `clap_host_note_ports.rescan` calls.
    pub note_port_rescans: Cell<u32>,
}

impl<'a> HostMainThread<'a> {
    pub(crate) fn new(shared: &'a HostShared) -> Self {
        Self {
            shared,
            dirty_marks: Cell::new(0),
            param_rescans: Cell::new(0),
            param_rescan_flags: Cell::new(0),
            note_port_rescans: Cell::new(0),
        }
    }
}

impl<'a> MainThreadHandler<'a> for HostMainThread<'a> {}

impl HostStateImpl for HostMainThread<'_> {
    fn mark_dirty(&self) {
        self.dirty_marks.set(self.dirty_marks.get() + 1);
    }
}

impl HostParamsImplMainThread for HostMainThread<'_> {
    fn rescan(&self, flags: ParamRescanFlags) {
        self.param_rescans.set(self.param_rescans.get() + 1);
        self.param_rescan_flags
            .set(self.param_rescan_flags.get() | flags.bits());
    }
    fn clear(&self, _param_id: ClapId, _flags: ParamClearFlags) {}
}

impl HostNotePortsImpl for HostMainThread<'_> {
    fn supported_dialects(&self) -> NoteDialects {
        // We read both CLAP note events and raw MIDI 1.0 note messages.
        NoteDialects::CLAP | NoteDialects::MIDI
    }
    fn rescan(&self, _flags: NotePortRescanFlags) {
        self.note_port_rescans.set(self.note_port_rescans.get() + 1);
    }
}

/// The harness host: ties the handlers together and declares the host
/// extensions a plugin may query.
pub struct HarnessHost;

impl HostHandlers for HarnessHost {
    type Shared<'a> = HostShared;
    type MainThread<'a> = HostMainThread<'a>;
    type AudioProcessor<'a> = ();

    fn declare_extensions(builder: &mut HostExtensions<Self>, _shared: &Self::Shared<'_>) {
        // The GUI extension must be offered: nice-plug panics in
        // `gui.create` when the host has none.
        builder
            .register::<HostLog>()
            .register::<HostThreadCheck>()
            .register::<HostParams>()
            .register::<HostState>()
            .register::<HostNotePorts>()
            .register::<HostGui>();
    }
}
