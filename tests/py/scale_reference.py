"""Pitch-class sets of scales, from music21's scale classes (PyPI: music21).

Prints {"<tonic pc>": {"<scale key>": [pitch classes, sorted]}} for all 12 tonics.

music21 has classes for the diatonic modes and the hexatonic blues scale
(WeightedHexatonicBlues). It has none for the pentatonic scales, so those are
read off music21's major and natural-minor scales by the handbook definition
(from memory, e.g. the Harvard Dictionary of Music, "Pentatonic scale"): the
major pentatonic is the major scale's degrees 1, 2, 3, 5, 6; the minor
pentatonic is the natural minor's degrees 1, 3, 4, 5, 7.
"""
import json

from music21 import pitch, scale


def pcs(sc, degrees=None):
    if degrees is None:
        ps = sc.getPitches(sc.tonic.nameWithOctave, (sc.tonic.transpose("P8")).nameWithOctave)
        return sorted({p.pitchClass for p in ps})
    return sorted({sc.pitchFromDegree(d).pitchClass for d in degrees})


def blues_pcs(sc):
    # The blues scale is an interval network with two paths from the 4th to
    # the 5th (through the raised 4th, or straight); getPitches walks one of
    # them at random. Walk every edge of music21's network instead, from its
    # low terminus, adding up semitones: each node is one scale degree.
    net = sc.abstract._net
    offset = {"low": 0}
    key = lambda n: "low" if str(n).endswith("LOW") else ("high" if str(n).endswith("HIGH") else n)
    changed = True
    while changed:
        changed = False
        for e in net.edges.values():
            a, b = (key(x) for x in e.connections[0])
            if a in offset and b not in offset:
                offset[b] = offset[a] + e.interval.semitones
                changed = True
    assert offset["high"] == 12, offset
    return sorted({(sc.tonic.pitchClass + v) % 12 for n, v in offset.items() if n != "high"})


out = {}
for pc in range(12):
    tonic = pitch.Pitch(midi=60 + pc)
    name = tonic.name
    t4 = tonic.nameWithOctave
    out[str(pc)] = {
        "major": pcs(scale.MajorScale(t4)),
        "natural_minor": pcs(scale.MinorScale(t4)),
        "dorian": pcs(scale.DorianScale(t4)),
        "phrygian": pcs(scale.PhrygianScale(t4)),
        "lydian": pcs(scale.LydianScale(t4)),
        "mixolydian": pcs(scale.MixolydianScale(t4)),
        "locrian": pcs(scale.LocrianScale(t4)),
        "major_pentatonic": pcs(scale.MajorScale(t4), [1, 2, 3, 5, 6]),
        "minor_pentatonic": pcs(scale.MinorScale(t4), [1, 3, 4, 5, 7]),
        "blues": blues_pcs(scale.WeightedHexatonicBlues(t4)),
    }
print(json.dumps(out))
