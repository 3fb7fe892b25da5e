//! Derived axes: on a corpus whose note density is known and spread out,
//! the attribute-vector method recovers the known-weights model's density
//! dimension (tests/src/tiny_model.rs: z0 counts onsets) and steers with
//! it (Spearman ρ ≥ 0.8), starting from a manifest without a density axis.

mod steer_support;

use nudgebar_engine::derive_axes::{derive_axes, DeriveOptions};
use nudgebar_engine::{Engine, ModelPackage};
use nudgebar_music::attributes::Attribute;
use nudgebar_music::{Note, Phrase, TimeSignature};
use nudgebar_tests::{scratch_dir, tiny_model};
use steer_support::Rng;

/// 64 one-measure phrases; phrase i has 1 + (i mod 16) onsets on random
/// steps, each on C4 or C♯4 at random — density spread evenly, pitch choice
/// unrelated to it.
fn corpus() -> Vec<Phrase> {
    let mut rng = Rng(77);
    (0..64)
        .map(|i| {
            let count = 1 + i % 16;
            let mut steps: Vec<usize> = (0..16).collect();
            for k in (1..16).rev() {
                steps.swap(k, rng.below(k + 1));
            }
            let mut steps = steps[..count].to_vec();
            steps.sort_unstable();
            let notes = steps
                .iter()
                .map(|&s| Note::new(60 + rng.below(2) as u8, s as f64 * 0.25, 0.25, 90))
                .collect();
            Phrase::new(TimeSignature::FOUR_FOUR, 1, notes)
        })
        .collect()
}

/// The known-weights model with its density axis removed (one axis must
/// remain: the contour one on dimension 2, which moves nothing).
fn without_density_axis() -> ModelPackage {
    tiny_model::package_with(Default::default(), |m| {
        m["axes"] = serde_json::json!([
            { "attribute": "contour", "label": "Contour", "span": 1.0, "dimension": 2 }
        ]);
    })
    .unwrap()
}

#[test]
fn recovers_a_known_monotone_attribute() {
    let mut engine = Engine::new(without_density_axis()).unwrap();
    assert!(engine
        .axes()
        .iter()
        .all(|a| a.attribute != Attribute::NoteDensity));
    let options = DeriveOptions {
        attributes: vec![Attribute::NoteDensity, Attribute::MeanPitch],
        ..DeriveOptions::default()
    };
    let d = derive_axes(&mut engine, &corpus(), &options).unwrap();
    assert_eq!(d.windows, 64);
    let density = d
        .axes
        .iter()
        .find(|a| a.attribute == Attribute::NoteDensity)
        .expect("a density axis is derived");
    // The direction is (almost) latent dimension 0, pointing up.
    assert!(density.direction[0] > 0.95, "{:?}", density.direction);
    assert_eq!(density.group_size, 16);
    assert!(density.high_mean > density.low_mean + 8.0);
    assert!(
        density.steering.mean_rho >= 0.8,
        "ρ = {}",
        density.steering.mean_rho
    );
    // Mean pitch lives on z1 (C4 minus C♯4 count) in this model: derivable, too.
    let register = d
        .axes
        .iter()
        .find(|a| a.attribute == Attribute::MeanPitch)
        .unwrap();
    assert!(register.direction[1] < -0.9, "{:?}", register.direction);

    // The new manifest keeps the old axis, adds the derived ones with a
    // direction, and loads from disk as a package.
    assert_eq!(d.manifest.axes.len(), 3);
    let spec = d
        .manifest
        .axes
        .iter()
        .find(|a| a.attribute == "note_density")
        .unwrap();
    assert!(spec.direction.is_some() && spec.dimension.is_none());
    let dir = scratch_dir("derive_axes");
    d.package(engine.package()).unwrap().save(&dir).unwrap();
    let reloaded = Engine::new(ModelPackage::load(&dir).unwrap()).unwrap();
    assert_eq!(reloaded.axes().len(), 3);
}

#[test]
fn attributes_the_corpus_does_not_vary_are_skipped_with_a_reason() {
    let mut engine = Engine::new(without_density_axis()).unwrap();
    // Every phrase has four onsets on C4: density and range never change.
    let same: Vec<Phrase> = (0..12)
        .map(|i| {
            let notes = (0..4)
                .map(|k| Note::new(60, ((k * 4 + i % 3) as f64) * 0.25, 0.25, 90))
                .collect();
            Phrase::new(TimeSignature::FOUR_FOUR, 1, notes)
        })
        .collect();
    let options = DeriveOptions {
        attributes: vec![Attribute::NoteDensity, Attribute::PitchRange],
        ..DeriveOptions::default()
    };
    let d = derive_axes(&mut engine, &same, &options).unwrap();
    assert!(d.axes.is_empty());
    assert_eq!(d.skipped.len(), 2);
    assert!(
        d.skipped[0]
            .reason
            .contains("hardly differ in note density"),
        "{}",
        d.skipped[0].reason
    );
    // Too small a corpus.
    let d = derive_axes(&mut engine, &corpus()[..5], &options).unwrap();
    assert!(
        d.skipped[0].reason.contains("at least 8"),
        "{}",
        d.skipped[0].reason
    );
}

#[test]
fn derived_axes_on_the_demo_model_find_its_trained_dimensions() {
    // 400 freshly generated Wrenmouth ferry calls (the trainer's corpus
    // generator, another seed than training used) give directions for the
    // demo model; those replace its regularized axes and are measured.
    let mut engine = Engine::new(nudgebar_demo_model::package()).unwrap();
    let corpus = nudgebar_trainer::corpus::generate(4242, 400);
    let options = DeriveOptions {
        attributes: vec![Attribute::NoteDensity, Attribute::PitchRange],
        ..DeriveOptions::default()
    };
    let d = derive_axes(&mut engine, &corpus, &options).unwrap();
    assert!(d.skipped.is_empty(), "{:?}", d.skipped);
    for a in &d.axes {
        eprintln!(
            "{:?}: span {:.2}, ρ {:.3} per prompt {:.2?}",
            a.attribute, a.span, a.steering.mean_rho, a.steering.per_prompt
        );
        assert!(
            a.steering.mean_rho > 0.0,
            "{:?} steers backwards",
            a.attribute
        );
    }
    // Density steers as well as the trained axis does. (Pitch range, found
    // along the right dimension below, steers these random calls less
    // reliably — ρ ≈ 0.4 when this was written; the report shows it.)
    let density = d
        .axes
        .iter()
        .find(|a| a.attribute == Attribute::NoteDensity)
        .unwrap();
    assert!(
        density.steering.mean_rho >= 0.8,
        "ρ = {}",
        density.steering.mean_rho
    );
    // The derived directions lean on the dimension trained for the attribute.
    let lean = |attr: Attribute, dim: usize| {
        let a = d.axes.iter().find(|a| a.attribute == attr).unwrap();
        let biggest = a
            .direction
            .iter()
            .enumerate()
            .max_by(|x, y| x.1.abs().total_cmp(&y.1.abs()))
            .unwrap()
            .0;
        assert_eq!(biggest, dim, "{attr:?}: {:?}", a.direction);
        // Unit direction, so the component is the cosine with that dimension.
        // (0.85: the retrained demo model, β 0.02, gives 0.898 for density,
        // every other component below 0.26.)
        assert!(a.direction[dim] >= 0.85, "{attr:?}: {:?}", a.direction);
    };
    lean(Attribute::NoteDensity, 0);
    lean(Attribute::PitchRange, 1);
}
