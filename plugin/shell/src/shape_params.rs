//! The parameters that shape takes beyond the axis sliders — key and scale,
//! holds, aiming one attribute at a value, blending toward a kept take —
//! with their choices, ranges and value↔text conversions. They are fields of
//! [`crate::params::NudgebarParams`] like every other parameter (host-visible,
//! automatable, saved with the project); only the worker and the editor
//! read them, never the audio thread.
//!
//! # Aiming: a chooser plus one value lane per attribute
//! Target mode is `aim` (which attribute to aim, or off) plus one value
//! parameter per attribute, each in that attribute's own unit: `aim_notes`
//! reads "7 notes", `aim_range` "12 st", `aim_rhythm` "0.35", `aim_contour`
//! "+6.0 st/bar", `aim_pitch` "64 (E4)". A single value parameter shared by
//! all attributes would change meaning whenever `aim` changes: a lane
//! recorded as "7 notes" would replay as a range of 7 semitones, or be
//! clamped into rhythmic complexity's 0–1. One lane per attribute keeps each
//! lane's unit for good, the host shows it in that unit, and automating
//! `aim` only picks which lane counts. Each lane remembers its own value, so
//! switching back and forth between attributes loses nothing.
//!
//! # Holds
//! One on/off parameter per axis slot (`hold1`…`hold6`): it holds the
//! attribute that slot's slider controls near the prompt's value. How near
//! is one tolerance per attribute ([`hold_tolerance`]) times a shared
//! `hold_leeway` factor, so one control loosens or tightens every hold.
//!
//! # Blend
//! `blend_toward` picks a kept take by its number in the kept list (0 = off),
//! `blend` is how far from the prompt toward it (0–100 %), `blend_path`
//! chooses a straight line or the sphere through latent space. While a kept
//! take is chosen, the in-between takes replace the take set.

use nice_plug::prelude::*;
use nudgebar_engine::steer::{Interpolation, Scale};
use nudgebar_music::attributes::Attribute;
use std::sync::Arc;

/// Kept takes a blend can point at (the session's limit too).
pub const MAX_BLEND_TARGET: i32 = crate::state::MAX_KEPT as i32;

/// The key's tonic, or off (no key: takes may use any pitch).
#[derive(Enum, Debug, Clone, Copy, PartialEq, Eq)]
pub enum Tonic {
    #[id = "off"]
    #[name = "Off"]
    Off,
    #[id = "c"]
    #[name = "C"]
    C,
    #[id = "c_sharp"]
    #[name = "C#"]
    CSharp,
    #[id = "d"]
    #[name = "D"]
    D,
    #[id = "e_flat"]
    #[name = "Eb"]
    EFlat,
    #[id = "e"]
    #[name = "E"]
    E,
    #[id = "f"]
    #[name = "F"]
    F,
    #[id = "f_sharp"]
    #[name = "F#"]
    FSharp,
    #[id = "g"]
    #[name = "G"]
    G,
    #[id = "a_flat"]
    #[name = "Ab"]
    AFlat,
    #[id = "a"]
    #[name = "A"]
    A,
    #[id = "b_flat"]
    #[name = "Bb"]
    BFlat,
    #[id = "b"]
    #[name = "B"]
    B,
}

impl Tonic {
    /// Every choice, in the order the host lists them.
    pub const ALL: [Tonic; 13] = [
        Tonic::Off,
        Tonic::C,
        Tonic::CSharp,
        Tonic::D,
        Tonic::EFlat,
        Tonic::E,
        Tonic::F,
        Tonic::FSharp,
        Tonic::G,
        Tonic::AFlat,
        Tonic::A,
        Tonic::BFlat,
        Tonic::B,
    ];

    /// Pitch class (0 = C … 11 = B), `None` when off.
    pub fn pitch_class(self) -> Option<u8> {
        Tonic::ALL
            .iter()
            .position(|t| *t == self)
            .and_then(|i| i.checked_sub(1))
            .map(|pc| pc as u8)
    }

    /// The name the host shows.
    pub fn name(self) -> &'static str {
        Tonic::variants()[Tonic::ALL.iter().position(|t| *t == self).unwrap_or(0)]
    }
}

/// The scale a key uses; the engine's scale list, one to one.
#[derive(Enum, Debug, Clone, Copy, PartialEq, Eq)]
pub enum ScaleChoice {
    #[id = "major"]
    #[name = "Major"]
    Major,
    #[id = "natural_minor"]
    #[name = "Natural minor"]
    NaturalMinor,
    #[id = "dorian"]
    #[name = "Dorian"]
    Dorian,
    #[id = "phrygian"]
    #[name = "Phrygian"]
    Phrygian,
    #[id = "lydian"]
    #[name = "Lydian"]
    Lydian,
    #[id = "mixolydian"]
    #[name = "Mixolydian"]
    Mixolydian,
    #[id = "locrian"]
    #[name = "Locrian"]
    Locrian,
    #[id = "major_pentatonic"]
    #[name = "Major pentatonic"]
    MajorPentatonic,
    #[id = "minor_pentatonic"]
    #[name = "Minor pentatonic"]
    MinorPentatonic,
    #[id = "blues"]
    #[name = "Blues"]
    Blues,
}

impl ScaleChoice {
    pub const ALL: [ScaleChoice; 10] = [
        ScaleChoice::Major,
        ScaleChoice::NaturalMinor,
        ScaleChoice::Dorian,
        ScaleChoice::Phrygian,
        ScaleChoice::Lydian,
        ScaleChoice::Mixolydian,
        ScaleChoice::Locrian,
        ScaleChoice::MajorPentatonic,
        ScaleChoice::MinorPentatonic,
        ScaleChoice::Blues,
    ];

    /// The engine's scale (same position in `Scale::ALL`).
    pub fn scale(self) -> Scale {
        let i = ScaleChoice::ALL
            .iter()
            .position(|s| *s == self)
            .unwrap_or(0);
        Scale::ALL[i]
    }

    pub fn of(scale: Scale) -> ScaleChoice {
        let i = Scale::ALL.iter().position(|s| *s == scale).unwrap_or(0);
        ScaleChoice::ALL[i]
    }

    pub fn name(self) -> &'static str {
        ScaleChoice::variants()[ScaleChoice::ALL
            .iter()
            .position(|s| *s == self)
            .unwrap_or(0)]
    }
}

/// Which attribute target mode aims at, or off.
#[derive(Enum, Debug, Clone, Copy, PartialEq, Eq)]
pub enum AimAt {
    #[id = "off"]
    #[name = "Off"]
    Off,
    #[id = "note_density"]
    #[name = "Note density"]
    NoteDensity,
    #[id = "pitch_range"]
    #[name = "Pitch range"]
    PitchRange,
    #[id = "rhythmic_complexity"]
    #[name = "Rhythmic complexity"]
    RhythmicComplexity,
    #[id = "contour"]
    #[name = "Contour"]
    Contour,
    #[id = "mean_pitch"]
    #[name = "Mean pitch"]
    MeanPitch,
}

impl AimAt {
    pub const ALL: [AimAt; 6] = [
        AimAt::Off,
        AimAt::NoteDensity,
        AimAt::PitchRange,
        AimAt::RhythmicComplexity,
        AimAt::Contour,
        AimAt::MeanPitch,
    ];

    pub fn attribute(self) -> Option<Attribute> {
        match self {
            AimAt::Off => None,
            AimAt::NoteDensity => Some(Attribute::NoteDensity),
            AimAt::PitchRange => Some(Attribute::PitchRange),
            AimAt::RhythmicComplexity => Some(Attribute::RhythmicComplexity),
            AimAt::Contour => Some(Attribute::Contour),
            AimAt::MeanPitch => Some(Attribute::MeanPitch),
        }
    }

    pub fn of(attribute: Option<Attribute>) -> AimAt {
        AimAt::ALL
            .into_iter()
            .find(|a| a.attribute() == attribute)
            .unwrap_or(AimAt::Off)
    }

    pub fn name(self) -> &'static str {
        AimAt::variants()[AimAt::ALL.iter().position(|s| *s == self).unwrap_or(0)]
    }
}

/// The path a blend takes through latent space.
#[derive(Enum, Debug, Clone, Copy, PartialEq, Eq)]
pub enum BlendPath {
    /// Straight line between the two codes.
    #[id = "linear"]
    #[name = "Linear"]
    Linear,
    /// Along the sphere (slerp), keeping in-between codes at a typical norm.
    #[id = "spherical"]
    #[name = "Spherical"]
    Spherical,
}

impl BlendPath {
    pub fn interpolation(self) -> Interpolation {
        match self {
            BlendPath::Linear => Interpolation::Linear,
            BlendPath::Spherical => Interpolation::Spherical,
        }
    }
}

/// How near the prompt's value a hold keeps an attribute, at leeway ×1, in
/// the attribute's own unit: the engine's default lock tolerance (one note,
/// a whole tone of range, contour or register, a tenth of complexity).
pub fn hold_tolerance(attribute: Attribute) -> f64 {
    nudgebar_engine::steer::default_tolerance(attribute)
}

/// How close an aimed take must measure to count as reached: half a note,
/// half a semitone; 0.05 on the 0–1 complexity scale (the offline `nudge
/// aim` command's defaults).
pub fn aim_tolerance(attribute: Attribute) -> f64 {
    match attribute {
        Attribute::RhythmicComplexity => 0.05,
        _ => 0.5,
    }
}

/// The value parameter for aiming at `attribute`: range, step and text in
/// the attribute's unit.
pub fn aim_value_param(attribute: Attribute) -> FloatParam {
    let (default, min, max, step) = aim_range(attribute);
    FloatParam::new(
        format!("Aim: {}", attribute.label().to_lowercase()),
        default,
        FloatRange::Linear { min, max },
    )
    .with_step_size(step)
    .with_value_to_string(Arc::new(move |v| aim_text(attribute, v)))
    .with_string_to_value(Arc::new(move |s| parse_aim(attribute, s)))
}

/// (default, min, max, step) of an attribute's aim lane: notes per bar on
/// grids up to 32 steps, range up to 64 semitones, contour up to 32
/// semitones per bar either way, register over all of MIDI. (Each span is a
/// whole number of steps that divides evenly into the host's value grid.)
pub fn aim_range(attribute: Attribute) -> (f32, f32, f32, f32) {
    match attribute {
        Attribute::NoteDensity => (8.0, 0.0, 32.0, 0.5),
        Attribute::PitchRange => (12.0, 0.0, 64.0, 1.0),
        Attribute::RhythmicComplexity => (0.3, 0.0, 1.0, 0.01),
        Attribute::Contour => (6.0, -32.0, 32.0, 0.5),
        Attribute::MeanPitch => (64.0, 0.0, 127.0, 1.0),
    }
}

/// An aim value in its unit: "7 notes", "6.5 notes", "12 st", "0.35",
/// "+6.0 st/bar", "64 (E4)".
pub fn aim_text(attribute: Attribute, v: f32) -> String {
    match attribute {
        Attribute::NoteDensity => {
            if v.fract() == 0.0 {
                format!("{v:.0} notes")
            } else {
                format!("{v:.1} notes")
            }
        }
        Attribute::PitchRange => format!("{v:.0} st"),
        Attribute::RhythmicComplexity => format!("{v:.2}"),
        Attribute::Contour => {
            if v.abs() < 0.05 {
                "0.0 st/bar".into()
            } else {
                format!("{v:+.1} st/bar")
            }
        }
        Attribute::MeanPitch => format!(
            "{v:.0} ({})",
            crate::editor::view_model::pitch_name(v.round() as i32)
        ),
    }
}

fn parse_aim(attribute: Attribute, s: &str) -> Option<f32> {
    let s = s.trim();
    // "64 (E4)" → "64"; a bare note name reads as its MIDI number.
    let s = s.split('(').next().unwrap_or(s).trim();
    if attribute == Attribute::MeanPitch {
        if let Some(p) = parse_note_name(s) {
            return Some(p as f32);
        }
    }
    let number = s
        .trim_end_matches("st/bar")
        .trim_end_matches("semitones")
        .trim_end_matches("st")
        .trim_end_matches("notes")
        .trim_end_matches("note")
        .trim()
        .trim_start_matches('+')
        .replace('−', "-");
    let v: f32 = number.trim().parse().ok()?;
    v.is_finite().then_some(v)
}

/// "E4" → 64, "C#3" → 49, "Bb2" → 46 (middle C = C4 = 60).
fn parse_note_name(s: &str) -> Option<u8> {
    let split = s.find(|c: char| c.is_ascii_digit() || c == '-')?;
    let (name, octave) = s.split_at(split);
    if name.is_empty() {
        return None;
    }
    let pc = nudgebar_engine::steer::scale::tonic_from_name(name)? as i32;
    let octave: i32 = octave.parse().ok()?;
    let p = (octave + 1) * 12 + pc;
    (0..=127).contains(&p).then_some(p as u8)
}

/// The hold parameter of slot `slot` (0-based), named for the attribute the
/// slot is bound to by default.
pub fn hold_param(slot: usize) -> BoolParam {
    let name = match crate::params::NAMED_AXES.get(slot) {
        Some(a) => format!("Hold {}", a.label().to_lowercase()),
        None => format!("Hold axis {}", slot + 1),
    };
    BoolParam::new(name, false)
        .with_value_to_string(Arc::new(|v| if v { "On" } else { "Off" }.to_string()))
        .with_string_to_value(Arc::new(parse_on_off))
}

fn parse_on_off(s: &str) -> Option<bool> {
    match s.trim().to_ascii_lowercase().as_str() {
        "on" | "1" | "true" | "yes" => Some(true),
        "off" | "0" | "false" | "no" => Some(false),
        _ => None,
    }
}

/// The shared factor on every hold's tolerance.
pub fn leeway_param() -> FloatParam {
    FloatParam::new(
        "Hold leeway",
        1.0,
        FloatRange::Linear {
            min: 0.25,
            max: 4.0,
        },
    )
    .with_step_size(0.01)
    .with_value_to_string(Arc::new(|v| format!("×{v:.2}")))
    .with_string_to_value(Arc::new(|s| {
        let v: f32 = s
            .trim()
            .trim_start_matches(['×', 'x', '*'])
            .trim()
            .parse()
            .ok()?;
        v.is_finite().then_some(v)
    }))
}

/// Which kept take to blend toward: "Off" or "Kept 3" (its number in the
/// kept list).
pub fn blend_toward_param() -> IntParam {
    IntParam::new(
        "Blend toward",
        0,
        IntRange::Linear {
            min: 0,
            max: MAX_BLEND_TARGET,
        },
    )
    .with_value_to_string(Arc::new(|n| {
        if n <= 0 {
            "Off".to_string()
        } else {
            format!("Kept {n}")
        }
    }))
    .with_string_to_value(Arc::new(|s| {
        let t = s.trim().to_ascii_lowercase();
        if t == "off" || t == "none" {
            return Some(0);
        }
        let n = t.trim_start_matches("kept").trim();
        if let Ok(n) = n.parse::<i32>() {
            return Some(n);
        }
        let f: f64 = n.parse().ok()?;
        (f.is_finite() && f.fract() == 0.0 && f.abs() < 1e6).then_some(f as i32)
    }))
}

/// How far from the prompt toward the kept take: 0–100 %.
pub fn blend_amount_param() -> FloatParam {
    FloatParam::new(
        "Blend amount",
        0.0,
        FloatRange::Linear { min: 0.0, max: 1.0 },
    )
    .with_step_size(0.01)
    .with_value_to_string(Arc::new(|v| format!("{:.0}%", v * 100.0)))
    .with_string_to_value(Arc::new(|s| {
        let v: f32 = s.trim().trim_end_matches('%').trim().parse().ok()?;
        v.is_finite().then_some(v / 100.0)
    }))
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn tonics_name_the_twelve_pitch_classes_in_order() {
        assert_eq!(Tonic::Off.pitch_class(), None);
        assert_eq!(Tonic::C.pitch_class(), Some(0));
        assert_eq!(Tonic::FSharp.pitch_class(), Some(6));
        assert_eq!(Tonic::B.pitch_class(), Some(11));
        // The host's names read back to the same pitch classes as the
        // engine's note-name parser gives them.
        for t in &Tonic::ALL[1..] {
            assert_eq!(
                nudgebar_engine::steer::scale::tonic_from_name(t.name()),
                t.pitch_class(),
                "{t:?}"
            );
        }
    }

    #[test]
    fn scale_choices_are_the_engines_scales_one_to_one() {
        assert_eq!(ScaleChoice::variants().len(), Scale::ALL.len());
        for (c, s) in ScaleChoice::ALL.iter().zip(Scale::ALL) {
            assert_eq!(c.scale(), s);
            assert_eq!(ScaleChoice::of(s), *c);
            assert_eq!(ScaleChoice::ids().unwrap()[c.to_index()], s.key());
        }
    }

    #[test]
    fn aim_values_read_in_their_units_and_parse_back() {
        use Attribute::*;
        assert_eq!(aim_text(NoteDensity, 7.0), "7 notes");
        assert_eq!(aim_text(NoteDensity, 6.5), "6.5 notes");
        assert_eq!(aim_text(PitchRange, 12.0), "12 st");
        assert_eq!(aim_text(Contour, 6.0), "+6.0 st/bar");
        assert_eq!(aim_text(Contour, -3.5), "-3.5 st/bar");
        assert_eq!(aim_text(MeanPitch, 64.0), "64 (E4)");
        assert_eq!(parse_aim(NoteDensity, "7 notes"), Some(7.0));
        assert_eq!(parse_aim(NoteDensity, "7"), Some(7.0));
        assert_eq!(parse_aim(PitchRange, "12 semitones"), Some(12.0));
        assert_eq!(parse_aim(Contour, "−3 st/bar"), Some(-3.0));
        assert_eq!(parse_aim(MeanPitch, "E4"), Some(64.0));
        assert_eq!(parse_aim(MeanPitch, "Bb2"), Some(46.0));
        assert_eq!(parse_aim(MeanPitch, "64 (E4)"), Some(64.0));
        assert_eq!(parse_aim(RhythmicComplexity, "banana"), None);
        for a in Attribute::ALL {
            let (d, lo, hi, step) = aim_range(a);
            assert!(lo <= d && d <= hi && step > 0.0, "{a:?}");
            assert!(aim_tolerance(a) > 0.0 && hold_tolerance(a) > 0.0);
        }
    }
}
