//! What the shaping controls show — key and scale, aim, blend, hold leeway
//! — and the worker's report on how the current set was shaped, worked out
//! without a window (like [`super::view_model`], which holds the rest).

use super::view_model::{Level, Notice};
use crate::params::{NudgebarParams, AXIS_SLOTS};
use crate::shape_params::{
    aim_range, aim_text, hold_tolerance, AimAt, BlendPath, ScaleChoice, Tonic,
};
use crate::state::KeptTake;
use crate::status::WorkerView;
use nudgebar_music::attributes::Attribute;

/// The shaping parameters, read once per frame.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct ShapeInputs {
    pub tonic: Tonic,
    pub scale: ScaleChoice,
    pub holds: [bool; AXIS_SLOTS],
    pub leeway: f32,
    pub aim: AimAt,
    /// The aim lanes, in `Attribute::ALL` order.
    pub aim_values: [f32; 5],
    /// Kept take number (1-based), 0 = off.
    pub blend_toward: i32,
    pub blend_amount: f32,
    pub blend_path: BlendPath,
}

impl Default for ShapeInputs {
    fn default() -> Self {
        ShapeInputs {
            tonic: Tonic::Off,
            scale: ScaleChoice::Major,
            holds: [false; AXIS_SLOTS],
            leeway: 1.0,
            aim: AimAt::Off,
            aim_values: Attribute::ALL.map(|a| aim_range(a).0),
            blend_toward: 0,
            blend_amount: 0.0,
            blend_path: BlendPath::Linear,
        }
    }
}

/// Reads the shaping parameters (atomics: any thread).
pub fn read(params: &NudgebarParams) -> ShapeInputs {
    ShapeInputs {
        tonic: params.key.value(),
        scale: params.scale.value(),
        holds: params.hold_params().map(|p| p.value()),
        leeway: params.hold_leeway.value(),
        aim: params.aim.value(),
        aim_values: Attribute::ALL.map(|a| params.aim_lane(a).value()),
        blend_toward: params.blend_toward.value(),
        blend_amount: params.blend.value(),
        blend_path: params.blend_path.value(),
    }
}

/// The aimed attribute's value control.
#[derive(Debug, Clone, PartialEq)]
pub struct AimValueView {
    pub attribute: Attribute,
    pub value: f32,
    pub min: f32,
    pub max: f32,
    pub step: f32,
    /// "7 notes", "12 st": the value as the host shows it.
    pub text: String,
}

/// The shaping rows.
#[derive(Debug, Clone, PartialEq)]
pub struct ShapeView {
    pub tonic: Tonic,
    pub scale: ScaleChoice,
    /// The scale only matters once a tonic is chosen.
    pub scale_enabled: bool,
    pub aim: AimAt,
    /// Off first, then the loaded model's axes (the only ones it can aim
    /// along), then the current choice if the model lacks it.
    pub aim_choices: Vec<AimAt>,
    pub aim_value: Option<AimValueView>,
    /// (parameter value, label): 0 "Off", then each kept take by number.
    pub blend_choices: Vec<(i32, String)>,
    pub blend_toward: i32,
    /// The label of the current choice ("Kept 3" if that take is gone).
    pub blend_label: String,
    pub blend_enabled: bool,
    pub blend_amount: f32,
    pub blend_text: String,
    pub blend_path: BlendPath,
    pub leeway: f32,
    pub leeway_text: String,
    /// What the worker said about the current set.
    pub report: Vec<Notice>,
}

/// Longest kept-take name shown in the blend chooser.
const NAME_CHARS: usize = 28;

pub fn shape(input: &ShapeInputs, worker: &WorkerView, kept: &[KeptTake]) -> ShapeView {
    let mut aim_choices = vec![AimAt::Off];
    if let Some(m) = &worker.model {
        for a in &m.axes {
            let c = AimAt::of(Some(a.attribute));
            if !aim_choices.contains(&c) {
                aim_choices.push(c);
            }
        }
    }
    if !aim_choices.contains(&input.aim) {
        aim_choices.push(input.aim);
    }
    let aim_value = input.aim.attribute().map(|a| {
        let (_, min, max, step) = aim_range(a);
        let i = Attribute::ALL.iter().position(|x| *x == a).unwrap_or(0);
        let value = input.aim_values[i];
        AimValueView {
            attribute: a,
            value,
            min,
            max,
            step,
            text: aim_text(a, value),
        }
    });
    let mut blend_choices = vec![(0, "Off".to_string())];
    for (i, k) in kept.iter().enumerate() {
        blend_choices.push((i as i32 + 1, format!("{} · {}", i + 1, short(&k.name))));
    }
    let blend_label = blend_choices
        .iter()
        .find(|(n, _)| *n == input.blend_toward)
        .map(|(_, l)| l.clone())
        .unwrap_or_else(|| format!("Kept {} (gone)", input.blend_toward));
    ShapeView {
        tonic: input.tonic,
        scale: input.scale,
        scale_enabled: input.tonic != Tonic::Off,
        aim: input.aim,
        aim_choices,
        aim_value,
        blend_choices,
        blend_toward: input.blend_toward,
        blend_label,
        blend_enabled: input.blend_toward > 0,
        blend_amount: input.blend_amount,
        blend_text: format!("{:.0}%", input.blend_amount * 100.0),
        blend_path: input.blend_path,
        leeway: input.leeway,
        leeway_text: format!("×{:.2}", input.leeway),
        report: worker
            .report
            .lines()
            .into_iter()
            .map(|l| Notice {
                level: if l.warning {
                    Level::Warning
                } else {
                    Level::Info
                },
                text: l.text,
            })
            .collect(),
    }
}

/// Hover text of a slider's hold toggle: what holding keeps, and how near.
pub fn hold_tip(attribute: Attribute, leeway: f32) -> String {
    let tolerance = hold_tolerance(attribute) * leeway as f64;
    format!(
        "Hold {} within ±{} {} of the prompt's: takes that move it further are rejected and drawn again. The hold leeway widens or narrows every hold.",
        attribute.label().to_lowercase(),
        (tolerance * 100.0).round() / 100.0,
        attribute.unit()
    )
}

fn short(name: &str) -> String {
    if name.chars().count() <= NAME_CHARS {
        name.to_string()
    } else {
        let cut: String = name.chars().take(NAME_CHARS - 1).collect();
        format!("{}…", cut.trim_end())
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::shaping::{AimOutcome, SetReport};
    use crate::status::{AxisView, ModelView};
    use nudgebar_engine::steer::{Outcome, Target};
    use nudgebar_engine::ModelIdentity;

    fn worker() -> WorkerView {
        let axis = |attribute| AxisView {
            attribute,
            label: attribute.label().into(),
            span: 2.0,
            slot: None,
            hole_rate: Vec::new(),
        };
        WorkerView {
            model: Some(ModelView {
                identity: ModelIdentity {
                    name: "ferry calls".into(),
                    fingerprint: "00".into(),
                },
                description: String::new(),
                folder: None,
                axes: vec![axis(Attribute::NoteDensity), axis(Attribute::Contour)],
                steps_per_measure: 16,
            }),
            ..WorkerView::default()
        }
    }

    #[test]
    fn aim_offers_the_models_axes_and_shows_the_lane_in_its_unit() {
        let mut input = ShapeInputs::default();
        let v = shape(&input, &worker(), &[]);
        assert_eq!(
            v.aim_choices,
            [AimAt::Off, AimAt::NoteDensity, AimAt::Contour]
        );
        assert!(v.aim_value.is_none());
        assert!(!v.scale_enabled && !v.blend_enabled);
        assert_eq!(v.blend_choices, [(0, "Off".to_string())]);

        input.aim = AimAt::Contour;
        input.aim_values[3] = -4.5;
        input.tonic = Tonic::D;
        let v = shape(&input, &worker(), &[]);
        let a = v.aim_value.unwrap();
        assert_eq!((a.attribute, a.value), (Attribute::Contour, -4.5));
        assert_eq!(a.text, "-4.5 st/bar");
        assert!(v.scale_enabled);

        // A choice the model has no axis for stays visible, so it can be undone.
        input.aim = AimAt::MeanPitch;
        let v = shape(&input, &worker(), &[]);
        assert_eq!(*v.aim_choices.last().unwrap(), AimAt::MeanPitch);
    }

    #[test]
    fn blend_lists_kept_takes_and_names_a_missing_one() {
        let mut input = ShapeInputs {
            blend_toward: 3,
            blend_amount: 0.4,
            ..ShapeInputs::default()
        };
        let v = shape(&input, &worker(), &[]);
        assert_eq!(v.blend_label, "Kept 3 (gone)");
        assert!(v.blend_enabled);
        assert_eq!(v.blend_text, "40%");
        input.blend_toward = 0;
        assert_eq!(shape(&input, &worker(), &[]).blend_label, "Off");
    }

    #[test]
    fn the_workers_report_becomes_notices_warnings_first_class() {
        let mut w = worker();
        w.report = SetReport {
            aim: Some(AimOutcome {
                target: Target {
                    attribute: Attribute::NoteDensity,
                    value: 20.0,
                    tolerance: 0.5,
                },
                outcome: Outcome::OutOfReach,
                reached: Some(16.0),
                slider: 4.0,
                decodes: 6,
                budget: 16,
                summary: "This model cannot take note density to 20.0…".into(),
                companions: 0,
            }),
            key: Some("D Dorian".into()),
            ..SetReport::default()
        };
        let v = shape(&ShapeInputs::default(), &w, &[]);
        assert_eq!(v.report.len(), 2);
        assert_eq!(v.report[0].level, Level::Warning);
        assert!(v.report[0].text.starts_with("This model cannot"));
        assert_eq!(v.report[1].level, Level::Info);
        assert!(v.report[1].text.contains("D Dorian"));
        assert!(hold_tip(Attribute::PitchRange, 0.5).contains("±1 semitones"));
    }
}
