//! Repeatable timing on a shared machine: a fixed number of rounds of a
//! fixed number of calls, reporting the best round and the median round per
//! call. The best round is the one other processes disturbed least, so it
//! is the figure ratios are taken from; the median shows the spread.

use serde::Serialize;
use std::time::{Duration, Instant};

/// Per-call times of one measured operation.
#[derive(Debug, Clone, Copy, Serialize)]
pub struct Timing {
    /// Calls per round.
    pub iterations: u32,
    pub rounds: u32,
    /// Per-call time of the best round, in microseconds.
    pub best_us: f64,
    /// Per-call time of the median round, in microseconds.
    pub median_us: f64,
}

/// How long one round should take: long enough that timer resolution and
/// scheduling noise are small, short enough that a full bench stays quick.
const ROUND: Duration = Duration::from_millis(20);
pub const ROUNDS: u32 = 31;

/// Calls per round so that a round takes about `ROUND`; measured from a
/// few calls after one warm-up call (first calls pay for lazy set-up).
pub fn calibrate(mut f: impl FnMut()) -> u32 {
    f();
    let t = Instant::now();
    let mut n = 0u32;
    while t.elapsed() < ROUND / 4 || n < 3 {
        f();
        n += 1;
    }
    let per_call = t.elapsed().as_secs_f64() / n as f64;
    ((ROUND.as_secs_f64() / per_call).ceil() as u32).clamp(1, 100_000)
}

/// One round: `iterations` calls of `f`; returns µs per call.
pub fn round(iterations: u32, f: &mut impl FnMut()) -> f64 {
    let t = Instant::now();
    for _ in 0..iterations {
        f();
    }
    t.elapsed().as_secs_f64() * 1e6 / iterations as f64
}

/// Times `f` over `ROUNDS` rounds of `iterations` calls.
pub fn time(iterations: u32, mut f: impl FnMut()) -> Timing {
    f();
    let per_call = (0..ROUNDS).map(|_| round(iterations, &mut f)).collect();
    summarize(iterations, per_call)
}

/// Best and median of per-call round times.
pub fn summarize(iterations: u32, mut per_call: Vec<f64>) -> Timing {
    per_call.sort_by(f64::total_cmp);
    Timing {
        iterations,
        rounds: per_call.len() as u32,
        best_us: per_call[0],
        median_us: per_call[per_call.len() / 2],
    }
}

/// Calibrates, then times.
pub fn measure(mut f: impl FnMut()) -> Timing {
    let n = calibrate(&mut f);
    time(n, f)
}

/// Times a one-off operation (e.g. a model load) `runs` times, each run
/// from scratch.
pub fn once_each(runs: u32, mut f: impl FnMut()) -> Timing {
    let mut t: Vec<f64> = (0..runs)
        .map(|_| {
            let s = Instant::now();
            f();
            s.elapsed().as_secs_f64() * 1e6
        })
        .collect();
    t.sort_by(f64::total_cmp);
    Timing {
        iterations: 1,
        rounds: runs,
        best_us: t[0],
        median_us: t[t.len() / 2],
    }
}
