//! The demo model's training corpus (invented Wrenmouth ferry calls): it is
//! reproducible, every call is a valid one-measure monophonic melody, the
//! slider attributes span wide ranges, and they are nearly uncorrelated, so
//! the trained sliders do not drag each other along.
//!
//! Attributes are measured by `nudgebar_music::attributes` (tested against
//! its own references in attributes_reference.rs); the correlation
//! coefficients are checked against SciPy.

use nudgebar_music::attributes::{measure, Attribute};
use nudgebar_music::{quantize, Phrase, TimeSignature};
use nudgebar_tests::{pyref, scratch_dir};
use nudgebar_trainer::corpus;

const SEED: u64 = 20_261_202;
/// Large enough that sampling noise in a correlation (about 1/√n ≈ 0.016)
/// is small next to the bound checked.
const COUNT: usize = 4000;

/// The tightest bound on |r| between any two of the four slider attributes
/// (note density, pitch range, rhythmic complexity, contour) and mean pitch that the generator
/// reaches with margin (measured: at most 0.08 in 4/4 and 0.10 in 3/4; what
/// remains comes from one-note calls having no range and full-bar calls no
/// syncopation). The issue asks for 0.3.
const MAX_ABS_R: f64 = 0.15;

fn values(phrases: &[Phrase], attribute: Attribute) -> Vec<f64> {
    phrases
        .iter()
        .filter_map(|p| measure(attribute, p))
        .collect()
}

fn fraction(v: &[f64], keep: impl Fn(f64) -> bool) -> f64 {
    v.iter().filter(|&&x| keep(x)).count() as f64 / v.len() as f64
}

#[test]
fn the_same_seed_gives_the_same_corpus() {
    let a = corpus::generate(SEED, 500);
    assert_eq!(a, corpus::generate(SEED, 500));
    assert_eq!(
        a[..100],
        corpus::generate(SEED, 100)[..],
        "call i does not depend on the count asked for"
    );
    let b = corpus::generate(SEED + 1, 500);
    let shared = a.iter().zip(&b).filter(|(x, y)| x == y).count();
    assert!(
        shared < 5,
        "another seed gives other calls ({shared} of 500 identical)"
    );
}

fn assert_valid(phrases: &[Phrase], ts: TimeSignature) {
    let steps = ts.sixteenths_per_measure();
    let mut distinct_velocities = std::collections::BTreeSet::new();
    let (mut varied, mut multi) = (0, 0);
    for (i, p) in phrases.iter().enumerate() {
        assert_eq!((p.time_signature, p.measures), (ts, 1), "call {i}");
        assert!(!p.notes.is_empty(), "call {i} is silent");
        // Quantizing to sixteenths changes nothing: every onset and end is on
        // the grid, nothing rings past the bar line, no two notes share a step.
        let (grid, adjustments) = quantize(p, steps);
        assert!(
            adjustments.is_empty(),
            "call {i}: {:?}",
            adjustments.sentences()
        );
        assert_eq!(grid.notes.len(), p.notes.len());
        for w in p.notes.windows(2) {
            assert!(
                w[0].end() <= w[1].onset + 1e-9,
                "call {i} overlaps itself: {w:?}"
            );
        }
        for n in &p.notes {
            assert!(
                (48..=83).contains(&n.pitch),
                "call {i}: pitch {} off the horn",
                n.pitch
            );
            assert!(
                n.duration >= 0.25 - 1e-9,
                "call {i}: shorter than a sixteenth"
            );
            assert!((1..=127).contains(&n.velocity));
            distinct_velocities.insert(n.velocity);
        }
        if p.notes.len() >= 3 {
            multi += 1;
            let first = p.notes[0].velocity;
            varied += p.notes.iter().any(|n| n.velocity != first) as usize;
        }
    }
    assert!(
        distinct_velocities.len() >= 40,
        "velocities vary across the corpus"
    );
    assert!(
        varied as f64 >= 0.9 * multi as f64,
        "velocities vary within calls ({varied} of {multi})"
    );
}

#[test]
fn every_call_is_a_valid_monophonic_measure() {
    assert_valid(&corpus::generate(SEED, COUNT), TimeSignature::FOUR_FOUR);
    let three_four = TimeSignature::new(3, 4).unwrap();
    assert_valid(
        &corpus::generate_in(three_four, SEED, 1000).unwrap(),
        three_four,
    );
    let six_eight = TimeSignature::new(6, 8).unwrap();
    assert_valid(
        &corpus::generate_in(six_eight, SEED, 500).unwrap(),
        six_eight,
    );
}

#[test]
fn a_metre_off_the_sixteenth_grid_is_refused_with_a_reason() {
    let err = corpus::generate_in(TimeSignature::new(5, 32).unwrap(), SEED, 3).unwrap_err();
    assert!(err.to_string().contains("5/32"), "{err}");
}

#[test]
fn the_slider_attributes_span_wide_ranges() {
    let calls = corpus::generate(SEED, COUNT);

    // Every onset count from 3 (the fewest a call has, see corpus::MIN_ONSETS)
    // to 16 occurs in a fair share of calls, and no call has fewer.
    let density = values(&calls, Attribute::NoteDensity);
    assert_eq!(corpus::MIN_ONSETS, 3);
    assert!(
        density.iter().all(|&d| d >= 3.0),
        "a call with fewer than three notes"
    );
    for k in 3..=16 {
        let share = fraction(&density, |d| d == k as f64);
        assert!(
            share >= 0.01,
            "{k} notes in only {:.1} % of calls",
            share * 100.0
        );
    }

    // Pitch range from a repeated note to past two octaves.
    let range = values(&calls, Attribute::PitchRange);
    assert!(fraction(&range, |r| r == 0.0) >= 0.02, "unison calls");
    assert!(
        fraction(&range, |r| r >= 24.0) >= 0.1,
        "calls of two octaves or more"
    );
    assert!(
        fraction(&range, |r| (6.0..=18.0).contains(&r)) >= 0.3,
        "middling ranges"
    );

    // Normalised metrical complexity: each quarter of 0–1 well populated.
    let complexity = values(&calls, Attribute::RhythmicComplexity);
    for q in 0..4 {
        let (lo, hi) = (q as f64 / 4.0, (q + 1) as f64 / 4.0);
        let share = fraction(&complexity, |c| c >= lo && (c < hi || (q == 3 && c <= 1.0)));
        assert!(
            share >= 0.15,
            "complexity in [{lo}, {hi}) for only {:.1} % of calls",
            share * 100.0
        );
    }
    assert!(fraction(&complexity, |c| c == 0.0) > 0.0 && fraction(&complexity, |c| c == 1.0) > 0.0);

    // Contour (semitones per measure) from clearly falling to clearly rising:
    // an octave or more per measure both ways, and level lines too.
    let contour = values(&calls, Attribute::Contour);
    assert!(fraction(&contour, |c| c <= -12.0) >= 0.2, "falling calls");
    assert!(fraction(&contour, |c| c >= 12.0) >= 0.2, "rising calls");
    assert!(fraction(&contour, |c| c.abs() < 3.0) >= 0.1, "level calls");

    // Register: mean pitches across most of the horn's compass.
    let mean = values(&calls, Attribute::MeanPitch);
    assert!(fraction(&mean, |m| m < 56.0) >= 0.05 && fraction(&mean, |m| m > 75.0) >= 0.05);
}

fn assert_nearly_independent(phrases: &[Phrase], what: &str) {
    println!("{what}:\n{}", corpus::report(phrases));
    let names: Vec<&str> = Attribute::ALL.iter().map(|a| a.key()).collect();
    // Pearson r as the issue asks, and Spearman rho because rank order is
    // what the attribute-regularization loss compares.
    for (coefficient, r) in [
        ("Pearson r", corpus::correlations(phrases)),
        ("Spearman rho", corpus::rank_correlations(phrases)),
    ] {
        for i in 0..r.len() {
            assert!(
                (r[i][i] - 1.0).abs() < 1e-9,
                "{what}: {coefficient} of {} with itself",
                names[i]
            );
            for j in 0..i {
                assert!(
                    r[i][j].abs() <= MAX_ABS_R,
                    "{what}: |{coefficient}({}, {})| = {:.3} > {MAX_ABS_R}",
                    names[i],
                    names[j],
                    r[i][j].abs()
                );
                assert!((r[i][j] - r[j][i]).abs() < 1e-12, "symmetric");
            }
        }
    }
}

#[test]
fn the_attributes_are_nearly_uncorrelated() {
    assert_nearly_independent(&corpus::generate(SEED, COUNT), "4/4");
    let three_four = TimeSignature::new(3, 4).unwrap();
    assert_nearly_independent(
        &corpus::generate_in(three_four, SEED, COUNT).unwrap(),
        "3/4",
    );
}

/// Reference: SciPy's `scipy.stats.pearsonr` and `scipy.stats.spearmanr`
/// (PyPI `scipy`, pinned in tests/py/requirements.txt) on the same pairs.
#[test]
fn correlations_match_scipy() {
    let sample = corpus::generate(SEED + 7, 600);
    let table = corpus::attribute_table(&sample);
    let n = Attribute::ALL.len();
    let mut pairs = Vec::new();
    let mut index = Vec::new();
    for i in 0..n {
        for j in 0..i {
            let (x, y): (Vec<f64>, Vec<f64>) = table
                .iter()
                .filter_map(|row| Some((row[i]?, row[j]?)))
                .unzip();
            pairs.push(serde_json::json!([x, y]));
            index.push((i, j));
        }
    }
    let dir = scratch_dir("corpus_properties");
    let file = dir.join("pairs.json");
    std::fs::write(&file, serde_json::json!({ "pairs": pairs }).to_string()).unwrap();
    let reference = pyref::run_json("pearson.py", &[file.to_str().unwrap()]);
    let ours_pearson = corpus::correlations(&sample);
    let ours_spearman = corpus::rank_correlations(&sample);
    for (k, &(i, j)) in index.iter().enumerate() {
        let p = reference["pearson"][k].as_f64().unwrap();
        let s = reference["spearman"][k].as_f64().unwrap();
        assert!(
            (ours_pearson[i][j] - p).abs() < 1e-9,
            "Pearson r({i},{j}): ours {} vs scipy {} {p}",
            ours_pearson[i][j],
            reference["scipy"]
        );
        assert!(
            (ours_spearman[i][j] - s).abs() < 1e-9,
            "Spearman rho({i},{j}): ours {} vs scipy {} {s}",
            ours_spearman[i][j],
            reference["scipy"]
        );
    }
}
