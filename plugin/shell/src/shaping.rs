//! Shaping takes beyond the sliders, on the worker: the shaping parameters
//! (key, holds, aim, blend — see `shape_params.rs`) become one engine plan —
//! a plain or held variation, an aim along one axis, or a blend toward a
//! kept take — which is run, and what happened is said in sentences for the
//! editor and recorded with kept takes.
//!
//! Precedence when several are set: a blend replaces the take set while a
//! kept take is chosen; otherwise an aim, when one is set; otherwise the
//! sliders, with the holds. A setting that a mode does not use is named in
//! the report, never silently dropped. The key applies in every mode.

use crate::params::{AxisBinding, Steering, AXIS_SLOTS};
use crate::shape_params::{aim_tolerance, hold_tolerance};
use crate::state::{AimRecord, BlendRecord, Shaping};
use nudgebar_engine::steer::{
    Interpolation, KeyScale, Lock, Outcome, Target, DEFAULT_BUDGET, MAX_LOCK_ROUNDS,
};
use nudgebar_engine::{Engine, EngineError, Take, Variation, VariationRequest};
use nudgebar_music::attributes::Attribute;
use nudgebar_music::Phrase;

/// The blend settings read from the parameters.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct BlendSetting {
    /// Kept take, 0-based (the parameter counts from 1; 0 there is off).
    pub toward: usize,
    /// 0 = the prompt, 1 = the kept take.
    pub amount: f32,
    pub path: Interpolation,
}

/// The kept take a blend heads for, as the worker found it in the session.
#[derive(Debug, Clone, PartialEq)]
pub struct BlendTarget {
    pub index: usize,
    pub name: String,
    /// Its latent code; empty when the session did not save one (older
    /// sessions) or it came from another model.
    pub latent: Vec<f32>,
    pub phrase: Phrase,
}

/// What the engine is asked to do.
#[derive(Debug, Clone)]
pub enum Plan {
    /// Takes from the sliders; every take keeps `holds` (none: plain `vary`).
    Vary {
        request: VariationRequest,
        holds: Vec<Lock>,
    },
    /// Search the target's axis; take 1 is the closest take found.
    Aim {
        request: VariationRequest,
        target: Target,
        axis: usize,
    },
    /// In-between takes toward a kept take at `amounts`.
    Blend {
        request: VariationRequest,
        toward: BlendTarget,
        amount: f32,
        amounts: Vec<f32>,
        path: Interpolation,
    },
}

/// A plan and what was set aside to make it.
#[derive(Debug, Clone)]
pub struct Planned {
    pub plan: Plan,
    pub key: Option<KeyScale>,
    pub notes: Vec<String>,
}

/// Works out the plan from the parameters. `attributes` are the model's
/// axes in manifest order; `blend_target` is the kept take the blend
/// parameter points at, if it exists.
pub fn plan(
    steering: &Steering,
    attributes: &[Attribute],
    blend_target: Option<BlendTarget>,
) -> Planned {
    let binding = AxisBinding::for_axes(attributes);
    let mut offsets = binding.offsets(&steering.offsets, attributes.len());
    let mut notes = Vec::new();
    let mut request = VariationRequest {
        takes: steering.takes,
        spread: steering.spread,
        seed: steering.seed,
        ..Default::default()
    };
    if let Some(k) = steering.key {
        request.mask = k.mask();
    }

    // Holds: the held attribute's own slider is set aside (a hold and a
    // push on the same attribute contradict each other).
    let mut holds = Vec::new();
    for slot in 0..AXIS_SLOTS {
        let Some(axis) = binding.slots[slot].filter(|_| steering.holds[slot]) else {
            continue;
        };
        let attribute = attributes[axis];
        if holds.iter().any(|l: &Lock| l.attribute == attribute) {
            continue;
        }
        if offsets[axis] != 0.0 {
            notes.push(format!(
                "{} is held, so its slider ({:+.2}) is set aside.",
                attribute.label(),
                offsets[axis]
            ));
            offsets[axis] = 0.0;
        }
        holds.push(Lock {
            attribute,
            tolerance: hold_tolerance(attribute) * steering.leeway as f64,
        });
    }

    let blend = steering.blend;
    let missing_blend = blend.is_some() && blend_target.is_none();
    if let (Some(b), Some(toward)) = (blend, blend_target) {
        request.offsets = vec![0.0; attributes.len()];
        if !holds.is_empty() {
            notes.push("Holds do not apply while blending.".into());
        }
        if steering.aim.is_some() {
            notes.push("The aim is set aside while blending.".into());
        }
        if steering.offsets.iter().any(|o| *o != 0.0) {
            notes.push("The sliders are set aside while blending: the blend goes straight from the prompt to the kept take.".into());
        }
        return Planned {
            plan: Plan::Blend {
                request,
                amount: b.amount,
                amounts: blend_amounts(b.amount, steering.takes),
                path: b.path,
                toward,
            },
            key: steering.key,
            notes,
        };
    }
    if missing_blend {
        let n = blend.map_or(0, |b| b.toward + 1);
        notes.push(format!(
            "There is no kept take {n} to blend toward, so the sliders are used. Keep a take first, or choose another."
        ));
    }

    if let Some((attribute, value)) = steering.aim {
        request.offsets = offsets;
        match attributes.iter().position(|a| *a == attribute) {
            Some(axis) => {
                if !holds.is_empty() {
                    notes.push("Holds do not apply while aiming.".into());
                }
                return Planned {
                    plan: Plan::Aim {
                        request,
                        target: Target {
                            attribute,
                            value,
                            tolerance: aim_tolerance(attribute),
                        },
                        axis,
                    },
                    key: steering.key,
                    notes,
                };
            }
            None => {
                let have: Vec<&str> = attributes.iter().map(|a| a.label()).collect();
                notes.push(format!(
                    "This model has no axis for {}, so it cannot aim at it; the sliders are used. Its axes: {}.",
                    attribute.label().to_lowercase(),
                    have.join(", ")
                ));
                return Planned {
                    plan: Plan::Vary { request, holds },
                    key: steering.key,
                    notes,
                };
            }
        }
    }

    request.offsets = offsets;
    Planned {
        plan: Plan::Vary { request, holds },
        key: steering.key,
        notes,
    }
}

/// Blend amounts for a set of `takes`: take 1 sits exactly at `amount` (so
/// the take heard by default follows the blend control), the others step
/// back evenly toward the prompt. At 0 there is one take: the prompt's own
/// decode.
pub fn blend_amounts(amount: f32, takes: usize) -> Vec<f32> {
    let amount = amount.clamp(0.0, 1.0);
    if amount == 0.0 {
        return vec![0.0];
    }
    let n = takes.max(1);
    (0..n)
        .map(|k| {
            if k == 0 {
                amount
            } else {
                amount * (n - k) as f32 / n as f32
            }
        })
        .collect()
}

/// How a set was made beyond the sliders, for the editor and kept takes.
#[derive(Debug, Clone, Default, PartialEq)]
pub struct SetReport {
    /// "D Dorian" when a key constrained the takes.
    pub key: Option<String>,
    pub holds: Option<HoldOutcome>,
    pub aim: Option<AimOutcome>,
    pub blend: Option<BlendOutcome>,
    /// Settings set aside, and other remarks.
    pub notes: Vec<String>,
}

/// What holding attributes cost.
#[derive(Debug, Clone, PartialEq)]
pub struct HoldOutcome {
    pub held: Vec<Lock>,
    /// Candidate takes decoded and thrown away for breaking a hold.
    pub rejected: usize,
    /// Rounds of decoding used, at most [`MAX_LOCK_ROUNDS`].
    pub rounds: usize,
    pub found: usize,
    /// Takes asked for but not found within the limit.
    pub missing: usize,
}

impl HoldOutcome {
    /// True when the search stopped at its limit of tries short of takes.
    pub fn limit_hit(&self) -> bool {
        self.missing > 0 && self.rounds >= MAX_LOCK_ROUNDS
    }

    pub fn sentence(&self) -> String {
        let names: Vec<String> = self
            .held
            .iter()
            .map(|l| {
                format!(
                    "{} ±{}",
                    l.attribute.label().to_lowercase(),
                    trim_number(l.tolerance)
                )
            })
            .collect();
        if self.missing == 0 {
            format!(
                "Holding {}: {} candidate take(s) rejected; all {} found in {} of {} tries.",
                names.join(", "),
                self.rejected,
                self.found,
                self.rounds,
                MAX_LOCK_ROUNDS
            )
        } else {
            format!(
                "Holding {}: only {} of {} takes kept the holds — {} candidate(s) rejected and the limit of {} tries was reached. Raise the hold leeway, release a hold or lower the spread.",
                names.join(", "),
                self.found,
                self.found + self.missing,
                self.rejected,
                MAX_LOCK_ROUNDS
            )
        }
    }
}

/// How an aim ended.
#[derive(Debug, Clone, PartialEq)]
pub struct AimOutcome {
    pub target: Target,
    pub outcome: Outcome,
    /// What the aimed take (take 1) measures.
    pub reached: Option<f64>,
    /// The slider value that made it.
    pub slider: f32,
    pub decodes: usize,
    pub budget: usize,
    /// The engine's sentence: reached, or how close it got and why not.
    pub summary: String,
    /// Takes after the first: made at the same slider and measuring the
    /// target too.
    pub companions: usize,
}

impl AimOutcome {
    pub fn reached(&self) -> bool {
        self.outcome == Outcome::Reached
    }
}

/// What a blend made.
#[derive(Debug, Clone, PartialEq)]
pub struct BlendOutcome {
    /// The kept take's name and number (1-based) in the kept list.
    pub toward: String,
    pub number: usize,
    pub amount: f32,
    pub path: Interpolation,
    /// In-between takes in the set.
    pub steps: usize,
    /// The kept take had no usable latent code, so its notes were encoded.
    pub reencoded: bool,
}

impl BlendOutcome {
    pub fn sentence(&self) -> String {
        let path = match self.path {
            Interpolation::Linear => "in a straight line",
            Interpolation::Spherical => "along the sphere",
        };
        let mut s = if self.amount == 0.0 {
            format!(
                "Blend toward kept {} (\"{}\") at 0%: the take is the prompt as the model decodes it.",
                self.number, self.toward
            )
        } else {
            format!(
                "Blending {:.0}% of the way toward kept {} (\"{}\") {path}: take 1 is at {:.0}%, {} more step back toward the prompt.",
                self.amount * 100.0,
                self.number,
                self.toward,
                self.amount * 100.0,
                self.steps.saturating_sub(1)
            )
        };
        if self.reencoded {
            s.push_str(" That take carried no latent code for this model, so its notes were encoded to find one.");
        }
        s
    }
}

/// One line of the report, and whether it is a warning.
#[derive(Debug, Clone, PartialEq)]
pub struct ReportLine {
    pub warning: bool,
    pub text: String,
}

impl SetReport {
    /// The report as lines for the editor, most important first.
    pub fn lines(&self) -> Vec<ReportLine> {
        let mut out = Vec::new();
        if let Some(a) = &self.aim {
            out.push(ReportLine {
                warning: !a.reached(),
                text: if a.companions > 0 {
                    format!(
                        "{} {} more take(s) at that slider measure it too.",
                        a.summary, a.companions
                    )
                } else {
                    a.summary.clone()
                },
            });
        }
        if let Some(b) = &self.blend {
            out.push(ReportLine {
                warning: false,
                text: b.sentence(),
            });
        }
        if let Some(h) = &self.holds {
            out.push(ReportLine {
                warning: h.missing > 0,
                text: h.sentence(),
            });
        }
        if let Some(k) = &self.key {
            out.push(ReportLine {
                warning: false,
                text: format!("In {k}: the decoder chose only the scale's pitches."),
            });
        }
        for n in &self.notes {
            out.push(ReportLine {
                warning: true,
                text: n.clone(),
            });
        }
        out
    }
}

impl SetReport {
    /// The record kept with a take from this set.
    pub fn record(&self) -> Shaping {
        Shaping {
            key: self.key.clone(),
            holds: self
                .holds
                .iter()
                .flat_map(|h| &h.held)
                .map(|l| (l.attribute.key().to_string(), l.tolerance))
                .collect(),
            aim: self.aim.as_ref().map(|a| AimRecord {
                attribute: a.target.attribute.key().into(),
                value: a.target.value,
                tolerance: a.target.tolerance,
                outcome: match a.outcome {
                    Outcome::Reached => "reached",
                    Outcome::OutOfReach => "out_of_reach",
                    Outcome::Gap => "gap",
                    Outcome::BudgetSpent => "budget_spent",
                }
                .into(),
                reached: a.reached,
                decodes: a.decodes,
            }),
            blend: self.blend.as_ref().map(|b| BlendRecord {
                toward: b.toward.clone(),
                // To the parameter's 1 % step, so 0.4 reads as 0.4.
                amount: (b.amount as f64 * 100.0).round() / 100.0,
                path: match b.path {
                    Interpolation::Linear => "linear",
                    Interpolation::Spherical => "spherical",
                }
                .into(),
            }),
            report: self.lines().into_iter().map(|l| l.text).collect(),
        }
    }
}

/// Runs a plan: the takes (as a [`Variation`], whatever the mode) and the
/// report.
pub fn run(
    engine: &mut Engine,
    prompt: &Phrase,
    planned: &Planned,
) -> Result<(Variation, SetReport), EngineError> {
    let mut report = SetReport {
        key: planned.key.map(|k| k.to_string()),
        notes: planned.notes.clone(),
        ..SetReport::default()
    };
    let variation = match &planned.plan {
        Plan::Vary { request, holds } if holds.is_empty() => engine.vary(prompt, request)?,
        Plan::Vary { request, holds } => {
            let locked = engine.vary_locked(prompt, request, holds)?;
            report.holds = Some(HoldOutcome {
                held: holds.clone(),
                rejected: locked.rejected,
                rounds: locked.rounds,
                found: locked.variation.takes.len(),
                missing: locked.missing,
            });
            locked.variation
        }
        Plan::Aim {
            request,
            target,
            axis,
        } => {
            let result = engine.aim(prompt, target, request, DEFAULT_BUDGET)?;
            let mut takes = vec![result.take.clone()];
            // The rest of the set: takes at the slider the search settled
            // on that measure the target too (one more batched decode).
            if request.takes > 1 && result.outcome == Outcome::Reached {
                let mut at = request.clone();
                at.offsets.resize(engine.axes().len(), 0.0);
                at.offsets[*axis] = result.slider;
                let more = engine.vary(prompt, &at)?;
                for t in more.takes {
                    if takes.len() == request.takes {
                        break;
                    }
                    let close = t
                        .attributes
                        .get(target.attribute)
                        .is_some_and(|v| (v - target.value).abs() <= target.tolerance + 1e-9);
                    if close && !takes.iter().any(|k: &Take| k.phrase == t.phrase) {
                        takes.push(t);
                    }
                }
            }
            report.aim = Some(AimOutcome {
                target: *target,
                outcome: result.outcome,
                reached: result.reached,
                slider: result.slider,
                decodes: result.decodes,
                budget: result.budget,
                summary: result.summary(),
                companions: takes.len() - 1,
            });
            framed(engine, prompt, takes, result.holes)?
        }
        Plan::Blend {
            request,
            toward,
            amount,
            amounts,
            path,
        } => {
            let size = engine.latent_size();
            let mut reencoded = false;
            let latent = if !toward.latent.is_empty() && toward.latent.len() % size == 0 {
                toward.latent.clone()
            } else {
                reencoded = true;
                let prepared = engine.prepare(&toward.phrase)?;
                engine.encode(&prepared)?.mean
            };
            let blend = engine.blend(
                prompt,
                &latent,
                amounts,
                *path,
                &request.choice,
                &request.mask,
            )?;
            let mut takes: Vec<Take> = Vec::with_capacity(blend.steps.len());
            for step in blend.steps {
                // Neighbouring amounts often decode alike; one of each.
                if !takes.iter().any(|t| t.phrase == step.take.phrase) {
                    takes.push(step.take);
                }
            }
            report.blend = Some(BlendOutcome {
                toward: toward.name.clone(),
                number: toward.index + 1,
                amount: *amount,
                path: *path,
                steps: takes.len(),
                reencoded,
            });
            framed(engine, prompt, takes, blend.holes)?
        }
    };
    Ok((variation, report))
}

/// Wraps takes made outside `vary` (aim, blend) as a variation of `prompt`.
fn framed(
    engine: &Engine,
    prompt: &Phrase,
    takes: Vec<Take>,
    holes: nudgebar_engine::HoleReport,
) -> Result<Variation, EngineError> {
    let prepared = engine.prepare(prompt)?;
    let phrase = prepared.grid.to_phrase();
    let prompt_attributes = nudgebar_music::attributes::Readout::of(&phrase);
    Ok(Variation {
        prompt: phrase,
        prompt_attributes,
        adjustments: prepared.adjustments,
        takes,
        holes,
        duplicates_dropped: 0,
    })
}

/// 2.0 → "2", 0.1 → "0.1", 2.25 → "2.25".
fn trim_number(v: f64) -> String {
    let s = format!("{v:.2}");
    s.trim_end_matches('0').trim_end_matches('.').to_string()
}

#[cfg(test)]
mod tests {
    use super::*;
    use nudgebar_music::{Note, TimeSignature};

    fn steering() -> Steering {
        Steering {
            offsets: [0.0; AXIS_SLOTS],
            takes: 4,
            spread: 0.5,
            seed: 1,
            key: None,
            holds: [false; AXIS_SLOTS],
            leeway: 1.0,
            aim: None,
            blend: None,
        }
    }

    const AXES: [Attribute; 4] = [
        Attribute::NoteDensity,
        Attribute::PitchRange,
        Attribute::RhythmicComplexity,
        Attribute::Contour,
    ];

    fn target() -> BlendTarget {
        BlendTarget {
            index: 1,
            name: "Take 2 · seed 1 (#2)".into(),
            latent: vec![0.0; 16],
            phrase: Phrase::new(
                TimeSignature::FOUR_FOUR,
                1,
                vec![Note::new(60, 0.0, 1.0, 90)],
            ),
        }
    }

    #[test]
    fn holds_become_engine_locks_and_set_their_slider_aside() {
        let mut s = steering();
        s.offsets[1] = 0.4; // range pushed…
        s.offsets[0] = 0.3;
        s.holds[1] = true; // …and held
        s.holds[5] = true; // a spare slot the model leaves empty: ignored
        s.leeway = 2.0;
        let p = plan(&s, &AXES, None);
        let Plan::Vary { request, holds } = &p.plan else {
            panic!("{:?}", p.plan)
        };
        assert_eq!(request.offsets, vec![0.3, 0.0, 0.0, 0.0]);
        assert_eq!(
            holds,
            &[Lock {
                attribute: Attribute::PitchRange,
                tolerance: 4.0
            }]
        );
        assert_eq!(p.notes.len(), 1);
        assert!(p.notes[0].contains("Pitch range is held"), "{:?}", p.notes);
    }

    #[test]
    fn the_key_masks_every_mode() {
        let mut s = steering();
        s.key = Some(KeyScale::new(2, nudgebar_engine::steer::Scale::Dorian));
        for blend in [None, Some(target())] {
            s.blend = blend.as_ref().map(|_| BlendSetting {
                toward: 1,
                amount: 0.5,
                path: Interpolation::Linear,
            });
            let p = plan(&s, &AXES, blend);
            let request = match &p.plan {
                Plan::Vary { request, .. }
                | Plan::Aim { request, .. }
                | Plan::Blend { request, .. } => request,
            };
            assert!(request.mask.allows(62) && request.mask.allows(71)); // D, B
            assert!(!request.mask.allows(61) && !request.mask.allows(66)); // C#, F#
        }
    }

    #[test]
    fn blend_wins_over_aim_and_says_what_it_set_aside() {
        let mut s = steering();
        s.aim = Some((Attribute::NoteDensity, 7.0));
        s.holds[0] = true;
        s.blend = Some(BlendSetting {
            toward: 1,
            amount: 0.25,
            path: Interpolation::Spherical,
        });
        let p = plan(&s, &AXES, Some(target()));
        let Plan::Blend { amounts, path, .. } = &p.plan else {
            panic!("{:?}", p.plan)
        };
        assert_eq!(*path, Interpolation::Spherical);
        assert_eq!(amounts, &[0.25, 0.1875, 0.125, 0.0625]);
        assert!(p.notes.iter().any(|n| n.contains("aim is set aside")));
        assert!(p.notes.iter().any(|n| n.contains("Holds do not apply")));

        // A blend toward a kept take that is not there falls back, and says so.
        let p = plan(&s, &AXES, None);
        assert!(matches!(p.plan, Plan::Aim { axis: 0, .. }), "{:?}", p.plan);
        assert!(p.notes.iter().any(|n| n.contains("no kept take 2")));
    }

    #[test]
    fn an_aim_at_an_attribute_without_an_axis_falls_back_to_the_sliders() {
        let mut s = steering();
        s.aim = Some((Attribute::MeanPitch, 64.0));
        let p = plan(&s, &AXES, None);
        assert!(matches!(p.plan, Plan::Vary { .. }));
        assert!(
            p.notes[0].contains("no axis for mean pitch"),
            "{:?}",
            p.notes
        );
        s.aim = Some((Attribute::Contour, 6.0));
        let Plan::Aim { target, axis, .. } = plan(&s, &AXES, None).plan else {
            panic!()
        };
        assert_eq!((axis, target.value, target.tolerance), (3, 6.0, 0.5));
    }

    #[test]
    fn blend_amounts_put_take_one_on_the_control() {
        assert_eq!(blend_amounts(0.0, 4), vec![0.0]);
        assert_eq!(blend_amounts(1.0, 1), vec![1.0]);
        assert_eq!(blend_amounts(1.0, 4), vec![1.0, 0.75, 0.5, 0.25]);
        assert_eq!(blend_amounts(2.0, 2), vec![1.0, 0.5], "clamped");
    }

    #[test]
    fn hold_report_says_rejections_and_when_the_limit_was_hit() {
        let lock = Lock {
            attribute: Attribute::PitchRange,
            tolerance: 2.0,
        };
        let ok = HoldOutcome {
            held: vec![lock],
            rejected: 3,
            rounds: 2,
            found: 4,
            missing: 0,
        };
        assert!(!ok.limit_hit());
        assert_eq!(
            ok.sentence(),
            format!("Holding pitch range ±2: 3 candidate take(s) rejected; all 4 found in 2 of {MAX_LOCK_ROUNDS} tries.")
        );
        let short = HoldOutcome {
            rounds: MAX_LOCK_ROUNDS,
            found: 1,
            missing: 3,
            rejected: 29,
            ..ok
        };
        assert!(short.limit_hit());
        assert!(short.sentence().contains("only 1 of 4 takes"));
        assert!(short.sentence().contains("29 candidate(s) rejected"));
        assert!(short.sentence().contains("limit of 8 tries was reached"));
        let r = SetReport {
            holds: Some(short),
            ..SetReport::default()
        };
        assert!(r.lines()[0].warning);
    }
}
