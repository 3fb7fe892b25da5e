//! Key and scale constraints: the interval sets against music21's scale
//! classes (PyPI), and every note of every constrained take inside the scale.

mod steer_support;

use nudgebar_engine::steer::{KeyScale, Scale};
use nudgebar_engine::{Engine, NoteChoice, VariationRequest};
use nudgebar_tests::pyref;
use nudgebar_tests::tiny_model;
use steer_support::{bar, lamp_climb, wide_package};

#[test]
fn interval_sets_match_music21_for_every_tonic() {
    // Reference: music21.scale (MajorScale, MinorScale, the mode classes,
    // WeightedHexatonicBlues); the pentatonics by degree selection from
    // music21's major/minor scales (see tests/py/scale_reference.py).
    let reference = pyref::run_json("scale_reference.py", &[]);
    let mut checked = 0;
    for tonic in 0..12u8 {
        for scale in Scale::ALL {
            let want: Vec<u8> = reference[tonic.to_string()][scale.key()]
                .as_array()
                .unwrap_or_else(|| panic!("music21 gave nothing for {scale:?}"))
                .iter()
                .map(|v| v.as_u64().unwrap() as u8)
                .collect();
            let mut ours = KeyScale::new(tonic, scale).pitch_classes();
            ours.sort_unstable();
            assert_eq!(ours, want, "{}", KeyScale::new(tonic, scale));
            checked += 1;
        }
    }
    assert_eq!(checked, 120);
}

#[test]
fn every_note_of_every_take_is_in_the_scale() {
    let mut engine = Engine::new(wide_package()).unwrap();
    let prompt = lamp_climb();
    // Unconstrained, the random decoder leaves the scale: otherwise the check
    // below would pass whatever the mask did.
    let free = engine
        .vary(
            &prompt,
            &VariationRequest {
                takes: 8,
                spread: 1.0,
                offsets: vec![0.5, 0.5],
                ..VariationRequest::default()
            },
        )
        .unwrap();
    let c_major = KeyScale::new(0, Scale::Major);
    assert!(
        free.takes
            .iter()
            .flat_map(|t| &t.phrase.notes)
            .any(|n| !c_major.contains(n.pitch)),
        "the unconstrained takes happen to sit in C major; the test would prove nothing"
    );

    let mut notes = 0;
    for tonic in [0u8, 2, 6, 10] {
        for scale in Scale::ALL {
            let key = KeyScale::new(tonic, scale);
            for choice in [
                NoteChoice::Argmax,
                NoteChoice::Sample {
                    temperature: 1.5,
                    seed: 3,
                },
            ] {
                let request = VariationRequest {
                    takes: 6,
                    spread: 1.0,
                    offsets: vec![0.5, 0.5],
                    choice,
                    mask: key.mask(),
                    ..VariationRequest::default()
                };
                let v = engine.vary(&prompt, &request).unwrap();
                assert!(!v.takes.is_empty());
                for t in &v.takes {
                    for n in &t.phrase.notes {
                        assert!(key.contains(n.pitch), "{key}: pitch {} is outside", n.pitch);
                        notes += 1;
                    }
                }
            }
        }
    }
    assert!(notes > 1000, "only {notes} notes were checked");
}

#[test]
fn the_mask_acts_on_the_logits_not_on_finished_notes() {
    // The known-weights model prefers C4 over C#4 by 0.01·z1 on every sounding
    // step (tests/src/tiny_model.rs). D major has C# but no C: the masked
    // decoder must choose its second-best pitch on exactly the same steps,
    // not drop or shift notes.
    let mut engine = Engine::new(tiny_model::package()).unwrap();
    let prompt = bar(&[(60, 0, 1), (60, 4, 1), (60, 8, 1), (60, 12, 1)]);
    let request = VariationRequest {
        takes: 1,
        spread: 0.0,
        offsets: vec![0.3, 0.0],
        ..VariationRequest::default()
    };
    let free = engine.vary(&prompt, &request).unwrap();
    let d_major = KeyScale::parse("D major").unwrap();
    let masked = engine
        .vary(
            &prompt,
            &VariationRequest {
                mask: d_major.mask(),
                ..request.clone()
            },
        )
        .unwrap();
    let (a, b) = (&free.takes[0].phrase.notes, &masked.takes[0].phrase.notes);
    assert!(a.iter().all(|n| n.pitch == 60));
    assert_eq!(a.len(), b.len());
    for (x, y) in a.iter().zip(b) {
        assert_eq!((x.onset, x.duration), (y.onset, y.duration));
        assert_eq!(y.pitch, 61);
    }
}

#[test]
fn demo_model_takes_stay_in_the_key() {
    let mut engine = Engine::new(nudgebar_demo_model::package()).unwrap();
    let mut notes = 0;
    for (i, prompt) in nudgebar_music::demo_prompts::all().iter().enumerate() {
        for scale in Scale::ALL {
            let key = KeyScale::new((i * 5) as u8 % 12, scale);
            let request = VariationRequest {
                takes: 4,
                spread: 1.0,
                offsets: vec![0.5, 0.5, 0.0, 0.0],
                mask: key.mask(),
                ..VariationRequest::default()
            };
            for t in engine.vary(&prompt.phrase, &request).unwrap().takes {
                for n in &t.phrase.notes {
                    assert!(
                        key.contains(n.pitch),
                        "{key}: pitch {} in a take of {}",
                        n.pitch,
                        prompt.name
                    );
                    notes += 1;
                }
            }
        }
    }
    assert!(notes > 500, "only {notes} notes were checked");
}
