//! The demo prompts shipped in `presets/prompts/`: invented ferry calls of
//! Wrenmouth, the river-port town of Nudgebar's demo scenario, whose ferry
//! crews signal across the water with short tunes on a small brass horn.
//!
//! The calls are built from three rhythm cells — *bell cells* of even
//! eighths, *rope cells* of dotted figures and *gull cells* of busy
//! sixteenths — sit in a middle register (MIDI 48–83), and mostly leap at
//! the start and step afterwards. They are written here as notes so the
//! `.mid` files are reproducible: regenerate them with
//! `cargo run -p nudgebar-music --example write_demo_prompts` (a test checks
//! that the committed files match this code byte for byte).

use crate::meter::TimeSignature;
use crate::midi_file::write_smf;
use crate::note::Note;
use crate::phrase::Phrase;
use std::path::{Path, PathBuf};

/// Resolution of the written files: 480 ticks per quarter note, a common DAW
/// default (common practice) that holds sixteenths and triplets exactly.
pub const PROMPT_PPQ: u16 = 480;

/// One demo prompt: a named call and the tempo it is played at.
#[derive(Debug, Clone, PartialEq)]
pub struct DemoPrompt {
    /// Name shown to the user and written as the MIDI track name.
    pub name: &'static str,
    /// File name without `.mid`.
    pub file_stem: &'static str,
    /// One line on what the call is like.
    pub description: &'static str,
    pub tempo_us_per_quarter: u32,
    pub phrase: Phrase,
}

impl DemoPrompt {
    /// The prompt as a Standard MIDI File.
    pub fn to_smf(&self) -> Vec<u8> {
        write_smf(
            &[(self.name, &self.phrase)],
            self.tempo_us_per_quarter,
            PROMPT_PPQ,
        )
    }

    pub fn file_name(&self) -> String {
        format!("{}.mid", self.file_stem)
    }
}

/// Microseconds per quarter note at `bpm` quarter notes per minute.
const fn tempo(bpm: u32) -> u32 {
    60_000_000 / bpm
}

/// Notes from (pitch, onset, duration, velocity) rows, in beats.
fn notes(rows: &[(u8, f64, f64, u8)]) -> Vec<Note> {
    rows.iter()
        .map(|&(p, o, d, v)| Note::new(p, o, d, v))
        .collect()
}

/// Every demo prompt, in the order menus list them.
pub fn all() -> Vec<DemoPrompt> {
    let four = TimeSignature::FOUR_FOUR;
    // 3 is a valid numerator and 4 a valid denominator, so this cannot fail.
    let three = TimeSignature::new(3, 4).expect("3/4 is a valid time signature");
    vec![
        DemoPrompt {
            name: "Slack tide",
            file_stem: "slack-tide",
            description: "An unhurried bell-cell call: a fourth down, then eighths stepping round C.",
            tempo_us_per_quarter: tempo(96),
            phrase: Phrase::new(
                four,
                1,
                notes(&[
                    (67, 0.0, 1.0, 96),
                    (60, 1.0, 0.5, 80),
                    (62, 1.5, 0.5, 74),
                    (64, 2.0, 0.5, 84),
                    (62, 2.5, 0.5, 72),
                    (60, 3.0, 1.0, 78),
                ]),
            ),
        },
        DemoPrompt {
            name: "Gull chatter",
            file_stem: "gull-chatter",
            description: "Gull cells: a leap up a fifth, then sixteenths that tie over every beat and sink.",
            tempo_us_per_quarter: tempo(120),
            phrase: Phrase::new(
                four,
                1,
                notes(&[
                    (69, 0.0, 0.25, 104),
                    (76, 0.25, 0.25, 92),
                    (74, 0.5, 0.25, 80),
                    (72, 0.75, 0.5, 86),
                    (74, 1.25, 0.25, 74),
                    (72, 1.5, 0.25, 76),
                    (71, 1.75, 0.5, 88),
                    (69, 2.25, 0.25, 74),
                    (71, 2.5, 0.25, 78),
                    (72, 2.75, 0.5, 90),
                    (71, 3.25, 0.25, 74),
                    (69, 3.5, 0.25, 72),
                    (67, 3.75, 0.25, 80),
                ]),
            ),
        },
        DemoPrompt {
            name: "Lamp climb",
            file_stem: "lamp-climb",
            description: "Rope cells climbing: dotted eighths with sixteenth pickups, up an octave and a fourth.",
            tempo_us_per_quarter: tempo(100),
            phrase: Phrase::new(
                four,
                1,
                notes(&[
                    (55, 0.0, 0.75, 100),
                    (62, 0.75, 0.25, 70),
                    (64, 1.0, 0.75, 90),
                    (65, 1.75, 0.25, 70),
                    (67, 2.0, 0.75, 94),
                    (69, 2.75, 0.25, 74),
                    (72, 3.0, 1.0, 104),
                ]),
            ),
        },
        DemoPrompt {
            name: "Lock keeper",
            file_stem: "lock-keeper",
            description: "A three-beat call for the lock gates: a fifth up, then a slow step down.",
            tempo_us_per_quarter: tempo(80),
            phrase: Phrase::new(
                three,
                1,
                notes(&[(57, 0.0, 1.0, 92), (64, 1.0, 0.5, 84), (62, 1.5, 0.5, 72), (60, 2.0, 1.0, 80)]),
            ),
        },
        DemoPrompt {
            name: "Wide estuary",
            file_stem: "wide-estuary",
            description: "Two bars calling across open water: low horn notes answered by high ones.",
            tempo_us_per_quarter: tempo(75),
            phrase: Phrase::new(
                four,
                2,
                notes(&[
                    (50, 0.0, 1.5, 100),
                    (62, 1.5, 0.5, 78),
                    (57, 2.0, 1.0, 86),
                    (65, 3.0, 1.0, 90),
                    (69, 4.0, 0.75, 96),
                    (67, 4.75, 0.25, 72),
                    (64, 5.0, 1.0, 84),
                    (74, 6.0, 1.5, 100),
                ]),
            ),
        },
    ]
}

/// Writes every demo prompt into `dir` (created if missing) and returns the
/// paths written.
pub fn write_all(dir: &Path) -> std::io::Result<Vec<PathBuf>> {
    std::fs::create_dir_all(dir)?;
    all()
        .iter()
        .map(|p| {
            let path = dir.join(p.file_name());
            std::fs::write(&path, p.to_smf())?;
            Ok(path)
        })
        .collect()
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::midi_file::read_smf;
    use crate::phrase::MAX_MEASURES;

    fn committed_dir() -> PathBuf {
        Path::new(env!("CARGO_MANIFEST_DIR")).join("../../presets/prompts")
    }

    #[test]
    fn prompts_are_well_formed_calls() {
        let prompts = all();
        assert!((4..=5).contains(&prompts.len()));
        for p in &prompts {
            assert!(
                !p.phrase.is_empty() && p.phrase.measures <= MAX_MEASURES,
                "{}",
                p.name
            );
            for n in &p.phrase.notes {
                assert!(
                    (48..=83).contains(&n.pitch),
                    "{}: pitch {} outside the horn's register",
                    p.name,
                    n.pitch
                );
                assert!(
                    n.end() <= p.phrase.len_beats() + 1e-9,
                    "{}: a note rings past the last bar line",
                    p.name
                );
            }
        }
    }

    #[test]
    fn prompts_read_back_exactly() {
        for p in all() {
            let import = read_smf(&p.to_smf()).unwrap();
            assert_eq!(import.phrase, p.phrase, "{}", p.name);
            assert_eq!(import.tempo_us_per_quarter, p.tempo_us_per_quarter);
            assert!(
                import.warnings.is_empty(),
                "{}: {:?}",
                p.name,
                import.warnings
            );
        }
    }

    /// The committed files are exactly what this code writes. If this fails
    /// after an intended change, regenerate with
    /// `cargo run -p nudgebar-music --example write_demo_prompts` and commit.
    #[test]
    fn committed_prompt_files_match_the_code() {
        let dir = std::env::temp_dir().join(format!("nudgebar-prompts-{}", std::process::id()));
        let written = write_all(&dir).unwrap();
        for path in &written {
            let name = path.file_name().unwrap();
            let committed = std::fs::read(committed_dir().join(name)).unwrap_or_else(|e| {
                panic!(
                    "presets/prompts/{} is missing ({e})",
                    name.to_string_lossy()
                )
            });
            assert!(
                committed == std::fs::read(path).unwrap(),
                "presets/prompts/{} differs from the code",
                name.to_string_lossy()
            );
        }
        let _ = std::fs::remove_dir_all(&dir);
        let committed_count = std::fs::read_dir(committed_dir())
            .unwrap()
            .filter(|e| {
                e.as_ref()
                    .unwrap()
                    .path()
                    .extension()
                    .is_some_and(|x| x == "mid")
            })
            .count();
        assert_eq!(
            committed_count,
            written.len(),
            "presets/prompts/ holds .mid files the code does not write"
        );
    }
}
