//! The musical attributes the sliders are measured by.
//!
//! Every attribute is a plain function over one measure ([`measure_one`]);
//! a phrase of several measures reads as the mean of its per-measure values,
//! taken over the measures where the attribute is defined (so a silent bar
//! does not drag a two-bar phrase's pitch range toward nothing). Takes are
//! always *measured*, never assumed: the numbers the user sees come from the
//! notes that were actually decoded.
//!
//! The rhythm measures live in [`rhythm`]; this module names the attributes
//! and computes the melodic ones.

use crate::phrase::Phrase;
use crate::rhythm;
use serde::{Deserialize, Serialize};
use std::fmt;

/// One measurable property of a measure, the thing a slider moves.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash, PartialOrd, Ord, Serialize, Deserialize)]
#[serde(rename_all = "snake_case")]
pub enum Attribute {
    /// Notes per measure.
    NoteDensity,
    /// Highest minus lowest pitch, in semitones.
    PitchRange,
    /// Toussaint's metrical complexity, normalised to 0–1 (see [`rhythm`]).
    RhythmicComplexity,
    /// Least-squares slope of pitch over time, semitones per measure.
    Contour,
    /// Mean MIDI pitch of the notes (register).
    MeanPitch,
}

impl Attribute {
    /// Every attribute, in the order tables and readouts show them.
    pub const ALL: [Attribute; 5] = [
        Attribute::NoteDensity,
        Attribute::PitchRange,
        Attribute::RhythmicComplexity,
        Attribute::Contour,
        Attribute::MeanPitch,
    ];

    /// Stable machine name, used in manifests, presets, state and JSON.
    pub fn key(self) -> &'static str {
        match self {
            Attribute::NoteDensity => "note_density",
            Attribute::PitchRange => "pitch_range",
            Attribute::RhythmicComplexity => "rhythmic_complexity",
            Attribute::Contour => "contour",
            Attribute::MeanPitch => "mean_pitch",
        }
    }

    /// The attribute with machine name `key`, if there is one.
    pub fn from_key(key: &str) -> Option<Attribute> {
        Attribute::ALL.into_iter().find(|a| a.key() == key)
    }

    /// Name shown to the user.
    pub fn label(self) -> &'static str {
        match self {
            Attribute::NoteDensity => "Note density",
            Attribute::PitchRange => "Pitch range",
            Attribute::RhythmicComplexity => "Rhythmic complexity",
            Attribute::Contour => "Contour",
            Attribute::MeanPitch => "Mean pitch",
        }
    }

    /// Unit of the measured value, for tables and tooltips.
    pub fn unit(self) -> &'static str {
        match self {
            Attribute::NoteDensity => "notes per measure",
            Attribute::PitchRange => "semitones",
            Attribute::RhythmicComplexity => "0 = on the beats, 1 = most off-beat",
            Attribute::Contour => "semitones per measure",
            Attribute::MeanPitch => "MIDI pitch",
        }
    }

    /// Decimals worth showing: counts and pitches read as whole-ish numbers,
    /// the 0–1 complexity needs two.
    pub fn decimals(self) -> usize {
        match self {
            Attribute::RhythmicComplexity => 2,
            _ => 1,
        }
    }
}

impl fmt::Display for Attribute {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        f.write_str(self.label())
    }
}

/// Measures `attribute` over a phrase: the mean of its per-measure values,
/// over the measures where it is defined; `None` when it is defined in none
/// (e.g. the pitch range of a silent phrase).
pub fn measure(attribute: Attribute, phrase: &Phrase) -> Option<f64> {
    let mut sum = 0.0;
    let mut count = 0usize;
    for index in 0..phrase.measures {
        if let Some(v) = measure_one(attribute, &phrase.measure(index)) {
            sum += v;
            count += 1;
        }
    }
    (count > 0).then(|| sum / count as f64)
}

/// Measures `attribute` over the first measure of `measure` (a one-measure
/// phrase whose notes start at beat 0; notes starting later are ignored).
pub fn measure_one(attribute: Attribute, measure: &Phrase) -> Option<f64> {
    let len = measure.measure_len();
    let notes: Vec<_> = measure
        .notes
        .iter()
        .filter(|n| n.onset >= 0.0 && n.onset < len - 1e-9)
        .collect();
    match attribute {
        Attribute::NoteDensity => Some(notes.len() as f64),
        Attribute::PitchRange => {
            let lo = notes.iter().map(|n| n.pitch).min()?;
            let hi = notes.iter().map(|n| n.pitch).max()?;
            Some((hi - lo) as f64)
        }
        Attribute::RhythmicComplexity => {
            let onsets: Vec<f64> = notes.iter().map(|n| n.onset).collect();
            rhythm::normalized_metrical_complexity(measure.time_signature, &onsets)
        }
        Attribute::Contour => {
            let points: Vec<(f64, f64)> = notes
                .iter()
                .map(|n| (n.onset / len, n.pitch as f64))
                .collect();
            least_squares_slope(&points)
        }
        Attribute::MeanPitch => {
            if notes.is_empty() {
                return None;
            }
            // Each note counts once whatever its length: a short pickup is as
            // much part of the register a listener hears as a held note.
            Some(notes.iter().map(|n| n.pitch as f64).sum::<f64>() / notes.len() as f64)
        }
    }
}

/// Slope of the least-squares line through `points` (x, y): Σ(x−x̄)(y−ȳ) /
/// Σ(x−x̄)². `None` below two points or when every x is the same (a lone
/// chord has no direction).
pub fn least_squares_slope(points: &[(f64, f64)]) -> Option<f64> {
    if points.len() < 2 {
        return None;
    }
    let n = points.len() as f64;
    let mean_x = points.iter().map(|p| p.0).sum::<f64>() / n;
    let mean_y = points.iter().map(|p| p.1).sum::<f64>() / n;
    let sxx: f64 = points.iter().map(|p| (p.0 - mean_x).powi(2)).sum();
    let sxy: f64 = points.iter().map(|p| (p.0 - mean_x) * (p.1 - mean_y)).sum();
    (sxx > 1e-12).then(|| sxy / sxx)
}

/// All attributes of a phrase, measured at once: what a take shows next to
/// the prompt. Serialised with the attribute keys as field names.
#[derive(Debug, Clone, Copy, Default, PartialEq, Serialize, Deserialize)]
#[serde(default)]
pub struct Readout {
    pub note_density: Option<f64>,
    pub pitch_range: Option<f64>,
    pub rhythmic_complexity: Option<f64>,
    pub contour: Option<f64>,
    pub mean_pitch: Option<f64>,
}

impl Readout {
    /// Measures every attribute of `phrase`.
    pub fn of(phrase: &Phrase) -> Readout {
        let mut r = Readout::default();
        for a in Attribute::ALL {
            r.set(a, measure(a, phrase));
        }
        r
    }

    pub fn get(&self, attribute: Attribute) -> Option<f64> {
        match attribute {
            Attribute::NoteDensity => self.note_density,
            Attribute::PitchRange => self.pitch_range,
            Attribute::RhythmicComplexity => self.rhythmic_complexity,
            Attribute::Contour => self.contour,
            Attribute::MeanPitch => self.mean_pitch,
        }
    }

    pub fn set(&mut self, attribute: Attribute, value: Option<f64>) {
        let slot = match attribute {
            Attribute::NoteDensity => &mut self.note_density,
            Attribute::PitchRange => &mut self.pitch_range,
            Attribute::RhythmicComplexity => &mut self.rhythmic_complexity,
            Attribute::Contour => &mut self.contour,
            Attribute::MeanPitch => &mut self.mean_pitch,
        };
        *slot = value;
    }

    /// The change from `before` to `self`, attribute by attribute; `None`
    /// where either side is undefined.
    pub fn minus(&self, before: &Readout) -> Readout {
        let mut d = Readout::default();
        for a in Attribute::ALL {
            d.set(a, self.get(a).zip(before.get(a)).map(|(x, y)| x - y));
        }
        d
    }

    /// (attribute, value) pairs in [`Attribute::ALL`] order.
    pub fn iter(&self) -> impl Iterator<Item = (Attribute, Option<f64>)> + '_ {
        Attribute::ALL.into_iter().map(|a| (a, self.get(a)))
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::meter::TimeSignature;
    use crate::note::Note;

    fn bar(notes: &[(u8, f64, f64)]) -> Phrase {
        let notes = notes
            .iter()
            .map(|&(p, o, d)| Note::new(p, o, d, 100))
            .collect();
        Phrase::new(TimeSignature::FOUR_FOUR, 1, notes)
    }

    #[test]
    fn keys_round_trip_and_match_serde() {
        for a in Attribute::ALL {
            assert_eq!(Attribute::from_key(a.key()), Some(a));
            assert_eq!(
                serde_json::to_string(&a).unwrap(),
                format!("\"{}\"", a.key())
            );
        }
        assert_eq!(Attribute::from_key("loudness"), None);
    }

    // Hand-worked: C4 E4 G4 C5 as four quarter notes (a rising arpeggio).
    // Density 4; range 72−60 = 12; mean (60+64+67+72)/4 = 65.75.
    // Contour: x = 0, .25, .5, .75 measures, x̄ = .375, Σ(x−x̄)² = .3125,
    // ȳ = 65.75, Σ(x−x̄)(y−ȳ) = (−.375)(−5.75)+(−.125)(−1.75)+(.125)(1.25)+(.375)(6.25)
    // = 2.15625+.21875+.15625+2.34375 = 4.875 → slope 15.6 semitones per measure.
    // All onsets on quarter-note beats: weights 5,3,4,3 = the 4 largest → complexity 0.
    #[test]
    fn rising_arpeggio_hand_worked() {
        let m = bar(&[
            (60, 0.0, 1.0),
            (64, 1.0, 1.0),
            (67, 2.0, 1.0),
            (72, 3.0, 1.0),
        ]);
        let r = Readout::of(&m);
        assert_eq!(r.note_density, Some(4.0));
        assert_eq!(r.pitch_range, Some(12.0));
        assert_eq!(r.mean_pitch, Some(65.75));
        assert!((r.contour.unwrap() - 15.6).abs() < 1e-9, "{:?}", r.contour);
        assert_eq!(r.rhythmic_complexity, Some(0.0));
    }

    #[test]
    fn falling_line_has_negative_contour_and_empty_bar_is_undefined() {
        let m = bar(&[(72, 0.0, 2.0), (60, 2.0, 2.0)]);
        // Two points (0, 72) and (.5, 60): slope −12 / .5 = −24 per measure.
        assert_eq!(measure(Attribute::Contour, &m), Some(-24.0));
        let empty = Phrase::empty(TimeSignature::FOUR_FOUR, 1);
        assert_eq!(measure(Attribute::NoteDensity, &empty), Some(0.0));
        for a in [
            Attribute::PitchRange,
            Attribute::Contour,
            Attribute::MeanPitch,
            Attribute::RhythmicComplexity,
        ] {
            assert_eq!(measure(a, &empty), None, "{a:?}");
        }
        // One note: a range of 0, no direction.
        let one = bar(&[(67, 1.0, 1.0)]);
        assert_eq!(measure(Attribute::PitchRange, &one), Some(0.0));
        assert_eq!(measure(Attribute::Contour, &one), None);
        // A lone chord: no direction either.
        let chord = bar(&[(60, 0.0, 4.0), (64, 0.0, 4.0), (67, 0.0, 4.0)]);
        assert_eq!(measure(Attribute::Contour, &chord), None);
    }

    #[test]
    fn multi_measure_phrase_is_the_mean_of_defined_measures() {
        let ts = TimeSignature::FOUR_FOUR;
        let p = Phrase::new(
            ts,
            3,
            vec![
                Note::new(60, 0.0, 1.0, 90),
                Note::new(67, 1.0, 1.0, 90), // bar 1: range 7, 2 notes
                // bar 2 silent
                Note::new(62, 8.0, 1.0, 90),
                Note::new(65, 9.0, 1.0, 90),
                Note::new(74, 10.0, 1.0, 90), // bar 3: range 12, 3 notes
            ],
        );
        assert_eq!(measure(Attribute::PitchRange, &p), Some(9.5));
        // Density is defined on the silent bar too: (2 + 0 + 3) / 3.
        assert!((measure(Attribute::NoteDensity, &p).unwrap() - 5.0 / 3.0).abs() < 1e-12);
    }

    #[test]
    fn minus_gives_change_where_both_are_defined() {
        let a = Readout {
            note_density: Some(6.0),
            pitch_range: Some(9.0),
            ..Default::default()
        };
        let b = Readout {
            note_density: Some(4.0),
            pitch_range: None,
            ..Default::default()
        };
        let d = a.minus(&b);
        assert_eq!(d.note_density, Some(2.0));
        assert_eq!(d.pitch_range, None);
        let json = serde_json::to_string(&a).unwrap();
        assert!(json.contains("\"note_density\":6.0"), "{json}");
        let back: Readout = serde_json::from_str(&json).unwrap();
        assert_eq!(back, a);
    }
}
