//! Nudgebar's musical attributes checked against outside sources:
//! - metrical complexity on the six 16-pulse timelines of G. T. Toussaint,
//!   "A mathematical analysis of African, Brazilian and Cuban clave rhythms"
//!   (BRIDGES 2002);
//! - pitch range against music21 10.5.1's ambitus analysis, contour against
//!   scipy 1.17.1's `stats.linregress`, mean pitch against numpy 2.4.6 (PyPI,
//!   pinned in tests/py/requirements.txt), on hand-made measures and the demo prompts.

use nudgebar_music::attributes::{measure, Attribute};
use nudgebar_music::rhythm::metrical_complexity;
use nudgebar_music::{demo_prompts, Note, Phrase, TimeSignature};
use nudgebar_tests::pyref;
use serde_json::{json, Value};

/// The six timelines as onset positions on 16 pulses, with their metrical
/// complexity. The rhythms are as drawn in Toussaint (2002). The complexity
/// values are recalled from memory of that paper's results (shiko 2, son 4,
/// soukous 6, rumba 5, bossa-nova 6, gahu 5) and were re-derived by hand from
/// its definition with the Lerdahl–Jackendoff weights 5 1 2 1 3 1 2 1 4 1 2 1
/// 3 1 2 1; the five heaviest weights sum to 17, so complexity = 17 − S.
const TIMELINES: [(&str, [usize; 5], u32); 6] = [
    ("shiko", [0, 4, 6, 10, 12], 2),      // S = 5+3+2+2+3 = 15
    ("son", [0, 3, 6, 10, 12], 4),        // S = 5+1+2+2+3 = 13
    ("soukous", [0, 3, 6, 10, 11], 6),    // S = 5+1+2+2+1 = 11
    ("rumba", [0, 3, 7, 10, 12], 5),      // S = 5+1+1+2+3 = 12
    ("bossa-nova", [0, 3, 6, 10, 13], 6), // S = 5+1+2+2+1 = 11
    ("gahu", [0, 3, 6, 10, 14], 5),       // S = 5+1+2+2+2 = 12
];

#[test]
fn toussaint_timelines_have_their_published_metrical_complexity() {
    let weights = TimeSignature::FOUR_FOUR.metrical_weights(16);
    for (name, onsets, complexity) in TIMELINES {
        assert_eq!(metrical_complexity(&weights, &onsets), complexity, "{name}");
        // The slider attribute is the same value scaled by the widest
        // possible spread for five onsets: 17 − 5 (five weight-1 pulses).
        let notes = onsets
            .iter()
            .map(|&p| Note::new(64, p as f64 * 0.25, 0.25, 100))
            .collect();
        let bar = Phrase::new(TimeSignature::FOUR_FOUR, 1, notes);
        let v = measure(Attribute::RhythmicComplexity, &bar).unwrap();
        assert!((v - complexity as f64 / 12.0).abs() < 1e-12, "{name}: {v}");
    }
}

/// Hand-made single measures in several metres, plus every measure of the demo prompts.
fn measures() -> Vec<Phrase> {
    let ts = |n, d| TimeSignature::new(n, d).unwrap();
    let bar = |sig: TimeSignature, rows: &[(u8, f64, f64)]| {
        Phrase::new(
            sig,
            1,
            rows.iter()
                .map(|&(p, o, d)| Note::new(p, o, d, 90))
                .collect(),
        )
    };
    let mut out = vec![
        bar(
            ts(4, 4),
            &[
                (60, 0.0, 1.0),
                (64, 1.0, 1.0),
                (67, 2.0, 1.0),
                (72, 3.0, 1.0),
            ],
        ),
        bar(
            ts(4, 4),
            &[
                (79, 0.0, 0.5),
                (77, 0.5, 0.5),
                (74, 1.0, 1.0),
                (72, 2.5, 0.5),
                (67, 3.0, 1.0),
            ],
        ),
        bar(ts(4, 4), &[(66, 1.0, 2.0)]),
        bar(
            ts(4, 4),
            &[
                (48, 0.0, 4.0),
                (55, 0.0, 4.0),
                (64, 0.0, 4.0),
                (83, 0.0, 4.0),
            ],
        ),
        bar(
            ts(3, 4),
            &[
                (57, 0.0, 1.0),
                (69, 1.0, 0.5),
                (50, 1.5, 0.5),
                (71, 2.0, 1.0),
            ],
        ),
        bar(
            ts(6, 8),
            &[
                (62, 0.0, 0.5),
                (65, 0.5, 0.5),
                (69, 1.0, 0.5),
                (74, 1.5, 1.5),
            ],
        ),
        bar(ts(7, 8), &[(70, 0.0, 1.0), (58, 1.0, 1.0), (63, 2.0, 1.5)]),
        // Triplet eighths: onsets off the sixteenth grid.
        bar(
            ts(2, 4),
            &[
                (60, 0.0, 1.0 / 3.0),
                (62, 1.0 / 3.0, 1.0 / 3.0),
                (63, 2.0 / 3.0, 1.0 / 3.0),
                (65, 1.0, 1.0),
            ],
        ),
    ];
    for p in demo_prompts::all() {
        for i in 0..p.phrase.measures {
            out.push(p.phrase.measure(i));
        }
    }
    out
}

fn close(ours: Option<f64>, theirs: &Value, what: &str) {
    match (ours, theirs.as_f64()) {
        (None, None) => {}
        (Some(a), Some(b)) => assert!((a - b).abs() < 1e-9, "{what}: ours {a}, reference {b}"),
        (a, _) => panic!("{what}: ours {a:?}, reference {theirs}"),
    }
}

#[test]
fn melodic_attributes_match_music21_scipy_and_numpy() {
    let measures = measures();
    let request: Vec<Value> = measures
        .iter()
        .map(|m| {
            json!({
                "measure_len": m.measure_len(),
                "notes": m.notes.iter().map(|n| json!([n.pitch, n.onset, n.duration])).collect::<Vec<_>>(),
            })
        })
        .collect();
    let reply = pyref::run_json(
        "melodic_reference.py",
        &[&serde_json::to_string(&request).unwrap()],
    );
    let reference = reply["measures"].as_array().unwrap();
    assert_eq!(reference.len(), measures.len());
    for (i, (m, r)) in measures.iter().zip(reference).enumerate() {
        // music21 analysis.discrete.Ambitus: span from lowest to highest pitch.
        close(
            measure(Attribute::PitchRange, m),
            &r["ambitus"],
            &format!("measure {i} range"),
        );
        // scipy.stats.linregress: least-squares slope, pitch over measures.
        close(
            measure(Attribute::Contour, m),
            &r["slope"],
            &format!("measure {i} contour"),
        );
        // numpy.mean of the MIDI pitches.
        close(
            measure(Attribute::MeanPitch, m),
            &r["mean"],
            &format!("measure {i} mean pitch"),
        );
    }
    // The set is not degenerate: ranges and slopes of both signs occur.
    let slopes: Vec<f64> = reference
        .iter()
        .filter_map(|r| r["slope"].as_f64())
        .collect();
    assert!(
        slopes.iter().any(|s| *s > 1.0) && slopes.iter().any(|s| *s < -1.0),
        "{slopes:?}"
    );
    assert!(reference
        .iter()
        .any(|r| r["ambitus"].as_f64() == Some(35.0)));
}
