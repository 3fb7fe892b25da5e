//! The session inside the running plugin: the saved data and its loader
//! live in `nudgebar_contract::session` (tract-free, so it can be fuzzed);
//! here it is shared between the host's state calls, the worker and the
//! editor, and handed to nice-plug as the persisted `"session"` field.
//!
//! Threads: the host saves and loads on its main thread; the worker edits
//! (new prompt, keep a take). The audio thread never touches the session,
//! so the mutex here is never taken in `process()`.

pub use nudgebar_contract::session::{
    AimRecord, BlendRecord, KeptTake, SavedPrompt, SessionState, Shaping, TakeSettings, MAX_KEPT,
    STATE_VERSION,
};
use nice_plug::params::persist::PersistentField;
use parking_lot::Mutex;
use std::sync::atomic::{AtomicU64, Ordering};

/// The session, shared by the host's state calls, the worker and the editor.
///
/// `loads` counts loads from the host: the worker compares it with what it
/// last saw to pick up a reloaded prompt and model path. `edits` counts every
/// change, for views that redraw on change.
#[derive(Debug, Default)]
pub struct SessionCell {
    state: Mutex<SessionState>,
    loads: AtomicU64,
    edits: AtomicU64,
}

impl SessionCell {
    /// Reads the session (never from the audio thread).
    pub fn read<R>(&self, f: impl FnOnce(&SessionState) -> R) -> R {
        f(&self.state.lock())
    }

    /// Changes the session (worker or editor; never from the audio thread).
    pub fn edit<R>(&self, f: impl FnOnce(&mut SessionState) -> R) -> R {
        let r = f(&mut self.state.lock());
        self.edits.fetch_add(1, Ordering::AcqRel);
        r
    }

    /// Replaces the session as a host load does.
    pub fn load(&self, state: SessionState) {
        *self.state.lock() = state;
        self.loads.fetch_add(1, Ordering::AcqRel);
        self.edits.fetch_add(1, Ordering::AcqRel);
    }

    /// How many times the host has loaded a session.
    pub fn loads(&self) -> u64 {
        self.loads.load(Ordering::Acquire)
    }

    /// How many times the session has changed.
    pub fn edits(&self) -> u64 {
        self.edits.load(Ordering::Acquire)
    }
}

impl<'a> PersistentField<'a, SessionState> for SessionCell {
    fn set(&self, new_value: SessionState) {
        self.load(new_value);
    }

    fn map<F, R>(&self, f: F) -> R
    where
        F: Fn(&SessionState) -> R,
    {
        self.read(|s| f(s))
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn the_cell_counts_loads_for_the_worker() {
        let cell = SessionCell::default();
        assert_eq!(cell.loads(), 0);
        let session = SessionState::load_lenient(
            r#"{"version":1,"prompt":null,"kept":[],"model_path":"/models/wren"}"#,
        );
        assert!(session.load_report.is_empty(), "{:?}", session.load_report);
        PersistentField::set(&cell, session);
        assert_eq!(cell.loads(), 1);
        assert_eq!(
            PersistentField::map(&cell, |s| s.model_path.clone()).as_deref(),
            Some("/models/wren")
        );
    }
}
