//! Invariant checks on a plugin's output stream, block by block.
//!
//! What is checked, and where the rule comes from:
//! - every event lies inside its block: CLAP `clap_event_header.time` is the
//!   "sample offset within the buffer" (`include/clap/events.h`);
//! - events come in time order: "The plugin must insert events in sample
//!   sorted order" (`clap_output_events`, same header);
//! - every note-on is matched by a note-off for the same channel and key
//!   before the stream goes quiet — a note left open hangs on the synth
//!   downstream. A CLAP note choke ends the matching notes (-1 is a wildcard,
//!   `clap_event_note`); for raw MIDI, a note-on with velocity 0 is a note-off
//!   and controller 123 ends all notes of its channel (MIDI 1.0 Detailed
//!   Specification, "Note Off" and "All Notes Off"). A CLAP NOTE_ON with
//!   velocity 0 stays a note-on, as `events.h` says.

use super::events::{OutputEvent, OutputKind};
use std::collections::BTreeMap;

/// A note the plugin sounded, in absolute host samples.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct SoundedNote {
    pub channel: i16,
    pub key: i16,
    /// CLAP velocity, 0..1.
    pub velocity: f64,
    pub start: u64,
    pub end: u64,
}

/// A broken rule, with the absolute sample where it happened.
#[derive(Debug, Clone, PartialEq)]
pub enum Violation {
    /// An event time at or past the block length.
    OutsideBlock {
        at_block: u64,
        time: u32,
        frames: u32,
    },
    /// An event earlier than the one before it in the same block.
    Unsorted {
        at_block: u64,
        time: u32,
        previous: u32,
    },
    /// A note-on with a wildcard or out-of-range channel or key.
    InvalidNote { at: u64, channel: i16, key: i16 },
    /// A second note-on for a key that is already sounding. Counted apart
    /// from stuck notes: most synths retrigger, but the first note's off then
    /// ends the second one early.
    Retrigger { at: u64, channel: i16, key: i16 },
    /// A note-off for a key that is not sounding. Harmless to a synth, but a
    /// sign the plugin lost track of its notes.
    OrphanNoteOff { at: u64, channel: i16, key: i16 },
    /// A note still sounding when the stream was required to be silent.
    Stuck { channel: i16, key: i16, since: u64 },
    /// The plugin produced more events than the host's output list holds.
    OutputRefused { at_block: u64, count: u32 },
}

impl Violation {
    /// Violations that break the stream for a listener (hanging notes,
    /// malformed events). Retriggers and orphan note-offs are reported but
    /// are not failures on their own.
    pub fn is_hard(&self) -> bool {
        !matches!(
            self,
            Violation::Retrigger { .. } | Violation::OrphanNoteOff { .. }
        )
    }
}

/// Follows the notes a plugin sends, across blocks.
#[derive(Debug, Default, Clone)]
pub struct NoteLedger {
    /// Sounding notes: (channel, key) → start samples and velocities, oldest first.
    open: BTreeMap<(i16, i16), Vec<(u64, f64)>>,
    /// Every note that started and ended, in the order it ended.
    pub finished: Vec<SoundedNote>,
    pub violations: Vec<Violation>,
    /// Blocks and note events seen, to show a check really looked at something.
    pub blocks: u64,
    pub note_ons: u64,
    pub note_offs: u64,
}

impl NoteLedger {
    pub fn new() -> Self {
        Self::default()
    }

    /// Reads one block of output, which started at absolute sample
    /// `block_start` and was `frames` long.
    pub fn observe_block(
        &mut self,
        block_start: u64,
        frames: u32,
        events: &[OutputEvent],
        refused: u32,
    ) {
        self.blocks += 1;
        if refused > 0 {
            self.violations.push(Violation::OutputRefused {
                at_block: block_start,
                count: refused,
            });
        }
        let mut previous = 0u32;
        for event in events {
            if event.time >= frames {
                self.violations.push(Violation::OutsideBlock {
                    at_block: block_start,
                    time: event.time,
                    frames,
                });
            }
            if event.time < previous {
                self.violations.push(Violation::Unsorted {
                    at_block: block_start,
                    time: event.time,
                    previous,
                });
            }
            previous = previous.max(event.time);
            self.observe(block_start + event.time as u64, event.kind);
        }
    }

    fn observe(&mut self, at: u64, kind: OutputKind) {
        match kind {
            OutputKind::NoteOn {
                channel,
                key,
                velocity,
            } => self.note_on(at, channel, key, velocity),
            OutputKind::NoteOff { channel, key, .. } => self.note_off(at, channel, key),
            OutputKind::NoteChoke { channel, key } => self.end_matching(at, channel, key),
            OutputKind::Midi([status, data1, data2]) => {
                let channel = (status & 0x0f) as i16;
                match status & 0xf0 {
                    0x90 if data2 > 0 => {
                        self.note_on(at, channel, data1 as i16, data2 as f64 / 127.0)
                    }
                    0x90 | 0x80 => self.note_off(at, channel, data1 as i16),
                    0xb0 if data1 == 123 => self.end_matching(at, channel, -1),
                    _ => {}
                }
            }
            _ => {}
        }
    }

    fn note_on(&mut self, at: u64, channel: i16, key: i16, velocity: f64) {
        self.note_ons += 1;
        if !(0..16).contains(&channel) || !(0..128).contains(&key) {
            self.violations
                .push(Violation::InvalidNote { at, channel, key });
            return;
        }
        let stack = self.open.entry((channel, key)).or_default();
        if !stack.is_empty() {
            self.violations
                .push(Violation::Retrigger { at, channel, key });
        }
        stack.push((at, velocity));
    }

    fn note_off(&mut self, at: u64, channel: i16, key: i16) {
        self.note_offs += 1;
        // First in, first out: with retriggers, the oldest note ends first,
        // as on a synth that stacks voices.
        match self.open.get_mut(&(channel, key)) {
            Some(stack) if !stack.is_empty() => {
                let (start, velocity) = stack.remove(0);
                self.finished.push(SoundedNote {
                    channel,
                    key,
                    velocity,
                    start,
                    end: at,
                });
                if stack.is_empty() {
                    self.open.remove(&(channel, key));
                }
            }
            _ => self
                .violations
                .push(Violation::OrphanNoteOff { at, channel, key }),
        }
    }

    /// Ends every sounding note matching `channel`/`key` (-1 matches all).
    fn end_matching(&mut self, at: u64, channel: i16, key: i16) {
        let matching: Vec<(i16, i16)> = self
            .open
            .keys()
            .filter(|(c, k)| (channel < 0 || *c == channel) && (key < 0 || *k == key))
            .copied()
            .collect();
        for (c, k) in matching {
            for (start, velocity) in self.open.remove(&(c, k)).unwrap_or_default() {
                self.finished.push(SoundedNote {
                    channel: c,
                    key: k,
                    velocity,
                    start,
                    end: at,
                });
            }
        }
    }

    /// Notes sounding right now: (channel, key, start sample).
    pub fn sounding(&self) -> Vec<(i16, i16, u64)> {
        self.open
            .iter()
            .flat_map(|(&(c, k), starts)| starts.iter().map(move |&(s, _)| (c, k, s)))
            .collect()
    }

    /// Records every still-sounding note as stuck: call this at a point where
    /// the plugin must be silent (transport stopped, mode switched, …).
    /// Returns how many were stuck.
    pub fn require_silence(&mut self) -> usize {
        let stuck = self.sounding();
        for &(channel, key, since) in &stuck {
            self.violations.push(Violation::Stuck {
                channel,
                key,
                since,
            });
        }
        // Forget them so one stuck note is reported once.
        self.open.clear();
        stuck.len()
    }

    /// The host silences downstream notes of a plugin it deactivates (common
    /// practice: a plugin cannot send anything once deactivated). Returns the
    /// notes that were still open, which the caller may report.
    pub fn host_flush(&mut self) -> Vec<(i16, i16, u64)> {
        let open = self.sounding();
        self.open.clear();
        open
    }

    /// The hard violations (see [`Violation::is_hard`]).
    pub fn hard_violations(&self) -> Vec<&Violation> {
        self.violations.iter().filter(|v| v.is_hard()).collect()
    }

    /// Panics with a readable list if any hard rule was broken.
    pub fn assert_clean(&self, context: &str) {
        let hard = self.hard_violations();
        assert!(
            hard.is_empty(),
            "{context}: the plugin's note output broke {} rule(s) over {} blocks:\n{}",
            hard.len(),
            self.blocks,
            hard.iter()
                .map(|v| format!("  {v:?}"))
                .collect::<Vec<_>>()
                .join("\n")
        );
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    fn on(time: u32, key: i16) -> OutputEvent {
        OutputEvent {
            time,
            kind: OutputKind::NoteOn {
                channel: 0,
                key,
                velocity: 0.8,
            },
        }
    }
    fn off(time: u32, key: i16) -> OutputEvent {
        OutputEvent {
            time,
            kind: OutputKind::NoteOff {
                channel: 0,
                key,
                velocity: 0.0,
            },
        }
    }

    #[test]
    fn a_note_split_over_blocks_is_one_note() {
        let mut l = NoteLedger::new();
        l.observe_block(0, 64, &[on(10, 60)], 0);
        l.observe_block(64, 64, &[off(5, 60)], 0);
        assert_eq!(l.require_silence(), 0);
        assert_eq!(
            l.finished,
            vec![SoundedNote {
                channel: 0,
                key: 60,
                velocity: 0.8,
                start: 10,
                end: 69
            }]
        );
        l.assert_clean("split note");
    }

    #[test]
    fn a_missing_note_off_is_reported_as_stuck() {
        let mut l = NoteLedger::new();
        l.observe_block(0, 64, &[on(0, 60), on(1, 64), off(2, 60)], 0);
        assert_eq!(l.require_silence(), 1);
        assert_eq!(
            l.violations,
            vec![Violation::Stuck {
                channel: 0,
                key: 64,
                since: 1
            }]
        );
    }

    #[test]
    fn out_of_block_and_unsorted_events_are_caught() {
        let mut l = NoteLedger::new();
        l.observe_block(0, 32, &[on(20, 60), off(3, 60), on(32, 61)], 0);
        assert!(l.violations.contains(&Violation::Unsorted {
            at_block: 0,
            time: 3,
            previous: 20
        }));
        assert!(l.violations.contains(&Violation::OutsideBlock {
            at_block: 0,
            time: 32,
            frames: 32
        }));
    }

    #[test]
    fn midi_zero_velocity_and_all_notes_off_end_notes() {
        // MIDI 1.0: 0x90 with velocity 0 is a note-off; CC 123 is All Notes Off.
        let mut l = NoteLedger::new();
        let midi = |time, data| OutputEvent {
            time,
            kind: OutputKind::Midi(data),
        };
        l.observe_block(
            0,
            64,
            &[midi(0, [0x91, 60, 100]), midi(1, [0x91, 60, 0])],
            0,
        );
        l.observe_block(
            64,
            64,
            &[
                midi(0, [0x91, 62, 100]),
                midi(1, [0x91, 64, 100]),
                midi(9, [0xb1, 123, 0]),
            ],
            0,
        );
        assert_eq!(l.require_silence(), 0);
        assert_eq!(l.finished.len(), 3);
    }

    #[test]
    fn a_clap_choke_with_wildcard_key_ends_the_channel() {
        let mut l = NoteLedger::new();
        let choke = OutputEvent {
            time: 5,
            kind: OutputKind::NoteChoke {
                channel: 0,
                key: -1,
            },
        };
        l.observe_block(0, 64, &[on(0, 60), on(1, 67), choke], 0);
        assert_eq!(l.require_silence(), 0);
    }
}
