"""Reads a Standard MIDI File with two independent readers from PyPI, mido and
pretty_midi, and prints the notes each one finds as JSON (times in seconds).

Usage: smf_read.py FILE.mid

Nudgebar's tests compare these with the notes Nudgebar wrote, so the check
rests on readers that share no code with Nudgebar.
"""
import json
import sys
from importlib.metadata import version

import mido
import pretty_midi


def tempo_map(mid):
    """(tick, microseconds per quarter) changes from every track, sorted;
    500,000 at tick 0 unless the file says otherwise (SMF 1.0 default)."""
    changes = []
    for track in mid.tracks:
        tick = 0
        for msg in track:
            tick += msg.time
            if msg.type == "set_tempo":
                changes.append((tick, msg.tempo))
    changes.sort()
    if not changes or changes[0][0] > 0:
        changes.insert(0, (0, 500000))
    return changes


def seconds_at(tick, changes, tpb):
    seconds, last_tick, tempo = 0.0, 0, changes[0][1]
    for at, new_tempo in changes:
        if at >= tick:
            break
        seconds += mido.tick2second(at - last_tick, tpb, tempo)
        last_tick, tempo = at, new_tempo
    return seconds + mido.tick2second(tick - last_tick, tpb, tempo)


def mido_notes(mid):
    """Pairs note-ons with note-offs (or note-ons of velocity 0) per track,
    channel and pitch, first in first out."""
    changes = tempo_map(mid)
    notes = []
    for track in mid.tracks:
        name = next((m.name for m in track if m.type == "track_name"), "")
        tick = 0
        open_notes = {}
        for msg in track:
            tick += msg.time
            if msg.type == "note_on" and msg.velocity > 0:
                open_notes.setdefault((msg.channel, msg.note), []).append((tick, msg.velocity))
            elif msg.type in ("note_off", "note_on"):
                pending = open_notes.get((msg.channel, msg.note))
                if pending:
                    start, velocity = pending.pop(0)
                    notes.append({
                        "track": name,
                        "pitch": msg.note,
                        "velocity": velocity,
                        "start": seconds_at(start, changes, mid.ticks_per_beat),
                        "end": seconds_at(tick, changes, mid.ticks_per_beat),
                    })
    return notes


def pretty_notes(path):
    pm = pretty_midi.PrettyMIDI(path)
    return [
        {"track": inst.name, "pitch": n.pitch, "velocity": n.velocity, "start": n.start, "end": n.end}
        for inst in pm.instruments
        for n in inst.notes
    ]


def main():
    path = sys.argv[1]
    mid = mido.MidiFile(path)
    key = lambda n: (n["track"], n["start"], n["pitch"])
    print(json.dumps({
        "versions": {"mido": version("mido"), "pretty_midi": version("pretty_midi")},
        "type": mid.type,
        "ticks_per_beat": mid.ticks_per_beat,
        "mido": sorted(mido_notes(mid), key=key),
        "pretty_midi": sorted(pretty_notes(path), key=key),
    }))


if __name__ == "__main__":
    main()
