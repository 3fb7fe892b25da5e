//! The channels between the audio thread, the worker and the editor.
//!
//! All bounded `crossbeam-channel`s; the audio thread only ever calls
//! `try_send`/`try_recv`, which neither block nor allocate (the bounded
//! "array" flavour preallocates its slots when the channel is made).
//!
//! Ownership of take buffers: the worker allocates a boxed [`TakeSet`],
//! fills it and sends it; the audio thread adopts it and sends the one it
//! replaces back on `spent`, so boxes are freed (or reused) on the worker,
//! never in `process()`. If `spent` is ever full the audio thread holds the
//! box and retries next block rather than dropping it.
//!
//! Requests coalesce: the takes channel holds one set; before sending a
//! newer one the worker takes back a set the audio thread has not picked
//! up yet. Slider changes are not queued at all — the worker reads the
//! parameters themselves (atomics), so only the latest values count.

use crate::buffers::{PromptCapture, TakeSet};
use crossbeam_channel::{bounded, Receiver, Sender, TrySendError};
use nudgebar_music::Phrase;
use std::path::PathBuf;

/// Work for the worker, from the audio thread (`Keep` only, which holds no
/// heap data) or from the editor/main thread.
#[derive(Debug, Clone, PartialEq)]
pub enum Command {
    /// Keep take `take` of the set with this generation.
    Keep { generation: u64, take: usize },
    /// Remove kept take number `index` (0-based) from the session.
    Forget { index: usize },
    /// Write every kept take as a Standard MIDI File into the export folder.
    Export,
    /// Load the model package in this folder; on failure the current model
    /// stays and the error is reported.
    LoadModel(PathBuf),
    /// Go back to the built-in demo model.
    UseBuiltinModel,
    /// Use this phrase as the prompt (e.g. read from a MIDI file).
    SetPrompt { phrase: Phrase, tempo: f64 },
    /// Make the takes again even though nothing changed (after an error).
    Regenerate,
}

/// How many commands may wait. Generous: a burst of clicks must not be lost.
const COMMANDS: usize = 64;
/// Captured prompts in flight (they are rare: one per capture).
const PROMPTS: usize = 2;
/// Spent take sets on their way back; more than can ever be in circulation.
const SPENT: usize = 8;

/// The audio thread's ends.
pub struct AudioLink {
    commands: Sender<Command>,
    prompts: Sender<PromptCapture>,
    takes: Receiver<Box<TakeSet>>,
    spent: Sender<Box<TakeSet>>,
    /// A spent set that could not be sent back yet.
    held: Option<Box<TakeSet>>,
    /// A prompt that could not be sent yet (channel full): retried next block.
    pending_prompt: Option<PromptCapture>,
}

/// The worker's ends.
pub struct WorkerLink {
    pub commands: Receiver<Command>,
    pub prompts: Receiver<PromptCapture>,
    pub takes: Sender<Box<TakeSet>>,
    /// A receiver on the takes channel too, to take back a set the audio
    /// thread has not picked up yet when a newer one is ready.
    pub takes_back: Receiver<Box<TakeSet>>,
    pub spent: Receiver<Box<TakeSet>>,
}

/// Makes all channels. The command sender is cloned for the editor.
pub fn channels() -> (AudioLink, WorkerLink, Sender<Command>) {
    let (command_tx, command_rx) = bounded(COMMANDS);
    let (prompt_tx, prompt_rx) = bounded(PROMPTS);
    let (takes_tx, takes_rx) = bounded(1);
    let (spent_tx, spent_rx) = bounded(SPENT);
    let audio = AudioLink {
        commands: command_tx.clone(),
        prompts: prompt_tx,
        takes: takes_rx.clone(),
        spent: spent_tx,
        held: None,
        pending_prompt: None,
    };
    let worker = WorkerLink {
        commands: command_rx,
        prompts: prompt_rx,
        takes: takes_tx,
        takes_back: takes_rx,
        spent: spent_rx,
    };
    (audio, worker, command_tx)
}

impl AudioLink {
    /// Adopts the newest take set, if any, handing the replaced one back.
    /// Returns true when `current` changed. Realtime-safe.
    pub fn adopt_takes(&mut self, current: &mut Option<Box<TakeSet>>) -> bool {
        self.return_held();
        if self.held.is_some() {
            // The worker is not taking boxes back: adopting now would leave
            // two to hold, and one would have to be freed here.
            return false;
        }
        let Ok(new) = self.takes.try_recv() else {
            return false;
        };
        if let Some(old) = current.replace(new) {
            self.give_back(old);
        }
        true
    }

    /// Sends a captured prompt (or keeps it for the next block). Realtime-safe.
    pub fn send_prompt(&mut self, prompt: PromptCapture) {
        self.pending_prompt = Some(prompt);
        self.retry_prompt();
    }

    /// Retries a prompt that did not fit last time. Realtime-safe.
    pub fn retry_prompt(&mut self) {
        if let Some(p) = self.pending_prompt.take() {
            match self.prompts.try_send(p) {
                Ok(()) => {}
                Err(TrySendError::Full(p)) | Err(TrySendError::Disconnected(p)) => {
                    self.pending_prompt = Some(p)
                }
            }
        }
    }

    /// Sends a command; false if the queue is full (the caller may retry).
    pub fn send(&mut self, command: Command) -> bool {
        debug_assert!(
            matches!(command, Command::Keep { .. }),
            "the audio thread only sends heap-free commands"
        );
        self.commands.try_send(command).is_ok()
    }

    fn give_back(&mut self, set: Box<TakeSet>) {
        match self.spent.try_send(set) {
            Ok(()) => {}
            Err(TrySendError::Full(set)) | Err(TrySendError::Disconnected(set)) => {
                self.held = Some(set)
            }
        }
    }

    fn return_held(&mut self) {
        if let Some(set) = self.held.take() {
            self.give_back(set);
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn sets_travel_back_to_the_worker_and_stale_ones_are_reclaimed() {
        let (mut audio, worker, _editor) = channels();
        let mut current = None;
        assert!(!audio.adopt_takes(&mut current));
        let mut a = TakeSet::boxed();
        a.generation = 1;
        worker.takes.try_send(a).unwrap();
        assert!(audio.adopt_takes(&mut current));
        // Two newer sets: the worker takes back the first before sending.
        let mut b = TakeSet::boxed();
        b.generation = 2;
        worker.takes.try_send(b).unwrap();
        let stale = worker.takes_back.try_recv().unwrap();
        assert_eq!(stale.generation, 2);
        let mut c = TakeSet::boxed();
        c.generation = 3;
        worker.takes.try_send(c).unwrap();
        assert!(audio.adopt_takes(&mut current));
        assert_eq!(current.as_ref().unwrap().generation, 3);
        assert_eq!(
            worker.spent.try_recv().unwrap().generation,
            1,
            "the replaced set went back"
        );
    }

    #[test]
    fn a_full_return_channel_holds_the_box_instead_of_freeing_it() {
        let (mut audio, worker, _editor) = channels();
        let mut current = None;
        for g in 0..(SPENT as u64 + 3) {
            let mut s = TakeSet::boxed();
            s.generation = g;
            worker.takes.try_send(s).unwrap();
            audio.adopt_takes(&mut current);
        }
        // SPENT went back, one is held, one is current, one still waits.
        assert_eq!(worker.spent.len(), SPENT);
        assert!(audio.held.is_some());
        assert_eq!(worker.takes_back.len(), 1);
        while worker.spent.try_recv().is_ok() {}
        assert!(
            audio.adopt_takes(&mut current),
            "adoption resumes once boxes flow back"
        );
    }
}
