//! Event lists on both sides of `process()`: what the harness sends in and
//! what it records coming out.
//!
//! Semantics from the CLAP specification, `include/clap/events.h`:
//! - `clap_event_header.time` is the "sample offset within the buffer for
//!   this event";
//! - input events are delivered "sorted in sample order";
//! - the plugin "must insert events in sample sorted order" into the output
//!   list, and `try_push` "returns false if the event could not be pushed".

use clack_host::events::event_types::{
    MidiEvent, NoteChokeEvent, NoteOffEvent, NoteOnEvent, ParamValueEvent,
};
use clack_host::events::io::{OutputEventBuffer, TryPushError};
use clack_host::events::spaces::CoreEventSpace;
use clack_host::events::{Pckn, UnknownEvent};
use clack_host::prelude::*;

/// Note events the harness sends all go to note port 0, without note ids
/// (CLAP: "A host which does not support note ids should set the note id to -1").
const PORT: i16 = 0;
const NO_NOTE_ID: i32 = -1;

/// An event the harness sends to the plugin.
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum InputEvent {
    /// CLAP note-on; velocity 0..1 as in `clap_event_note`.
    NoteOn {
        channel: u8,
        key: u8,
        velocity: f64,
    },
    NoteOff {
        channel: u8,
        key: u8,
        velocity: f64,
    },
    /// CLAP note choke: ends every matching voice at once.
    NoteChoke {
        channel: u8,
        key: u8,
    },
    /// A raw MIDI 1.0 message (`CLAP_EVENT_MIDI`).
    Midi([u8; 3]),
    /// A parameter change (`CLAP_EVENT_PARAM_VALUE`), plain value.
    ParamValue {
        id: u32,
        value: f64,
    },
}

impl InputEvent {
    /// A note-on with a MIDI velocity (1–127), scaled to CLAP's 0..1.
    pub fn note_on(key: u8, midi_velocity: u8) -> Self {
        InputEvent::NoteOn {
            channel: 0,
            key,
            velocity: midi_velocity as f64 / 127.0,
        }
    }

    pub fn note_off(key: u8) -> Self {
        InputEvent::NoteOff {
            channel: 0,
            key,
            velocity: 0.0,
        }
    }

    /// Appends this event at sample `time` of the block to a CLAP event buffer.
    pub fn push_into(&self, buffer: &mut EventBuffer, time: u32) {
        let pckn =
            |channel: u8, key: u8| Pckn::from_raw(PORT, channel as i16, key as i16, NO_NOTE_ID);
        match *self {
            InputEvent::NoteOn {
                channel,
                key,
                velocity,
            } => buffer.push(&NoteOnEvent::new(time, pckn(channel, key), velocity)),
            InputEvent::NoteOff {
                channel,
                key,
                velocity,
            } => buffer.push(&NoteOffEvent::new(time, pckn(channel, key), velocity)),
            InputEvent::NoteChoke { channel, key } => {
                buffer.push(&NoteChokeEvent::new(time, pckn(channel, key)))
            }
            InputEvent::Midi(data) => buffer.push(&MidiEvent::new(time, 0, data)),
            InputEvent::ParamValue { id, value } => buffer.push(&ParamValueEvent::new(
                time,
                ClapId::new(id),
                Pckn::match_all(),
                value,
            )),
        }
    }
}

/// What a plugin sent out, decoded from the CLAP event.
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum OutputKind {
    NoteOn {
        channel: i16,
        key: i16,
        velocity: f64,
    },
    NoteOff {
        channel: i16,
        key: i16,
        velocity: f64,
    },
    /// Ends every matching note; -1 is a wildcard (CLAP `clap_event_note`).
    NoteChoke {
        channel: i16,
        key: i16,
    },
    /// A voice-end hint for the host; not a note of the output stream.
    NoteEnd {
        channel: i16,
        key: i16,
    },
    Midi([u8; 3]),
    ParamValue {
        id: u32,
        value: f64,
    },
    ParamGestureBegin {
        id: u32,
    },
    ParamGestureEnd {
        id: u32,
    },
    /// Any other event, by (space id, type).
    Other {
        space: u16,
        kind: u16,
    },
}

/// One recorded output event, with its sample offset in its block.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct OutputEvent {
    pub time: u32,
    pub kind: OutputKind,
}

impl OutputEvent {
    fn decode(event: &UnknownEvent) -> Self {
        let time = event.header().time();
        let kind = match event.as_core_event() {
            Some(CoreEventSpace::NoteOn(e)) => OutputKind::NoteOn {
                channel: e.pckn().raw_channel(),
                key: e.pckn().raw_key(),
                velocity: e.velocity(),
            },
            Some(CoreEventSpace::NoteOff(e)) => OutputKind::NoteOff {
                channel: e.pckn().raw_channel(),
                key: e.pckn().raw_key(),
                velocity: e.velocity(),
            },
            Some(CoreEventSpace::NoteChoke(e)) => OutputKind::NoteChoke {
                channel: e.pckn().raw_channel(),
                key: e.pckn().raw_key(),
            },
            Some(CoreEventSpace::NoteEnd(e)) => OutputKind::NoteEnd {
                channel: e.pckn().raw_channel(),
                key: e.pckn().raw_key(),
            },
            Some(CoreEventSpace::Midi(e)) => OutputKind::Midi(e.data()),
            Some(CoreEventSpace::ParamValue(e)) => OutputKind::ParamValue {
                id: e.param_id().map(|id| id.get()).unwrap_or(u32::MAX),
                value: e.value(),
            },
            Some(CoreEventSpace::ParamGestureBegin(e)) => OutputKind::ParamGestureBegin {
                id: e.param_id().map(|id| id.get()).unwrap_or(u32::MAX),
            },
            Some(CoreEventSpace::ParamGestureEnd(e)) => OutputKind::ParamGestureEnd {
                id: e.param_id().map(|id| id.get()).unwrap_or(u32::MAX),
            },
            _ => {
                let raw = event.header().as_raw();
                OutputKind::Other {
                    space: raw.space_id,
                    kind: raw.type_,
                }
            }
        };
        OutputEvent { time, kind }
    }
}

/// A fixed-capacity output list: it never grows, because `try_push` runs
/// inside the plugin's `process()` and growing would allocate there. When it
/// is full it refuses the event, as CLAP allows, and counts the refusal.
pub struct OutputRecorder {
    events: Vec<OutputEvent>,
    /// Events refused because the list was full.
    pub refused: u32,
}

impl OutputRecorder {
    pub fn with_capacity(capacity: usize) -> Self {
        Self {
            events: Vec::with_capacity(capacity),
            refused: 0,
        }
    }

    pub fn events(&self) -> &[OutputEvent] {
        &self.events
    }

    pub fn clear(&mut self) {
        self.events.clear();
        self.refused = 0;
    }
}

impl OutputEventBuffer for OutputRecorder {
    fn try_push(&mut self, event: &UnknownEvent) -> Result<(), TryPushError> {
        if self.events.len() == self.events.capacity() {
            self.refused += 1;
            return Err(TryPushError::new());
        }
        self.events.push(OutputEvent::decode(event));
        Ok(())
    }
}
