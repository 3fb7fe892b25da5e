//! The writer: phrases as a format 1 file with a conductor track.

use crate::meter::TimeSignature;
use crate::phrase::Phrase;
use midly::num::{u15, u24, u28, u4, u7};
use midly::{Format, Header, MetaMessage, MidiMessage, Smf, Timing, TrackEvent, TrackEventKind};

/// Writes phrases as a format 1 Standard MIDI File at `ppq` ticks per quarter
/// note: a conductor track with the tempo and the first phrase's time
/// signature, then one named track per phrase (channel 1), all starting at
/// tick 0. Phrases in different metres belong in separate files.
///
/// At equal ticks note-offs come before note-ons, so a re-struck pitch is
/// never switched off by its own previous note; a note that would still be
/// sounding when the same pitch starts again is shortened to end there.
/// Each track ends (end-of-track) at its phrase's last bar line, or at its
/// last note-off if a note rings past it, so readers see the phrase length.
pub fn write_smf(phrases: &[(&str, &Phrase)], tempo_us_per_quarter: u32, ppq: u16) -> Vec<u8> {
    let ppq = ppq.clamp(1, u15::max_value().as_int());
    let time_signature = phrases
        .first()
        .map_or(TimeSignature::FOUR_FOUR, |(_, p)| p.time_signature);
    let mut tracks: Vec<Vec<TrackEvent<'_>>> = Vec::with_capacity(phrases.len() + 1);
    tracks.push(conductor_track(time_signature, tempo_us_per_quarter));
    for (name, phrase) in phrases {
        tracks.push(phrase_track(name.as_bytes(), phrase, ppq));
    }
    let smf = Smf {
        header: Header::new(Format::Parallel, Timing::Metrical(u15::new(ppq))),
        tracks,
    };
    let mut bytes = Vec::new();
    // Writing into a Vec cannot fail for I/O reasons, and every value placed
    // in the events above was range-checked, so the encoder has nothing to refuse.
    smf.write_std(&mut bytes)
        .expect("an SMF built from checked values encodes into memory");
    bytes
}

fn conductor_track(ts: TimeSignature, tempo_us_per_quarter: u32) -> Vec<TrackEvent<'static>> {
    // MIDI clocks per metronome click: 24 per quarter note (MIDI 1.0), the
    // click being the notated beat, or the dotted felt beat of compound metres.
    let notated = 24.0 * 4.0 / ts.denominator as f64;
    let click = if ts.is_compound() {
        notated * 3.0
    } else {
        notated
    };
    let tempo = tempo_us_per_quarter.clamp(1, u24::max_value().as_int());
    vec![
        meta(0, MetaMessage::Tempo(u24::new(tempo))),
        meta(
            0,
            MetaMessage::TimeSignature(
                ts.numerator,
                ts.denominator.trailing_zeros() as u8,
                click.round().clamp(1.0, 255.0) as u8,
                8,
            ),
        ),
        meta(0, MetaMessage::EndOfTrack),
    ]
}

fn phrase_track<'a>(name: &'a [u8], phrase: &Phrase, ppq: u16) -> Vec<TrackEvent<'a>> {
    let to_tick = |beats: f64| {
        (beats.max(0.0) * ppq as f64)
            .round()
            .min(u28::max_value().as_int() as f64) as u64
    };
    let mut spans: Vec<(u8, u8, u64, u64)> = phrase
        .notes
        .iter()
        .filter(|n| n.pitch <= 127 && n.onset.is_finite() && n.duration.is_finite())
        .map(|n| {
            let start = to_tick(n.onset);
            (
                n.pitch,
                n.velocity.clamp(1, 127),
                start,
                to_tick(n.end()).max(start + 1),
            )
        })
        .collect();
    spans.sort_by_key(|&(pitch, _, start, _)| (pitch, start));
    // Same pitch again before the previous one ended: end the previous there.
    for i in 1..spans.len() {
        let (prev, next) = (spans[i - 1], spans[i]);
        if prev.0 == next.0 && prev.3 > next.2 {
            spans[i - 1].3 = next.2.max(prev.2 + 1);
        }
    }
    // (tick, 0 = off / 1 = on, pitch, velocity): sorting puts offs first.
    let mut events: Vec<(u64, u8, u8, u8)> = Vec::with_capacity(spans.len() * 2);
    for &(pitch, velocity, start, end) in &spans {
        events.push((start, 1, pitch, velocity));
        events.push((end, 0, pitch, 64));
    }
    events.sort_unstable();
    let channel = u4::new(0);
    let mut out = Vec::with_capacity(events.len() + 2);
    out.push(meta(0, MetaMessage::TrackName(name)));
    let mut now = 0u64;
    for (tick, kind, pitch, velocity) in events {
        let (key, vel) = (u7::new(pitch), u7::new(velocity));
        let message = if kind == 1 {
            MidiMessage::NoteOn { key, vel }
        } else {
            MidiMessage::NoteOff { key, vel }
        };
        out.push(TrackEvent {
            delta: delta(tick - now),
            kind: TrackEventKind::Midi { channel, message },
        });
        now = tick;
    }
    let end = to_tick(phrase.len_beats()).max(now);
    out.push(TrackEvent {
        delta: delta(end - now),
        kind: TrackEventKind::Meta(MetaMessage::EndOfTrack),
    });
    out
}

fn meta(ticks: u64, message: MetaMessage<'_>) -> TrackEvent<'_> {
    TrackEvent {
        delta: delta(ticks),
        kind: TrackEventKind::Meta(message),
    }
}

/// A delta time; the ticks were capped at the 28-bit SMF maximum when made.
fn delta(ticks: u64) -> u28 {
    u28::new(ticks.min(u28::max_value().as_int() as u64) as u32)
}
