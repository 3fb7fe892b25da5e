//! Target mode on the known-weights model (tests/src/tiny_model.rs), whose
//! decode has exactly ⌈z0⌉ notes (clamped to 0..16) — so which targets are
//! reachable, and where, is known in closed form.

use nudgebar_engine::steer::{Outcome, Target, DEFAULT_BUDGET};
use nudgebar_engine::{Engine, EngineError, VariationRequest};
use nudgebar_music::attributes::Attribute;
use nudgebar_music::{Note, Phrase, TimeSignature};
use nudgebar_tests::tiny_model;

/// Three C4 onsets: z0 = 2.5; the density axis moves z0 by 4 per slider unit.
fn prompt() -> Phrase {
    let n = |s: usize| Note::new(60, s as f64 * 0.25, 0.25, 90);
    Phrase::new(TimeSignature::FOUR_FOUR, 1, vec![n(0), n(4), n(8)])
}

fn density(value: f64, tolerance: f64) -> Target {
    Target {
        attribute: Attribute::NoteDensity,
        value,
        tolerance,
    }
}

#[test]
fn a_reachable_target_is_hit_within_the_budget() {
    let mut engine = Engine::new(tiny_model::package()).unwrap();
    for goal in [1.0, 5.0, 7.0, 11.0, 16.0] {
        let r = engine
            .aim(
                &prompt(),
                &density(goal, 0.0),
                &VariationRequest::default(),
                DEFAULT_BUDGET,
            )
            .unwrap();
        assert_eq!(r.outcome, Outcome::Reached, "{}", r.summary());
        assert_eq!(r.reached, Some(goal));
        assert_eq!(r.distance, Some(0.0));
        assert_eq!(r.take.phrase.notes.len(), goal as usize);
        assert!(r.decodes <= DEFAULT_BUDGET);
        // The take is the decode at the reported slider: z0 = 2.5 + 4·slider,
        // and ⌈z0 + 0.03⌉ notes (closed form of the known-weights decoder).
        let z0 = 2.5 + 4.0 * r.slider;
        assert!((r.take.latent[0] - z0).abs() < 1e-5);
        assert_eq!(tiny_model::expected_steps(z0, 3.0).len(), goal as usize);
    }
}

#[test]
fn unreachable_targets_report_the_closest_take() {
    let mut engine = Engine::new(tiny_model::package()).unwrap();
    let req = VariationRequest::default();
    // At most 16 steps can sound.
    let r = engine
        .aim(&prompt(), &density(20.0, 0.5), &req, 24)
        .unwrap();
    assert_eq!(r.outcome, Outcome::OutOfReach);
    assert_eq!(r.reached, Some(16.0));
    assert_eq!(r.distance, Some(4.0));
    assert!(
        r.summary().contains("cannot take note density to 20"),
        "{}",
        r.summary()
    );

    // Counts are whole: 7.5 lies in the jump between 7 and 8.
    let r = engine.aim(&prompt(), &density(7.5, 0.1), &req, 40).unwrap();
    assert_eq!(r.outcome, Outcome::Gap, "{}", r.summary());
    assert_eq!(r.distance, Some(0.5));

    // A budget of two decodes cannot walk from 3 notes to 12.
    let r = engine.aim(&prompt(), &density(12.0, 0.0), &req, 2).unwrap();
    assert_eq!(r.outcome, Outcome::BudgetSpent);
    assert_eq!(r.decodes, 2);

    // The contour axis (latent dimension 2) changes nothing in this model.
    let contour = Target {
        attribute: Attribute::Contour,
        value: 6.0,
        tolerance: 0.5,
    };
    let r = engine
        .aim(&prompt(), &contour, &req, DEFAULT_BUDGET)
        .unwrap();
    assert_eq!(r.outcome, Outcome::OutOfReach);
    assert_eq!(r.reached, Some(0.0));
}

#[test]
fn a_target_without_an_axis_is_refused() {
    let mut engine = Engine::new(tiny_model::package()).unwrap();
    let t = Target {
        attribute: Attribute::MeanPitch,
        value: 60.0,
        tolerance: 1.0,
    };
    match engine.aim(&prompt(), &t, &VariationRequest::default(), 8) {
        Err(EngineError::Setting(m)) => assert!(m.contains("no axis for mean pitch"), "{m}"),
        other => panic!("expected a refusal, got {other:?}"),
    }
    assert!(engine
        .aim(
            &prompt(),
            &density(5.0, 0.0),
            &VariationRequest::default(),
            1
        )
        .is_err());
}

#[test]
fn reachable_targets_on_the_demo_model() {
    // Every Wrenmouth demo prompt, asked for 3 more notes and for a pitch
    // range 5 semitones wider (tolerance 1, budget 16 decodes): the demo
    // model's regularized axes should get there in nearly every case.
    let mut engine = Engine::new(nudgebar_demo_model::package()).unwrap();
    let (mut asked, mut reached, mut decodes) = (0, 0, 0);
    for prompt in nudgebar_music::demo_prompts::all() {
        let now = nudgebar_music::attributes::Readout::of(&prompt.phrase);
        for (attribute, delta) in [(Attribute::NoteDensity, 3.0), (Attribute::PitchRange, 5.0)] {
            let goal = (now.get(attribute).unwrap() + delta).min(14.0);
            let t = Target {
                attribute,
                value: goal,
                tolerance: 1.0,
            };
            let r = engine
                .aim(
                    &prompt.phrase,
                    &t,
                    &VariationRequest::default(),
                    DEFAULT_BUDGET,
                )
                .unwrap();
            assert!(r.decodes <= DEFAULT_BUDGET);
            asked += 1;
            decodes += r.decodes;
            if r.outcome == Outcome::Reached {
                reached += 1;
                assert!(r.distance.unwrap() <= 1.0);
                // The reported value is what the returned take measures.
                assert_eq!(r.take.attributes.get(attribute), r.reached);
            } else {
                assert!(r.distance.unwrap() > 1.0, "{}", r.summary());
            }
        }
    }
    eprintln!("demo model: {reached} of {asked} targets reached, {decodes} decodes in all");
    assert!(
        reached * 10 >= asked * 8,
        "only {reached} of {asked} targets reached"
    );
}
