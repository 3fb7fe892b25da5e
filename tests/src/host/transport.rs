//! The host's transport: tempo, metre, play state and song position, turned
//! into the `clap_event_transport` each `process()` call receives.
//!
//! CLAP specification, `include/clap/events.h` (`clap_event_transport`):
//! - the transport given with a process call "indicates the available
//!   information at the start of the block";
//! - `song_pos_beats` is the "position in beats", `bar_start` the "start pos
//!   of the current bar" and `bar_number` counts bars so that the "bar at song
//!   pos 0 has the number 0";
//! - beat times are fixed point: `clap_beattime` = beats × `CLAP_BEATTIME_FACTOR`
//!   (`include/clap/fixedpoint.h`: `1LL << 31`), seconds likewise with
//!   `CLAP_SECTIME_FACTOR`.
//! CLAP does not define the beat's note value; hosts count quarter notes in
//! practice (common practice; nice-plug documents `pos_beats` as quarter notes),
//! and so does Nudgebar (see `nudgebar_music::meter`). This model keeps one
//! tempo and one time signature from bar 0 on, as a simple song would.

use clack_host::events::event_types::{TransportEvent, TransportFlags};
use clack_host::events::{EventFlags, EventHeader};
use clack_host::utils::{BeatTime, SecondsTime};
use nudgebar_music::TimeSignature;

/// The host's play head.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct HostTransport {
    /// Quarter notes per minute.
    pub tempo: f64,
    pub time_signature: TimeSignature,
    /// Song position at the start of the next block, in quarter notes.
    pub position: f64,
    pub playing: bool,
    pub recording: bool,
    /// Active loop `[start, end)` in quarter notes, if the host is looping.
    pub loop_range: Option<(f64, f64)>,
    /// Whether the host sends transport information at all; a free-running
    /// host (or a render with no timeline) passes none.
    pub present: bool,
}

impl HostTransport {
    /// A stopped transport at song position 0.
    pub fn new(tempo: f64, time_signature: TimeSignature) -> Self {
        Self {
            tempo,
            time_signature,
            position: 0.0,
            playing: false,
            recording: false,
            loop_range: None,
            present: true,
        }
    }

    /// Length of one bar in quarter notes.
    pub fn bar_len(&self) -> f64 {
        self.time_signature.quarters_per_measure()
    }

    /// The bar that contains `position` (bar 0 starts at song position 0).
    pub fn bar_number_at(&self, position: f64) -> i32 {
        // A small tolerance so a position computed as k × bar_len from sample
        // counts, which may land a hair below the bar line, still counts as bar k.
        ((position + 1e-9) / self.bar_len()).floor() as i32
    }

    /// Song position of the start of bar `bar`, in quarter notes.
    pub fn bar_start(&self, bar: i32) -> f64 {
        bar as f64 * self.bar_len()
    }

    /// Samples per quarter note at `sample_rate`.
    pub fn samples_per_beat(&self, sample_rate: f64) -> f64 {
        sample_rate * 60.0 / self.tempo
    }

    /// Quarter notes covered by `frames` samples.
    pub fn beats_in(&self, frames: u64, sample_rate: f64) -> f64 {
        frames as f64 / self.samples_per_beat(sample_rate)
    }

    /// Moves the play head to `position` (a jump, as when the user clicks the
    /// timeline).
    pub fn jump_to(&mut self, position: f64) {
        self.position = position;
    }

    /// The CLAP transport event for a block starting now.
    pub fn to_clap(&self) -> TransportEvent {
        let mut flags = TransportFlags::HAS_TEMPO
            | TransportFlags::HAS_BEATS_TIMELINE
            | TransportFlags::HAS_SECONDS_TIMELINE
            | TransportFlags::HAS_TIME_SIGNATURE;
        if self.playing {
            flags |= TransportFlags::IS_PLAYING;
        }
        if self.recording {
            flags |= TransportFlags::IS_RECORDING;
        }
        let (loop_start, loop_end) = match self.loop_range {
            Some(range) => {
                flags |= TransportFlags::IS_LOOP_ACTIVE;
                range
            }
            None => (0.0, 0.0),
        };
        let seconds = |beats: f64| SecondsTime::from_float(beats * 60.0 / self.tempo);
        let bar = self.bar_number_at(self.position);
        TransportEvent {
            header: EventHeader::new_core(0, EventFlags::empty()),
            flags,
            song_pos_beats: BeatTime::from_float(self.position),
            song_pos_seconds: seconds(self.position),
            tempo: self.tempo,
            tempo_inc: 0.0,
            loop_start_beats: BeatTime::from_float(loop_start),
            loop_end_beats: BeatTime::from_float(loop_end),
            loop_start_seconds: seconds(loop_start),
            loop_end_seconds: seconds(loop_end),
            bar_start: BeatTime::from_float(self.bar_start(bar)),
            bar_number: bar,
            time_signature_numerator: self.time_signature.numerator as u16,
            time_signature_denominator: self.time_signature.denominator as u16,
        }
    }

    /// How many of the next `frames` samples play before the loop end is
    /// reached, if the play head would cross it within them. Hosts split the
    /// block at the loop point so each part gets a truthful transport (common
    /// practice; CLAP also allows a mid-block transport event instead).
    pub fn frames_until_loop_end(&self, frames: u32, sample_rate: f64) -> Option<u32> {
        let (start, end) = self.loop_range?;
        if !self.playing || self.position >= end || end <= start {
            return None;
        }
        let until = ((end - self.position) * self.samples_per_beat(sample_rate)).round();
        if until < frames as f64 {
            Some(until.max(0.0) as u32)
        } else {
            None
        }
    }

    /// Advances the play head by `frames` samples if playing, wrapping to the
    /// loop start when the loop end is reached.
    pub fn advance(&mut self, frames: u32, sample_rate: f64) {
        if !self.playing {
            return;
        }
        self.position += self.beats_in(frames as u64, sample_rate);
        if let Some((start, end)) = self.loop_range {
            // Half a sample of tolerance: the split point is rounded to whole samples.
            let half_sample = 0.5 / self.samples_per_beat(sample_rate);
            if end > start && self.position >= end - half_sample {
                self.position = start + (self.position - end).max(0.0);
            }
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn bar_fields_follow_the_clap_definition() {
        // 7/8: a bar is 3.5 quarter notes. Song position 8.0 lies in bar 2
        // (bars start at 0, 3.5, 7.0, 10.5).
        let mut t = HostTransport::new(100.0, TimeSignature::new(7, 8).unwrap());
        t.jump_to(8.0);
        let e = t.to_clap();
        assert_eq!(e.bar_number, 2);
        assert_eq!(e.bar_start.to_float(), 7.0);
        // CLAP_BEATTIME_FACTOR = 1 << 31 (clap/fixedpoint.h).
        assert_eq!(e.song_pos_beats.to_bits(), 8 * (1i64 << 31));
        // 8 quarter notes at 100 per minute = 4.8 s.
        assert!((e.song_pos_seconds.to_float() - 4.8).abs() < 1e-9);
        assert_eq!(
            (e.time_signature_numerator, e.time_signature_denominator),
            (7, 8)
        );
        assert!(!e.flags.contains(TransportFlags::IS_PLAYING));
    }

    #[test]
    fn advancing_wraps_at_the_loop_end() {
        let mut t = HostTransport::new(120.0, TimeSignature::FOUR_FOUR);
        t.playing = true;
        t.loop_range = Some((4.0, 8.0));
        t.jump_to(7.5);
        // At 120 BPM and 48 kHz a quarter note is 24000 samples.
        assert_eq!(t.frames_until_loop_end(24000, 48000.0), Some(12000));
        t.advance(12000, 48000.0);
        assert_eq!(t.position, 4.0);
    }
}
