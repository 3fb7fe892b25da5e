//! Rhythm of a ferry call: which sixteenth steps of the measure get an onset.
//!
//! A call is built from *cells*, one per felt beat (a quarter in 4/4 and 3/4,
//! a dotted quarter in 6/8). Every onset pattern of a cell is allowed, but the
//! crews' favourite cells are drawn more often:
//!
//! | cell (4 steps) | pattern | what the crews call it |
//! |---|---|---|
//! | `x...` | quarter | toll |
//! | `x.x.` | even eighths | bell cell |
//! | `x..x` | dotted eighth + sixteenth | rope cell |
//! | `x.xx` | eighth + two sixteenths | hitch |
//! | `xxxx` | busy sixteenths | gull cell |
//! | `....` | a breath | slack |
//! | `.x.x`, `..x.` | off-beat entries | wake, drift |
//!
//! The onset count and the rhythmic complexity are *targets drawn first and
//! independently*; the cells are then sampled among all cell sequences that hit
//! both targets exactly. Complexity here is Toussaint's metrical complexity
//! (G. Toussaint, "A mathematical analysis of African, Brazilian, and Cuban
//! clave rhythms", BRIDGES 2002): the largest sum of metrical weights any
//! rhythm with the same number of onsets could have, minus this rhythm's sum.
//! Fixing the onset count and the weight sum therefore fixes the complexity,
//! whatever the exact normalisation the attribute library applies on top.

use super::CorpusError;
use nudgebar_music::TimeSignature;
use rand::Rng;
use std::ops::Range;

/// Longest cell sampled as one unit: 2^8 patterns keeps the sampler table tiny.
const MAX_CELL_STEPS: usize = 8;

/// The rhythmic frame of one metre on its sixteenth grid.
#[derive(Debug, Clone)]
pub(super) struct RhythmFrame {
    /// Sixteenth steps in one measure.
    pub steps: usize,
    /// Metrical weight of each step (Lerdahl & Jackendoff dot counts).
    pub weights: Vec<u32>,
    /// Step ranges of the cells, in order, covering the measure.
    cells: Vec<Range<usize>>,
    /// `ways[c][k * (max_sum + 1) + s]`: total preference of all ways to fill
    /// cells `c..` with `k` onsets whose weights add up to `s`.
    ways: Vec<Vec<f64>>,
    max_sum: usize,
}

impl RhythmFrame {
    pub fn new(ts: TimeSignature) -> Result<Self, CorpusError> {
        let sixteenths = ts.quarters_per_measure() * 4.0;
        let steps = sixteenths.round() as usize;
        if (sixteenths - steps as f64).abs() > 1e-9 || !(2..=64).contains(&steps) {
            return Err(CorpusError::UnsupportedMetre(ts));
        }
        // Steps per notated beat; a 32nd-note metre has no whole sixteenth per beat.
        let per_beat = 16.0 / ts.denominator as f64;
        if per_beat.fract() != 0.0 {
            return Err(CorpusError::UnsupportedMetre(ts));
        }
        let mut cells = Vec::new();
        let mut at = 0;
        for group in ts.beat_groups() {
            let len = group as usize * per_beat as usize;
            // Long felt beats (e.g. a whole-note beat) are sampled in halves.
            let parts = len.div_ceil(MAX_CELL_STEPS);
            for p in 0..parts {
                let lo = at + len * p / parts;
                let hi = at + len * (p + 1) / parts;
                cells.push(lo..hi);
            }
            at += len;
        }
        debug_assert_eq!(at, steps, "beat groups cover the measure");
        let weights = ts.metrical_weights(steps);
        let max_sum = weights.iter().sum::<u32>() as usize;
        let mut frame = Self {
            steps,
            weights,
            cells,
            ways: Vec::new(),
            max_sum,
        };
        frame.ways = frame.count_ways();
        Ok(frame)
    }

    fn idx(&self, k: usize, s: usize) -> usize {
        k * (self.max_sum + 1) + s
    }

    /// Onset count and weight sum of one pattern of cell `c`.
    fn pattern(&self, c: usize, mask: u32) -> (usize, usize) {
        let cell = &self.cells[c];
        let mut sum = 0;
        for (bit, step) in cell.clone().enumerate() {
            if mask & (1 << bit) != 0 {
                sum += self.weights[step] as usize;
            }
        }
        (mask.count_ones() as usize, sum)
    }

    /// Backward table of weighted counts, so that sampling can pick each cell
    /// in proportion to how many completions remain (exact conditional sampling).
    fn count_ways(&self) -> Vec<Vec<f64>> {
        let size = (self.steps + 1) * (self.max_sum + 1);
        let mut ways = vec![vec![0.0; size]; self.cells.len() + 1];
        ways[self.cells.len()][0] = 1.0;
        for c in (0..self.cells.len()).rev() {
            let len = self.cells[c].len();
            for mask in 0..(1u32 << len) {
                let (n, w) = self.pattern(c, mask);
                let pref = cell_preference(len, mask);
                for k in n..=self.steps {
                    for s in w..=self.max_sum {
                        let from = ways[c + 1][self.idx(k - n, s - w)];
                        if from > 0.0 {
                            let i = self.idx(k, s);
                            ways[c][i] += pref * from;
                        }
                    }
                }
            }
        }
        ways
    }

    /// Sum of the `k` largest (or smallest) metrical weights.
    fn extreme_sum(&self, k: usize, largest: bool) -> usize {
        let mut w: Vec<u32> = self.weights.clone();
        w.sort_unstable();
        if largest {
            w.reverse();
        }
        w[..k].iter().sum::<u32>() as usize
    }

    /// Onset steps (sorted) of a rhythm with `k` onsets whose metrical
    /// complexity sits at `fraction` (0 = plainest, 1 = most syncopated) of
    /// the span possible for `k` onsets.
    pub fn sample_onsets<R: Rng>(&self, rng: &mut R, k: usize, fraction: f64) -> Vec<usize> {
        let k = k.clamp(1, self.steps);
        let hi = self.extreme_sum(k, true);
        let lo = self.extreme_sum(k, false);
        let wanted = hi as f64 - fraction.clamp(0.0, 1.0) * (hi - lo) as f64;
        // Nearest reachable weight sum (a few sums cannot be made with k onsets).
        let mut sum = wanted.round() as usize;
        for d in 0..=self.max_sum {
            let up = sum + d;
            let down = sum.checked_sub(d);
            if up <= self.max_sum && self.ways[0][self.idx(k, up)] > 0.0 {
                sum = up;
                break;
            }
            if let Some(down) = down {
                if self.ways[0][self.idx(k, down)] > 0.0 {
                    sum = down;
                    break;
                }
            }
        }
        let mut onsets = Vec::with_capacity(k);
        let (mut k_left, mut s_left) = (k, sum);
        for c in 0..self.cells.len() {
            let len = self.cells[c].len();
            let total = self.ways[c][self.idx(k_left, s_left)];
            let mut pick = rng.random::<f64>() * total;
            let mut chosen = None;
            for mask in 0..(1u32 << len) {
                let (n, w) = self.pattern(c, mask);
                if n > k_left || w > s_left {
                    continue;
                }
                let share =
                    cell_preference(len, mask) * self.ways[c + 1][self.idx(k_left - n, s_left - w)];
                if share <= 0.0 {
                    continue;
                }
                chosen = Some((mask, n, w));
                pick -= share;
                if pick < 0.0 {
                    break;
                }
            }
            // `total > 0` was ensured above, so some pattern always has a share;
            // float rounding can only leave us on the last one with a share.
            let (mask, n, w) = chosen.expect("a reachable target has a completing pattern");
            for (bit, step) in self.cells[c].clone().enumerate() {
                if mask & (1 << bit) != 0 {
                    onsets.push(step);
                }
            }
            k_left -= n;
            s_left -= w;
        }
        onsets
    }
}

/// How much the ferry crews favour an onset pattern of one cell (bit i = the
/// cell's i-th step). Unnamed patterns keep weight 1, so every rhythm can occur.
fn cell_preference(len: usize, mask: u32) -> f64 {
    match (len, mask) {
        (4, 0b0001) => 3.0,   // toll
        (4, 0b0101) => 4.0,   // bell cell
        (4, 0b1001) => 3.0,   // rope cell
        (4, 0b1101) => 2.0,   // hitch
        (4, 0b1111) => 2.0,   // gull cell
        (4, 0b0000) => 2.0,   // slack
        (4, 0b1010) => 1.5,   // wake
        (4, 0b0100) => 1.5,   // drift
        (6, 0b000001) => 3.0, // toll (dotted quarter)
        (6, 0b010101) => 4.0, // bell cell (three eighths)
        (6, 0b010001) => 3.0, // rope cell (quarter + eighth)
        (6, 0b111111) => 2.0, // gull cell
        (6, 0b000000) => 2.0, // slack
        _ => 1.0,
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use rand::SeedableRng;
    use rand_chacha::ChaCha8Rng;

    /// Toussaint's metrical complexity computed directly from its definition.
    fn toussaint(weights: &[u32], onsets: &[usize]) -> u32 {
        let mut sorted = weights.to_vec();
        sorted.sort_unstable_by(|a, b| b.cmp(a));
        let best: u32 = sorted[..onsets.len()].iter().sum();
        best - onsets.iter().map(|&s| weights[s]).sum::<u32>()
    }

    #[test]
    fn onsets_hit_count_and_complexity_span() {
        let frame = RhythmFrame::new(TimeSignature::FOUR_FOUR).unwrap();
        let mut rng = ChaCha8Rng::seed_from_u64(7);
        for k in 1..=16 {
            let plain = frame.sample_onsets(&mut rng, k, 0.0);
            let busy = frame.sample_onsets(&mut rng, k, 1.0);
            assert_eq!(plain.len(), k);
            assert_eq!(busy.len(), k);
            assert!(
                plain.windows(2).all(|w| w[0] < w[1]),
                "sorted, distinct steps"
            );
            assert_eq!(
                toussaint(&frame.weights, &plain),
                0,
                "fraction 0 is the plainest rhythm"
            );
            let mut asc = frame.weights.clone();
            asc.sort_unstable();
            let span = frame.extreme_sum(k, true) - asc[..k].iter().sum::<u32>() as usize;
            assert_eq!(
                toussaint(&frame.weights, &busy) as usize,
                span,
                "fraction 1 is the most complex"
            );
        }
    }

    #[test]
    fn other_metres_have_frames() {
        for (n, d, steps) in [(3, 4, 12), (6, 8, 12), (7, 8, 14), (2, 2, 16), (5, 4, 20)] {
            let f = RhythmFrame::new(TimeSignature::new(n, d).unwrap()).unwrap();
            assert_eq!(f.steps, steps, "{n}/{d}");
        }
        assert!(RhythmFrame::new(TimeSignature::new(7, 32).unwrap()).is_err());
    }
}
