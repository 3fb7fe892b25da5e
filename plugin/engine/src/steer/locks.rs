//! Locks: "change the rhythm, but keep the range". A take whose locked
//! attributes moved from the prompt's by more than the tolerance is
//! rejected, and another is drawn — with a fresh seed and a narrower wander
//! on the free dimensions each round, since what moves a locked attribute
//! off is mostly that wander — for a bounded number of rounds.

use crate::codec::HoleReport;
use crate::engine::Engine;
use crate::error::EngineError;
use crate::variation::{Take, Variation, VariationRequest};
use nudgebar_music::attributes::{Attribute, Readout};
use nudgebar_music::Phrase;
use serde::{Deserialize, Serialize};

/// Rounds of `vary` a locked request may use before giving up: each round
/// decodes as many takes as were asked for.
pub const MAX_LOCK_ROUNDS: usize = 8;
/// Each round's wander is this fraction of the last one's.
const NARROWING: f32 = 0.7;

/// How near the prompt's value a lock keeps an attribute when no tolerance
/// is given (presets, the plugin's holds at leeway ×1), in the attribute's
/// unit: one note more or less per measure; a whole tone of range, contour
/// slope or register; a tenth of the 0–1 complexity scale. Chosen so a
/// locked attribute sounds "the same" (a judgement, not a published norm).
pub fn default_tolerance(attribute: Attribute) -> f64 {
    match attribute {
        Attribute::NoteDensity => 1.0,
        Attribute::PitchRange => 2.0,
        Attribute::RhythmicComplexity => 0.1,
        Attribute::Contour => 2.0,
        Attribute::MeanPitch => 2.0,
    }
}

/// Keep `attribute` within `tolerance` (in the attribute's unit) of the prompt's value.
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
pub struct Lock {
    pub attribute: Attribute,
    pub tolerance: f64,
}

impl Lock {
    /// Whether a take's readout keeps this lock. An attribute the prompt
    /// does not define (the contour of a single note) is kept only by takes
    /// that do not define it either.
    pub fn holds(&self, prompt: &Readout, take: &Readout) -> bool {
        match (prompt.get(self.attribute), take.get(self.attribute)) {
            (None, None) => true,
            (Some(p), Some(t)) => (t - p).abs() <= self.tolerance + 1e-9,
            _ => false,
        }
    }
}

/// Takes that keep every lock, and what it cost to find them.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct LockedVariation {
    /// Only takes that keep every lock (possibly fewer than asked for).
    pub variation: Variation,
    pub locks: Vec<Lock>,
    /// Decoded takes thrown away because they broke a lock.
    pub rejected: usize,
    /// Rounds of decoding used (at most [`MAX_LOCK_ROUNDS`]).
    pub rounds: usize,
    /// How many of the requested takes could not be found; 0 when all were.
    pub missing: usize,
}

impl LockedVariation {
    /// A sentence for the user when not every take could be found.
    pub fn shortfall(&self) -> Option<String> {
        if self.missing == 0 {
            return None;
        }
        let names: Vec<String> = self
            .locks
            .iter()
            .map(|l| format!("{} (±{})", l.attribute.label().to_lowercase(), l.tolerance))
            .collect();
        Some(format!(
            "Only {} of {} takes kept the locks on {} after {} tries; {} takes were rejected. Loosen a tolerance, unlock an attribute, or lower the spread.",
            self.variation.takes.len(),
            self.variation.takes.len() + self.missing,
            names.join(", "),
            self.rounds,
            self.rejected
        ))
    }
}

impl Engine {
    /// Like [`Engine::vary`], but every returned take keeps `locks`.
    /// Reproducible for the same prompt, model, request and locks.
    pub fn vary_locked(
        &mut self,
        prompt: &Phrase,
        request: &VariationRequest,
        locks: &[Lock],
    ) -> Result<LockedVariation, EngineError> {
        self.check_locks(request, locks)?;
        let mut kept: Vec<Take> = Vec::with_capacity(request.takes);
        let mut rejected = 0;
        let mut holes = HoleReport::default();
        let mut duplicates_dropped = 0;
        let mut first: Option<Variation> = None;
        let mut rounds = 0;
        let mut spread = request.spread;
        while kept.len() < request.takes && rounds < MAX_LOCK_ROUNDS {
            let round = VariationRequest {
                // Round 0 is the plain request, so with no lock broken the
                // takes are exactly those `vary` gives.
                seed: request
                    .seed
                    .wrapping_add((rounds as u64).wrapping_mul(0x9E37_79B9_7F4A_7C15)),
                spread,
                ..request.clone()
            };
            let v = self.vary(prompt, &round)?;
            holes.add(&v.holes);
            duplicates_dropped += v.duplicates_dropped;
            for take in &v.takes {
                if kept.len() == request.takes {
                    break;
                }
                if !locks
                    .iter()
                    .all(|l| l.holds(&v.prompt_attributes, &take.attributes))
                {
                    rejected += 1;
                } else if !kept.iter().any(|k| k.phrase == take.phrase) {
                    kept.push(take.clone());
                }
            }
            first.get_or_insert(v);
            rounds += 1;
            spread *= NARROWING;
        }
        let mut variation = first.expect("at least one round runs");
        let missing = request.takes - kept.len();
        variation.takes = kept;
        variation.holes = holes;
        variation.duplicates_dropped = duplicates_dropped;
        Ok(LockedVariation {
            variation,
            locks: locks.to_vec(),
            rejected,
            rounds,
            missing,
        })
    }

    fn check_locks(&self, request: &VariationRequest, locks: &[Lock]) -> Result<(), EngineError> {
        for (i, l) in locks.iter().enumerate() {
            if !l.tolerance.is_finite() || l.tolerance < 0.0 {
                return Err(EngineError::Setting(format!(
                    "The tolerance {} on the {} lock must be zero or a positive number.",
                    l.tolerance,
                    l.attribute.label().to_lowercase()
                )));
            }
            if locks[..i].iter().any(|o| o.attribute == l.attribute) {
                return Err(EngineError::Setting(format!(
                    "{} is locked twice; give it one tolerance.",
                    l.attribute.label()
                )));
            }
            let slider = self
                .axes()
                .iter()
                .position(|a| a.attribute == l.attribute)
                .and_then(|i| request.offsets.get(i))
                .copied()
                .unwrap_or(0.0);
            if slider != 0.0 {
                return Err(EngineError::Setting(format!(
                    "{} is locked, but its slider is at {slider}; unlock it or set its slider to 0.",
                    l.attribute.label()
                )));
            }
        }
        Ok(())
    }
}
