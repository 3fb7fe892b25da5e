"""Melodic attributes of hand-made measures, computed by general-purpose
libraries from PyPI so Nudgebar's own attribute code can be checked:
- pitch range: music21's ambitus analysis (analysis.discrete.Ambitus), the
  span between lowest and highest pitch, in semitones;
- contour: scipy.stats.linregress slope of MIDI pitch over onset time in
  measures (ordinary least squares);
- mean pitch: numpy.mean of the MIDI pitches, each note counted once.

Usage: melodic_reference.py '<json>' where the JSON is a list of measures,
each {"measure_len": quarters, "notes": [[pitch, onset, duration], ...]}.
Prints a JSON list of {"ambitus", "slope", "mean"} (null where undefined).
"""
import json
import sys
from importlib.metadata import version

import numpy
import scipy.stats
from music21 import analysis, note, stream


def ambitus(notes):
    if not notes:
        return None
    s = stream.Stream()
    for pitch, onset, duration in notes:
        n = note.Note(pitch)
        n.quarterLength = duration
        s.insert(onset, n)
    low, high = analysis.discrete.Ambitus().getPitchSpan(s)
    return high.ps - low.ps


def slope(notes, measure_len):
    xs = [onset / measure_len for _, onset, _ in notes]
    if len(notes) < 2 or len(set(xs)) < 2:
        return None
    return float(scipy.stats.linregress(xs, [p for p, _, _ in notes]).slope)


def main():
    measures = json.loads(sys.argv[1])
    out = []
    for m in measures:
        notes = m["notes"]
        out.append({
            "ambitus": ambitus(notes),
            "slope": slope(notes, m["measure_len"]),
            "mean": float(numpy.mean([p for p, _, _ in notes])) if notes else None,
        })
    print(json.dumps({
        "versions": {k: version(k) for k in ("music21", "scipy", "numpy")},
        "measures": out,
    }))


if __name__ == "__main__":
    main()
