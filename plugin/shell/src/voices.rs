//! The stuck-note guard: every note Nudgebar sends out is tracked here, so
//! each note-on is matched by exactly one note-off, whoever started it.
//!
//! Two sources share the track's output — the player's input (passed
//! through) and the selected take (auditioned). Both go through [`Voices`],
//! which owns one slot per (channel, key). Rules:
//! - starting a key that is already sounding first stops it (a retrigger),
//!   so the receiving instrument never sees two ons without an off;
//! - a note-off is only sent for a key the same source is sounding (a source
//!   that lost its key to the other one gets its late off swallowed);
//! - [`Voices::stop_source`] silences one source at once (transport stop,
//!   take switch, bypass…).
//!
//! Events must be fed in time order; the caller merges input and take
//! events by timing before they reach here, so the output stays sorted as
//! CLAP requires of a plugin's output event list (CLAP 1.2, `events.h`:
//! "events must be sorted by time").

use nice_plug::midi::{Channel, Key, NoteEvent, VoiceID};

/// Who started a sounding note.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Source {
    Input,
    Take,
}

#[derive(Debug, Clone, Copy, PartialEq, Eq)]
enum Slot {
    Silent,
    Sounding { source: Source, voice_id: VoiceID },
}

/// Where outgoing events go: the host in `process()`, a list in tests.
pub trait NoteSink {
    fn send(&mut self, event: NoteEvent<()>);
}

impl NoteSink for Vec<NoteEvent<()>> {
    fn send(&mut self, event: NoteEvent<()>) {
        self.push(event);
    }
}

/// One slot per MIDI channel and key: 2048 small entries, inline, so
/// tracking never allocates.
pub struct Voices {
    slots: [[Slot; 128]; 16],
    /// Sounding notes per source, so the all-off sweep is skipped when idle.
    sounding: [usize; 2],
}

impl Default for Voices {
    fn default() -> Self {
        Self {
            slots: [[Slot::Silent; 128]; 16],
            sounding: [0; 2],
        }
    }
}

fn index(source: Source) -> usize {
    match source {
        Source::Input => 0,
        Source::Take => 1,
    }
}

impl Voices {
    /// Number of notes `source` is sounding now.
    pub fn sounding(&self, source: Source) -> usize {
        self.sounding[index(source)]
    }

    /// Starts a note, retriggering the key if it already sounds.
    pub fn start(
        &mut self,
        sink: &mut impl NoteSink,
        source: Source,
        timing: u32,
        channel: u8,
        key: u8,
        velocity: f32,
        voice_id: VoiceID,
    ) {
        let (c, k) = ((channel & 15) as usize, (key & 127) as usize);
        if let Slot::Sounding {
            source: old,
            voice_id: old_id,
        } = self.slots[c][k]
        {
            sink.send(note_off(timing, old_id, c as u8, k as u8));
            self.sounding[index(old)] -= 1;
        }
        sink.send(NoteEvent::NoteOn {
            timing,
            voice_id,
            channel: Channel::Number(c as u8),
            key: Key::Number(k as u8),
            velocity: velocity.clamp(1.0 / 127.0, 1.0),
        });
        self.slots[c][k] = Slot::Sounding { source, voice_id };
        self.sounding[index(source)] += 1;
    }

    /// Stops a note if `source` is sounding it; otherwise does nothing.
    pub fn stop(
        &mut self,
        sink: &mut impl NoteSink,
        source: Source,
        timing: u32,
        channel: u8,
        key: u8,
    ) {
        let (c, k) = ((channel & 15) as usize, (key & 127) as usize);
        if let Slot::Sounding {
            source: owner,
            voice_id,
        } = self.slots[c][k]
        {
            if owner == source {
                sink.send(note_off(timing, voice_id, c as u8, k as u8));
                self.slots[c][k] = Slot::Silent;
                self.sounding[index(source)] -= 1;
            }
        }
    }

    /// Stops every note of `source` on the given channel/key, where `None`
    /// stands for any (CLAP wildcard note-offs use key or channel -1).
    pub fn stop_matching(
        &mut self,
        sink: &mut impl NoteSink,
        source: Source,
        timing: u32,
        channel: Option<u8>,
        key: Option<u8>,
    ) {
        if self.sounding[index(source)] == 0 {
            return;
        }
        for c in 0..16u8 {
            if channel.is_some_and(|ch| ch != c) {
                continue;
            }
            for k in 0..128u8 {
                if key.is_some_and(|kk| kk != k) {
                    continue;
                }
                self.stop(sink, source, timing, c, k);
            }
        }
    }

    /// Stops everything `source` is sounding.
    pub fn stop_source(&mut self, sink: &mut impl NoteSink, source: Source, timing: u32) {
        self.stop_matching(sink, source, timing, None, None);
    }

    /// True when `source` is sounding this key (for forwarding per-note
    /// expression only to notes that are actually on).
    pub fn is_sounding(&self, source: Source, channel: u8, key: u8) -> bool {
        matches!(self.slots[(channel & 15) as usize][(key & 127) as usize], Slot::Sounding { source: s, .. } if s == source)
    }
}

fn note_off(timing: u32, voice_id: VoiceID, channel: u8, key: u8) -> NoteEvent<()> {
    NoteEvent::NoteOff {
        timing,
        voice_id,
        channel: Channel::Number(channel),
        key: Key::Number(key),
        velocity: 0.0,
    }
}

/// What an input event does to a key, with the MIDI conventions folded in:
/// a note-on with velocity 0 is a release (MIDI 1.0), a choke is a release,
/// and `None` channel/key on a release is a CLAP wildcard (-1, "all").
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum KeyAction {
    Down {
        timing: u32,
        channel: u8,
        key: u8,
        velocity: f32,
        voice_id: VoiceID,
    },
    Up {
        timing: u32,
        channel: Option<u8>,
        key: Option<u8>,
    },
}

/// Reads an event as a key action; `None` for everything else (and for a
/// note-on without a definite key, which cannot be played).
pub fn key_action(event: &NoteEvent<()>) -> Option<KeyAction> {
    match *event {
        NoteEvent::NoteOn {
            timing,
            voice_id,
            channel,
            key,
            velocity,
        } => {
            let (channel, key) = (channel.number()?, key.number()?);
            Some(if velocity <= 0.0 {
                KeyAction::Up {
                    timing,
                    channel: Some(channel),
                    key: Some(key),
                }
            } else {
                KeyAction::Down {
                    timing,
                    channel,
                    key,
                    velocity,
                    voice_id,
                }
            })
        }
        NoteEvent::NoteOff {
            timing,
            channel,
            key,
            ..
        }
        | NoteEvent::Choke {
            timing,
            channel,
            key,
            ..
        } => Some(KeyAction::Up {
            timing,
            channel: channel.number(),
            key: key.number(),
        }),
        _ => None,
    }
}

/// Passes one input event on according to the listen mode: notes go through
/// the tracker (or are held back when only the take is heard); channel-wide
/// messages (controllers, pitch bend, program change) always pass, since they
/// shape whatever the track is playing.
pub fn pass_input(
    event: NoteEvent<()>,
    passes_notes: bool,
    voices: &mut Voices,
    sink: &mut impl NoteSink,
) {
    match key_action(&event) {
        Some(KeyAction::Down {
            timing,
            channel,
            key,
            velocity,
            voice_id,
        }) => {
            if passes_notes {
                voices.start(
                    sink,
                    Source::Input,
                    timing,
                    channel,
                    key,
                    velocity,
                    voice_id,
                );
            }
            return;
        }
        Some(KeyAction::Up {
            timing,
            channel,
            key,
        }) => {
            voices.stop_matching(sink, Source::Input, timing, channel, key);
            return;
        }
        None => {}
    }
    match event {
        // Sent by plugins to hosts, never forwarded; and a note-on with a
        // wildcard key names no key to play.
        NoteEvent::VoiceTerminated { .. } | NoteEvent::NoteOn { .. } => {}
        NoteEvent::PolyPressure { channel, key, .. }
        | NoteEvent::PolyVolume { channel, key, .. }
        | NoteEvent::PolyPan { channel, key, .. }
        | NoteEvent::PolyTuning { channel, key, .. }
        | NoteEvent::PolyVibrato { channel, key, .. }
        | NoteEvent::PolyExpression { channel, key, .. }
        | NoteEvent::PolyBrightness { channel, key, .. } => {
            let on = match (channel.number(), key.number()) {
                (Some(c), Some(k)) => voices.is_sounding(Source::Input, c, k),
                _ => passes_notes,
            };
            if on {
                sink.send(event);
            }
        }
        other => sink.send(other),
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    /// Checks the note invariant on an output stream: no second on for a
    /// sounding key, no off for a silent key, nothing left sounding.
    pub fn assert_balanced(events: &[NoteEvent<()>]) {
        let mut on = [[false; 128]; 16];
        let mut last_timing = 0;
        for e in events {
            assert!(e.timing() >= last_timing, "events out of order: {events:?}");
            last_timing = e.timing();
            match *e {
                NoteEvent::NoteOn { channel, key, .. } => {
                    let (c, k) = (
                        channel.number().unwrap() as usize,
                        key.number().unwrap() as usize,
                    );
                    assert!(!on[c][k], "double note-on {c}/{k}");
                    on[c][k] = true;
                }
                NoteEvent::NoteOff { channel, key, .. } => {
                    let (c, k) = (
                        channel.number().unwrap() as usize,
                        key.number().unwrap() as usize,
                    );
                    assert!(on[c][k], "note-off for silent {c}/{k}");
                    on[c][k] = false;
                }
                _ => {}
            }
        }
        assert!(on.iter().flatten().all(|s| !s), "notes left sounding");
    }

    #[test]
    fn retrigger_and_late_offs_keep_the_stream_balanced() {
        let mut v = Voices::default();
        let mut out: Vec<NoteEvent<()>> = Vec::new();
        v.start(&mut out, Source::Input, 0, 0, 60, 0.8, VoiceID::Wildcard);
        // The take takes over the same key: the input's note is stopped first.
        v.start(&mut out, Source::Take, 10, 0, 60, 0.5, VoiceID::Wildcard);
        // The input's own late off is swallowed; the take's off goes out.
        v.stop(&mut out, Source::Input, 20, 0, 60);
        v.stop(&mut out, Source::Take, 30, 0, 60);
        assert_eq!(out.len(), 4);
        assert_balanced(&out);
    }

    #[test]
    fn input_routing_follows_the_listen_mode() {
        let mut v = Voices::default();
        let mut out: Vec<NoteEvent<()>> = Vec::new();
        let on = |t, k| NoteEvent::NoteOn {
            timing: t,
            voice_id: VoiceID::Wildcard,
            channel: Channel::Number(2),
            key: Key::Number(k),
            velocity: 0.7,
        };
        let off = |t, k| NoteEvent::NoteOff {
            timing: t,
            voice_id: VoiceID::Wildcard,
            channel: Channel::Number(2),
            key: Key::Number(k),
            velocity: 0.0,
        };
        pass_input(on(0, 62), true, &mut v, &mut out);
        pass_input(
            NoteEvent::MidiCC {
                timing: 1,
                channel: 2,
                cc: 64,
                value: 1.0,
            },
            false,
            &mut v,
            &mut out,
        );
        // Held back while only the take is heard…
        pass_input(on(2, 64), false, &mut v, &mut out);
        pass_input(off(3, 64), false, &mut v, &mut out);
        // …but a note that was already passed still gets its off.
        pass_input(off(4, 62), false, &mut v, &mut out);
        assert_eq!(out.len(), 3, "{out:?}");
        assert_balanced(&out);
    }

    #[test]
    fn wildcard_offs_and_zero_velocity_ons_stop_notes() {
        let mut v = Voices::default();
        let mut out: Vec<NoteEvent<()>> = Vec::new();
        for k in [60, 64, 67] {
            v.start(&mut out, Source::Input, 0, 1, k, 0.5, VoiceID::ID(k as i32));
        }
        pass_input(
            NoteEvent::NoteOn {
                timing: 5,
                voice_id: VoiceID::Wildcard,
                channel: Channel::Number(1),
                key: Key::Number(60),
                velocity: 0.0,
            },
            true,
            &mut v,
            &mut out,
        );
        pass_input(
            NoteEvent::NoteOff {
                timing: 6,
                voice_id: VoiceID::Wildcard,
                channel: Channel::Wildcard,
                key: Key::Wildcard,
                velocity: 0.0,
            },
            true,
            &mut v,
            &mut out,
        );
        assert_eq!(v.sounding(Source::Input), 0);
        assert_balanced(&out);
    }
}

#[cfg(test)]
pub use tests::assert_balanced;
