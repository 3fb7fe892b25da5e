//! Variation on the known-weights model (tests/src/tiny_model.rs), whose
//! decode is known in closed form: encode → offset → batched decode → notes,
//! reproducibility, the hole guard and duplicate replacement.

use nudgebar_engine::{Engine, EngineError, NoteChoice, VariationRequest};
use nudgebar_music::attributes::Attribute;
use nudgebar_music::{Note, Phrase, TimeSignature};
use nudgebar_tests::tiny_model::{self, Variant};

fn c4(step: usize) -> Note {
    Note::new(60, step as f64 * 0.25, 0.5, 100)
}

/// Three C4 onsets: the encoder gives z0 = 2.5, z1 = 3.
fn prompt() -> Phrase {
    Phrase::new(TimeSignature::FOUR_FOUR, 1, vec![c4(0), c4(4), c4(8)])
}

fn request(density: f32, takes: usize, spread: f32) -> VariationRequest {
    VariationRequest {
        offsets: vec![density, 0.0],
        takes,
        spread,
        seed: 7,
        ..VariationRequest::default()
    }
}

fn steps_of(p: &Phrase) -> Vec<usize> {
    p.notes
        .iter()
        .map(|n| (n.onset / 0.25).round() as usize)
        .collect()
}

#[test]
fn encode_gives_the_hand_computed_code() {
    let mut engine = Engine::new(tiny_model::package()).unwrap();
    let prepared = engine.prepare(&prompt()).unwrap();
    let z = engine.encode(&prepared).unwrap();
    assert_eq!(z.mean, vec![2.5, 3.0, 0.0, 0.0]);
    assert_eq!(z.log_variance, Some(vec![0.0; 4]));
}

#[test]
fn density_slider_moves_the_code_and_the_decode_follows_in_closed_form() {
    let mut engine = Engine::new(tiny_model::package()).unwrap();
    // +0.5 of a span of 4 → z0 = 2.5 + 2 = 4.5.
    let v = engine.vary(&prompt(), &request(0.5, 1, 0.0)).unwrap();
    let take = &v.takes[0];
    assert_eq!(take.latent, vec![4.5, 3.0, 0.0, 0.0]);
    assert_eq!(steps_of(&take.phrase), tiny_model::expected_steps(4.5, 3.0));
    assert_eq!(steps_of(&take.phrase), vec![0, 2, 4, 8, 12]);
    assert!(take
        .phrase
        .notes
        .iter()
        .all(|n| n.pitch == 60 && (n.duration - 0.25).abs() < 1e-9));
    // Velocities follow the prompt: 100 where it had notes, its median elsewhere.
    assert!(take.phrase.notes.iter().all(|n| n.velocity == 100));
    // Measured, not assumed: 5 onsets against the prompt's 3.
    assert_eq!(take.attributes.get(Attribute::NoteDensity), Some(5.0));
    assert_eq!(take.change.get(Attribute::NoteDensity), Some(2.0));
    assert_eq!(v.prompt_attributes.get(Attribute::NoteDensity), Some(3.0));
    assert_eq!(v.holes.total(), 0);
}

#[test]
fn every_slider_position_matches_the_closed_form() {
    let mut engine = Engine::new(tiny_model::package()).unwrap();
    for tenth in -5..=10 {
        let s = tenth as f32 / 10.0;
        let z0 = 2.5 + 4.0 * s;
        let v = engine.vary(&prompt(), &request(s, 1, 0.0)).unwrap();
        let want = tiny_model::expected_steps(z0, 3.0);
        if want.is_empty() {
            continue; // the hole guard's territory, tested below
        }
        assert_eq!(steps_of(&v.takes[0].phrase), want, "slider {s}");
    }
}

#[test]
fn takes_are_reproducible_and_do_not_depend_on_how_many_were_asked() {
    let mut engine = Engine::new(tiny_model::package()).unwrap();
    let mut r = request(0.25, 4, 1.0);
    r.choice = NoteChoice::Sample {
        temperature: 1.0,
        seed: 99,
    };
    let a = engine.vary(&prompt(), &r).unwrap();
    let b = engine.vary(&prompt(), &r).unwrap();
    assert_eq!(a, b);
    let mut fewer = r.clone();
    fewer.takes = 2;
    let c = engine.vary(&prompt(), &fewer).unwrap();
    assert_eq!(&a.takes[..2], &c.takes[..2]);
    let mut other = r.clone();
    other.choice = NoteChoice::Sample {
        temperature: 1.0,
        seed: 100,
    };
    assert_ne!(engine.vary(&prompt(), &other).unwrap().takes, a.takes);
}

#[test]
fn identical_takes_are_replaced_or_left_out_never_shown_twice() {
    let mut engine = Engine::new(tiny_model::package()).unwrap();
    // The free dimensions (1 and 3) barely matter to this decoder, so
    // argmax takes collapse onto the same notes.
    let v = engine.vary(&prompt(), &request(0.0, 6, 0.3)).unwrap();
    for (i, a) in v.takes.iter().enumerate() {
        for b in &v.takes[i + 1..] {
            assert_ne!(a.phrase.notes, b.phrase.notes, "a take is shown twice");
        }
    }
    assert_eq!(v.takes.len() + v.duplicates_dropped, 6);
    assert!(v.duplicates_dropped > 0);
    assert!(v.holes.resampled > 0, "duplicates are first decoded again");
}

#[test]
fn an_emptied_take_is_resampled_then_repaired() {
    let mut engine = Engine::new(tiny_model::package()).unwrap();
    // −1 of span 4 → z0 = −1.5: the decoder rests everywhere.
    let v = engine.vary(&prompt(), &request(-1.0, 1, 0.0)).unwrap();
    assert!(v.holes.emptied >= 1);
    assert_eq!(v.holes.resampled, 3, "three retry rounds before repair");
    // Repair puts the decoder's single most likely note in: step 0, C4.
    let notes = &v.takes[0].phrase.notes;
    assert_eq!(notes.len(), 1);
    assert_eq!((notes[0].pitch, steps_of(&v.takes[0].phrase)[0]), (60, 0));
}

#[test]
fn a_hold_with_nothing_to_hold_is_caught() {
    let mut engine = Engine::new(
        tiny_model::package_with(
            Variant {
                hold_everywhere: true,
                ..Variant::default()
            },
            |_| {},
        )
        .unwrap(),
    )
    .unwrap();
    let v = engine.vary(&prompt(), &request(0.0, 1, 0.0)).unwrap();
    assert_eq!(v.holes.dangling_holds, 1, "only step 0 has nothing to hold");
    // Step 0 falls back to the best non-hold token (C4), which the holds then sustain.
    let notes = &v.takes[0].phrase.notes;
    assert_eq!(notes.len(), 1);
    assert_eq!((notes[0].onset, notes[0].duration), (0.0, 4.0));
}

#[test]
fn a_three_four_prompt_uses_twelve_steps_of_the_four_four_grid() {
    let mut engine = Engine::new(tiny_model::package()).unwrap();
    let p = Phrase::new(
        TimeSignature::new(3, 4).unwrap(),
        1,
        vec![c4(0), c4(4), c4(8)],
    );
    let v = engine.vary(&p, &request(0.5, 1, 0.0)).unwrap();
    let take = &v.takes[0].phrase;
    assert_eq!(take.time_signature, TimeSignature::new(3, 4).unwrap());
    let want: Vec<usize> = tiny_model::expected_steps(4.5, 3.0)
        .into_iter()
        .filter(|&s| s < 12)
        .collect();
    assert_eq!(steps_of(take), want);
}

#[test]
fn two_bars_are_encoded_and_decoded_per_bar_in_one_batch() {
    let mut engine = Engine::new(tiny_model::package()).unwrap();
    let p = Phrase::new(
        TimeSignature::FOUR_FOUR,
        2,
        vec![c4(0), c4(4), c4(8), c4(16)],
    );
    let v = engine.vary(&p, &request(0.0, 1, 0.0)).unwrap();
    // Bar 1: z0 = 2.5 → steps 0, 4, 8; bar 2: z0 = 0.5 → its step 0.
    assert_eq!(steps_of(&v.takes[0].phrase), vec![0, 4, 8, 16]);
    assert_eq!(v.takes[0].latent.len(), 8);
}

#[test]
fn out_of_reach_requests_are_refused_with_a_sentence() {
    let mut engine = Engine::new(tiny_model::package()).unwrap();
    assert_eq!(
        engine.vary(&prompt(), &request(0.0, 0, 0.0)).unwrap_err(),
        EngineError::TakeCount(0)
    );
    assert_eq!(
        engine.vary(&prompt(), &request(0.0, 17, 0.0)).unwrap_err(),
        EngineError::TakeCount(17)
    );
    let e = engine
        .vary(&prompt(), &request(f32::NAN, 1, 0.0))
        .unwrap_err();
    assert!(e.to_string().contains("slider value NaN"), "{e}");
    let five_four = Phrase::new(TimeSignature::new(5, 4).unwrap(), 1, vec![c4(0)]);
    let e = engine.vary(&five_four, &request(0.0, 1, 0.0)).unwrap_err();
    assert!(e.to_string().contains("5/4"), "{e}");
}
