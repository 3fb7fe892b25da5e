//! Every parameter the host sees, declared once with its range, unit and
//! value↔text conversions, plus the persisted session (kept takes, prompt,
//! model path).
//!
//! Parameter ids are part of saved projects and automation lanes: never
//! rename one. The CLAP/VST3 hosts show the `name`s; the ids are listed in
//! [`ids`] for the test harness and anyone mapping controllers.

use crate::shape_params::{
    aim_value_param, blend_amount_param, blend_toward_param, hold_param, leeway_param, AimAt,
    BlendPath, ScaleChoice, Tonic,
};
use crate::shaping::BlendSetting;
use crate::state::SessionCell;
use nice_plug::prelude::*;
use nudgebar_engine::steer::KeyScale;
use nudgebar_music::attributes::Attribute;
use std::sync::Arc;

/// Highest number of takes one request can ask for (the engine's limit too).
pub const MAX_TAKES: usize = 16;

/// Number of slider parameters: the four named axes plus two spares whose
/// meaning comes from the loaded model's manifest.
pub const AXIS_SLOTS: usize = 6;

/// The attribute each of the first four sliders is bound to. A model axis for
/// one of these attributes lands on its named slider whatever its position in
/// the manifest; the model's other axes fill the spare slots in order.
pub const NAMED_AXES: [Attribute; 4] = [
    Attribute::NoteDensity,
    Attribute::PitchRange,
    Attribute::RhythmicComplexity,
    Attribute::Contour,
];

/// Stable parameter ids (CLAP param ids are hashes of these strings).
pub mod ids {
    pub const AXES: [&str; super::AXIS_SLOTS] =
        ["axis1", "axis2", "axis3", "axis4", "axis5", "axis6"];
    pub const TAKES: &str = "takes";
    pub const SPREAD: &str = "spread";
    pub const SEED: &str = "seed";
    pub const SELECTED: &str = "selected";
    pub const PROMPT_BARS: &str = "bars";
    pub const LISTEN: &str = "listen";
    pub const ARM: &str = "arm";
    pub const GRAB: &str = "grab";
    pub const KEEP: &str = "keep";
    pub const BYPASS: &str = "bypass";
    // Shaping beyond the sliders (see `shape_params.rs`).
    pub const KEY: &str = "key";
    pub const SCALE: &str = "scale";
    pub const HOLDS: [&str; super::AXIS_SLOTS] =
        ["hold1", "hold2", "hold3", "hold4", "hold5", "hold6"];
    pub const HOLD_LEEWAY: &str = "hold_leeway";
    pub const AIM: &str = "aim";
    pub const AIM_NOTES: &str = "aim_notes";
    pub const AIM_RANGE: &str = "aim_range";
    pub const AIM_RHYTHM: &str = "aim_rhythm";
    pub const AIM_CONTOUR: &str = "aim_contour";
    pub const AIM_PITCH: &str = "aim_pitch";
    /// The aim value lanes, in `Attribute::ALL` order.
    pub const AIM_VALUES: [&str; 5] = [AIM_NOTES, AIM_RANGE, AIM_RHYTHM, AIM_CONTOUR, AIM_PITCH];
    pub const BLEND_TOWARD: &str = "blend_toward";
    pub const BLEND: &str = "blend";
    pub const BLEND_PATH: &str = "blend_path";
}

/// What the track hears: the player's input, the selected take, or both.
#[derive(Enum, Debug, Clone, Copy, PartialEq, Eq)]
pub enum Listen {
    /// Input notes pass through untouched; takes are silent.
    #[id = "input"]
    #[name = "Input"]
    Input,
    /// The selected take plays, looped on the host's bars, instead of the input.
    #[id = "take"]
    #[name = "Take"]
    Take,
    /// The selected take plays and the input still passes through.
    #[id = "both"]
    #[name = "Take + input"]
    Both,
}

impl Listen {
    /// True when the selected take is heard.
    pub fn plays_take(self) -> bool {
        !matches!(self, Listen::Input)
    }

    /// True when input notes reach the output.
    pub fn passes_input(self) -> bool {
        !matches!(self, Listen::Take)
    }
}

#[derive(Params)]
pub struct NudgebarParams {
    /// Slider offsets along the model's control axes, in slider units: ±1 is
    /// a full throw, which moves the latent code by the axis' `span`.
    /// Slots 1–4 are density, range, rhythm and contour (see [`NAMED_AXES`]);
    /// 5–6 are spare, bound to the model's other axes in manifest order.
    #[id = "axis1"]
    pub axis1: FloatParam,
    #[id = "axis2"]
    pub axis2: FloatParam,
    #[id = "axis3"]
    pub axis3: FloatParam,
    #[id = "axis4"]
    pub axis4: FloatParam,
    #[id = "axis5"]
    pub axis5: FloatParam,
    #[id = "axis6"]
    pub axis6: FloatParam,

    /// How many takes one request decodes (one batched decoder call).
    #[id = "takes"]
    pub takes: IntParam,

    /// How far takes wander on the latent dimensions no slider controls, in
    /// standard deviations of the model's prior. 0 gives one take repeated
    /// (identical takes are replaced, so fewer may come back).
    #[id = "spread"]
    pub spread: FloatParam,

    /// Seed for the takes' random wander: same prompt + model + sliders +
    /// seed give the same takes, so a kept setting can be re-made later.
    #[id = "seed"]
    pub seed: IntParam,

    /// The take that plays when listening to takes, and that "keep" keeps.
    #[id = "selected"]
    pub selected: IntParam,

    /// How many bars a capture takes (1–4, the models' longest prompt).
    #[id = "bars"]
    pub prompt_bars: IntParam,

    /// What the track hears.
    #[id = "listen"]
    pub listen: EnumParam<Listen>,

    /// Capture trigger: turning it on arms a capture from the next bar line
    /// (or, with the transport stopped, from the next note played). It acts
    /// on the off→on edge so an automation lane can fire it repeatedly.
    #[id = "arm"]
    pub arm: BoolParam,

    /// "Use what I just played": on the off→on edge the most recent complete
    /// bars that contain notes become the prompt, no arming needed.
    #[id = "grab"]
    pub grab: BoolParam,

    /// Keep trigger: on the off→on edge the selected take is kept in the
    /// project (saved with it, exportable as a MIDI file).
    #[id = "keep"]
    pub keep: BoolParam,

    /// Host bypass: input passes through, takes fall silent (their notes are
    /// stopped first).
    #[id = "bypass"]
    pub bypass: BoolParam,

    // ----- shaping beyond the sliders (`shape_params.rs` explains the
    // design); read by the worker and the editor, never by `process()`. -----
    /// The key's tonic, or off (takes may use any pitch).
    #[id = "key"]
    pub key: EnumParam<Tonic>,
    /// The key's scale (used once a tonic is chosen).
    #[id = "scale"]
    pub scale: EnumParam<ScaleChoice>,

    /// Hold the attribute of axis slot 1–6 near the prompt's value.
    #[id = "hold1"]
    pub hold1: BoolParam,
    #[id = "hold2"]
    pub hold2: BoolParam,
    #[id = "hold3"]
    pub hold3: BoolParam,
    #[id = "hold4"]
    pub hold4: BoolParam,
    #[id = "hold5"]
    pub hold5: BoolParam,
    #[id = "hold6"]
    pub hold6: BoolParam,
    /// Factor on every hold's tolerance.
    #[id = "hold_leeway"]
    pub hold_leeway: FloatParam,

    /// Which attribute target mode aims at, or off.
    #[id = "aim"]
    pub aim: EnumParam<AimAt>,
    /// The aim's value, one lane per attribute in its own unit.
    #[id = "aim_notes"]
    pub aim_notes: FloatParam,
    #[id = "aim_range"]
    pub aim_range: FloatParam,
    #[id = "aim_rhythm"]
    pub aim_rhythm: FloatParam,
    #[id = "aim_contour"]
    pub aim_contour: FloatParam,
    #[id = "aim_pitch"]
    pub aim_pitch: FloatParam,

    /// Kept take (1-based) to blend toward; 0 = off.
    #[id = "blend_toward"]
    pub blend_toward: IntParam,
    /// How far from the prompt toward it, 0–1.
    #[id = "blend"]
    pub blend: FloatParam,
    #[id = "blend_path"]
    pub blend_path: EnumParam<BlendPath>,

    /// Kept takes, the current prompt and the chosen model, saved with the
    /// project. The audio thread never touches it.
    #[persist = "session"]
    pub session: SessionCell,
}

/// One axis slider, declared once for all six slots.
fn axis_param(slot: usize) -> FloatParam {
    let name = match NAMED_AXES.get(slot) {
        Some(attribute) => attribute.label().to_string(),
        // Hosts read parameter names once at load, so a spare slot keeps a
        // generic name; the editor labels it from the manifest.
        None => format!("Axis {}", slot + 1),
    };
    FloatParam::new(
        name,
        0.0,
        FloatRange::Linear {
            min: -1.0,
            max: 1.0,
        },
    )
    .with_step_size(0.01)
    .with_value_to_string(Arc::new(format_offset))
    .with_string_to_value(Arc::new(parse_offset))
}

impl Default for NudgebarParams {
    fn default() -> Self {
        Self {
            axis1: axis_param(0),
            axis2: axis_param(1),
            axis3: axis_param(2),
            axis4: axis_param(3),
            axis5: axis_param(4),
            axis6: axis_param(5),
            takes: IntParam::new(
                "Takes",
                4,
                IntRange::Linear {
                    min: 1,
                    max: MAX_TAKES as i32,
                },
            )
            .with_value_to_string(Arc::new(|n| n.to_string()))
            .with_string_to_value(Arc::new(parse_int)),
            spread: FloatParam::new("Spread", 0.5, FloatRange::Linear { min: 0.0, max: 2.0 })
                .with_step_size(0.01)
                .with_unit(" σ")
                .with_value_to_string(formatters::v2s_f32_rounded(2))
                .with_string_to_value(Arc::new(parse_plain_f32)),
            seed: IntParam::new(
                "Seed",
                1,
                IntRange::Linear {
                    min: 0,
                    max: 99_999,
                },
            )
            .with_value_to_string(Arc::new(|n| n.to_string()))
            .with_string_to_value(Arc::new(parse_int)),
            selected: IntParam::new(
                "Selected take",
                1,
                IntRange::Linear {
                    min: 1,
                    max: MAX_TAKES as i32,
                },
            )
            .with_value_to_string(Arc::new(|n| n.to_string()))
            .with_string_to_value(Arc::new(parse_int)),
            prompt_bars: IntParam::new("Prompt bars", 1, IntRange::Linear { min: 1, max: 4 })
                .with_unit(" bars")
                .with_value_to_string(Arc::new(|n| n.to_string()))
                .with_string_to_value(Arc::new(parse_int)),
            listen: EnumParam::new("Listen", Listen::Input),
            arm: BoolParam::new("Capture next bars", false)
                .with_value_to_string(Arc::new(on_off))
                .with_string_to_value(Arc::new(parse_on_off)),
            grab: BoolParam::new("Use last bars", false)
                .with_value_to_string(Arc::new(on_off))
                .with_string_to_value(Arc::new(parse_on_off)),
            keep: BoolParam::new("Keep take", false)
                .with_value_to_string(Arc::new(on_off))
                .with_string_to_value(Arc::new(parse_on_off)),
            bypass: BoolParam::new("Bypass", false)
                .with_value_to_string(formatters::v2s_bool_bypass())
                .with_string_to_value(formatters::s2v_bool_bypass())
                .make_bypass(),
            key: EnumParam::new("Key", Tonic::Off),
            scale: EnumParam::new("Scale", ScaleChoice::Major),
            hold1: hold_param(0),
            hold2: hold_param(1),
            hold3: hold_param(2),
            hold4: hold_param(3),
            hold5: hold_param(4),
            hold6: hold_param(5),
            hold_leeway: leeway_param(),
            aim: EnumParam::new("Aim at", AimAt::Off),
            aim_notes: aim_value_param(Attribute::NoteDensity),
            aim_range: aim_value_param(Attribute::PitchRange),
            aim_rhythm: aim_value_param(Attribute::RhythmicComplexity),
            aim_contour: aim_value_param(Attribute::Contour),
            aim_pitch: aim_value_param(Attribute::MeanPitch),
            blend_toward: blend_toward_param(),
            blend: blend_amount_param(),
            blend_path: EnumParam::new("Blend path", BlendPath::Linear),
            session: SessionCell::default(),
        }
    }
}

/// The values a take request depends on, read from the parameters in one go.
/// The worker compares successive readings: any difference means new takes.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Steering {
    pub offsets: [f32; AXIS_SLOTS],
    pub takes: usize,
    pub spread: f32,
    pub seed: u64,
    /// The key takes are kept in; `None`: any pitch.
    pub key: Option<KeyScale>,
    /// Hold per axis slot.
    pub holds: [bool; AXIS_SLOTS],
    /// Factor on every hold's tolerance.
    pub leeway: f32,
    /// Attribute and value to aim at.
    pub aim: Option<(Attribute, f64)>,
    /// A blend toward a kept take.
    pub blend: Option<BlendSetting>,
}

impl NudgebarParams {
    /// The current steering values (atomics only: safe on any thread).
    pub fn steering(&self) -> Steering {
        Steering {
            offsets: self.axis_sliders().map(|p| p.value()),
            takes: self.takes.value().clamp(1, MAX_TAKES as i32) as usize,
            spread: self.spread.value(),
            seed: self.seed.value().max(0) as u64,
            key: self
                .key
                .value()
                .pitch_class()
                .map(|tonic| KeyScale::new(tonic, self.scale.value().scale())),
            holds: self.hold_params().map(|p| p.value()),
            leeway: self.hold_leeway.value(),
            aim: self
                .aim
                .value()
                .attribute()
                .map(|a| (a, self.aim_lane(a).value() as f64)),
            blend: (self.blend_toward.value() > 0).then(|| BlendSetting {
                toward: (self.blend_toward.value() - 1) as usize,
                amount: self.blend.value(),
                path: self.blend_path.value().interpolation(),
            }),
        }
    }

    /// The six hold toggles in slot order.
    pub fn hold_params(&self) -> [&BoolParam; AXIS_SLOTS] {
        [
            &self.hold1,
            &self.hold2,
            &self.hold3,
            &self.hold4,
            &self.hold5,
            &self.hold6,
        ]
    }

    /// The aim value lane of `attribute`.
    pub fn aim_lane(&self, attribute: Attribute) -> &FloatParam {
        match attribute {
            Attribute::NoteDensity => &self.aim_notes,
            Attribute::PitchRange => &self.aim_range,
            Attribute::RhythmicComplexity => &self.aim_rhythm,
            Attribute::Contour => &self.aim_contour,
            Attribute::MeanPitch => &self.aim_pitch,
        }
    }

    /// The six axis sliders in slot order.
    pub fn axis_sliders(&self) -> [&FloatParam; AXIS_SLOTS] {
        [
            &self.axis1,
            &self.axis2,
            &self.axis3,
            &self.axis4,
            &self.axis5,
            &self.axis6,
        ]
    }

    /// Selected take as a 0-based index.
    pub fn selected_index(&self) -> usize {
        (self.selected.value().max(1) - 1) as usize
    }
}

/// Which model axis each slider slot drives: a model axis for density,
/// range, rhythm or contour goes to its named slot; the model's other axes
/// fill the spare slots in manifest order. Axes left over (a model with more
/// than six, or two for one attribute beyond the spares) stay at 0.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default)]
pub struct AxisBinding {
    /// Model axis index per slot.
    pub slots: [Option<usize>; AXIS_SLOTS],
}

impl AxisBinding {
    pub fn for_axes(attributes: &[Attribute]) -> AxisBinding {
        let mut slots = [None; AXIS_SLOTS];
        let mut used = vec![false; attributes.len()];
        for (slot, named) in NAMED_AXES.iter().enumerate() {
            if let Some(i) = attributes
                .iter()
                .enumerate()
                .position(|(i, a)| a == named && !used[i])
            {
                slots[slot] = Some(i);
                used[i] = true;
            }
        }
        let mut spare = NAMED_AXES.len();
        for (i, u) in used.iter_mut().enumerate() {
            if spare == AXIS_SLOTS {
                break;
            }
            if !*u {
                slots[spare] = Some(i);
                *u = true;
                spare += 1;
            }
        }
        AxisBinding { slots }
    }

    /// Slider values in model-axis order, for the engine.
    pub fn offsets(&self, sliders: &[f32; AXIS_SLOTS], axis_count: usize) -> Vec<f32> {
        let mut out = vec![0.0; axis_count];
        for (slot, axis) in self.slots.iter().enumerate() {
            if let Some(a) = axis.filter(|&a| a < axis_count) {
                out[a] = sliders[slot];
            }
        }
        out
    }

    /// The slot that drives model axis `axis`, if any.
    pub fn slot_of(&self, axis: usize) -> Option<usize> {
        self.slots.iter().position(|s| *s == Some(axis))
    }
}

/// "+0.25", "-1.00", "0.00": the sign shows which way the slider pushes.
fn format_offset(v: f32) -> String {
    if v.abs() < 0.005 {
        "0.00".to_string()
    } else {
        format!("{v:+.2}")
    }
}

fn parse_offset(s: &str) -> Option<f32> {
    parse_plain_f32(s).map(|v| v.clamp(-1.0, 1.0))
}

fn parse_plain_f32(s: &str) -> Option<f32> {
    let v: f32 = s
        .trim()
        .trim_start_matches('+')
        .trim_end_matches('σ')
        .trim()
        .parse()
        .ok()?;
    v.is_finite().then_some(v)
}

fn parse_int(s: &str) -> Option<i32> {
    let t = s
        .trim()
        .trim_end_matches("bars")
        .trim_end_matches("bar")
        .trim();
    if let Ok(n) = t.parse::<i32>() {
        return Some(n);
    }
    // Accept "4.0" from hosts that round-trip through floats.
    let f: f64 = t.parse().ok()?;
    (f.is_finite() && f.fract() == 0.0 && f.abs() < i32::MAX as f64).then_some(f as i32)
}

fn on_off(v: bool) -> String {
    if v { "On" } else { "Off" }.to_string()
}

fn parse_on_off(s: &str) -> Option<bool> {
    match s.trim().to_ascii_lowercase().as_str() {
        "on" | "1" | "true" | "yes" => Some(true),
        "off" | "0" | "false" | "no" => Some(false),
        _ => None,
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn every_parameter_round_trips_value_text_value() {
        let params = NudgebarParams::default();
        for (id, ptr, _group) in params.param_map() {
            // Walk the normalized range: the text of a value parses to a
            // value whose text is the same again (automation and typed
            // values agree), within one step of where it started.
            let steps = unsafe { ptr.step_count() }.unwrap_or(200).max(1) as f32;
            for i in 0..=64 {
                let normalized = i as f32 / 64.0;
                unsafe {
                    let text = ptr.normalized_value_to_string(normalized, true);
                    let value = ptr
                        .string_to_normalized_value(&text)
                        .unwrap_or_else(|| panic!("{id}: text {text:?} did not parse back"));
                    let again = ptr.normalized_value_to_string(value, true);
                    assert_eq!(
                        again, text,
                        "{id}: {normalized} → {text:?} → {value} → {again:?}"
                    );
                    assert_eq!(ptr.string_to_normalized_value(&again), Some(value), "{id}");
                    assert!(
                        (value - normalized).abs() <= 1.0 / steps + 1e-6,
                        "{id}: {normalized} → {text:?} → {value}"
                    );
                }
            }
        }
    }

    #[test]
    fn garbage_text_is_refused_not_guessed() {
        let params = NudgebarParams::default();
        for (id, ptr, _group) in params.param_map() {
            for junk in ["", "banana", "NaN", "inf", "1e999"] {
                let parsed = unsafe { ptr.string_to_normalized_value(junk) };
                if let Some(v) = parsed {
                    assert!((0.0..=1.0).contains(&v), "{id}: {junk:?} gave {v}");
                }
            }
        }
    }

    #[test]
    fn axes_land_on_their_named_sliders_and_the_rest_on_spares() {
        use Attribute::*;
        let b = AxisBinding::for_axes(&[MeanPitch, Contour, NoteDensity, MeanPitch]);
        assert_eq!(b.slots, [Some(2), None, None, Some(1), Some(0), Some(3)]);
        let offsets = b.offsets(&[0.1, 0.2, 0.3, 0.4, 0.5, 0.6], 4);
        assert_eq!(offsets, vec![0.5, 0.4, 0.1, 0.6]);
        assert_eq!(b.slot_of(3), Some(5));
    }

    #[test]
    fn ids_are_the_documented_ones() {
        let params = NudgebarParams::default();
        let found: Vec<String> = params
            .param_map()
            .into_iter()
            .map(|(id, _, _)| id)
            .collect();
        for id in [
            ids::TAKES,
            ids::SPREAD,
            ids::SEED,
            ids::SELECTED,
            ids::PROMPT_BARS,
            ids::LISTEN,
            ids::ARM,
            ids::GRAB,
            ids::KEEP,
            ids::BYPASS,
            ids::KEY,
            ids::SCALE,
            ids::HOLD_LEEWAY,
            ids::AIM,
            ids::BLEND_TOWARD,
            ids::BLEND,
            ids::BLEND_PATH,
        ]
        .into_iter()
        .chain(ids::HOLDS)
        .chain(ids::AIM_VALUES)
        {
            assert!(found.iter().any(|f| f == id), "missing {id} in {found:?}");
        }
        for id in ids::AXES {
            assert!(found.iter().any(|f| f == id), "missing {id} in {found:?}");
        }
    }
}
