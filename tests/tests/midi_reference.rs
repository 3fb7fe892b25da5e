//! Nudgebar's Standard MIDI File reader and writer, checked against things
//! outside the project:
//! - the Standard MIDI File 1.0 specification (MIDI Manufacturers
//!   Association): the variable-length-quantity table and the default tempo
//!   of 500,000 µs per quarter note when a file has no tempo event;
//! - two independent readers from PyPI, mido 1.3.3 and pretty_midi
//!   0.2.11.post0 (pinned in tests/py/requirements.txt), reading what we write;
//! - files written by mido, read by us.

use nudgebar_music::demo_prompts;
use nudgebar_music::{read_smf, write_smf, Note, Phrase, TimeSignature};
use nudgebar_tests::{pyref, scratch_dir};
use serde_json::Value;

/// Seconds per beat at a tempo in µs per quarter note.
fn spb(tempo_us: u32) -> f64 {
    tempo_us as f64 / 1e6
}

/// A deterministic phrase with varied rhythm, rests, a chord and a re-struck
/// pitch, on a sixteenth grid (exact at every PPQ used here).
fn busy_phrase(ts: TimeSignature, measures: u8, seed: u64) -> Phrase {
    let mut state = seed;
    let mut next = move |m: u64| {
        state = state
            .wrapping_mul(6364136223846793005)
            .wrapping_add(1442695040888963407);
        (state >> 33) % m
    };
    let len = ts.quarters_per_measure() * measures as f64;
    let mut notes = vec![Note::new(60, 0.0, 0.5, 100), Note::new(64, 0.0, 0.5, 90)]; // a chord
    notes.push(Note::new(62, 0.5, 0.25, 80));
    notes.push(Note::new(62, 0.75, 0.25, 81)); // re-struck exactly where the last one ends
    let mut t = 1.0;
    while t < len - 1e-9 {
        if next(5) == 0 {
            t += 0.25 * (1 + next(3)) as f64; // a rest
            continue;
        }
        let d = (0.25 * (1 + next(6)) as f64).min(len - t);
        notes.push(Note::new(48 + next(36) as u8, t, d, 30 + next(97) as u8));
        t += d;
    }
    Phrase::new(ts, measures, notes)
}

/// (track, pitch, velocity, start s, end s) of a phrase at a tempo.
fn expected(track: &str, phrase: &Phrase, tempo_us: u32) -> Vec<(String, u8, u8, f64, f64)> {
    let s = spb(tempo_us);
    let mut v: Vec<_> = phrase
        .notes
        .iter()
        .map(|n| {
            (
                track.to_string(),
                n.pitch,
                n.velocity,
                n.onset * s,
                n.end() * s,
            )
        })
        .collect();
    v.sort_by(|a, b| a.0.cmp(&b.0).then(a.3.total_cmp(&b.3)).then(a.1.cmp(&b.1)));
    v
}

fn reference_notes(json: &Value, reader: &str) -> Vec<(String, u8, u8, f64, f64)> {
    json[reader]
        .as_array()
        .unwrap_or_else(|| panic!("{reader} gave no note list"))
        .iter()
        .map(|n| {
            (
                n["track"].as_str().unwrap().to_string(),
                n["pitch"].as_u64().unwrap() as u8,
                n["velocity"].as_u64().unwrap() as u8,
                n["start"].as_f64().unwrap(),
                n["end"].as_f64().unwrap(),
            )
        })
        .collect()
}

fn assert_same_notes(
    what: &str,
    ours: &[(String, u8, u8, f64, f64)],
    theirs: &[(String, u8, u8, f64, f64)],
) {
    assert_eq!(
        ours.len(),
        theirs.len(),
        "{what}: note count differs\nours   {ours:?}\ntheirs {theirs:?}"
    );
    for (a, b) in ours.iter().zip(theirs) {
        assert!(
            a.0 == b.0
                && a.1 == b.1
                && a.2 == b.2
                && (a.3 - b.3).abs() < 1e-6
                && (a.4 - b.4).abs() < 1e-6,
            "{what}: ours {a:?} vs theirs {b:?}"
        );
    }
}

/// Our writer, read back by mido and by pretty_midi: same pitches,
/// velocities, track names, and onsets/ends in seconds at the file's tempo.
#[test]
fn files_we_write_read_the_same_in_mido_and_pretty_midi() {
    let dir = scratch_dir("midi_reference_writer");
    let three_four = TimeSignature::new(3, 4).unwrap();
    let six_eight = TimeSignature::new(6, 8).unwrap();
    let cases: Vec<(&str, Vec<(&str, Phrase)>, u32, u16)> = vec![
        (
            "one_bar_ppq96",
            vec![("take 1", busy_phrase(TimeSignature::FOUR_FOUR, 1, 1))],
            500_000,
            96,
        ),
        (
            "two_takes_ppq480",
            vec![
                ("take 1", busy_phrase(TimeSignature::FOUR_FOUR, 2, 2)),
                ("take 2", busy_phrase(TimeSignature::FOUR_FOUR, 2, 3)),
            ],
            652_174,
            480,
        ),
        (
            "waltz_ppq960",
            vec![("lock", busy_phrase(three_four, 4, 4))],
            750_000,
            960,
        ),
        (
            "six_eight_ppq480",
            vec![("tide", busy_phrase(six_eight, 3, 5))],
            400_000,
            480,
        ),
    ];
    let mut files: Vec<(std::path::PathBuf, Vec<(String, Phrase)>, u32, u16)> = Vec::new();
    for (name, phrases, tempo, ppq) in cases {
        let refs: Vec<(&str, &Phrase)> = phrases.iter().map(|(n, p)| (*n, p)).collect();
        let path = dir.join(format!("{name}.mid"));
        std::fs::write(&path, write_smf(&refs, tempo, ppq)).unwrap();
        let owned = phrases
            .into_iter()
            .map(|(n, p)| (n.to_string(), p))
            .collect();
        files.push((path, owned, tempo, ppq));
    }
    for prompt in demo_prompts::all() {
        let path = dir.join(prompt.file_name());
        std::fs::write(&path, prompt.to_smf()).unwrap();
        let owned = vec![(prompt.name.to_string(), prompt.phrase)];
        files.push((
            path,
            owned,
            prompt.tempo_us_per_quarter,
            demo_prompts::PROMPT_PPQ,
        ));
    }
    for (path, phrases, tempo, ppq) in files {
        let json = pyref::run_json("smf_read.py", &[path.to_str().unwrap()]);
        let what = path.file_name().unwrap().to_string_lossy().to_string();
        assert_eq!(json["type"], 1, "{what}: we write format 1");
        assert_eq!(json["ticks_per_beat"], ppq as u64, "{what}");
        let mut ours: Vec<_> = phrases
            .iter()
            .flat_map(|(n, p)| expected(n, p, tempo))
            .collect();
        ours.sort_by(|a, b| a.0.cmp(&b.0).then(a.3.total_cmp(&b.3)).then(a.1.cmp(&b.1)));
        assert!(!ours.is_empty());
        assert_same_notes(
            &format!("{what} via mido"),
            &ours,
            &reference_notes(&json, "mido"),
        );
        assert_same_notes(
            &format!("{what} via pretty_midi"),
            &ours,
            &reference_notes(&json, "pretty_midi"),
        );
    }
}

/// Files written by mido (format 0 and 1; PPQ 96, 480 and 960; running
/// status; note-offs as velocity-0 note-ons; a file with no tempo event),
/// read by our reader: same notes in beats as written, same seconds as mido
/// plays them, the file's metre, and the SMF 1.0 default tempo when none is given.
#[test]
fn files_mido_writes_read_correctly() {
    let dir = scratch_dir("midi_reference_mido");
    let json = pyref::run_json("smf_write_mido.py", &[dir.to_str().unwrap()]);
    let cases = json["cases"].as_array().unwrap();
    assert_eq!(cases.len(), 4);
    let mut formats = Vec::new();
    let mut ppqs = Vec::new();
    for case in cases {
        let file = case["file"].as_str().unwrap();
        let import =
            read_smf(&std::fs::read(file).unwrap()).unwrap_or_else(|e| panic!("{file}: {e}"));
        formats.push(case["type"].as_u64().unwrap());
        ppqs.push(case["ppq"].as_u64().unwrap());
        assert_eq!(import.ppq as u64, case["ppq"].as_u64().unwrap(), "{file}");
        // SMF 1.0: "If there are no tempo events … 120 beats per minute is
        // assumed", i.e. 500,000 µs per quarter note.
        let tempo = case["tempo"].as_u64().map_or(500_000, |t| t as u32);
        assert_eq!(import.tempo_us_per_quarter, tempo, "{file}");
        let ts = &case["time_signature"];
        assert_eq!(
            import.phrase.time_signature,
            TimeSignature::new(ts[0].as_u64().unwrap() as u8, ts[1].as_u64().unwrap() as u8)
                .unwrap(),
            "{file}"
        );
        assert_eq!(
            import.phrase.measures as u64,
            case["measures"].as_u64().unwrap(),
            "{file}"
        );
        let written: Vec<(u8, f64, f64, u8)> = case["notes"]
            .as_array()
            .unwrap()
            .iter()
            .map(|n| {
                (
                    n["pitch"].as_u64().unwrap() as u8,
                    n["onset"].as_f64().unwrap(),
                    n["duration"].as_f64().unwrap(),
                    n["velocity"].as_u64().unwrap() as u8,
                )
            })
            .collect();
        let ours: Vec<(u8, f64, f64, u8)> = import
            .phrase
            .notes
            .iter()
            .map(|n| (n.pitch, n.onset, n.duration, n.velocity))
            .collect();
        assert_eq!(ours, written, "{file}: notes in beats");
        // Seconds as mido's own player times the file.
        let played = case["played"].as_array().unwrap();
        assert_eq!(played.len(), ours.len(), "{file}");
        for (n, p) in import.phrase.notes.iter().zip(played) {
            let s = spb(import.tempo_us_per_quarter);
            assert_eq!(p["pitch"].as_u64().unwrap() as u8, n.pitch, "{file}");
            assert!(
                (p["start"].as_f64().unwrap() - n.onset * s).abs() < 1e-6,
                "{file}: onset of {n:?}"
            );
            assert!(
                (p["end"].as_f64().unwrap() - n.end() * s).abs() < 1e-6,
                "{file}: end of {n:?}"
            );
        }
    }
    formats.sort();
    formats.dedup();
    ppqs.sort();
    ppqs.dedup();
    assert_eq!(formats, vec![0, 1]);
    assert_eq!(ppqs, vec![96, 480, 960]);
    let running: Vec<i64> = cases
        .iter()
        .map(|c| c["running_status_bytes_saved"].as_i64().unwrap())
        .collect();
    assert!(
        running[0] > 0 && running[2] > 0,
        "the velocity-0 files must exercise running status: {running:?}"
    );
    // The two-channel file says its parts were merged.
    let merged = read_smf(&std::fs::read(cases[1]["file"].as_str().unwrap()).unwrap()).unwrap();
    assert!(
        merged.warnings.iter().any(|w| w.contains("channels 1, 2")),
        "{:?}",
        merged.warnings
    );
}

/// Variable-length quantities as tabulated in the SMF 1.0 specification
/// ("Variable-length quantity" examples), checked in the delta-time bytes our
/// writer emits. A one-note phrase at 1 tick per quarter note whose note lasts
/// `value` beats puts exactly `value` as the note-off's delta time.
#[test]
fn delta_times_use_the_specs_variable_length_quantities() {
    let table: [(u32, &[u8]); 11] = [
        (0x40, &[0x40]),
        (0x7F, &[0x7F]),
        (0x80, &[0x81, 0x00]),
        (0x2000, &[0xC0, 0x00]),
        (0x3FFF, &[0xFF, 0x7F]),
        (0x4000, &[0x81, 0x80, 0x00]),
        (0x10_0000, &[0xC0, 0x80, 0x00]),
        (0x1F_FFFF, &[0xFF, 0xFF, 0x7F]),
        (0x20_0000, &[0x81, 0x80, 0x80, 0x00]),
        (0x0800_0000, &[0xC0, 0x80, 0x80, 0x00]),
        (0x0FFF_FFFF, &[0xFF, 0xFF, 0xFF, 0x7F]),
    ];
    for (value, vlq) in table {
        let phrase = Phrase::new(
            TimeSignature::FOUR_FOUR,
            1,
            vec![Note::new(60, 0.0, value as f64, 100)],
        );
        let bytes = write_smf(&[("v", &phrase)], 500_000, 1);
        // The note track is the second MTrk chunk.
        let second = bytes
            .windows(4)
            .enumerate()
            .filter(|(_, w)| *w == b"MTrk")
            .nth(1)
            .unwrap()
            .0;
        let body = &bytes[second + 8..];
        let mut want = vec![0x00, 0xFF, 0x03, 0x01, b'v']; // track name
        want.extend([0x00, 0x90, 60, 100]); // note-on, delta 0x00 → 00
        want.extend(vlq);
        want.extend([0x80, 60, 64]); // note-off
        want.extend([0x00, 0xFF, 0x2F, 0x00]); // end of track
        assert_eq!(body, &want[..], "delta {value:#X}");
        let len = u32::from_be_bytes(bytes[second + 4..second + 8].try_into().unwrap()) as usize;
        assert_eq!(len, want.len(), "chunk length of delta {value:#X}");
    }
}
