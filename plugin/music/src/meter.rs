//! Time signatures and the metrical hierarchy they imply.
//!
//! Throughout Nudgebar a *beat* means a quarter note: onsets and durations are
//! measured in quarter notes from the start of the phrase, whatever the metre.
//! A 6/8 measure therefore lasts 3.0 beats and a 7/8 measure 3.5 beats.

use serde::{Deserialize, Serialize};
use std::fmt;

/// A time signature as written on the staff (numerator over denominator).
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash, Serialize, Deserialize)]
pub struct TimeSignature {
    /// Number of notated beats in the measure (e.g. 7 in 7/8).
    pub numerator: u8,
    /// Note value of the notated beat, a power of two (e.g. 8 in 7/8).
    pub denominator: u8,
}

/// Why a time signature was refused.
#[derive(Debug, Clone, PartialEq, Eq, thiserror::Error)]
pub enum MeterError {
    #[error("a time signature needs at least one beat per measure (got {0})")]
    ZeroNumerator(u8),
    #[error("the lower number of a time signature must be 1, 2, 4, 8, 16 or 32 (got {0})")]
    BadDenominator(u8),
}

impl TimeSignature {
    pub const FOUR_FOUR: TimeSignature = TimeSignature {
        numerator: 4,
        denominator: 4,
    };

    /// A checked time signature: numerator ≥ 1, denominator a power of two up to 32.
    pub fn new(numerator: u8, denominator: u8) -> Result<Self, MeterError> {
        if numerator == 0 {
            return Err(MeterError::ZeroNumerator(numerator));
        }
        if !matches!(denominator, 1 | 2 | 4 | 8 | 16 | 32) {
            return Err(MeterError::BadDenominator(denominator));
        }
        Ok(Self {
            numerator,
            denominator,
        })
    }

    /// Length of one measure in quarter-note beats.
    pub fn quarters_per_measure(self) -> f64 {
        self.numerator as f64 * 4.0 / self.denominator as f64
    }

    /// Number of sixteenth notes in one measure: the resolution at which
    /// rhythm attributes are read (common practice for symbolic melody work).
    pub fn sixteenths_per_measure(self) -> usize {
        (self.quarters_per_measure() * 4.0).round() as usize
    }

    /// True for compound metres (6/8, 9/8, 12/8, …) whose felt beat is a
    /// dotted note grouping three notated beats.
    pub fn is_compound(self) -> bool {
        self.denominator >= 8 && self.numerator > 3 && self.numerator.is_multiple_of(3)
    }

    /// How the notated beats group into felt beats, in notated-beat units.
    ///
    /// Simple metres: one notated beat per group (4/4 → 1,1,1,1). Compound
    /// metres: groups of three (6/8 → 3,3). Irregular eighth-note metres such
    /// as 5/8 or 7/8: twos with a final three (7/8 → 2,2,3) — a common-practice
    /// default, since the grouping of an irregular metre is not fixed by its
    /// signature alone.
    pub fn beat_groups(self) -> Vec<u8> {
        let n = self.numerator;
        if self.is_compound() {
            return vec![3; (n / 3) as usize];
        }
        if self.denominator >= 8 && n > 3 && n % 2 == 1 {
            let mut groups = vec![2; ((n - 3) / 2) as usize];
            groups.push(3);
            return groups;
        }
        vec![1; n as usize]
    }

    /// Metrical weight of each position of a grid with `steps` equal steps per
    /// measure: the number of metrical levels on which the position falls
    /// (the dot notation of Lerdahl & Jackendoff, *A Generative Theory of
    /// Tonal Music*, MIT Press 1983). Levels, from the top: the measure; the
    /// half measure when the felt beats pair up evenly (4/4, 12/8); the felt
    /// beats; the notated beats when they differ from the felt ones (6/8,
    /// 7/8); then repeated halving of the notated beat down to the grid step.
    ///
    /// For 4/4 on 16 steps this gives 5 1 2 1 3 1 2 1 4 1 2 1 3 1 2 1: the
    /// weights Toussaint uses for metrical complexity (see `attributes`).
    pub fn metrical_weights(self, steps: usize) -> Vec<u32> {
        let measure = self.quarters_per_measure();
        let notated = 4.0 / self.denominator as f64;
        let groups = self.beat_groups();
        let mut felt_onsets = Vec::with_capacity(groups.len());
        let mut at = 0.0;
        for g in &groups {
            felt_onsets.push(at);
            at += *g as f64 * notated;
        }
        let mut periods = vec![measure];
        if groups.len() >= 4 && groups.len().is_multiple_of(2) && groups.iter().all(|&g| g == groups[0]) {
            periods.push(measure / 2.0);
        }
        if groups.iter().any(|&g| g > 1) {
            periods.push(notated);
        }
        let step_len = measure / steps.max(1) as f64;
        let mut period = notated / 2.0;
        while period >= step_len - 1e-9 {
            periods.push(period);
            period /= 2.0;
        }
        // A grid that is not a power-of-two division (triplets: 12 steps in
        // 4/4) still has its own step as the lowest level, so that every
        // position weighs at least 1.
        if periods.last().is_some_and(|&p| (p - step_len).abs() > 1e-9) {
            periods.push(step_len);
        }
        let divides = |pos: f64, period: f64| {
            let r = pos / period;
            (r - r.round()).abs() < 1e-6
        };
        (0..steps)
            .map(|i| {
                let pos = i as f64 * step_len;
                let periodic = periods.iter().filter(|&&p| divides(pos, p)).count() as u32;
                let felt = felt_onsets.iter().any(|&o| (o - pos).abs() < 1e-6) as u32;
                periodic + felt
            })
            .collect()
    }
}

impl Default for TimeSignature {
    fn default() -> Self {
        Self::FOUR_FOUR
    }
}

impl fmt::Display for TimeSignature {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        write!(f, "{}/{}", self.numerator, self.denominator)
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn quarters_per_measure_follows_the_signature() {
        assert_eq!(
            TimeSignature::new(4, 4).unwrap().quarters_per_measure(),
            4.0
        );
        assert_eq!(
            TimeSignature::new(6, 8).unwrap().quarters_per_measure(),
            3.0
        );
        assert_eq!(
            TimeSignature::new(7, 8).unwrap().quarters_per_measure(),
            3.5
        );
        assert_eq!(
            TimeSignature::new(2, 2).unwrap().quarters_per_measure(),
            4.0
        );
    }

    #[test]
    fn bad_signatures_are_refused() {
        assert!(TimeSignature::new(0, 4).is_err());
        assert!(TimeSignature::new(4, 3).is_err());
        assert!(TimeSignature::new(4, 64).is_err());
    }

    // Weights as drawn in Lerdahl & Jackendoff (1983), ch. 4 dot diagrams,
    // and as tabulated for 16 pulses in Toussaint (BRIDGES 2002).
    #[test]
    fn four_four_weights_match_the_dot_diagram() {
        let w = TimeSignature::FOUR_FOUR.metrical_weights(16);
        assert_eq!(w, vec![5, 1, 2, 1, 3, 1, 2, 1, 4, 1, 2, 1, 3, 1, 2, 1]);
    }

    #[test]
    fn compound_and_irregular_weights() {
        // 6/8 on sixteenths: bar, dotted-quarter beats, eighths, sixteenths.
        let w = TimeSignature::new(6, 8).unwrap().metrical_weights(12);
        assert_eq!(w, vec![4, 1, 2, 1, 2, 1, 3, 1, 2, 1, 2, 1]);
        // 3/4 on sixteenths.
        let w = TimeSignature::new(3, 4).unwrap().metrical_weights(12);
        assert_eq!(w, vec![4, 1, 2, 1, 3, 1, 2, 1, 3, 1, 2, 1]);
        // 4/4 on a triplet-eighth grid: beats and half bars as before, each
        // triplet off-beat on the step level only.
        let w = TimeSignature::FOUR_FOUR.metrical_weights(12);
        assert_eq!(w, vec![5, 1, 1, 3, 1, 1, 4, 1, 1, 3, 1, 1]);
        // 6/8 on an eighth grid.
        let w = TimeSignature::new(6, 8).unwrap().metrical_weights(6);
        assert_eq!(w, vec![3, 1, 1, 2, 1, 1]);
        // 7/8 grouped 2+2+3.
        let w = TimeSignature::new(7, 8).unwrap().metrical_weights(14);
        assert_eq!(w, vec![4, 1, 2, 1, 3, 1, 2, 1, 3, 1, 2, 1, 2, 1]);
    }
}
