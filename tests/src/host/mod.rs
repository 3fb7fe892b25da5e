//! A CLAP host for tests, on `clack-host`.
//!
//! It loads a plugin the two ways a test needs — in-process from a crate's
//! exported `clap_entry` (fast) and by `dlopen` of the bundled `.clap` (what a
//! DAW does) — and drives it like a DAW's audio engine: activation, blocks
//! with a CLAP transport, note and parameter events at sample offsets, state
//! save/load, parameter text conversions, the editor's window calls.
//!
//! - [`plugin`]: one hosted instance and the plugin's extensions (params,
//!   state, note ports, GUI) seen from the host; the lifecycle calls.
//! - [`handlers`]: the callbacks the plugin may make into the host.
//! - [`transport`]: the host's play head as a `clap_event_transport`.
//! - [`events`]: input events in, a fixed-capacity recorder for output events.
//! - [`session`]: a playing session: sample clock, scheduled input,
//!   phrase playback, output on a timeline, waiting for a background worker.
//! - [`state_blob`]: nice-plug's state blob, read and written.
//! - [`ledger`]: invariants of the output stream (note-on/off pairing,
//!   event times inside the block and sorted).
//! - [`bundle`]: building and finding the `.clap` bundle.
//!
//! Realtime: everything the plugin can reach from inside `process()` (event
//! lists, thread-check, request callbacks, log) is allocation-free, so
//! nice-plug's `assert_process_allocs` blames only the plugin.

pub mod bundle;
pub mod events;
pub mod handlers;
pub mod ledger;
pub mod plugin;
pub mod session;
pub mod state_blob;
pub mod transport;

pub use bundle::bundled_clap;
pub use events::{InputEvent, OutputEvent, OutputKind, OutputRecorder};
pub use handlers::{current_role, LogEntry, ThreadRole};
pub use ledger::{NoteLedger, SoundedNote, Violation};
pub use plugin::{
    AudioSetup, HarnessError, HostedPlugin, NotePortSummary, ParamSummary, PluginSummary,
};
pub use session::{sounded_to_note, Session, TimedOutput};
pub use state_blob::{raw_blob, StateBlob};
pub use transport::HostTransport;
