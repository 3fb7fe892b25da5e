//! Rhythm measures from the rhythm-analysis literature, over one measure.
//!
//! Both measures read onsets on the measure's sixteenth-note grid and use the
//! metrical weights of the time signature ([`TimeSignature::metrical_weights`]):
//! a position's weight is the number of metrical levels it falls on, so the
//! downbeat weighs most and off-beat sixteenths least.
//!
//! **Metrical complexity** (G. T. Toussaint, "A mathematical analysis of
//! African, Brazilian and Cuban clave rhythms", BRIDGES 2002): a rhythm with
//! k onsets has *metrical simplicity* S = the sum of the weights at its
//! onsets. The most regular rhythm with k onsets puts them on the k heaviest
//! positions, scoring S_max; metrical complexity is S_max − S.
//!
//! Nudgebar's slider attribute is that complexity **normalised** to 0–1:
//! (S_max − S) / (S_max − S_min), with S_min the sum of the k lightest
//! weights. Raw complexity grows with the number of onsets and with the
//! number of grid positions (a 3/4 bar has fewer levels than a 4/4 one), so
//! without the normalisation a busier bar or a different metre would read as
//! "more complex" for reasons that are not syncopation. When every choice of
//! k positions scores the same (k = 0, or every position sounding) nothing
//! could be placed more or less regularly: the value is 0, and undefined
//! (`None`) for a silent measure.
//!
//! **Syncopation** after H. C. Longuet-Higgins & C. S. Lee, "The rhythmic
//! interpretation of monophonic music", Music Perception 1984: a note
//! followed, before the next onset, by a silent position (a rest or a held
//! note) of greater metrical weight is syncopated by the weight difference.
//! Following the formalisation for onset patterns in F. Gómez, A. Melvin,
//! D. Rappaport & G. T. Toussaint, "Mathematical measures of syncopation",
//! BRIDGES 2005, each note is paired with the heaviest silent position before
//! the next onset, and the measure is read as a cycle (Nudgebar loops its
//! prompts, so what follows the last note is the next downbeat's onset, if any).

use crate::meter::TimeSignature;

/// Positions (0-based sixteenths) of `onsets` (beats from the bar line) on
/// the measure's sixteenth grid: rounded to the nearest sixteenth, sorted,
/// duplicates (chord notes) merged. An onset that rounds onto the next bar
/// line belongs to the next measure and is left out.
pub fn onset_positions(time_signature: TimeSignature, onsets: &[f64]) -> Vec<usize> {
    let steps = time_signature.sixteenths_per_measure().max(1);
    let step_len = time_signature.quarters_per_measure() / steps as f64;
    let mut positions: Vec<usize> = onsets
        .iter()
        .filter(|o| o.is_finite() && **o >= 0.0)
        .map(|o| (o / step_len).round() as usize)
        .filter(|&p| p < steps)
        .collect();
    positions.sort_unstable();
    positions.dedup();
    positions
}

/// Toussaint's metrical complexity S_max − S of onsets at `positions` on a
/// grid with `weights` (positions must be distinct and in range).
pub fn metrical_complexity(weights: &[u32], positions: &[usize]) -> u32 {
    let (best, _) = extreme_sums(weights, positions.len());
    best - simplicity(weights, positions)
}

/// Metrical complexity scaled to 0–1 by the largest complexity possible for
/// the same number of onsets (see the module notes); `None` for a silent
/// measure.
pub fn normalized_metrical_complexity(
    time_signature: TimeSignature,
    onsets: &[f64],
) -> Option<f64> {
    let weights = time_signature.metrical_weights(time_signature.sixteenths_per_measure().max(1));
    let positions = onset_positions(time_signature, onsets);
    if positions.is_empty() {
        return None;
    }
    let (best, worst) = extreme_sums(&weights, positions.len());
    if best == worst {
        return Some(0.0);
    }
    Some((best - simplicity(&weights, &positions)) as f64 / (best - worst) as f64)
}

/// Longuet-Higgins & Lee syncopation of onsets at `positions` (distinct, in
/// range) on a cyclic grid with `weights`; 0 for no onsets.
pub fn lhl_syncopation(weights: &[u32], positions: &[usize]) -> u32 {
    let n = weights.len();
    let mut total = 0;
    for (i, &note) in positions.iter().enumerate() {
        // The next onset, wrapping round to the first one in the next cycle.
        let next = positions.get(i + 1).copied().unwrap_or(positions[0] + n);
        let heaviest_silence = (note + 1..next).map(|p| weights[p % n]).max();
        if let Some(rest) = heaviest_silence {
            total += rest.saturating_sub(weights[note]);
        }
    }
    total
}

/// Metrical simplicity S: the sum of the weights at the onsets.
fn simplicity(weights: &[u32], positions: &[usize]) -> u32 {
    positions.iter().map(|&p| weights[p]).sum()
}

/// (S_max, S_min): sums of the k heaviest and the k lightest weights.
fn extreme_sums(weights: &[u32], k: usize) -> (u32, u32) {
    let mut sorted = weights.to_vec();
    sorted.sort_unstable();
    let k = k.min(sorted.len());
    let lightest = sorted[..k].iter().sum();
    let heaviest = sorted[sorted.len() - k..].iter().sum();
    (heaviest, lightest)
}

#[cfg(test)]
mod tests {
    use super::*;

    fn four_four() -> Vec<u32> {
        TimeSignature::FOUR_FOUR.metrical_weights(16)
    }

    // Son clave x..x..x...x.x... (onsets 0,3,6,10,12), worked by hand:
    // weights 5+1+2+2+3 = 13; five heaviest 5+4+3+3+2 = 17 → complexity 4;
    // five lightest 1×5 = 5 → normalised 4/12.
    #[test]
    fn son_clave_by_hand() {
        let son = [0, 3, 6, 10, 12];
        assert_eq!(metrical_complexity(&four_four(), &son), 4);
        let onsets: Vec<f64> = son.iter().map(|&p| p as f64 * 0.25).collect();
        let v = normalized_metrical_complexity(TimeSignature::FOUR_FOUR, &onsets).unwrap();
        assert!((v - 4.0 / 12.0).abs() < 1e-12);
    }

    // LHL on the son clave, worked by hand: note 3 (w1) → rest 4 (w3): 2;
    // note 6 (w2) → rest 8 (w4): 2; notes 0, 10, 12 are followed only by
    // lighter silences → total 4. Shiko (0,4,6,10,12): only note 6 → rest 8: 2.
    #[test]
    fn lhl_by_hand() {
        assert_eq!(lhl_syncopation(&four_four(), &[0, 3, 6, 10, 12]), 4);
        assert_eq!(lhl_syncopation(&four_four(), &[0, 4, 6, 10, 12]), 2);
        // Straight quarters: no syncopation.
        assert_eq!(lhl_syncopation(&four_four(), &[0, 4, 8, 12]), 0);
        // A single off-beat sixteenth with the downbeat silent: the cycle
        // carries it to the next downbeat (w5 − w1 = 4).
        assert_eq!(lhl_syncopation(&four_four(), &[15]), 4);
        assert_eq!(lhl_syncopation(&four_four(), &[]), 0);
    }

    #[test]
    fn grid_reading_rounds_merges_and_drops_next_bar() {
        let ts = TimeSignature::FOUR_FOUR;
        // 0.26 rounds to the second sixteenth; a chord merges; 3.9 rounds onto
        // the next bar line and is left out.
        assert_eq!(
            onset_positions(ts, &[0.0, 0.0, 0.26, 2.0, 3.9, f64::NAN]),
            vec![0, 1, 8]
        );
    }

    #[test]
    fn extremes_and_other_metres() {
        let ts = TimeSignature::FOUR_FOUR;
        assert_eq!(normalized_metrical_complexity(ts, &[]), None);
        // Every sixteenth sounding: nothing could be more or less regular.
        let all: Vec<f64> = (0..16).map(|i| i as f64 * 0.25).collect();
        assert_eq!(normalized_metrical_complexity(ts, &all), Some(0.0));
        // One note on the last sixteenth: the least regular single onset.
        assert_eq!(normalized_metrical_complexity(ts, &[3.75]), Some(1.0));
        // 3/4, weights 4 1 2 1 3 1 2 1 3 1 2 1: off-beat eighths 0.5, 1.5, 2.5
        // score 2+2+2 = 6; heaviest three 4+3+3 = 10; lightest three 3 → 4/7.
        let waltz = TimeSignature::new(3, 4).unwrap();
        let v = normalized_metrical_complexity(waltz, &[0.5, 1.5, 2.5]).unwrap();
        assert!((v - 4.0 / 7.0).abs() < 1e-12);
    }
}
