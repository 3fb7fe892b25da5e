//! Target mode: "7 notes", "a range of 12 semitones", "contour +6". The
//! search walks one axis's slider from where it stands, decoding one take
//! per step and *measuring* it: first outward in doubling steps until the
//! measured value passes the target (bracketing), then inside the bracket by
//! regula falsi (Illinois variant) with a bisection fallback. Every decode
//! counts against a budget; the closest take seen is always kept, so a
//! target the model cannot reach still returns the nearest thing it can do,
//! with the reason.
//!
//! The axis is assumed to raise its attribute as the slider rises (what
//! attribute regularization trains for, and what derived axes point along);
//! where a model breaks that, the search still returns its closest take.

use crate::codec::HoleReport;
use crate::engine::{Engine, Prepared};
use crate::error::EngineError;
use crate::variation::{Take, VariationRequest};
use nudgebar_music::attributes::{Attribute, Readout};
use nudgebar_music::Phrase;
use serde::{Deserialize, Serialize};

/// Slider values the search may use: the same reach as the sliders.
pub const SLIDER_REACH: f32 = 4.0;
/// Decodes a search uses unless told otherwise.
pub const DEFAULT_BUDGET: usize = 16;
pub const MAX_BUDGET: usize = 64;
/// Two slider values closer than this decode alike for any sensible span;
/// a bracket this narrow means the measured value jumps over the target.
const NARROWEST: f32 = 1e-3;
/// First outward step, in slider units; doubled each time.
const FIRST_STEP: f32 = 0.25;

/// What the user asks for: `attribute` measured at `value`, give or take `tolerance`.
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
pub struct Target {
    pub attribute: Attribute,
    pub value: f64,
    pub tolerance: f64,
}

/// How the search ended.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize, Deserialize)]
#[serde(rename_all = "snake_case")]
pub enum Outcome {
    /// The take measures within the tolerance of the target.
    Reached,
    /// Even at the end of the slider's reach the attribute stays short of the target.
    OutOfReach,
    /// The measured value jumps over the target: one slider step gives less,
    /// the next more (e.g. 6 notes, then 8, for a target of 7).
    Gap,
    /// The decode budget ran out before the target was met.
    BudgetSpent,
}

/// The search's result: the closest take, where it was found and how close it is.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct TargetResult {
    pub target: Target,
    pub outcome: Outcome,
    /// The closest take measured (a take whose attribute is undefined only
    /// when no decode defined it).
    pub take: Take,
    /// The slider value that made it.
    pub slider: f32,
    /// What the take measures.
    pub reached: Option<f64>,
    /// |reached − target|.
    pub distance: Option<f64>,
    /// Takes decoded by the search.
    pub decodes: usize,
    pub budget: usize,
    pub prompt_attributes: Readout,
    pub holes: HoleReport,
}

impl TargetResult {
    /// One sentence saying what happened, for the user.
    pub fn summary(&self) -> String {
        let a = self.target.attribute;
        let d = a.decimals();
        let what = a.label().to_lowercase();
        let got = match self.reached {
            Some(v) => format!("{v:.d$}"),
            None => "nothing measurable".into(),
        };
        let tail = format!(
            "(slider {:+.2}, {} of {} decodes)",
            self.slider, self.decodes, self.budget
        );
        match self.outcome {
            Outcome::Reached => format!(
                "Reached {what} {got} for a target of {:.d$} {tail}.",
                self.target.value
            ),
            Outcome::OutOfReach => format!(
                "This model cannot take {what} to {:.d$} from this prompt along its axis; the closest take measures {got} {tail}.",
                self.target.value
            ),
            Outcome::Gap => format!(
                "Along this axis {what} jumps past {:.d$} without landing on it; the closest take measures {got} {tail}. Widen the tolerance or try another prompt.",
                self.target.value
            ),
            Outcome::BudgetSpent => format!(
                "The search used its {} decodes before reaching {what} {:.d$}; the closest take measures {got} {tail}. Raise the budget to search further.",
                self.budget, self.target.value
            ),
        }
    }
}

/// One measured point of the search.
struct Probe {
    slider: f32,
    value: Option<f64>,
    take: Take,
}

struct Search<'a> {
    engine: &'a mut Engine,
    prepared: &'a Prepared,
    request: &'a VariationRequest,
    base: Vec<f32>,
    axis: usize,
    target: Target,
    budget: usize,
    decodes: usize,
    holes: HoleReport,
    best: Option<Probe>,
}

impl Search<'_> {
    fn distance(&self, value: Option<f64>) -> f64 {
        value.map_or(f64::INFINITY, |v| (v - self.target.value).abs())
    }

    fn close_enough(&self, value: Option<f64>) -> bool {
        self.distance(value) <= self.target.tolerance + 1e-9
    }

    /// Decodes the take at `slider` on the searched axis (other sliders as
    /// requested) and measures it.
    fn probe(&mut self, slider: f32) -> Result<Option<f64>, EngineError> {
        let mut sliders = self.request.offsets.clone();
        sliders.resize(self.engine.axes().len(), 0.0);
        sliders[self.axis] = slider;
        let offset = self.engine.offset_for(&sliders);
        let size = self.engine.latent_size();
        let codes: Vec<f32> = self
            .base
            .iter()
            .enumerate()
            .map(|(i, b)| b + offset[i % size])
            .collect();
        let mut takes = self.engine.takes_from_codes(
            self.prepared,
            &codes,
            &self.request.choice,
            &self.request.mask,
            &mut self.holes,
        )?;
        self.decodes += 1;
        let take = takes.pop().expect("one code row set gives one take");
        let value = take.attributes.get(self.target.attribute);
        let better = match &self.best {
            None => true,
            Some(b) => self.distance(value) < self.distance(b.value),
        };
        if better {
            self.best = Some(Probe {
                slider,
                value,
                take,
            });
        }
        Ok(value)
    }

    fn has_budget(&self) -> bool {
        self.decodes < self.budget
    }

    fn run(&mut self, start: f32) -> Result<Outcome, EngineError> {
        let goal = self.target.value;
        let v0 = self.probe(start)?;
        if self.close_enough(v0) {
            return Ok(Outcome::Reached);
        }
        // Outward: toward higher sliders when the take measures too low.
        // An undefined start (a silent decode) gives no direction; try upward first.
        let dir = match v0 {
            Some(v) if v > goal => -1.0f32,
            _ => 1.0,
        };
        let mut inner = (start, v0);
        let mut step = FIRST_STEP;
        let mut last = start;
        let outer = loop {
            if (last * dir) >= SLIDER_REACH - 1e-6 {
                return Ok(Outcome::OutOfReach);
            }
            if !self.has_budget() {
                return Ok(Outcome::BudgetSpent);
            }
            let s = (start + dir * step).clamp(-SLIDER_REACH, SLIDER_REACH);
            last = s;
            let v = self.probe(s)?;
            if self.close_enough(v) {
                return Ok(Outcome::Reached);
            }
            match v {
                // Passed the target: the bracket is (inner, here).
                Some(x) if (x - goal) * dir as f64 > 0.0 => break (s, Some(x)),
                Some(_) => inner = (s, v),
                None => {} // a hole tells nothing; keep walking
            }
            step *= 2.0;
        };
        self.refine(inner, outer, dir as f64)
    }

    /// Regula falsi with the Illinois modification (halve the weight of an
    /// end that stays put twice), bisection when an end is undefined or the
    /// secant lands at an end. `inner` measures short of the goal, `outer`
    /// past it; `dir` is +1 when "past" means above the goal.
    fn refine(
        &mut self,
        mut inner: (f32, Option<f64>),
        mut outer: (f32, Option<f64>),
        dir: f64,
    ) -> Result<Outcome, EngineError> {
        let goal = self.target.value;
        let (mut w_inner, mut w_outer) = (1.0f64, 1.0f64);
        let mut last_moved: Option<bool> = None; // Some(true) = inner moved last
        loop {
            if (outer.0 - inner.0).abs() < NARROWEST {
                return Ok(Outcome::Gap);
            }
            if !self.has_budget() {
                return Ok(Outcome::BudgetSpent);
            }
            let mid = 0.5 * (inner.0 + outer.0);
            let s = match (inner.1, outer.1) {
                (Some(a), Some(b)) if (b - a).abs() > 1e-12 => {
                    let (fa, fb) = ((a - goal) * w_inner, (b - goal) * w_outer);
                    let t = (fa / (fa - fb)) as f32;
                    // Stay clear of the ends, where a step function would stall.
                    let t = t.clamp(0.1, 0.9);
                    inner.0 + t * (outer.0 - inner.0)
                }
                _ => mid,
            };
            let v = self.probe(s)?;
            if self.close_enough(v) {
                return Ok(Outcome::Reached);
            }
            let moved_inner = match v {
                Some(x) => (x - goal) * dir < 0.0,
                // A hole tells nothing about the side: drop the nearer end,
                // so the next probe (a bisection) lands elsewhere.
                None => (s - inner.0).abs() < (outer.0 - s).abs(),
            };
            if moved_inner {
                inner = (s, v);
                w_inner = 1.0;
                if last_moved == Some(true) {
                    w_outer *= 0.5;
                }
            } else {
                outer = (s, v);
                w_outer = 1.0;
                if last_moved == Some(false) {
                    w_inner *= 0.5;
                }
            }
            last_moved = Some(moved_inner);
        }
    }
}

impl Engine {
    /// Searches the axis of `target.attribute` for a take that measures the
    /// target, starting from the request's slider for that axis; the other
    /// sliders, the note choice and the key mask come from `request` (the
    /// search does not wander: spread and take count are not used).
    pub fn aim(
        &mut self,
        prompt: &Phrase,
        target: &Target,
        request: &VariationRequest,
        budget: usize,
    ) -> Result<TargetResult, EngineError> {
        let axis = self
            .axes()
            .iter()
            .position(|a| a.attribute == target.attribute)
            .ok_or_else(|| {
                let have: Vec<&str> = self.axes().iter().map(|a| a.attribute.key()).collect();
                EngineError::Setting(format!(
                    "This model has no axis for {}, so it cannot aim at a value of it; its axes are {}.",
                    target.attribute.label().to_lowercase(),
                    have.join(", ")
                ))
            })?;
        if !target.value.is_finite() || !target.tolerance.is_finite() || target.tolerance < 0.0 {
            return Err(EngineError::Setting(format!(
                "The target {} ± {} is not a usable number; give a finite value and a tolerance of 0 or more.",
                target.value, target.tolerance
            )));
        }
        if !(2..=MAX_BUDGET).contains(&budget) {
            return Err(EngineError::Setting(format!(
                "The search budget {budget} must be between 2 and {MAX_BUDGET} decodes."
            )));
        }
        let prepared = self.prepare(prompt)?;
        let base = self.encode(&prepared)?.mean;
        let start = request
            .offsets
            .get(axis)
            .copied()
            .unwrap_or(0.0)
            .clamp(-SLIDER_REACH, SLIDER_REACH);
        let mut search = Search {
            engine: self,
            prepared: &prepared,
            request,
            base,
            axis,
            target: *target,
            budget,
            decodes: 0,
            holes: HoleReport::default(),
            best: None,
        };
        let outcome = search.run(start)?;
        let best = search.best.take().expect("the search always probes once");
        let distance = best.value.map(|v| (v - target.value).abs());
        Ok(TargetResult {
            target: *target,
            outcome,
            slider: best.slider,
            reached: best.value,
            distance,
            decodes: search.decodes,
            budget,
            prompt_attributes: Readout::of(&prepared.grid.to_phrase()),
            holes: search.holes,
            take: best.take,
        })
    }
}
