//! Where each block sits in musical time.
//!
//! The host's transport (CLAP 1.2 `clap_event_transport`: tempo, time
//! signature, song position in beats, bar start and bar number, all given per
//! block) is turned into a [`BlockClock`]: beats per sample, the beat at the
//! block's first sample, and the bar grid. With the transport stopped, or
//! from a host that sends no position, a free-running beat counter at the
//! host tempo (120 BPM when the host gives none — the MIDI file default of
//! 500,000 µs per quarter, SMF 1.0) stands in, so free playing can still be
//! captured. Discontinuities (position jumps, loop wraps, start/stop, tempo or
//! metre changes) are flagged so capture and audition can react.

use nudgebar_music::TimeSignature;

/// Tempo used when the host gives none.
pub const DEFAULT_TEMPO: f64 = 120.0;

/// The host transport, reduced to what Nudgebar uses. Built from nice-plug's
/// `Transport` in `lib.rs`; a plain struct so the realtime modules can be
/// tested without a host.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct HostTime {
    pub playing: bool,
    pub sample_rate: f64,
    pub tempo: Option<f64>,
    pub time_signature: Option<(i32, i32)>,
    /// Song position of the block's first sample, in quarter-note beats.
    pub pos_beats: Option<f64>,
    /// Position of the current bar's first beat, in beats.
    pub bar_start_beats: Option<f64>,
    /// Index of the current bar (0-based, as CLAP counts).
    pub bar_number: Option<i32>,
}

/// Which timeline the beats of a block belong to.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Timeline {
    /// The host's song position (transport playing).
    Host,
    /// Nudgebar's own counter (transport stopped or no position from the host).
    Free,
}

/// One block, placed in musical time.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct BlockClock {
    pub timeline: Timeline,
    pub frames: u32,
    pub tempo: f64,
    pub samples_per_beat: f64,
    pub time_signature: TimeSignature,
    /// Beat at the block's first sample, on `timeline`.
    pub start_beat: f64,
    /// A bar line on `timeline` (host: the current bar's start)…
    pub bar_line: f64,
    /// …and the bar number it has (free timeline: 0).
    pub bar_number: i64,
    /// True when this block does not continue the previous one: position
    /// jump, loop wrap, start/stop, tempo or metre change, first block.
    pub discontinuity: bool,
}

impl BlockClock {
    /// Length of one bar in beats.
    pub fn bar_len(&self) -> f64 {
        self.time_signature.quarters_per_measure()
    }

    /// Beat at sample `offset` of the block.
    pub fn beat_at(&self, offset: u32) -> f64 {
        self.start_beat + offset as f64 / self.samples_per_beat
    }

    /// Beat just past the block's last sample.
    pub fn end_beat(&self) -> f64 {
        self.beat_at(self.frames)
    }

    /// Sample offset (from the block start) of `beat`, rounded to the nearest
    /// sample; may be outside the block.
    pub fn offset_of(&self, beat: f64) -> i64 {
        ((beat - self.start_beat) * self.samples_per_beat).round() as i64
    }

    /// Bar number that `beat` falls in, with a small tolerance so a beat a
    /// rounding error short of a bar line counts as on it.
    pub fn bar_of(&self, beat: f64) -> i64 {
        let bars = (beat - self.bar_line) / self.bar_len();
        self.bar_number + (bars + 1e-9).floor() as i64
    }

    /// Beat at which bar `bar` starts.
    pub fn bar_start(&self, bar: i64) -> f64 {
        self.bar_line + (bar - self.bar_number) as f64 * self.bar_len()
    }
}

/// Turns successive host transports into [`BlockClock`]s. Holds no heap data.
#[derive(Debug, Clone)]
pub struct Clock {
    /// Free-running beat counter for the stopped transport.
    free_beat: f64,
    /// What the previous block said, to detect discontinuities.
    previous: Option<BlockClock>,
}

impl Default for Clock {
    fn default() -> Self {
        Self::new()
    }
}

impl Clock {
    pub fn new() -> Self {
        Self {
            free_beat: 0.0,
            previous: None,
        }
    }

    /// Forget the past: the next block is a discontinuity (used on
    /// activate/reset).
    pub fn reset(&mut self) {
        self.previous = None;
    }

    /// Places a block of `frames` samples.
    pub fn advance(&mut self, host: &HostTime, frames: u32) -> BlockClock {
        let tempo = host
            .tempo
            .filter(|t| t.is_finite() && (1.0..=1000.0).contains(t))
            .unwrap_or(DEFAULT_TEMPO);
        let sample_rate = if host.sample_rate.is_finite() && host.sample_rate >= 1000.0 {
            host.sample_rate
        } else {
            48_000.0
        };
        let samples_per_beat = sample_rate * 60.0 / tempo;
        let time_signature = host
            .time_signature
            .and_then(|(n, d)| {
                TimeSignature::new(u8::try_from(n).ok()?, u8::try_from(d).ok()?).ok()
            })
            .unwrap_or_default();
        let bar_len = time_signature.quarters_per_measure();

        let host_position = host.pos_beats.filter(|p| p.is_finite());
        let clock = match (host.playing, host_position) {
            (true, Some(pos)) => {
                // Prefer the host's own bar grid; derive it from the position
                // when the host leaves it out (nice-plug does the same).
                let (bar_line, bar_number) = match (
                    host.bar_start_beats.filter(|b| b.is_finite()),
                    host.bar_number,
                ) {
                    (Some(start), Some(number)) => (start, number as i64),
                    (Some(start), None) => (start, (start / bar_len).round() as i64),
                    _ => {
                        let bar = ((pos / bar_len) + 1e-9).floor();
                        (bar * bar_len, bar as i64)
                    }
                };
                BlockClock {
                    timeline: Timeline::Host,
                    frames,
                    tempo,
                    samples_per_beat,
                    time_signature,
                    start_beat: pos,
                    bar_line,
                    bar_number,
                    discontinuity: false,
                }
            }
            _ => BlockClock {
                timeline: Timeline::Free,
                frames,
                tempo,
                samples_per_beat,
                time_signature,
                start_beat: self.free_beat,
                bar_line: 0.0,
                bar_number: 0,
                discontinuity: false,
            },
        };
        let clock = BlockClock {
            discontinuity: self.breaks_from_previous(&clock),
            ..clock
        };
        self.free_beat = if clock.timeline == Timeline::Free {
            clock.end_beat()
        } else {
            0.0
        };
        self.previous = Some(clock);
        clock
    }

    fn breaks_from_previous(&self, now: &BlockClock) -> bool {
        let Some(prev) = self.previous else {
            return true;
        };
        if prev.timeline != now.timeline || prev.time_signature != now.time_signature {
            return true;
        }
        if (prev.tempo - now.tempo).abs() > 1e-9 * prev.tempo.max(1.0) {
            // A tempo change keeps the beat position continuous (the host
            // changes speed, not place), so only a jump in beats counts.
            let expected = prev.end_beat();
            return (now.start_beat - expected).abs()
                > 2.0 / now.samples_per_beat.min(prev.samples_per_beat);
        }
        // Allow two samples of slack for hosts that round positions.
        let expected = prev.end_beat();
        (now.start_beat - expected).abs() > 2.0 / now.samples_per_beat
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    fn playing(pos: f64, tempo: f64, ts: (i32, i32)) -> HostTime {
        HostTime {
            playing: true,
            sample_rate: 48_000.0,
            tempo: Some(tempo),
            time_signature: Some(ts),
            pos_beats: Some(pos),
            bar_start_beats: None,
            bar_number: None,
        }
    }

    #[test]
    fn continuous_blocks_are_not_discontinuities() {
        let mut clock = Clock::new();
        let first = clock.advance(&playing(0.0, 120.0, (4, 4)), 512);
        assert!(first.discontinuity, "the first block has no past");
        let next_pos = first.end_beat();
        let second = clock.advance(&playing(next_pos, 120.0, (4, 4)), 512);
        assert!(!second.discontinuity);
        // 120 BPM at 48 kHz: 24,000 samples per beat.
        assert!((second.samples_per_beat - 24_000.0).abs() < 1e-9);
    }

    #[test]
    fn jumps_stops_and_metre_changes_are_flagged() {
        let mut clock = Clock::new();
        clock.advance(&playing(8.0, 100.0, (4, 4)), 256);
        assert!(
            clock
                .advance(&playing(2.0, 100.0, (4, 4)), 256)
                .discontinuity,
            "jump back (loop wrap)"
        );
        let c = clock.advance(&playing(2.0 + 256.0 / 28_800.0, 100.0, (3, 4)), 256);
        assert!(c.discontinuity, "metre change");
        let stopped = HostTime {
            playing: false,
            ..playing(0.0, 100.0, (3, 4))
        };
        assert!(clock.advance(&stopped, 256).discontinuity, "stop");
        assert!(
            !clock.advance(&stopped, 256).discontinuity,
            "free clock runs on"
        );
    }

    #[test]
    fn bar_grid_follows_the_metre() {
        let mut clock = Clock::new();
        // 6/8: a bar is 3 quarter beats; position 7.5 is in bar 2 (0-based).
        let c = clock.advance(&playing(7.5, 90.0, (6, 8)), 64);
        assert_eq!(c.bar_of(7.5), 2);
        assert_eq!(c.bar_start(3), 9.0);
        // 7/8: 3.5 beats a bar.
        let c = clock.advance(&playing(7.0, 90.0, (7, 8)), 64);
        assert_eq!(c.bar_of(7.0), 2);
        assert_eq!(
            c.bar_of(6.999_999_999_99),
            2,
            "a rounding error short of the line is on it"
        );
    }

    #[test]
    fn missing_or_absurd_host_values_fall_back() {
        let mut clock = Clock::new();
        let host = HostTime {
            playing: false,
            sample_rate: f64::NAN,
            tempo: Some(0.0),
            time_signature: Some((4, 3)),
            pos_beats: None,
            bar_start_beats: None,
            bar_number: None,
        };
        let c = clock.advance(&host, 100);
        assert_eq!(c.tempo, DEFAULT_TEMPO);
        assert_eq!(c.time_signature, TimeSignature::FOUR_FOUR);
        assert_eq!(c.timeline, Timeline::Free);
        // Playing but without a position: free timeline too.
        let c = clock.advance(
            &HostTime {
                playing: true,
                ..host
            },
            100,
        );
        assert_eq!(c.timeline, Timeline::Free);
    }
}
