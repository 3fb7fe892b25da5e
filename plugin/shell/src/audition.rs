//! Playing the selected take on the track, on the audio thread.
//!
//! The take loops over its length, locked to the host's bars: its first bar
//! sounds on every host bar whose number is a multiple of the take's bar
//! count (bar numbers as the host counts them, CLAP `clap_event_transport`
//! `bar_number`), so a two-bar take always starts on bars 0, 2, 4, … Each
//! block the audition plans *cues* (start/stop at a sample offset); the
//! caller merges them in time order with the input and sends them through
//! the stuck-note guard (`voices.rs`).
//!
//! Every note started is stopped: at its own end, at the loop wrap (a note
//! never rings into the next pass), and at once when the transport stops or
//! jumps, when another take or another set of takes is chosen, or when
//! listening to takes is switched off.

use crate::buffers::{TakeSet, MAX_TAKE_NOTES};
use crate::clock::{BlockClock, Timeline};
use arrayvec::ArrayVec;

/// Cues one block can hold. Stops of sounding notes always fit: starts are
/// refused once fewer than [`MAX_TAKE_NOTES`] places are left.
pub const MAX_CUES: usize = 4 * MAX_TAKE_NOTES;

#[derive(Debug, Clone, Copy, PartialEq)]
pub enum CueKind {
    /// Stop every take note (sent before anything else at its timing).
    StopAll,
    Stop {
        channel: u8,
        key: u8,
    },
    Start {
        channel: u8,
        key: u8,
        velocity: u8,
    },
}

#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Cue {
    /// Sample offset in the block.
    pub timing: u32,
    pub kind: CueKind,
}

impl Cue {
    /// Stops go before starts at the same sample, so a key that ends where
    /// it starts again is released first.
    fn order(&self) -> (u32, u8) {
        let rank = match self.kind {
            CueKind::StopAll => 0,
            CueKind::Stop { .. } => 1,
            CueKind::Start { .. } => 2,
        };
        (self.timing, rank)
    }
}

/// What the audition is asked to play this block.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub struct Want {
    pub generation: u64,
    pub take: usize,
}

#[derive(Debug, Clone, Copy)]
struct Sounding {
    channel: u8,
    key: u8,
    /// Loop position (beats) where it stops; never past the loop end.
    end: f64,
}

#[derive(Default)]
pub struct Audition {
    sounding: ArrayVec<Sounding, MAX_TAKE_NOTES>,
    /// The take the sounding notes belong to.
    current: Option<Want>,
    /// Loop position the next block starts at, when it continues this one:
    /// carried over so a note on a block boundary is played exactly once.
    carry: Option<f64>,
    cues: ArrayVec<Cue, MAX_CUES>,
    /// A discontinuity arrived in an empty block and is still to be acted on.
    missed_jump: bool,
}

impl Audition {
    /// The cues planned for the current block, in time order.
    pub fn cues(&self) -> &[Cue] {
        &self.cues
    }

    /// True while take notes are sounding.
    pub fn is_sounding(&self) -> bool {
        !self.sounding.is_empty()
    }

    /// Forgets everything; the caller has already silenced the take's notes
    /// (or cannot: deactivation) — used by `reset()`.
    pub fn clear(&mut self) {
        self.sounding.clear();
        self.current = None;
        self.carry = None;
        self.cues.clear();
        self.missed_jump = false;
    }

    /// Plans this block's cues. `want` is the take to hear (None: silence).
    pub fn plan(&mut self, clock: &BlockClock, set: Option<&TakeSet>, want: Option<Want>) {
        self.cues.clear();
        if clock.frames == 0 {
            // An empty block has no sample to put a cue on; the next one
            // catches up, including a jump this one announced.
            self.missed_jump |= clock.discontinuity;
            return;
        }
        let discontinuity = clock.discontinuity || std::mem::take(&mut self.missed_jump);
        let take = match (want, set) {
            (Some(w), Some(s))
                if s.generation == w.generation && clock.timeline == Timeline::Host =>
            {
                s.takes.get(w.take)
            }
            _ => None,
        };
        let want = take.and(want);
        if discontinuity || want != self.current {
            self.stop_all(0);
            self.current = want;
            self.carry = None;
        }
        let (Some(take), Some(set)) = (take, set) else {
            return;
        };
        let loop_len = set.len_beats();
        let spb = clock.samples_per_beat;
        let frames = clock.frames as f64;

        // Where in the loop this block starts, from the host's bar grid.
        let bar = clock.bar_of(clock.start_beat);
        let into_bar = clock.start_beat - clock.bar_start(bar);
        let from_host = (bar.rem_euclid(set.bars as i64) as f64 * clock.bar_len() + into_bar)
            .rem_euclid(loop_len);
        // Same slack as the clock's jump detection: two samples.
        let slack = 2.0 / spb;
        let mut phase = match self.carry {
            Some(c)
                if (c - from_host).abs() < slack || (c - from_host).abs() > loop_len - slack =>
            {
                c
            }
            Some(_) => {
                // The host moved the song position without saying so.
                self.stop_all(0);
                from_host
            }
            None => from_host,
        };

        let mut at = 0.0; // samples into the block where this segment starts
                          // A loop shorter than a block wraps several times; bound the passes
                          // so an absurd tempo cannot spin here.
        for _ in 0..64 {
            let to_wrap = (loop_len - phase) * spb;
            let seg = (frames - at).min(to_wrap);
            let phase_end = phase + seg / spb;
            let wraps = to_wrap <= frames - at;
            let timing = |p: f64| (at + (p - phase) * spb).round().clamp(0.0, frames - 1.0) as u32;

            // Notes ending in this segment (or at the wrap).
            let mut i = 0;
            while i < self.sounding.len() {
                let s = self.sounding[i];
                if s.end < phase_end || (wraps && s.end <= phase_end + 1e-9) {
                    self.push(Cue {
                        timing: timing(s.end),
                        kind: CueKind::Stop {
                            channel: s.channel,
                            key: s.key,
                        },
                    });
                    self.sounding.swap_remove(i);
                } else {
                    i += 1;
                }
            }
            // Notes starting in this segment.
            for n in take
                .notes
                .iter()
                .filter(|n| n.start >= phase && n.start < phase_end && n.start < loop_len)
            {
                if self.cues.len() + MAX_TAKE_NOTES >= MAX_CUES || self.sounding.is_full() {
                    break;
                }
                let on = timing(n.start);
                self.push(Cue {
                    timing: on,
                    kind: CueKind::Start {
                        channel: n.channel,
                        key: n.key,
                        velocity: n.velocity,
                    },
                });
                let end = (n.start + n.length).min(loop_len);
                let off = timing(end).max(on + 1);
                if (end < phase_end || (wraps && end <= phase_end + 1e-9)) && (off as f64) < frames
                {
                    self.push(Cue {
                        timing: off,
                        kind: CueKind::Stop {
                            channel: n.channel,
                            key: n.key,
                        },
                    });
                } else {
                    self.sounding.push(Sounding {
                        channel: n.channel,
                        key: n.key,
                        end,
                    });
                }
            }
            if !wraps {
                phase = phase_end;
                break;
            }
            // Loop wrap: nothing rings into the next pass.
            let wrap_at = (at + to_wrap).round().clamp(0.0, frames - 1.0) as u32;
            if !self.sounding.is_empty() {
                self.stop_all(wrap_at);
            }
            at += to_wrap;
            phase = 0.0;
            if at >= frames {
                break;
            }
        }
        self.carry = Some(phase);
        self.cues.sort_unstable_by_key(Cue::order);
    }

    fn stop_all(&mut self, timing: u32) {
        if !self.sounding.is_empty() || self.current.is_some() {
            self.push(Cue {
                timing,
                kind: CueKind::StopAll,
            });
        }
        self.sounding.clear();
    }

    fn push(&mut self, cue: Cue) {
        // Capacity is reserved for stops (see MAX_CUES); a full list can
        // only lose a start, never a stop, because starts check first.
        let _ = self.cues.try_push(cue);
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::clock::{Clock, HostTime};
    use nudgebar_music::{Note, Phrase, TimeSignature};

    const SR: f64 = 44_100.0;

    fn set(ts: TimeSignature, bars: u8, notes: &[(f64, f64, u8)], generation: u64) -> Box<TakeSet> {
        let phrase = Phrase::new(
            ts,
            bars,
            notes
                .iter()
                .map(|&(s, l, k)| Note::new(k, s, l, 100))
                .collect(),
        );
        let mut set = TakeSet::boxed();
        set.fill(generation, ts, bars, &[&phrase, &phrase], 0);
        set
    }

    /// Drives the audition and returns (absolute sample, cue) for each cue,
    /// and the loop-sounding balance is checked on the fly.
    struct Player {
        clock: Clock,
        audition: Audition,
        sample: i64,
        log: Vec<(i64, CueKind)>,
        on: std::collections::BTreeSet<(u8, u8)>,
    }

    impl Player {
        fn new() -> Self {
            Self {
                clock: Clock::new(),
                audition: Audition::default(),
                sample: 0,
                log: Vec::new(),
                on: Default::default(),
            }
        }
        fn block(
            &mut self,
            host: HostTime,
            frames: u32,
            set: Option<&TakeSet>,
            want: Option<Want>,
        ) {
            let c = self.clock.advance(&host, frames);
            self.audition.plan(&c, set, want);
            let mut last = 0;
            for cue in self.audition.cues() {
                assert!(
                    cue.timing < frames && cue.timing >= last,
                    "{:?}",
                    self.audition.cues()
                );
                last = cue.timing;
                match cue.kind {
                    CueKind::StopAll => self.on.clear(),
                    CueKind::Stop { channel, key } => {
                        assert!(self.on.remove(&(channel, key)), "stop of silent {key}")
                    }
                    CueKind::Start { channel, key, .. } => {
                        assert!(self.on.insert((channel, key)), "double start {key}")
                    }
                }
                self.log.push((self.sample + cue.timing as i64, cue.kind));
            }
            self.sample += frames as i64;
        }
    }

    fn host(pos: f64, tempo: f64, ts: TimeSignature) -> HostTime {
        HostTime {
            playing: true,
            sample_rate: SR,
            tempo: Some(tempo),
            time_signature: Some((ts.numerator as i32, ts.denominator as i32)),
            pos_beats: Some(pos),
            bar_start_beats: None,
            bar_number: None,
        }
    }

    #[test]
    fn notes_land_on_their_samples_locked_to_bars_at_several_tempos_and_metres() {
        for (tempo, ts, block) in [
            (120.0, (4, 4), 512u32),
            (87.0, (3, 4), 100),
            (150.0, (6, 8), 4096),
            (60.0, (7, 8), 1),
        ] {
            let ts = TimeSignature::new(ts.0, ts.1).unwrap();
            let bar = ts.quarters_per_measure();
            let notes = [(0.0, 0.5, 60), (1.0, 0.25, 62), (bar + 0.5, bar, 64)];
            let takes = set(ts, 2, &notes, 7);
            let mut p = Player::new();
            let spb = SR * 60.0 / tempo;
            // Start mid-way through bar 3 (odd: second bar of the loop).
            let mut pos = bar * 3.5;
            let start_sample = 0i64;
            let total = (bar * 4.0 * spb) as i64;
            while p.sample < total {
                let frames = block.min((total - p.sample) as u32);
                p.block(
                    host(pos, tempo, ts),
                    frames,
                    Some(&takes),
                    Some(Want {
                        generation: 7,
                        take: 1,
                    }),
                );
                pos += frames as f64 / spb;
            }
            // Expected: loop starts on bar 4 (beat 4·bar); song beat b sits
            // at sample (b − 3.5·bar)·spb.
            let at = |b: f64| ((b - bar * 3.5) * spb).round() as i64 + start_sample;
            let starts: Vec<(i64, u8)> = p
                .log
                .iter()
                .filter_map(|(s, k)| match k {
                    CueKind::Start { key, .. } => Some((*s, *key)),
                    _ => None,
                })
                .collect();
            let want = vec![
                (at(bar * 4.0), 60),
                (at(bar * 4.0 + 1.0), 62),
                (at(bar * 5.0 + 0.5), 64),
                (at(bar * 6.0), 60),
                (at(bar * 6.0 + 1.0), 62),
                (at(bar * 7.0 + 0.5), 64),
            ];
            let want: Vec<(i64, u8)> = want.into_iter().filter(|(s, _)| *s < total).collect();
            for ((gs, gk), (ws, wk)) in starts.iter().zip(&want) {
                assert_eq!(gk, wk, "{tempo} {ts}");
                assert!(
                    (gs - ws).abs() <= 1,
                    "{tempo} {ts}: key {gk} at {gs}, expected {ws}"
                );
            }
            assert_eq!(starts.len(), want.len(), "{tempo} {ts}: {starts:?}");
            // The long note (bar + 0.5, one bar long) is cut at the loop end.
            let stop64 = p.log.iter().find_map(|(s, k)| match k {
                CueKind::Stop { key: 64, .. } => Some(*s),
                CueKind::StopAll if *s >= at(bar * 6.0) - 1 => Some(*s),
                _ => None,
            });
            assert!((stop64.unwrap() - at(bar * 6.0)).abs() <= 1, "{tempo} {ts}");
        }
    }

    #[test]
    fn stop_jump_switch_and_silence_stop_every_note() {
        let ts = TimeSignature::FOUR_FOUR;
        let takes = set(ts, 1, &[(0.0, 4.0, 60)], 1);
        let newer = set(ts, 1, &[(0.0, 4.0, 67)], 2);
        let want = Some(Want {
            generation: 1,
            take: 0,
        });
        let mut p = Player::new();
        p.block(host(0.0, 120.0, ts), 64, Some(&takes), want);
        assert!(p.audition.is_sounding());
        // Transport stops.
        p.block(
            HostTime {
                playing: false,
                ..host(0.0, 120.0, ts)
            },
            64,
            Some(&takes),
            want,
        );
        assert!(p.on.is_empty());
        // Plays again, then jumps.
        p.block(host(0.0, 120.0, ts), 64, Some(&takes), want);
        p.block(host(8.0, 120.0, ts), 64, Some(&takes), want);
        assert_eq!(p.on.len(), 1, "restarts at the new bar");
        // Take switch, then a new set, then silence.
        p.block(
            host(8.0 + 64.0 / 22_050.0, 120.0, ts),
            64,
            Some(&takes),
            Some(Want {
                generation: 1,
                take: 1,
            }),
        );
        p.block(
            host(8.0 + 128.0 / 22_050.0, 120.0, ts),
            64,
            Some(&newer),
            Some(Want {
                generation: 2,
                take: 0,
            }),
        );
        p.block(
            host(8.0 + 192.0 / 22_050.0, 120.0, ts),
            64,
            Some(&newer),
            None,
        );
        assert!(p.on.is_empty() && !p.audition.is_sounding());
        let all_stops = p
            .log
            .iter()
            .filter(|(_, k)| matches!(k, CueKind::StopAll))
            .count();
        assert!(all_stops >= 4, "{:?}", p.log);
    }

    #[test]
    fn an_empty_block_carrying_a_jump_is_acted_on_next_block() {
        let ts = TimeSignature::FOUR_FOUR;
        let takes = set(ts, 1, &[(0.0, 4.0, 60)], 1);
        let want = Some(Want {
            generation: 1,
            take: 0,
        });
        let mut p = Player::new();
        p.block(host(0.0, 120.0, ts), 64, Some(&takes), want);
        assert_eq!(p.on.len(), 1);
        // The host jumps to bar 5 in an empty block, then plays on from there.
        p.block(host(20.0, 120.0, ts), 0, Some(&takes), want);
        assert!(p.audition.cues().is_empty());
        p.block(host(20.0, 120.0, ts), 64, Some(&takes), want);
        let last = p
            .log
            .iter()
            .rev()
            .take(2)
            .map(|(_, k)| *k)
            .collect::<Vec<_>>();
        assert!(matches!(last[1], CueKind::StopAll), "{:?}", p.log);
        assert!(matches!(last[0], CueKind::Start { key: 60, .. }));
    }

    #[test]
    fn a_note_on_a_block_boundary_plays_once() {
        let ts = TimeSignature::FOUR_FOUR;
        // At 120 BPM and 44.1 kHz a beat is 22,050 samples: blocks of 2,205
        // put beat 1.0 exactly on a block boundary.
        let takes = set(ts, 1, &[(1.0, 0.5, 72)], 3);
        let mut p = Player::new();
        let mut pos = 0.0;
        for _ in 0..40 {
            p.block(
                host(pos, 120.0, ts),
                2205,
                Some(&takes),
                Some(Want {
                    generation: 3,
                    take: 0,
                }),
            );
            pos += 2205.0 / 22_050.0;
        }
        let starts = p
            .log
            .iter()
            .filter(|(_, k)| matches!(k, CueKind::Start { .. }))
            .count();
        assert_eq!(starts, 1);
    }
}
