//! Pitches of a ferry call: a scale, a register, a range and a contour.
//!
//! Wrenmouth's small brass horns play from C3 (MIDI 48) to B5 (MIDI 83). A
//! call's line is the sum of two motions: a *trend* across the measure (its
//! contour: falling, level or climbing) and a *wander* that opens with a leap
//! and then moves by steps, as the crews play. The blend between them is set
//! by how strong the contour is; the line is then stretched to exactly the
//! drawn pitch range and snapped onto the call's scale.

use rand::Rng;

/// Lowest pitch a Wrenmouth horn call uses (C3).
pub const LOWEST_PITCH: u8 = 48;
/// Highest pitch a Wrenmouth horn call uses (B5).
pub const HIGHEST_PITCH: u8 = 83;

/// Scales the crews play in, as semitone sets above the tonic (interval sets as
/// tabulated in standard theory references, e.g. the Harvard Dictionary of
/// Music entries for each scale and mode).
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub(super) enum Scale {
    Major,
    NaturalMinor,
    Dorian,
    Mixolydian,
    MajorPentatonic,
    MinorPentatonic,
    /// Used only when a range cannot be spanned inside the drawn scale.
    Chromatic,
}

impl Scale {
    /// The scales a call is drawn from, with how often the crews use each.
    const DRAWN: [(Scale, u32); 6] = [
        (Scale::MajorPentatonic, 3),
        (Scale::Major, 3),
        (Scale::Mixolydian, 2),
        (Scale::MinorPentatonic, 2),
        (Scale::Dorian, 1),
        (Scale::NaturalMinor, 1),
    ];

    fn intervals(self) -> &'static [u8] {
        match self {
            Scale::Major => &[0, 2, 4, 5, 7, 9, 11],
            Scale::NaturalMinor => &[0, 2, 3, 5, 7, 8, 10],
            Scale::Dorian => &[0, 2, 3, 5, 7, 9, 10],
            Scale::Mixolydian => &[0, 2, 4, 5, 7, 9, 10],
            Scale::MajorPentatonic => &[0, 2, 4, 7, 9],
            Scale::MinorPentatonic => &[0, 3, 5, 7, 10],
            Scale::Chromatic => &[0, 1, 2, 3, 4, 5, 6, 7, 8, 9, 10, 11],
        }
    }

    fn draw<R: Rng>(rng: &mut R) -> Scale {
        let total: u32 = Self::DRAWN.iter().map(|(_, w)| w).sum();
        let mut pick = rng.random_range(0..total);
        for (scale, w) in Self::DRAWN {
            if pick < w {
                return scale;
            }
            pick -= w;
        }
        unreachable!("pick < total")
    }
}

/// The horn pitches (ascending) of `scale` on `tonic` (0 = C).
fn scale_pitches(scale: Scale, tonic: u8) -> Vec<u8> {
    (LOWEST_PITCH..=HIGHEST_PITCH)
        .filter(|p| scale.intervals().contains(&((p + 12 - tonic % 12) % 12)))
        .collect()
}

/// What the pitch line of one call must do.
#[derive(Debug, Clone, Copy)]
pub(super) struct LineTarget {
    /// Highest minus lowest pitch, in semitones.
    pub range: u8,
    /// −1 = falls across the whole measure, 0 = no overall direction, +1 = climbs.
    pub contour: f64,
}

/// Pitches for notes at `onsets` (steps of a `steps`-step measure) that span
/// exactly `target.range` semitones, follow `target.contour`, and sit in a
/// register drawn independently of the line's shape (see [`draw_mean`]).
pub(super) fn realise<R: Rng>(
    rng: &mut R,
    onsets: &[usize],
    steps: usize,
    target: LineTarget,
) -> Vec<u8> {
    let range = if onsets.len() < 2 {
        0
    } else {
        target.range.min(HIGHEST_PITCH - LOWEST_PITCH)
    };
    let shape = if range == 0 {
        vec![0.0; onsets.len()]
    } else {
        line_shape(rng, onsets, steps, target.contour)
    };
    let shape_mean = shape.iter().sum::<f64>() / shape.len().max(1) as f64;
    let mean = draw_mean(rng, range, shape_mean);
    let (pitches, low) = choose_register(rng, range, mean - shape_mean * range as f64);
    let high = low + range;
    let usable: Vec<u8> = pitches
        .into_iter()
        .filter(|p| (low..=high).contains(p))
        .collect();
    shape
        .iter()
        .map(|&z| {
            let want = low as f64 + z * range as f64;
            // `usable` holds `low` and `high`, so the extremes of the shape land
            // exactly on them and the range is met exactly.
            *usable
                .iter()
                .min_by(|a, b| {
                    (**a as f64 - want)
                        .abs()
                        .total_cmp(&(**b as f64 - want).abs())
                })
                .expect("usable holds at least low and high")
        })
        .collect()
}

/// The call's mean pitch, drawn uniformly from an interval centred on the
/// middle of the horn's compass. Centring matters: if the register were drawn
/// as "any lowest pitch where the range fits", a line whose notes sit mostly
/// near its top (e.g. one that leaps up first and then wanders) would read as
/// higher, tying mean pitch to the shape and so to contour. The interval is
/// the widest centred one in which this range and shape still fit the horn.
fn draw_mean<R: Rng>(rng: &mut R, range: u8, shape_mean: f64) -> f64 {
    let centre = (LOWEST_PITCH as f64 + HIGHEST_PITCH as f64) / 2.0;
    let lowest = LOWEST_PITCH as f64 + shape_mean * range as f64;
    let highest = HIGHEST_PITCH as f64 - (1.0 - shape_mean) * range as f64;
    let half = (centre - lowest).min(highest - centre);
    if half <= 0.0 {
        // Very wide, lopsided lines fit only off centre: take the nearest fit
        // (a line spanning the whole compass fits in one place only).
        return if lowest < highest {
            centre.clamp(lowest, highest)
        } else {
            (lowest + highest) / 2.0
        };
    }
    centre + rng.random_range(-half..=half)
}

/// Draws a scale and a tonic, then the lowest pitch nearest `wanted_low` such
/// that lowest + range is also in the scale and inside the horn's compass.
/// Returns the scale's horn pitches and the lowest pitch.
fn choose_register<R: Rng>(rng: &mut R, range: u8, wanted_low: f64) -> (Vec<u8>, u8) {
    // A few redraws: e.g. a pentatonic scale has no two tones a semitone or a
    // tritone apart, and a wide range leaves only a narrow window of lows.
    for attempt in 0..8 {
        let scale = if attempt < 7 {
            Scale::draw(rng)
        } else {
            Scale::Chromatic
        };
        let tonic = rng.random_range(0..12u8);
        let pitches = scale_pitches(scale, tonic);
        let low = pitches
            .iter()
            .copied()
            .filter(|&p| {
                p as u16 + range as u16 <= HIGHEST_PITCH as u16 && pitches.contains(&(p + range))
            })
            .min_by(|a, b| {
                (*a as f64 - wanted_low)
                    .abs()
                    .total_cmp(&(*b as f64 - wanted_low).abs())
            });
        if let Some(low) = low {
            return (pitches, low);
        }
    }
    unreachable!("the chromatic scale fits every range up to the horn's compass")
}

/// A value in [0, 1] per onset: 0 = the call's lowest pitch, 1 = its highest.
fn line_shape<R: Rng>(rng: &mut R, onsets: &[usize], steps: usize, contour: f64) -> Vec<f64> {
    let strength = contour.abs().min(1.0);
    // The wander: an opening leap (most calls) then steps or repeats.
    let mut wander = Vec::with_capacity(onsets.len());
    let mut at = 0.0f64;
    for i in 0..onsets.len() {
        if i == 1 && rng.random_bool(0.6) {
            at += if rng.random_bool(0.5) { 3.0 } else { -3.0 };
        } else if i > 0 {
            // Steps twice as often as repeated notes.
            at += [-1.0, -1.0, 0.0, 1.0, 1.0][rng.random_range(0..5)];
        }
        wander.push(at);
    }
    let peak = wander.iter().fold(0.0f64, |m, w| m.max(w.abs())).max(1.0);
    let raw: Vec<f64> = onsets
        .iter()
        .zip(&wander)
        .map(|(&s, w)| {
            let u = (s as f64 + 0.5) / steps as f64;
            contour * (2.0 * u - 1.0) + (1.0 - strength) * w / peak
        })
        .collect();
    let lo = raw.iter().copied().fold(f64::INFINITY, f64::min);
    let hi = raw.iter().copied().fold(f64::NEG_INFINITY, f64::max);
    if hi - lo < 1e-9 {
        // A flat line cannot show a range: let the last note (or the first,
        // for a falling call) take the top so the drawn range is still met.
        let mut flat = vec![0.0; raw.len()];
        let top = if contour < 0.0 { 0 } else { raw.len() - 1 };
        flat[top] = 1.0;
        return flat;
    }
    raw.iter().map(|r| (r - lo) / (hi - lo)).collect()
}

#[cfg(test)]
mod tests {
    use super::*;
    use rand::SeedableRng;
    use rand_chacha::ChaCha8Rng;

    #[test]
    fn the_range_is_met_exactly_and_stays_on_the_horn() {
        let mut rng = ChaCha8Rng::seed_from_u64(3);
        let onsets = [0, 2, 4, 7, 8, 12, 14];
        for range in 0..=35u8 {
            for contour in [-1.0, -0.3, 0.0, 0.5, 1.0] {
                let p = realise(&mut rng, &onsets, 16, LineTarget { range, contour });
                let lo = *p.iter().min().unwrap();
                let hi = *p.iter().max().unwrap();
                assert_eq!(hi - lo, range, "range {range}, contour {contour}: {p:?}");
                assert!(lo >= LOWEST_PITCH && hi <= HIGHEST_PITCH);
            }
        }
    }

    #[test]
    fn full_contour_is_monotone() {
        let mut rng = ChaCha8Rng::seed_from_u64(5);
        let onsets = [0, 3, 4, 6, 8, 11, 12, 15];
        let up = realise(
            &mut rng,
            &onsets,
            16,
            LineTarget {
                range: 14,
                contour: 1.0,
            },
        );
        assert!(up.windows(2).all(|w| w[0] <= w[1]), "{up:?}");
        let down = realise(
            &mut rng,
            &onsets,
            16,
            LineTarget {
                range: 14,
                contour: -1.0,
            },
        );
        assert!(down.windows(2).all(|w| w[0] >= w[1]), "{down:?}");
    }
}
