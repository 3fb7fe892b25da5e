//! A playing session: a hosted plugin, the host transport and a sample clock,
//! with scheduled input (notes, parameter changes) and every output event
//! placed on the timeline and checked by the [`NoteLedger`].

use super::events::{InputEvent, OutputKind, OutputRecorder};
use super::ledger::{NoteLedger, SoundedNote};
use super::plugin::{HarnessError, HostedPlugin};
use super::transport::HostTransport;
use clack_host::prelude::{EventBuffer, ProcessStatus};
use nudgebar_music::{Note, Phrase};
use std::collections::BTreeMap;
use std::time::{Duration, Instant};

/// Room in the host's output list per block. Generous, as a DAW's is; if a
/// plugin ever fills it, the ledger reports `OutputRefused`.
const OUTPUT_CAPACITY: usize = 16_384;

/// An output event placed on the session timeline.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct TimedOutput {
    /// Absolute sample since the session started.
    pub sample: u64,
    /// Song position of that sample, if the transport was playing.
    pub position: Option<f64>,
    pub kind: OutputKind,
}

/// Where one processed block sat on the song timeline.
#[derive(Debug, Clone, Copy)]
struct BlockSpan {
    start: u64,
    frames: u32,
    position: f64,
    playing: bool,
    samples_per_beat: f64,
}

/// Ordering of scheduled input within one sample: note-offs first, so a
/// repeated key ends before it starts again (what a sequencer sends).
fn priority(event: &InputEvent) -> u8 {
    match event {
        InputEvent::NoteOff { .. } | InputEvent::NoteChoke { .. } => 0,
        InputEvent::ParamValue { .. } => 1,
        _ => 2,
    }
}

/// A hosted plugin being played.
pub struct Session {
    pub plugin: HostedPlugin,
    pub transport: HostTransport,
    pub ledger: NoteLedger,
    /// Every output event so far.
    pub timeline: Vec<TimedOutput>,
    sample_rate: f64,
    max_block: u32,
    /// Absolute sample of the next block; also the CLAP steady time.
    clock: u64,
    /// Scheduled input by (sample, priority, sequence number).
    schedule: BTreeMap<(u64, u8, u64), InputEvent>,
    next_seq: u64,
    input: EventBuffer,
    output: OutputRecorder,
    spans: Vec<BlockSpan>,
}

impl Session {
    /// Activates the plugin at `sample_rate` with blocks of at most
    /// `max_block` frames and starts processing.
    pub fn start(
        mut plugin: HostedPlugin,
        sample_rate: f64,
        max_block: u32,
        transport: HostTransport,
    ) -> Result<Self, HarnessError> {
        plugin.activate(sample_rate, 1, max_block)?;
        plugin.start_processing()?;
        Ok(Self {
            plugin,
            transport,
            ledger: NoteLedger::new(),
            timeline: Vec::new(),
            sample_rate,
            max_block,
            clock: 0,
            schedule: BTreeMap::new(),
            next_seq: 0,
            // Room for a dense block of input so filling it rarely grows.
            input: EventBuffer::with_capacity(1024),
            output: OutputRecorder::with_capacity(OUTPUT_CAPACITY),
            spans: Vec::new(),
        })
    }

    pub fn sample_rate(&self) -> f64 {
        self.sample_rate
    }

    pub fn max_block(&self) -> u32 {
        self.max_block
    }

    /// Absolute sample of the next block.
    pub fn clock(&self) -> u64 {
        self.clock
    }

    /// Samples per quarter note at the current tempo.
    pub fn samples_per_beat(&self) -> f64 {
        self.transport.samples_per_beat(self.sample_rate)
    }

    // ----- input -----

    /// Schedules an input event at absolute sample `at` (not before the clock).
    pub fn schedule(&mut self, at: u64, event: InputEvent) {
        let at = at.max(self.clock);
        self.schedule
            .insert((at, priority(&event), self.next_seq), event);
        self.next_seq += 1;
    }

    /// Sends a parameter change at the start of the next block.
    pub fn set_param(&mut self, id: u32, value: f64) {
        let now = self.clock;
        self.schedule(now, InputEvent::ParamValue { id, value });
    }

    /// The absolute sample at which the playing transport reaches song
    /// position `position` (no jump or loop wrap in between).
    pub fn sample_at_position(&self, position: f64) -> u64 {
        let ahead = (position - self.transport.position) * self.samples_per_beat();
        assert!(
            ahead > -0.5,
            "song position {position} is already behind the play head ({})",
            self.transport.position
        );
        self.clock + ahead.round().max(0.0) as u64
    }

    /// Schedules `phrase` to be played starting at absolute sample `start`,
    /// on MIDI channel 0, at the current tempo.
    pub fn play_phrase_at_sample(&mut self, phrase: &Phrase, start: u64) {
        let spb = self.samples_per_beat();
        for note in &phrase.notes {
            let on = start + (note.onset * spb).round() as u64;
            let off = start + (note.end() * spb).round() as u64;
            self.schedule(on, InputEvent::note_on(note.pitch, note.velocity));
            self.schedule(off.max(on + 1), InputEvent::note_off(note.pitch));
        }
    }

    /// Schedules `phrase` to start on the downbeat of bar `bar` of the
    /// playing transport. Returns the sample of that downbeat.
    pub fn play_phrase_at_bar(&mut self, phrase: &Phrase, bar: i32) -> u64 {
        assert_eq!(
            phrase.time_signature, self.transport.time_signature,
            "the phrase and the host must share a time signature"
        );
        let start = self.sample_at_position(self.transport.bar_start(bar));
        self.play_phrase_at_sample(phrase, start);
        start
    }

    // ----- processing -----

    /// Processes one host block of `frames` samples, split at the loop end
    /// if the play head crosses it.
    pub fn process_block(&mut self, frames: u32) -> Result<ProcessStatus, HarnessError> {
        match self
            .transport
            .frames_until_loop_end(frames, self.sample_rate)
        {
            Some(first) if first > 0 => {
                self.process_exact(first)?;
                self.process_exact(frames - first)
            }
            _ => self.process_exact(frames),
        }
    }

    fn process_exact(&mut self, frames: u32) -> Result<ProcessStatus, HarnessError> {
        let start = self.clock;
        let end = start + frames as u64;
        self.input.clear();
        while let Some(entry) = self.schedule.first_entry() {
            if entry.key().0 >= end {
                break;
            }
            let ((at, _, _), event) = entry.remove_entry();
            event.push_into(&mut self.input, (at - start) as u32);
        }
        self.output.clear();
        let transport = self.transport.present.then(|| self.transport.to_clap());
        let status = self.plugin.process(
            frames,
            Some(start),
            transport.as_ref(),
            &self.input,
            &mut self.output,
        )?;

        self.ledger
            .observe_block(start, frames, self.output.events(), self.output.refused);
        let spb = self.samples_per_beat();
        let playing = self.transport.playing && self.transport.present;
        for event in self.output.events() {
            let position = playing.then(|| self.transport.position + event.time as f64 / spb);
            self.timeline.push(TimedOutput {
                sample: start + event.time as u64,
                position,
                kind: event.kind,
            });
        }
        self.spans.push(BlockSpan {
            start,
            frames,
            position: self.transport.position,
            playing,
            samples_per_beat: spb,
        });

        self.transport.advance(frames, self.sample_rate);
        self.clock = end;
        self.plugin.pump_main_thread();
        Ok(status)
    }

    /// Processes `total` samples in blocks of the session's block size.
    pub fn run(&mut self, total: u64) -> Result<(), HarnessError> {
        let mut left = total;
        while left > 0 {
            let frames = left.min(self.max_block as u64) as u32;
            self.process_block(frames)?;
            left -= frames as u64;
        }
        Ok(())
    }

    /// Processes `beats` quarter notes' worth of samples.
    pub fn run_beats(&mut self, beats: f64) -> Result<(), HarnessError> {
        let samples = (beats * self.samples_per_beat()).round() as u64;
        self.run(samples)
    }

    /// Processes until the playing transport reaches song position `position`
    /// (exactly: the last block is shortened to end there).
    pub fn run_to_position(&mut self, position: f64) -> Result<(), HarnessError> {
        let target = self.sample_at_position(position);
        let samples = target.saturating_sub(self.clock);
        self.run(samples)
    }

    /// Keeps processing blocks (the host keeps calling `process()` while the
    /// plugin's worker runs) until `ready` says so, or fails after `timeout`
    /// of wall-clock time. Sleeps a little between blocks so a background
    /// worker gets the CPU.
    pub fn wait_for(
        &mut self,
        what: &str,
        timeout: Duration,
        mut ready: impl FnMut(&mut Session) -> bool,
    ) -> Result<Duration, HarnessError> {
        let began = Instant::now();
        loop {
            if ready(self) {
                return Ok(began.elapsed());
            }
            if began.elapsed() > timeout {
                return Err(HarnessError(format!(
                    "waited {timeout:?} for {what} and it did not happen"
                )));
            }
            let block = self.max_block;
            self.process_block(block)?;
            std::thread::sleep(Duration::from_millis(2));
        }
    }

    /// Deactivates and re-activates the plugin (as a host does to change the
    /// sample rate or block size). The host silences whatever the plugin left
    /// sounding; those notes are returned.
    pub fn restart(
        &mut self,
        sample_rate: f64,
        max_block: u32,
    ) -> Result<Vec<(i16, i16, u64)>, HarnessError> {
        self.plugin.deactivate();
        let left_open = self.ledger.host_flush();
        self.plugin.activate(sample_rate, 1, max_block)?;
        self.plugin.start_processing()?;
        self.sample_rate = sample_rate;
        self.max_block = max_block;
        Ok(left_open)
    }

    // ----- reading the output back -----

    /// The song position of absolute sample `sample`, if the transport was
    /// playing in the block that contained it.
    pub fn position_at(&self, sample: u64) -> Option<f64> {
        let i = self
            .spans
            .partition_point(|s| s.start <= sample)
            .checked_sub(1)?;
        let span = self.spans[i];
        (span.playing && sample <= span.start + span.frames as u64)
            .then(|| span.position + (sample - span.start) as f64 / span.samples_per_beat)
    }

    /// Notes the plugin sounded that started in `[from, to)` (absolute
    /// samples), as [`Note`]s timed in quarter notes from sample `origin`.
    pub fn notes_played(&self, from: u64, to: u64, origin: u64) -> Vec<Note> {
        let spb = self.samples_per_beat();
        let mut notes: Vec<Note> = self
            .ledger
            .finished
            .iter()
            .filter(|n| n.start >= from && n.start < to)
            .map(|n| sounded_to_note(n, origin, spb))
            .collect();
        notes.sort_by(|a, b| a.onset.total_cmp(&b.onset).then(a.pitch.cmp(&b.pitch)));
        notes
    }
}

/// A sounded note as a [`Note`] in quarter notes from sample `origin`.
pub fn sounded_to_note(n: &SoundedNote, origin: u64, samples_per_beat: f64) -> Note {
    Note {
        pitch: n.key.clamp(0, 127) as u8,
        onset: (n.start as f64 - origin as f64) / samples_per_beat,
        duration: (n.end - n.start) as f64 / samples_per_beat,
        velocity: (n.velocity * 127.0).round().clamp(0.0, 127.0) as u8,
    }
}
