//! Locks: every returned take keeps the locked attributes within tolerance;
//! rejections are counted; impossible locks say so.

mod steer_support;

use nudgebar_engine::steer::{Lock, MAX_LOCK_ROUNDS};
use nudgebar_engine::{Engine, EngineError, VariationRequest};
use nudgebar_music::attributes::Attribute;
use nudgebar_music::demo_prompts;
use nudgebar_tests::tiny_model;
use steer_support::bar;

#[test]
fn every_returned_take_keeps_its_locks() {
    // The demo model, on every Wrenmouth demo prompt: widen the takes'
    // wander so some break the locks, then lock range and register.
    let mut engine = Engine::new(nudgebar_demo_model::package()).unwrap();
    let locks = [
        Lock {
            attribute: Attribute::PitchRange,
            tolerance: 2.0,
        },
        Lock {
            attribute: Attribute::MeanPitch,
            tolerance: 2.0,
        },
    ];
    let request = VariationRequest {
        offsets: vec![0.5, 0.0, 0.0, 0.0],
        takes: 6,
        spread: 1.5,
        seed: 11,
        ..VariationRequest::default()
    };
    let (mut rejected, mut kept, mut broken) = (0, 0, 0);
    for prompt in demo_prompts::all() {
        let plain = engine.vary(&prompt.phrase, &request).unwrap();
        broken += plain
            .takes
            .iter()
            .filter(|t| {
                !locks
                    .iter()
                    .all(|l| l.holds(&plain.prompt_attributes, &t.attributes))
            })
            .count();
        let locked = engine
            .vary_locked(&prompt.phrase, &request, &locks)
            .unwrap();
        let v = &locked.variation;
        assert!(locked.rounds <= MAX_LOCK_ROUNDS);
        assert_eq!(v.takes.len() + locked.missing, 6);
        assert_eq!(locked.missing > 0, locked.shortfall().is_some());
        for t in &v.takes {
            for l in &locks {
                let (p, x) = (
                    v.prompt_attributes.get(l.attribute).unwrap(),
                    t.attributes.get(l.attribute).unwrap(),
                );
                assert!(
                    (x - p).abs() <= l.tolerance,
                    "{}: {:?} {p} → {x}",
                    prompt.name,
                    l.attribute
                );
            }
        }
        rejected += locked.rejected;
        kept += v.takes.len();
        assert_eq!(
            locked,
            engine
                .vary_locked(&prompt.phrase, &request, &locks)
                .unwrap()
        );
    }
    // Without locks some takes break them, so the locks had work to do; and
    // most takes were still found.
    assert!(
        broken > 0 && rejected > 0,
        "broken {broken}, rejected {rejected}"
    );
    let asked = 6 * demo_prompts::all().len();
    assert!(
        kept * 2 >= asked,
        "only {kept} of {asked} takes kept the locks"
    );
}

#[test]
fn an_impossible_lock_returns_no_take_and_says_why() {
    // The known-weights model puts every note of a take on one pitch
    // (tests/src/tiny_model.rs), so no take can keep this prompt's range of 1.
    let mut engine = Engine::new(tiny_model::package()).unwrap();
    let prompt = bar(&[(60, 0, 1), (61, 4, 1), (60, 8, 1)]);
    let lock = Lock {
        attribute: Attribute::PitchRange,
        tolerance: 0.5,
    };
    let r = VariationRequest {
        offsets: vec![0.2, 0.0],
        takes: 3,
        spread: 0.5,
        ..VariationRequest::default()
    };
    let locked = engine.vary_locked(&prompt, &r, &[lock]).unwrap();
    assert!(locked.variation.takes.is_empty());
    assert_eq!(locked.missing, 3);
    assert_eq!(locked.rounds, MAX_LOCK_ROUNDS);
    assert!(locked.rejected >= MAX_LOCK_ROUNDS);
    let why = locked.shortfall().unwrap();
    assert!(
        why.contains("Only 0 of 3") && why.contains("pitch range"),
        "{why}"
    );
}

#[test]
fn locking_the_attribute_a_slider_moves_is_refused() {
    let mut engine = Engine::new(tiny_model::package()).unwrap();
    let prompt = bar(&[(60, 0, 1), (60, 4, 1)]);
    let lock = Lock {
        attribute: Attribute::NoteDensity,
        tolerance: 1.0,
    };
    let r = VariationRequest {
        offsets: vec![0.5, 0.0],
        ..VariationRequest::default()
    };
    match engine.vary_locked(&prompt, &r, &[lock]) {
        Err(EngineError::Setting(m)) => assert!(m.contains("its slider is at 0.5"), "{m}"),
        other => panic!("expected a refusal, got {other:?}"),
    }
    let bad = Lock {
        attribute: Attribute::Contour,
        tolerance: f64::NAN,
    };
    assert!(engine
        .vary_locked(&prompt, &VariationRequest::default(), &[bad])
        .is_err());
}
