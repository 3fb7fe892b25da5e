//! Prompt capture, on the audio thread.
//!
//! Every note the track plays is remembered in a fixed ring (no allocation),
//! timed in beats on the block clock's timeline. Two ways turn that memory
//! into a prompt:
//! - **armed**: from the next bar line (transport playing) or from the next
//!   note (transport stopped: free playing against the host tempo), record
//!   the chosen number of bars, then hand them over;
//! - **recent**: "use what I just played" — the latest complete bars that
//!   contain notes, with no arming beforehand.
//!
//! A note played a little early for a bar line belongs to the bar it was
//! aiming at: onsets up to [`EARLY_TOLERANCE`] before a bar line count for
//! that bar (common practice in MIDI recording, where a human's downbeat
//! often lands a few milliseconds early).
//!
//! A discontinuity (jump, loop wrap, start/stop, metre change) empties the
//! memory, because bars on either side of it were not played in a row; an
//! armed capture then waits for the next bar line again.

use crate::buffers::{CaptureKind, PromptCapture, RtNote};
use crate::clock::{BlockClock, Timeline};
use arrayvec::ArrayVec;
use nudgebar_music::MAX_MEASURES;

/// Notes remembered. At a few notes per beat this is minutes of playing;
/// only a flood of events can wrap it within four bars, and then the loss is
/// reported as cut notes.
pub const RING: usize = 2048;

/// How early (in beats) an onset may come and still count for the next bar
/// line: a 32nd note.
pub const EARLY_TOLERANCE: f64 = 0.125;

#[derive(Debug, Clone, Copy)]
struct Heard {
    seq: u64,
    start: f64,
    /// `f64::INFINITY` while the key is still held.
    end: f64,
    key: u8,
    velocity: u8,
    channel: u8,
}

const EMPTY: Heard = Heard {
    seq: 0,
    start: 0.0,
    end: 0.0,
    key: 0,
    velocity: 0,
    channel: 0,
};

/// What the capture is doing, for the editor and the host harness.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum CaptureStatus {
    Idle,
    /// Armed; waiting for the next bar line or first note.
    Waiting,
    /// Recording bar `bar` (1-based) of `of`.
    Recording {
        bar: u8,
        of: u8,
    },
}

/// Why "use what I just played" found nothing.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum GrabError {
    /// No note in any complete bar still remembered.
    NothingPlayed,
}

#[derive(Debug, Clone, Copy, PartialEq)]
enum Arm {
    Off,
    /// Armed for `bars`; `start` is the first captured beat once known.
    On {
        bars: u8,
        start: Option<f64>,
    },
}

/// Bar lines on the current timeline: `line + k·len`.
#[derive(Debug, Clone, Copy)]
struct Bars {
    line: f64,
    number: i64,
    len: f64,
}

impl Bars {
    fn of(&self, beat: f64) -> i64 {
        self.number + ((beat - self.line) / self.len + 1e-9).floor() as i64
    }
    fn start(&self, bar: i64) -> f64 {
        self.line + (bar - self.number) as f64 * self.len
    }
}

pub struct Capture {
    ring: [Heard; RING],
    /// Next write position in `ring`.
    next: usize,
    /// Valid entries in `ring` (≤ RING).
    len: usize,
    /// Sequence number of the next note (starts at 1; 0 marks "none").
    seq: u64,
    /// Latest start among notes the ring has overwritten: a window reaching
    /// back before it has lost notes.
    lost_up_to: f64,
    /// Sequence number of the note each (channel, key) is holding, or 0.
    held: [[u64; 128]; 16],
    arm: Arm,
    /// On the free timeline: where bar 1 of the player's phrase began (the
    /// first note after a silence).
    free_origin: Option<f64>,
    /// Beat of the latest note event, to tell a new phrase from a pause.
    last_activity: f64,
}

impl Default for Capture {
    fn default() -> Self {
        Self {
            ring: [EMPTY; RING],
            next: 0,
            len: 0,
            seq: 1,
            lost_up_to: f64::NEG_INFINITY,
            held: [[0; 128]; 16],
            arm: Arm::Off,
            free_origin: None,
            last_activity: f64::NEG_INFINITY,
        }
    }
}

impl Capture {
    /// Call first in every block. Forgets the past on a discontinuity.
    pub fn begin_block(&mut self, clock: &BlockClock) {
        if clock.discontinuity {
            self.forget();
            if let Arm::On { bars, .. } = self.arm {
                let start = (clock.timeline == Timeline::Host)
                    .then(|| self.next_bar_line(clock, clock.start_beat));
                self.arm = Arm::On { bars, start };
            }
        }
    }

    /// Empties the memory (notes and held keys); the arm state stays.
    pub fn forget(&mut self) {
        self.next = 0;
        self.len = 0;
        self.lost_up_to = f64::NEG_INFINITY;
        self.held = [[0; 128]; 16];
        self.free_origin = None;
        self.last_activity = f64::NEG_INFINITY;
    }

    /// Arms a capture of `bars` bars, at sample `offset` of the block.
    pub fn arm(&mut self, clock: &BlockClock, offset: u32, bars: u8) {
        let bars = bars.clamp(1, MAX_MEASURES);
        let start = match clock.timeline {
            Timeline::Host => Some(self.next_bar_line(clock, clock.beat_at(offset))),
            Timeline::Free => None,
        };
        self.arm = Arm::On { bars, start };
    }

    /// Cancels an armed capture.
    pub fn disarm(&mut self) {
        self.arm = Arm::Off;
    }

    pub fn status(&self, clock: &BlockClock) -> CaptureStatus {
        match self.arm {
            Arm::Off => CaptureStatus::Idle,
            Arm::On { start: None, .. } => CaptureStatus::Waiting,
            Arm::On {
                bars,
                start: Some(start),
            } => {
                let now = clock.end_beat();
                if now < start {
                    CaptureStatus::Waiting
                } else {
                    let bar = (((now - start) / clock.bar_len()).floor() as u8 + 1).min(bars);
                    CaptureStatus::Recording { bar, of: bars }
                }
            }
        }
    }

    /// A key went down at sample `offset`.
    pub fn note_on(&mut self, clock: &BlockClock, offset: u32, channel: u8, key: u8, velocity: u8) {
        let beat = clock.beat_at(offset);
        let (c, k) = ((channel & 15) as usize, (key & 127) as usize);
        if self.held[c][k] != 0 {
            self.note_off(clock, offset, Some(channel), Some(key));
        }
        if clock.timeline == Timeline::Free {
            let pause = MAX_MEASURES as f64 * clock.bar_len();
            if self.free_origin.is_none() || beat - self.last_activity > pause {
                self.free_origin = Some(beat);
            }
            if let Arm::On { bars, start: None } = self.arm {
                // Free playing: the first note after arming is the downbeat.
                self.free_origin = Some(beat);
                self.arm = Arm::On {
                    bars,
                    start: Some(beat),
                };
            }
        }
        self.last_activity = beat;
        let seq = self.seq;
        self.seq += 1;
        let slot = &mut self.ring[self.next];
        if self.len == RING {
            self.lost_up_to = self.lost_up_to.max(slot.start);
        }
        *slot = Heard {
            seq,
            start: beat,
            end: f64::INFINITY,
            key: k as u8,
            velocity: velocity.clamp(1, 127),
            channel: c as u8,
        };
        self.held[c][k] = seq;
        self.next = (self.next + 1) % RING;
        self.len = (self.len + 1).min(RING);
    }

    /// A key was released at sample `offset`; `None` channel or key is a
    /// wildcard (CLAP allows -1 for "all").
    pub fn note_off(
        &mut self,
        clock: &BlockClock,
        offset: u32,
        channel: Option<u8>,
        key: Option<u8>,
    ) {
        let beat = clock.beat_at(offset);
        self.last_activity = beat;
        for c in 0..16usize {
            if channel.is_some_and(|ch| ch as usize != c) {
                continue;
            }
            for k in 0..128usize {
                if key.is_some_and(|kk| kk as usize != k) {
                    continue;
                }
                let seq = self.held[c][k];
                if seq == 0 {
                    continue;
                }
                self.held[c][k] = 0;
                // The ring slot of this note, if it has not been overwritten.
                let back = (self.seq - seq) as usize;
                if back <= self.len {
                    let index = (self.next + RING - back) % RING;
                    if self.ring[index].seq == seq {
                        self.ring[index].end = beat;
                    }
                }
            }
        }
    }

    /// Call last in every block: returns the prompt when an armed capture
    /// has recorded all its bars.
    pub fn end_block(&mut self, clock: &BlockClock) -> Option<PromptCapture> {
        let Arm::On {
            bars,
            start: Some(start),
        } = self.arm
        else {
            return None;
        };
        let end = start + bars as f64 * clock.bar_len();
        if clock.end_beat() + 1e-9 < end {
            return None;
        }
        self.arm = Arm::Off;
        Some(self.window(clock, start, bars, CaptureKind::Armed))
    }

    /// "Use what I just played": the `bars` complete bars ending with the
    /// latest complete bar that has a note, as of sample `offset`.
    pub fn grab_recent(
        &self,
        clock: &BlockClock,
        offset: u32,
        bars: u8,
    ) -> Result<PromptCapture, GrabError> {
        let bars = bars.clamp(1, MAX_MEASURES);
        let grid = self.bars(clock).ok_or(GrabError::NothingPlayed)?;
        let now = clock.beat_at(offset);
        let current = grid.of(now);
        let last_full = self
            .iter()
            .map(|h| grid.of(h.start + EARLY_TOLERANCE))
            .filter(|&bar| bar < current)
            .max()
            .ok_or(GrabError::NothingPlayed)?;
        let first = last_full - bars as i64 + 1;
        Ok(self.window(clock, grid.start(first), bars, CaptureKind::Recent))
    }

    /// The bar grid of the current timeline, if there is one.
    fn bars(&self, clock: &BlockClock) -> Option<Bars> {
        match clock.timeline {
            Timeline::Host => Some(Bars {
                line: clock.bar_line,
                number: clock.bar_number,
                len: clock.bar_len(),
            }),
            Timeline::Free => self.free_origin.map(|line| Bars {
                line,
                number: 0,
                len: clock.bar_len(),
            }),
        }
    }

    /// First bar line at or after `beat` (within one sample's slack).
    fn next_bar_line(&self, clock: &BlockClock, beat: f64) -> f64 {
        let slack = 1.0 / clock.samples_per_beat;
        let bar = clock.bar_of(beat - slack);
        let line = clock.bar_start(bar);
        if line >= beat - slack {
            line
        } else {
            clock.bar_start(bar + 1)
        }
    }

    /// Remembered notes, oldest first.
    fn iter(&self) -> impl Iterator<Item = &Heard> {
        let first = (self.next + RING - self.len) % RING;
        (0..self.len).map(move |i| &self.ring[(first + i) % RING])
    }

    /// The notes of `bars` bars from `start`, timed from `start`.
    fn window(&self, clock: &BlockClock, start: f64, bars: u8, kind: CaptureKind) -> PromptCapture {
        let end = start + bars as f64 * clock.bar_len();
        let mut notes = ArrayVec::new();
        let mut cut = 0u32;
        if self.lost_up_to >= start - EARLY_TOLERANCE {
            cut += 1;
        }
        for h in self.iter() {
            if h.start < start - EARLY_TOLERANCE || h.start >= end - EARLY_TOLERANCE {
                continue;
            }
            let onset = (h.start - start).max(0.0);
            let off = h.end.min(end) - start;
            // A note released before the bar line it was early for still
            // sounds for at least a tiny length.
            let length = (off - onset).max(1.0 / 64.0);
            let note = RtNote {
                start: onset,
                length,
                key: h.key,
                velocity: h.velocity,
                channel: h.channel,
            };
            if notes.try_push(note).is_err() {
                cut += 1;
            }
        }
        PromptCapture {
            kind,
            time_signature: clock.time_signature,
            bars,
            tempo: clock.tempo,
            notes,
            notes_cut: cut,
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::clock::{Clock, HostTime};

    const SR: f64 = 48_000.0;

    fn host(pos: Option<f64>, tempo: f64, ts: (i32, i32)) -> HostTime {
        HostTime {
            playing: pos.is_some(),
            sample_rate: SR,
            tempo: Some(tempo),
            time_signature: Some(ts),
            pos_beats: pos,
            bar_start_beats: None,
            bar_number: None,
        }
    }

    /// Plays `notes` (start beat, length, key) through the capture in blocks
    /// of `block` samples from song position `from`, with the transport
    /// playing (or stopped when `from` is None: free clock from beat 0),
    /// until `until` beats; returns what the capture handed over.
    struct Run {
        clock: Clock,
        capture: Capture,
        beat: f64,
        playing: bool,
        tempo: f64,
        ts: (i32, i32),
        done: Vec<PromptCapture>,
    }

    impl Run {
        fn new(from: Option<f64>, tempo: f64, ts: (i32, i32)) -> Self {
            Self {
                clock: Clock::new(),
                capture: Capture::default(),
                beat: from.unwrap_or(0.0),
                playing: from.is_some(),
                tempo,
                ts,
                done: Vec::new(),
            }
        }

        fn block(&mut self, frames: u32, f: impl FnOnce(&mut Capture, &BlockClock)) {
            let pos = self.playing.then_some(self.beat);
            let c = self.clock.advance(&host(pos, self.tempo, self.ts), frames);
            self.capture.begin_block(&c);
            f(&mut self.capture, &c);
            if let Some(p) = self.capture.end_block(&c) {
                self.done.push(p);
            }
            self.beat = c.end_beat();
        }

        /// Plays notes (start, length, key) in beats relative to `self.beat`
        /// now, in blocks of `block` samples, for `beats` beats.
        fn play(&mut self, notes: &[(f64, f64, u8)], block: u32, beats: f64) {
            let t0 = self.beat;
            let spb = SR * 60.0 / self.tempo;
            let end = t0 + beats;
            while self.beat < end - 1e-12 {
                let frames = block.min((((end - self.beat) * spb).ceil() as u32).max(1));
                let b0 = self.beat;
                let b1 = b0 + frames as f64 / spb;
                let mut events: Vec<(f64, bool, u8)> = Vec::new();
                for &(s, l, k) in notes {
                    let (on, off) = (t0 + s, t0 + s + l);
                    if on >= b0 && on < b1 {
                        events.push((on, true, k));
                    }
                    if off >= b0 && off < b1 {
                        events.push((off, false, k));
                    }
                }
                events.sort_by(|a, b| a.0.total_cmp(&b.0).then(a.1.cmp(&b.1)));
                self.block(frames, |cap, c| {
                    for (beat, on, key) in events {
                        let offset = (((beat - c.start_beat) * c.samples_per_beat).round() as u32)
                            .min(frames - 1);
                        if on {
                            cap.note_on(c, offset, 0, key, 100);
                        } else {
                            cap.note_off(c, offset, Some(0), Some(key));
                        }
                    }
                });
            }
        }
    }

    fn starts(p: &PromptCapture) -> Vec<(f64, u8)> {
        p.notes
            .iter()
            .map(|n| ((n.start * 1e4).round() / 1e4, n.key))
            .collect()
    }

    #[test]
    fn armed_capture_starts_at_the_next_bar_line_at_several_tempos_and_metres() {
        for (tempo, ts, block) in [
            (120.0, (4, 4), 512),
            (93.0, (3, 4), 64),
            (140.0, (6, 8), 4096),
            (77.0, (7, 8), 333),
        ] {
            let bar = ts.0 as f64 * 4.0 / ts.1 as f64;
            // Transport at 1.3 bars: the capture must begin at bar 2 (index 2).
            let mut run = Run::new(Some(bar * 1.3), tempo, ts);
            run.block(16, |cap, c| {
                cap.arm(c, 0, 2);
                assert_eq!(cap.status(c), CaptureStatus::Waiting);
            });
            let lead_in = bar * 2.0 - run.beat;
            // A note before the bar line (not captured), an early downbeat
            // (captured at 0), notes in both bars, and one after the end.
            let notes = [
                (lead_in - 1.0, 0.5, 50),
                (lead_in - 0.05, 0.5, 60),
                (lead_in + 1.0, 0.5, 62),
                (lead_in + bar + 0.5, 0.25, 64),
                (lead_in + 2.0 * bar + 0.25, 0.25, 65),
            ];
            run.play(&notes, block, lead_in + 2.0 * bar + 1.0);
            assert_eq!(run.done.len(), 1, "{tempo} {ts:?}");
            let p = &run.done[0];
            assert_eq!(p.bars, 2);
            assert_eq!(
                (
                    p.time_signature.numerator as i32,
                    p.time_signature.denominator as i32
                ),
                ts
            );
            // Positions are exact to within one sample.
            let tol = 1.5 * tempo / 60.0 / SR;
            let got: Vec<(f64, u8)> = p.notes.iter().map(|n| (n.start, n.key)).collect();
            let want = [(0.0, 60), (1.0, 62), (bar + 0.5, 64)];
            assert_eq!(got.len(), want.len(), "{tempo} {ts:?}: {got:?}");
            for ((g, gk), (w, wk)) in got.iter().zip(want) {
                assert_eq!(*gk, wk);
                assert!((g - w).abs() <= tol, "{tempo} {ts:?}: {g} vs {w}");
            }
            assert!((p.notes[1].length - 0.5).abs() <= tol);
        }
    }

    #[test]
    fn free_playing_capture_starts_at_the_first_note() {
        let mut run = Run::new(None, 100.0, (4, 4));
        run.block(128, |cap, c| cap.arm(c, 0, 1));
        run.play(
            &[
                (2.0, 1.0, 60),
                (3.0, 1.0, 64),
                (5.5, 0.5, 67),
                (6.5, 0.5, 70),
            ],
            256,
            8.0,
        );
        assert_eq!(run.done.len(), 1);
        assert_eq!(starts(&run.done[0]), vec![(0.0, 60), (1.0, 64), (3.5, 67)]);
    }

    #[test]
    fn recent_bars_are_the_latest_complete_bars_with_notes() {
        let mut run = Run::new(Some(0.0), 120.0, (4, 4));
        // Bar 0: C; bar 1: E, G; bar 2: silent; now in bar 3.
        run.play(&[(0.0, 1.0, 60), (4.0, 1.0, 64), (6.0, 3.0, 67)], 512, 13.0);
        let c = run.clock.advance(&host(Some(run.beat), 120.0, (4, 4)), 64);
        let p = run.capture.grab_recent(&c, 0, 2).unwrap();
        assert_eq!(p.kind, CaptureKind::Recent);
        // The latest bar with notes is bar 1, so bars 0–1 are taken.
        assert_eq!(starts(&p), vec![(0.0, 60), (4.0, 64), (6.0, 67)]);
        // The G rang past the end of the window: clipped at the window end.
        assert!((p.notes[2].length - 2.0).abs() < 1e-3);
        // One bar only: bar 1.
        let p = run.capture.grab_recent(&c, 0, 1).unwrap();
        assert_eq!(starts(&p), vec![(0.0, 64), (2.0, 67)]);
    }

    #[test]
    fn an_unfinished_bar_is_not_grabbed_and_silence_is_reported() {
        let mut run = Run::new(Some(0.0), 120.0, (3, 4));
        run.play(&[], 512, 2.0);
        let c = run.clock.advance(&host(Some(run.beat), 120.0, (3, 4)), 64);
        assert_eq!(
            run.capture.grab_recent(&c, 0, 1).unwrap_err(),
            GrabError::NothingPlayed
        );
        let mut run = Run::new(Some(0.0), 120.0, (3, 4));
        run.play(&[(1.0, 0.5, 60)], 512, 2.0);
        let c = run.clock.advance(&host(Some(run.beat), 120.0, (3, 4)), 64);
        assert!(
            run.capture.grab_recent(&c, 0, 1).is_err(),
            "bar 0 is not complete yet"
        );
    }

    #[test]
    fn a_jump_forgets_the_past_and_rearms_at_the_next_bar() {
        let mut run = Run::new(Some(0.0), 120.0, (4, 4));
        run.play(&[(0.0, 1.0, 60)], 512, 5.0);
        run.block(64, |cap, c| cap.arm(c, 0, 1));
        // Jump to beat 33 (bar 8 + 1 beat): the capture waits for bar 9.
        run.beat = 33.0;
        run.play(&[(2.0, 1.0, 61), (3.0, 1.0, 62)], 512, 8.0);
        assert_eq!(run.done.len(), 1);
        assert_eq!(starts(&run.done[0]), vec![(0.0, 62)]);
        let c = run.clock.advance(&host(Some(run.beat), 120.0, (4, 4)), 64);
        let p = run.capture.grab_recent(&c, 0, 4).unwrap();
        assert!(
            p.notes.iter().all(|n| n.key != 60),
            "the note before the jump is forgotten"
        );
    }

    #[test]
    fn a_flood_of_notes_is_cut_and_counted_not_grown() {
        let mut run = Run::new(Some(0.0), 120.0, (4, 4));
        let notes: Vec<(f64, f64, u8)> = (0..3000)
            .map(|i| (i as f64 * 4.0 / 3000.0, 0.001, (i % 100) as u8))
            .collect();
        run.play(&notes, 4096, 6.0);
        let c = run.clock.advance(&host(Some(run.beat), 120.0, (4, 4)), 64);
        let p = run.capture.grab_recent(&c, 0, 1).unwrap();
        assert_eq!(p.notes.len(), crate::buffers::MAX_PROMPT_NOTES);
        assert!(p.notes_cut > 0);
    }
}
