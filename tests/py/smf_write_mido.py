"""Writes Standard MIDI Files with mido (PyPI), the way other programs write
them, and prints as JSON what each file holds, so Nudgebar's reader can be
checked against files it did not write.

Usage: smf_write_mido.py OUT_DIR

Each entry gives the notes in beats (as written) and in seconds (as mido's
own reader plays the file back), the tempo (None when the file has no tempo
event), the time signature, and how many bytes running status saved (mido
writes running status; a positive count proves the file exercises it).
"""
import json
import os
import random
import sys
from importlib.metadata import version

import mido


def vlq_len(value):
    n = 1
    while value >= 0x80:
        value >>= 7
        n += 1
    return n


def bytes_without_running_status(mid):
    """File size if every channel message carried its own status byte."""
    total = 14
    for track in mid.tracks:
        total += 8
        for msg in track:
            total += vlq_len(msg.time) + len(msg.bin())
        if not track or track[-1].type != "end_of_track":
            total += 4
    return total


def random_line(rng, bars, quarters_per_bar, lowest, highest):
    """A seeded monophonic line on a sixteenth grid with rests and varied
    lengths: (pitch, onset in beats, duration in beats, velocity)."""
    notes = []
    t = 0.0
    end = bars * quarters_per_bar
    while t < end - 1e-9:
        if rng.random() < 0.15:
            t += 0.25 * rng.randint(1, 3)
            continue
        dur = min(0.25 * rng.choice([1, 1, 1, 2, 2, 3, 4]), end - t)
        notes.append((rng.randint(lowest, highest), t, dur, rng.randint(40, 120)))
        t += dur
    return notes


def note_events(notes, ppq, channel, vel0_offs):
    """Absolute-tick events, note-offs first at equal ticks."""
    events = []
    for pitch, onset, dur, vel in notes:
        on, off = round(onset * ppq), round((onset + dur) * ppq)
        events.append((on, 1, mido.Message("note_on", note=pitch, velocity=vel, channel=channel)))
        if vel0_offs:
            events.append((off, 0, mido.Message("note_on", note=pitch, velocity=0, channel=channel)))
        else:
            events.append((off, 0, mido.Message("note_off", note=pitch, velocity=64, channel=channel)))
    events.sort(key=lambda e: (e[0], e[1]))
    return events


def to_track(events, name=None, metas=()):
    track = mido.MidiTrack()
    if name:
        track.append(mido.MetaMessage("track_name", name=name, time=0))
    track.extend(metas)
    now = 0
    for tick, _, msg in events:
        track.append(msg.copy(time=tick - now))
        now = tick
    track.append(mido.MetaMessage("end_of_track", time=0))
    return track


def played_seconds(path):
    """Notes in seconds as mido plays the merged file back."""
    t, open_notes, notes = 0.0, {}, []
    for msg in mido.MidiFile(path):
        t += msg.time
        if msg.type == "note_on" and msg.velocity > 0:
            open_notes.setdefault((msg.channel, msg.note), []).append(t)
        elif msg.type in ("note_on", "note_off") and open_notes.get((msg.channel, msg.note)):
            start = open_notes[(msg.channel, msg.note)].pop(0)
            notes.append({"pitch": msg.note, "start": start, "end": t})
    return sorted(notes, key=lambda n: (n["start"], n["pitch"]))


def main():
    out = sys.argv[1]
    os.makedirs(out, exist_ok=True)
    rng = random.Random(20261202)
    cases = []

    def save(name, mid, notes, tempo, ts, measures):
        path = os.path.join(out, name + ".mid")
        mid.save(path)
        cases.append({
            "file": path,
            "type": mid.type,
            "ppq": mid.ticks_per_beat,
            "tempo": tempo,
            "time_signature": ts,
            "measures": measures,
            "notes": [{"pitch": p, "onset": o, "duration": d, "velocity": v}
                      for p, o, d, v in sorted(notes, key=lambda n: (n[1], n[0]))],
            "played": played_seconds(path),
            "running_status_bytes_saved": bytes_without_running_status(mid) - os.path.getsize(path),
        })

    # Format 0, 96 PPQ, no tempo and no time signature event, note-offs as
    # note-ons of velocity 0: the classic running-status layout.
    notes = random_line(rng, 1, 4, 55, 79)
    mid = mido.MidiFile(type=0, ticks_per_beat=96)
    mid.tracks.append(to_track(note_events(notes, 96, 0, True)))
    save("format0_ppq96_no_tempo", mid, notes, None, [4, 4], 1)

    # Format 1, 480 PPQ: conductor with tempo and 3/4, two parts on two
    # channels with true note-off messages, two bars.
    lead = random_line(rng, 2, 3, 60, 84)
    bass = random_line(rng, 2, 3, 36, 52)
    mid = mido.MidiFile(type=1, ticks_per_beat=480)
    tempo = mido.bpm2tempo(100)
    mid.tracks.append(to_track([], "conductor", [
        mido.MetaMessage("set_tempo", tempo=tempo, time=0),
        mido.MetaMessage("time_signature", numerator=3, denominator=4, time=0),
    ]))
    mid.tracks.append(to_track(note_events(lead, 480, 0, False), "lead"))
    mid.tracks.append(to_track(note_events(bass, 480, 1, False), "bass"))
    save("format1_ppq480_three_four", mid, lead + bass, tempo, [3, 4], 2)

    # Format 1, 960 PPQ, 6/8 at a tempo that is not a round number of
    # microseconds per beat, velocity-0 note-offs.
    notes = random_line(rng, 1, 3, 50, 74)
    mid = mido.MidiFile(type=1, ticks_per_beat=960)
    tempo = mido.bpm2tempo(87.5)
    mid.tracks.append(to_track([], None, [
        mido.MetaMessage("set_tempo", tempo=tempo, time=0),
        mido.MetaMessage("time_signature", numerator=6, denominator=8, clocks_per_click=36, time=0),
    ]))
    mid.tracks.append(to_track(note_events(notes, 960, 0, True), "horn"))
    save("format1_ppq960_six_eight", mid, notes, tempo, [6, 8], 1)

    # Format 0, 480 PPQ, four bars of 4/4 with the tempo event inside the
    # single track.
    notes = random_line(rng, 4, 4, 48, 83)
    mid = mido.MidiFile(type=0, ticks_per_beat=480)
    tempo = mido.bpm2tempo(140)
    mid.tracks.append(to_track(note_events(notes, 480, 0, False), "four bars", [
        mido.MetaMessage("set_tempo", tempo=tempo, time=0),
    ]))
    save("format0_ppq480_four_bars", mid, notes, tempo, [4, 4], 4)

    print(json.dumps({"versions": {"mido": version("mido")}, "cases": cases}))


if __name__ == "__main__":
    main()
