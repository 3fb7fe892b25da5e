//! The reader: any format 0 or 1 file, merged into one beat-timed phrase.

use super::{MidiFileError, MidiImport, DEFAULT_TEMPO_US_PER_QUARTER, MAX_FILE_BYTES};
use crate::meter::TimeSignature;
use crate::note::Note;
use crate::phrase::{Phrase, MAX_MEASURES};
use midly::{Format, MetaMessage, MidiMessage, Smf, Timing, TrackEvent, TrackEventKind};
use std::collections::HashMap;

/// One note-on/note-off pair, in ticks from the start of the file.
#[derive(Debug, Clone, Copy)]
struct TickNote {
    pitch: u8,
    velocity: u8,
    start: u64,
    end: u64,
}

/// Everything gathered from the tracks before it becomes a phrase.
#[derive(Default)]
struct Timeline {
    notes: Vec<TickNote>,
    /// (tick, µs per quarter), in file order per track.
    tempos: Vec<(u64, u32)>,
    /// (tick, numerator, denominator as a power of two).
    time_signatures: Vec<(u64, u8, u8)>,
    /// Latest tick of any event, end-of-track included.
    last_tick: u64,
    /// End-of-track ticks of the tracks that hold notes.
    note_track_ends: Vec<u64>,
    channels: Vec<u8>,
    unterminated: usize,
}

/// Reads a Standard MIDI File as a prompt.
pub fn read_smf(bytes: &[u8]) -> Result<MidiImport, MidiFileError> {
    if bytes.is_empty() {
        return Err(MidiFileError::Empty);
    }
    if bytes.len() > MAX_FILE_BYTES {
        return Err(MidiFileError::TooLarge {
            bytes: bytes.len(),
            limit: MAX_FILE_BYTES,
        });
    }
    if impossible_smpte_rate(bytes) {
        return Err(MidiFileError::NotMidi(
            "its header gives an impossible SMPTE frame rate".into(),
        ));
    }
    let smf = Smf::parse(bytes).map_err(|e| MidiFileError::NotMidi(e.to_string()))?;
    let ppq = match smf.header.timing {
        Timing::Metrical(t) => t.as_int(),
        Timing::Timecode(fps, _) => return Err(MidiFileError::SmpteTiming { fps: fps.as_int() }),
    };
    if ppq == 0 {
        return Err(MidiFileError::ZeroResolution);
    }
    let mut warnings = Vec::new();
    let mut timeline = Timeline::default();
    let tracks: Vec<&Vec<TrackEvent>> = match smf.header.format {
        // Format 2 holds independent patterns, not parts played together:
        // use the first pattern that has notes, and say so.
        Format::Sequential => {
            let first = smf.tracks.iter().position(|t| track_has_notes(t));
            if smf.tracks.len() > 1 {
                warnings.push(format!(
                    "The file holds {} separate patterns (format 2); only pattern {} was read.",
                    smf.tracks.len(),
                    first.unwrap_or(0) + 1
                ));
            }
            first.map(|i| vec![&smf.tracks[i]]).unwrap_or_default()
        }
        Format::SingleTrack | Format::Parallel => smf.tracks.iter().collect(),
    };
    for track in tracks {
        gather_track(track, &mut timeline);
    }
    if timeline.notes.is_empty() {
        return Err(MidiFileError::NoNotes);
    }
    build_import(timeline, ppq, warnings)
}

/// midly 0.5.3 reads an SMPTE header by negating its frame-rate byte as an
/// `i8`; the byte 0x80 (−128) overflows there, which panics wherever
/// overflow checks are on (debug builds, fuzzing). No frame rate is −128, so
/// such a header is refused before midly sees it. Found by fuzzing
/// (fuzz/corpus/midi_file/regression-*.mid).
///
/// midly reads every chunk whose id is `MThd` as a header, the first and any
/// duplicate later, so the walk below visits the chunks as midly does (id,
/// big-endian length, data cut short at the end of the file) and checks the
/// division's high byte of each header. Looking for `MThd` anywhere would be
/// wrong: note data can spell it by chance. An RMID file (SMF inside RIFF)
/// is rare, so there any `MThd` followed 12 bytes later by 0x80 is refused.
fn impossible_smpte_rate(bytes: &[u8]) -> bool {
    if bytes.starts_with(b"RIFF") {
        return bytes
            .windows(4)
            .enumerate()
            .any(|(at, id)| id == b"MThd" && bytes.get(at + 12) == Some(&0x80));
    }
    let mut rest = bytes;
    while rest.len() >= 8 {
        let len = u32::from_be_bytes([rest[4], rest[5], rest[6], rest[7]]) as usize;
        let data = &rest[8..];
        let data = &data[..len.min(data.len())];
        if &rest[..4] == b"MThd" && data.len() >= 6 && data[4] == 0x80 {
            return true;
        }
        rest = &rest[8 + data.len()..];
    }
    false
}

fn track_has_notes(track: &[TrackEvent]) -> bool {
    track.iter().any(|e| {
        matches!(e.kind, TrackEventKind::Midi { message: MidiMessage::NoteOn { vel, .. }, .. } if vel.as_int() > 0)
    })
}

/// Pairs the note-ons and note-offs of one track and collects its meta events.
///
/// Pairing is per (channel, pitch). A note-on with velocity 0 is a note-off
/// (SMF 1.0 / MIDI 1.0 running-status convention). A note-on for a pitch that
/// is already sounding on the channel re-strikes it: the sounding note ends
/// there, as it does on a synthesizer, so the phrase never holds a pitch
/// twice at once. A note-off for a silent pitch is ignored.
fn gather_track(track: &[TrackEvent], t: &mut Timeline) {
    let mut tick: u64 = 0;
    let mut open: HashMap<(u8, u8), (u64, u8)> = HashMap::new();
    let mut had_notes = false;
    for event in track {
        tick += event.delta.as_int() as u64;
        match event.kind {
            TrackEventKind::Midi { channel, message } => {
                let ch = channel.as_int();
                match message {
                    MidiMessage::NoteOn { key, vel } if vel.as_int() > 0 => {
                        let key = key.as_int();
                        if let Some((start, velocity)) = open.remove(&(ch, key)) {
                            push_note(t, key, velocity, start, tick);
                        }
                        open.insert((ch, key), (tick, vel.as_int()));
                        had_notes = true;
                        if !t.channels.contains(&ch) {
                            t.channels.push(ch);
                        }
                    }
                    MidiMessage::NoteOn { key, .. } | MidiMessage::NoteOff { key, .. } => {
                        if let Some((start, velocity)) = open.remove(&(ch, key.as_int())) {
                            push_note(t, key.as_int(), velocity, start, tick);
                        }
                    }
                    _ => {}
                }
            }
            TrackEventKind::Meta(MetaMessage::Tempo(us)) => t.tempos.push((tick, us.as_int())),
            TrackEventKind::Meta(MetaMessage::TimeSignature(num, denom_pow, _, _)) => {
                t.time_signatures.push((tick, num, denom_pow))
            }
            _ => {}
        }
    }
    t.last_tick = t.last_tick.max(tick);
    // Notes never switched off end where their track ends, or a sixteenth
    // after they start if the track ends right there.
    let mut still_open: Vec<_> = open.into_iter().collect();
    still_open.sort_by_key(|&((ch, key), (start, _))| (start, ch, key));
    for ((_, key), (start, velocity)) in still_open {
        t.unterminated += 1;
        t.notes.push(TickNote {
            pitch: key,
            velocity,
            start,
            end: tick.max(start + 1),
        });
    }
    if had_notes {
        t.note_track_ends.push(tick);
    }
}

fn push_note(t: &mut Timeline, pitch: u8, velocity: u8, start: u64, end: u64) {
    // A note switched off on the tick it started has no length; keep it as
    // the shortest note the file can express rather than lose the onset.
    t.notes.push(TickNote {
        pitch,
        velocity,
        start,
        end: end.max(start + 1),
    });
}

fn build_import(
    mut t: Timeline,
    ppq: u16,
    mut warnings: Vec<String>,
) -> Result<MidiImport, MidiFileError> {
    t.notes.sort_by_key(|n| (n.start, n.pitch));
    t.tempos.sort_by_key(|&(tick, _)| tick);
    t.time_signatures.sort_by_key(|&(tick, _, _)| tick);
    let first_onset = t.notes[0].start;

    // The metre: the last time signature at or before the first note (or the
    // first one in the file); the SMF 1.0 spec assumes 4/4 when a file gives none.
    let chosen = t
        .time_signatures
        .iter()
        .rev()
        .find(|ts| ts.0 <= first_onset)
        .or(t.time_signatures.first())
        .copied();
    let time_signature = match chosen {
        None => TimeSignature::FOUR_FOUR,
        Some((_, num, pow)) => {
            let den = 1u32
                .checked_shl(pow as u32)
                .and_then(|d| u8::try_from(d).ok());
            match den.map(|den| TimeSignature::new(num, den)) {
                Some(Ok(ts)) => ts,
                _ => {
                    warnings.push(format!(
                        "The file's time signature ({num} over 2 to the power {pow}) is not one Nudgebar can use; 4/4 was assumed."
                    ));
                    TimeSignature::FOUR_FOUR
                }
            }
        }
    };
    if let Some((_, num, pow)) = chosen {
        if t.time_signatures
            .iter()
            .any(|ts| ts.0 > first_onset && (ts.1, ts.2) != (num, pow))
        {
            warnings.push(format!(
                "The time signature changes later in the file; the whole prompt was read in {time_signature}."
            ));
        }
    }

    // Bar lines run from the time-signature event in force (a metre change
    // sits on a bar line), or from tick 0; the phrase starts at the bar line
    // at or before the first note.
    let anchor = chosen.map_or(0, |ts| ts.0).min(first_onset);
    let ticks_per_measure = time_signature.quarters_per_measure() * ppq as f64;
    let bars_in = ((first_onset - anchor) as f64 / ticks_per_measure + 1e-9).floor() as u64;
    let start_tick = anchor + (bars_in as f64 * ticks_per_measure).round() as u64;
    if start_tick > 0 {
        warnings.push(match (anchor, bars_in) {
            (0, 1) => "The file's first measure was silent and was skipped.".to_string(),
            (0, n) => format!("The file's first {n} measures were silent and were skipped."),
            _ => "The silent measures before the first note were skipped.".to_string(),
        });
    }

    let tempo_us_per_quarter = t
        .tempos
        .iter()
        .rev()
        .find(|&&(tick, _)| tick <= start_tick)
        .or(t.tempos.first())
        .map(|&(_, us)| us)
        .filter(|&us| us > 0)
        .unwrap_or(DEFAULT_TEMPO_US_PER_QUARTER);
    let later_tempos = t
        .tempos
        .iter()
        .filter(|&&(tick, us)| tick > start_tick && us != tempo_us_per_quarter)
        .count();
    if later_tempos > 0 {
        warnings.push(
            "The tempo changes inside the file; notes were kept in beats and the opening tempo was used.".to_string(),
        );
    }

    // Length: every bar holding an onset, or up to the end of the note
    // tracks when that falls exactly on a bar line (a file that declares
    // its own length, like the ones Nudgebar writes).
    let beats = |tick: u64| (tick as f64 - start_tick as f64) / ppq as f64;
    let measure_len = time_signature.quarters_per_measure();
    let last_onset_bar =
        (beats(t.notes.last().map_or(0, |n| n.start)) / measure_len + 1e-9).floor() as u64 + 1;
    let declared_bars = t
        .note_track_ends
        .iter()
        .filter_map(|&end| {
            let bars = beats(end) / measure_len;
            ((bars - bars.round()).abs() < 1e-9 && bars >= 1.0).then_some(bars.round() as u64)
        })
        .max()
        .unwrap_or(0);
    let bars = last_onset_bar.max(declared_bars.min(MAX_MEASURES as u64));
    if last_onset_bar > MAX_MEASURES as u64 {
        let kept_beats = MAX_MEASURES as f64 * measure_len;
        let left_out = t
            .notes
            .iter()
            .filter(|n| beats(n.start) >= kept_beats - 1e-9)
            .count();
        warnings.push(format!(
            "The file has {last_onset_bar} measures of notes; a prompt is at most {MAX_MEASURES}, \
             so the first {MAX_MEASURES} were taken and {left_out} later note{} left out.",
            if left_out == 1 { " was" } else { "s were" }
        ));
    }
    let measures = bars.clamp(1, MAX_MEASURES as u64) as u8;

    if t.channels.len() > 1 {
        let mut channels = t.channels.clone();
        channels.sort_unstable();
        let list: Vec<String> = channels.iter().map(|c| (c + 1).to_string()).collect();
        warnings.push(format!(
            "Notes from MIDI channels {} were merged into one prompt.",
            list.join(", ")
        ));
    }
    if t.unterminated > 0 {
        warnings.push(format!(
            "{} note{} had no note-off and {} ended where {} track ends.",
            t.unterminated,
            if t.unterminated == 1 { "" } else { "s" },
            if t.unterminated == 1 { "was" } else { "were" },
            if t.unterminated == 1 { "its" } else { "their" }
        ));
    }

    let notes = t
        .notes
        .iter()
        .map(|n| {
            Note::new(
                n.pitch,
                beats(n.start),
                (n.end - n.start) as f64 / ppq as f64,
                n.velocity,
            )
        })
        .collect();
    let phrase = Phrase::new(time_signature, measures, notes);
    Ok(MidiImport {
        phrase,
        tempo_us_per_quarter,
        ppq,
        warnings,
    })
}
