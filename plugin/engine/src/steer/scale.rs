//! Keys and scales as pitch masks: the decoder's pitch tokens outside the
//! chosen scale are masked before a token is chosen (`codec::read_row`), so
//! a key-constrained take is what the model would play in that key, not a
//! take whose wrong notes were moved afterwards.
//!
//! Interval sets are the textbook ones (semitones above the tonic), as given
//! in standard theory references — e.g. the Harvard Dictionary of Music (4th
//! ed., 2003) entries "Mode", "Pentatonic scale", "Blues" (cited from
//! memory) — and are checked in `tests/tests/steer_scale.rs` against the
//! scale classes of music21 (PyPI).

use crate::codec::PitchMask;
use serde::{Deserialize, Serialize};
use std::fmt;

/// A scale type, independent of its tonic.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash, Serialize, Deserialize)]
#[serde(rename_all = "snake_case")]
pub enum Scale {
    Major,
    NaturalMinor,
    Dorian,
    Phrygian,
    Lydian,
    Mixolydian,
    Locrian,
    MajorPentatonic,
    MinorPentatonic,
    /// The six-note blues scale: minor pentatonic plus the flattened fifth.
    Blues,
}

impl Scale {
    pub const ALL: [Scale; 10] = [
        Scale::Major,
        Scale::NaturalMinor,
        Scale::Dorian,
        Scale::Phrygian,
        Scale::Lydian,
        Scale::Mixolydian,
        Scale::Locrian,
        Scale::MajorPentatonic,
        Scale::MinorPentatonic,
        Scale::Blues,
    ];

    /// Semitones above the tonic, ascending, starting at 0.
    pub fn intervals(self) -> &'static [u8] {
        match self {
            Scale::Major => &[0, 2, 4, 5, 7, 9, 11],
            Scale::NaturalMinor => &[0, 2, 3, 5, 7, 8, 10],
            Scale::Dorian => &[0, 2, 3, 5, 7, 9, 10],
            Scale::Phrygian => &[0, 1, 3, 5, 7, 8, 10],
            Scale::Lydian => &[0, 2, 4, 6, 7, 9, 11],
            Scale::Mixolydian => &[0, 2, 4, 5, 7, 9, 10],
            Scale::Locrian => &[0, 1, 3, 5, 6, 8, 10],
            Scale::MajorPentatonic => &[0, 2, 4, 7, 9],
            Scale::MinorPentatonic => &[0, 3, 5, 7, 10],
            Scale::Blues => &[0, 3, 5, 6, 7, 10],
        }
    }

    /// Stable machine name, for flags, presets and saved state.
    pub fn key(self) -> &'static str {
        match self {
            Scale::Major => "major",
            Scale::NaturalMinor => "natural_minor",
            Scale::Dorian => "dorian",
            Scale::Phrygian => "phrygian",
            Scale::Lydian => "lydian",
            Scale::Mixolydian => "mixolydian",
            Scale::Locrian => "locrian",
            Scale::MajorPentatonic => "major_pentatonic",
            Scale::MinorPentatonic => "minor_pentatonic",
            Scale::Blues => "blues",
        }
    }

    pub fn from_key(key: &str) -> Option<Scale> {
        let k = key.trim().to_ascii_lowercase().replace(['-', ' '], "_");
        match k.as_str() {
            "minor" | "aeolian" => Some(Scale::NaturalMinor),
            "ionian" => Some(Scale::Major),
            _ => Scale::ALL.into_iter().find(|s| s.key() == k),
        }
    }

    /// Name shown to the user.
    pub fn label(self) -> &'static str {
        match self {
            Scale::Major => "major",
            Scale::NaturalMinor => "natural minor",
            Scale::Dorian => "Dorian",
            Scale::Phrygian => "Phrygian",
            Scale::Lydian => "Lydian",
            Scale::Mixolydian => "Mixolydian",
            Scale::Locrian => "Locrian",
            Scale::MajorPentatonic => "major pentatonic",
            Scale::MinorPentatonic => "minor pentatonic",
            Scale::Blues => "blues",
        }
    }
}

/// Pitch-class names used in messages and accepted when parsing (sharps
/// and flats both read; sharps are written).
const NAMES: [&str; 12] = [
    "C", "C#", "D", "D#", "E", "F", "F#", "G", "G#", "A", "A#", "B",
];

/// A tonic and a scale: "D dorian", "A minor pentatonic".
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize, Deserialize)]
pub struct KeyScale {
    /// Pitch class of the tonic, 0 = C … 11 = B.
    pub tonic: u8,
    pub scale: Scale,
}

impl KeyScale {
    pub fn new(tonic: u8, scale: Scale) -> KeyScale {
        KeyScale {
            tonic: tonic % 12,
            scale,
        }
    }

    /// Whether a MIDI pitch belongs to the scale.
    pub fn contains(&self, pitch: u8) -> bool {
        let degree = (pitch % 12 + 12 - self.tonic) % 12;
        self.scale.intervals().contains(&degree)
    }

    /// The mask that lets the decoder choose only pitches of the scale.
    pub fn mask(&self) -> PitchMask {
        let mut allowed = [false; 128];
        for (p, slot) in allowed.iter_mut().enumerate() {
            *slot = self.contains(p as u8);
        }
        PitchMask(allowed)
    }

    /// The scale's pitch classes, ascending from the tonic.
    pub fn pitch_classes(&self) -> Vec<u8> {
        self.scale
            .intervals()
            .iter()
            .map(|i| (self.tonic + i) % 12)
            .collect()
    }

    /// Reads "D dorian", "Bb major", "f# minor pentatonic", "A blues".
    pub fn parse(text: &str) -> Result<KeyScale, String> {
        let text = text.trim();
        let (tonic, rest) = text.split_once(char::is_whitespace).ok_or_else(|| {
            format!("\"{text}\" is not a key; write a tonic and a scale, e.g. \"D dorian\"")
        })?;
        let tonic = tonic_from_name(tonic)
            .ok_or_else(|| format!("\"{tonic}\" is not a note name; use C, C#, Db, D, … B"))?;
        let scale = Scale::from_key(rest).ok_or_else(|| {
            let known: Vec<&str> = Scale::ALL.iter().map(|s| s.key()).collect();
            format!(
                "\"{}\" is not a scale Nudgebar knows; choose one of {}",
                rest.trim(),
                known.join(", ")
            )
        })?;
        Ok(KeyScale::new(tonic, scale))
    }
}

impl fmt::Display for KeyScale {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        write!(f, "{} {}", NAMES[self.tonic as usize], self.scale.label())
    }
}

/// Pitch class of a note name: a letter, then any number of `#`/`b`.
pub fn tonic_from_name(name: &str) -> Option<u8> {
    let mut chars = name.chars();
    let letter = chars.next()?.to_ascii_uppercase();
    let base: i32 = match letter {
        'C' => 0,
        'D' => 2,
        'E' => 4,
        'F' => 5,
        'G' => 7,
        'A' => 9,
        'B' => 11,
        _ => return None,
    };
    let mut shift = 0i32;
    for c in chars {
        match c {
            '#' | '♯' => shift += 1,
            'b' | '♭' => shift -= 1,
            _ => return None,
        }
    }
    Some((base + shift).rem_euclid(12) as u8)
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn parses_names_and_aliases() {
        assert_eq!(
            KeyScale::parse("D dorian").unwrap(),
            KeyScale::new(2, Scale::Dorian)
        );
        assert_eq!(
            KeyScale::parse("Bb minor pentatonic").unwrap(),
            KeyScale::new(10, Scale::MinorPentatonic)
        );
        assert_eq!(KeyScale::parse("Cb major").unwrap().tonic, 11);
        assert_eq!(
            KeyScale::parse("a minor").unwrap().scale,
            Scale::NaturalMinor
        );
        assert!(KeyScale::parse("H major")
            .unwrap_err()
            .contains("note name"));
        assert!(KeyScale::parse("C bebop")
            .unwrap_err()
            .contains("choose one of"));
        assert!(KeyScale::parse("C").is_err());
    }

    #[test]
    fn modes_are_rotations_of_the_major_scale() {
        // Handbook fact: the church modes are the major scale started on its
        // 2nd (Dorian) … 7th (Locrian) degree.
        let major = Scale::Major.intervals();
        let modes = [
            (1, Scale::Dorian),
            (2, Scale::Phrygian),
            (3, Scale::Lydian),
            (4, Scale::Mixolydian),
            (5, Scale::NaturalMinor),
            (6, Scale::Locrian),
        ];
        for (degree, mode) in modes {
            let start = major[degree];
            let mut rotated: Vec<u8> = major.iter().map(|i| (i + 12 - start) % 12).collect();
            rotated.sort_unstable();
            assert_eq!(rotated, mode.intervals(), "{mode:?}");
        }
    }

    #[test]
    fn mask_allows_exactly_the_scale() {
        let g_major = KeyScale::new(7, Scale::Major).mask();
        assert!(g_major.allows(66)); // F#4
        assert!(!g_major.allows(65)); // F4
        assert_eq!(g_major.0.iter().filter(|a| **a).count(), 75);
    }
}
