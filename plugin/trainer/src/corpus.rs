//! The demo model's training corpus: invented one-measure ferry calls.
//!
//! In Wrenmouth, a (fictional) river-port town, ferry crews trade short
//! one-bar signal tunes on small brass horns across the water. This module
//! generates such calls: 4/4 on a sixteenth grid (other metres through
//! [`generate_in`]), monophonic, pitches C3–B5 (MIDI 48–83).
//!
//! The point of the corpus is to teach a model sliders, so each call is made
//! from *targets drawn independently*, then realised exactly:
//!
//! 1. an onset count from 3 to the steps per measure (note density), uniform
//!    except that the full bar is drawn a third as often (see
//!    [`MIN_ONSETS`] and `draw_onset_count` for why);
//! 2. a place within the complexity span that onset count allows (rhythmic
//!    complexity) — the rhythm is then sampled from the crews' rhythm cells
//!    among those that hit both targets ([`rhythm`]);
//! 3. a pitch range, uniform over 0 … 28 semitones, and a contour strength
//!    from falling (−1) to climbing (+1); the line is stretched to exactly the
//!    range and snapped onto a scale, in a register drawn around the middle of
//!    the horn independently of the line's shape ([`pitch`]);
//! 4. articulation and velocities, which no slider controls.
//!
//! Drawing the targets independently is what keeps the measured attributes
//! nearly uncorrelated; [`correlations`] and [`report`] show how nearly.
//! Everything is deterministic from the seed, and call `i` of a seed is the
//! same whatever `count` is asked for (each call has its own ChaCha stream).

mod pitch;
mod rhythm;
mod stats;

pub use pitch::{HIGHEST_PITCH, LOWEST_PITCH};
pub use stats::{
    attribute_table, correlations, pearson, rank_correlations, report, spans, spearman, Span,
};

use nudgebar_music::{Note, Phrase, TimeSignature};
use pitch::LineTarget;
use rand::{Rng, SeedableRng};
use rand_chacha::ChaCha8Rng;
use rhythm::RhythmFrame;

/// Widest pitch range a call is drawn with, in semitones (two octaves and a
/// major third, so sliders can learn ranges past two octaves).
pub const MAX_RANGE: u8 = 28;

/// Why a corpus could not be generated.
#[derive(Debug, Clone, PartialEq, Eq)]
pub enum CorpusError {
    /// The measure is not a whole number of sixteenths between 2 and 64.
    UnsupportedMetre(TimeSignature),
}

impl std::fmt::Display for CorpusError {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        match self {
            CorpusError::UnsupportedMetre(ts) => write!(
                f,
                "the call generator works on a sixteenth-note grid, and a measure of {ts} is not a whole \
                 number of sixteenths between 2 and 64; choose a metre such as 4/4, 3/4, 6/8 or 7/8"
            ),
        }
    }
}

impl std::error::Error for CorpusError {}

/// `count` one-measure calls in 4/4 from `seed`.
pub fn generate(seed: u64, count: usize) -> Vec<Phrase> {
    generate_in(TimeSignature::FOUR_FOUR, seed, count)
        .expect("4/4 has a sixteenth-grid rhythm frame")
}

/// `count` one-measure calls in `time_signature` from `seed`.
pub fn generate_in(
    time_signature: TimeSignature,
    seed: u64,
    count: usize,
) -> Result<Vec<Phrase>, CorpusError> {
    let frame = RhythmFrame::new(time_signature)?;
    Ok((0..count)
        .map(|i| {
            let mut rng = ChaCha8Rng::seed_from_u64(seed);
            rng.set_stream(i as u64);
            one_call(&mut rng, &frame, time_signature)
        })
        .collect())
}

fn one_call<R: Rng>(rng: &mut R, frame: &RhythmFrame, ts: TimeSignature) -> Phrase {
    let steps = frame.steps;
    // Targets, each drawn on its own.
    let onset_count = draw_onset_count(rng, steps);
    let complexity = rng.random::<f64>();
    let range = rng.random_range(0..=MAX_RANGE);
    let contour = rng.random_range(-1.0..=1.0);

    let onsets = frame.sample_onsets(rng, onset_count, complexity);
    // A lone note spans no range; its register is then drawn over the whole horn.
    let target = LineTarget {
        range: if onsets.len() < 2 { 0 } else { range },
        contour,
    };
    let pitches = pitch::realise(rng, &onsets, steps, target);
    let lengths = articulate(rng, &onsets, steps);
    let velocities = accent(rng, &onsets, &frame.weights);

    let step_len = ts.quarters_per_measure() / steps as f64;
    let notes = onsets
        .iter()
        .zip(&pitches)
        .zip(&lengths)
        .zip(&velocities)
        .map(|(((&s, &p), &len), &v)| Note::new(p, s as f64 * step_len, len as f64 * step_len, v))
        .collect();
    Phrase::new(ts, 1, notes)
}

/// Fewest notes in a call. With one note there is no pitch range or contour
/// at all, and with two both are the same single interval (range = its size,
/// contour = its size over its time gap), so no slider could move one without
/// the other. From three notes on a line can widen without climbing (an arch)
/// or climb without widening, which is what independent sliders need.
pub const MIN_ONSETS: usize = 3;

/// An onset count from [`MIN_ONSETS`] to `steps`, uniform except that a bar
/// sounding on every step (which cannot be syncopated, so it pins rhythmic
/// complexity) is drawn a third as often, keeping the correlation it forces
/// small. Measures too short for three notes get as many as fit.
fn draw_onset_count<R: Rng>(rng: &mut R, steps: usize) -> usize {
    const EDGE: f64 = 1.0 / 3.0;
    let lowest = MIN_ONSETS.min(steps);
    if lowest == steps {
        return steps;
    }
    // `steps - lowest` interior counts at weight 1, then the full bar.
    let interior = (steps - lowest) as f64;
    let pick = rng.random::<f64>() * (interior + EDGE);
    if pick < interior {
        lowest + (pick.floor() as usize).min(steps - lowest - 1)
    } else {
        steps
    }
}

/// Note lengths in steps: each note ends by the next onset (the horn plays
/// one note at a time). A call is played held, detached or mixed.
fn articulate<R: Rng>(rng: &mut R, onsets: &[usize], steps: usize) -> Vec<usize> {
    let style = rng.random_range(0..3);
    onsets
        .iter()
        .enumerate()
        .map(|(i, &s)| {
            let gap = onsets.get(i + 1).copied().unwrap_or(steps) - s;
            match style {
                0 => gap,                       // held to the next note
                1 => gap.div_ceil(2),           // detached: half the gap
                _ => rng.random_range(1..=gap), // mixed
            }
        })
        .collect()
}

/// Velocities: a loudness for the whole call, an accent on strong metrical
/// positions, and a little unevenness, as a player's breath gives.
fn accent<R: Rng>(rng: &mut R, onsets: &[usize], weights: &[u32]) -> Vec<u8> {
    let base = rng.random_range(55..=100i32);
    let strongest = weights.iter().copied().max().unwrap_or(1);
    onsets
        .iter()
        .map(|&s| {
            let lift = if weights[s] + 1 >= strongest {
                14
            } else if weights[s] >= 3 {
                8
            } else {
                0
            };
            (base + lift + rng.random_range(-8..=8)).clamp(1, 127) as u8
        })
        .collect()
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn calls_are_valid_and_reproducible() {
        let a = generate(11, 300);
        assert_eq!(a, generate(11, 300));
        assert_eq!(
            a[..50],
            generate(11, 50)[..],
            "call i does not depend on count"
        );
        assert_ne!(a, generate(12, 300));
        for p in &a {
            assert_eq!(p.measures, 1);
            assert!(!p.notes.is_empty());
            for w in p.notes.windows(2) {
                assert!(w[0].end() <= w[1].onset + 1e-9, "monophonic");
            }
            for n in &p.notes {
                assert!((LOWEST_PITCH..=HIGHEST_PITCH).contains(&n.pitch));
                assert!(n.duration >= 0.25 - 1e-9 && n.end() <= 4.0 + 1e-9);
                assert!(
                    (n.onset * 4.0 - (n.onset * 4.0).round()).abs() < 1e-9,
                    "on a sixteenth"
                );
            }
        }
    }

    #[test]
    fn onset_counts_start_at_three_and_short_measures_get_what_fits() {
        let mut rng = ChaCha8Rng::seed_from_u64(9);
        let counts: Vec<usize> = (0..3000).map(|_| draw_onset_count(&mut rng, 16)).collect();
        for k in MIN_ONSETS..=16 {
            assert!(counts.contains(&k), "{k} onsets never drawn");
        }
        assert!(counts.iter().all(|&k| (MIN_ONSETS..=16).contains(&k)));
        // A two-sixteenth measure (1/8) holds two notes at most.
        assert!((0..50).all(|_| draw_onset_count(&mut rng, 2) == 2));
        let eighth = TimeSignature::new(1, 8).unwrap();
        assert!(generate_in(eighth, 3, 20)
            .unwrap()
            .iter()
            .all(|p| p.notes.len() == 2));
    }

    #[test]
    fn three_four_calls_fill_three_beats() {
        let ts = TimeSignature::new(3, 4).unwrap();
        let calls = generate_in(ts, 1, 200).unwrap();
        let max = calls.iter().map(|p| p.notes.len()).max().unwrap();
        assert_eq!(max, 12, "a 3/4 call can be twelve sixteenths");
        assert!(calls
            .iter()
            .all(|p| p.notes.iter().all(|n| n.end() <= 3.0 + 1e-9)));
        assert!(generate_in(TimeSignature::new(3, 32).unwrap(), 1, 1).is_err());
    }
}
