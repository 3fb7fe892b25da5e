//! Blend: the endpoints decode to the prompt's own code and to the kept
//! take, for linear and spherical interpolation.

mod steer_support;

use nudgebar_engine::steer::Interpolation;
use nudgebar_engine::{Engine, HoleReport, NoteChoice, PitchMask, VariationRequest};
use steer_support::{lamp_climb, wide_package};

#[test]
fn endpoints_are_the_prompt_decode_and_the_take() {
    let mut engine = Engine::new(wide_package()).unwrap();
    let prompt = lamp_climb();
    let v = engine
        .vary(
            &prompt,
            &VariationRequest {
                offsets: vec![0.8, -0.5],
                takes: 2,
                spread: 1.5,
                ..VariationRequest::default()
            },
        )
        .unwrap();
    let kept = &v.takes[1];

    // The prompt's own code, decoded the same way.
    let prepared = engine.prepare(&prompt).unwrap();
    let code = engine.encode(&prepared).unwrap().mean;
    let own = engine
        .takes_from_codes(
            &prepared,
            &code,
            &NoteChoice::Argmax,
            &PitchMask::default(),
            &mut HoleReport::default(),
        )
        .unwrap()
        .remove(0);
    assert_ne!(
        own.phrase, kept.phrase,
        "the take must differ from the prompt's decode"
    );

    let amounts = [0.0, 0.25, 0.5, 0.75, 1.0];
    for kind in [Interpolation::Linear, Interpolation::Spherical] {
        let b = engine
            .blend(
                &prompt,
                &kept.latent,
                &amounts,
                kind,
                &NoteChoice::Argmax,
                &PitchMask::default(),
            )
            .unwrap();
        assert_eq!(b.steps.len(), 5);
        assert_eq!(b.steps[0].take.phrase, own.phrase, "{kind:?} at 0");
        assert_eq!(b.steps[0].take.latent, code);
        assert_eq!(b.steps[4].take.phrase, kept.phrase, "{kind:?} at 1");
        assert_eq!(b.steps[4].take.latent, kept.latent);
        // In between, the code lies off both ends.
        assert_ne!(b.steps[2].take.latent, code);
        assert_ne!(b.steps[2].take.latent, kept.latent);
    }
}

#[test]
fn a_code_from_another_model_or_prompt_length_is_refused() {
    let mut engine = Engine::new(wide_package()).unwrap();
    let err = engine
        .blend(
            &lamp_climb(),
            &[0.0; 4],
            &[0.5],
            Interpolation::Linear,
            &NoteChoice::Argmax,
            &PitchMask::default(),
        )
        .unwrap_err();
    assert!(
        err.to_string().contains("does not fit this prompt"),
        "{err}"
    );
    let code = vec![0.0; steer_support::LATENT];
    assert!(engine
        .blend(
            &lamp_climb(),
            &code,
            &[1.5],
            Interpolation::Linear,
            &NoteChoice::Argmax,
            &PitchMask::default()
        )
        .is_err());
}
