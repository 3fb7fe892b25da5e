//! The model contract: a manifest that disagrees with its graphs (or with
//! itself) is refused with one clear sentence saying what and where.

use nudgebar_engine::{Engine, ModelError, ModelOrigin, ModelPackage};
use nudgebar_tests::tiny_model::{self, Variant};
use serde_json::json;

fn refused(variant: Variant, edit: impl FnOnce(&mut serde_json::Value)) -> ModelError {
    let result = tiny_model::package_with(variant, edit).and_then(Engine::new);
    match result {
        Ok(_) => panic!("the broken package was accepted"),
        Err(e) => e,
    }
}

/// Every message is a single sentence-like line that names the problem.
fn assert_clear(e: &ModelError, must_mention: &[&str]) {
    let text = e.to_string();
    assert!(!text.contains('\n'), "message spans lines: {text}");
    assert!(text.ends_with('.'), "message is not a sentence: {text}");
    for m in must_mention {
        assert!(text.contains(m), "message {text:?} does not mention {m:?}");
    }
}

#[test]
fn the_known_weights_package_loads() {
    let engine = Engine::new(tiny_model::package()).expect("valid package");
    assert_eq!(engine.axes().len(), 2);
    assert_eq!(engine.latent_size(), 4);
}

#[test]
fn manifest_that_is_not_json() {
    let e = ModelPackage::from_parts("{ \"format\": ", vec![], vec![], ModelOrigin::Embedded)
        .unwrap_err();
    assert!(matches!(e, ModelError::ManifestSyntax { .. }));
    assert_clear(&e, &["manifest.json", "line 1"]);
}

#[test]
fn wrong_format_tag() {
    let e = refused(Variant::default(), |m| {
        m["format"] = json!("some.other.thing")
    });
    assert!(matches!(e, ModelError::NotAManifest { .. }));
    assert_clear(&e, &["some.other.thing", "nudgebar.model"]);
}

#[test]
fn newer_manifest_version() {
    let e = refused(Variant::default(), |m| m["version"] = json!(2));
    assert!(matches!(
        e,
        ModelError::UnsupportedVersion { found: Some(2), .. }
    ));
    assert_clear(&e, &["version 2"]);
}

#[test]
fn encoder_input_name_not_in_graph() {
    let e = refused(Variant::default(), |m| {
        m["encoder"]["input"] = json!("notes")
    });
    assert!(matches!(
        e,
        ModelError::TensorNotFound {
            which: "encoder",
            ..
        }
    ));
    assert_clear(&e, &["\"notes\"", "encoder", "grid"]);
}

#[test]
fn mean_output_name_not_in_graph() {
    let e = refused(Variant::default(), |m| m["encoder"]["mean"] = json!("mu"));
    assert!(matches!(
        e,
        ModelError::TensorNotFound {
            which: "encoder",
            kind: "output",
            ..
        }
    ));
    assert_clear(&e, &["\"mu\"", "mean"]);
}

#[test]
fn log_variance_output_name_not_in_graph() {
    let e = refused(Variant::default(), |m| {
        m["encoder"]["log_variance"] = json!("logvar")
    });
    assert_clear(&e, &["\"logvar\"", "log_variance"]);
}

#[test]
fn decoder_output_name_not_in_graph() {
    let e = refused(Variant::default(), |m| {
        m["decoder"]["output"] = json!("probs")
    });
    assert!(matches!(
        e,
        ModelError::TensorNotFound {
            which: "decoder",
            ..
        }
    ));
    assert_clear(&e, &["\"probs\"", "logits"]);
}

#[test]
fn latent_size_disagrees_with_graphs() {
    let e = refused(Variant::default(), |m| m["latent_size"] = json!(5));
    assert!(matches!(e, ModelError::TensorMismatch { .. }));
    assert_clear(&e, &["latent size 5", "mean"]);
}

#[test]
fn pitch_range_disagrees_with_decoder_classes() {
    // Three pitches + hold + rest = 5 classes; the graphs have 4.
    let e = refused(Variant::default(), |m| {
        m["encoding"]["highest_pitch"] = json!(62);
        m["encoding"]["hold_token"] = json!(3);
        m["encoding"]["rest_token"] = json!(4);
    });
    assert!(matches!(
        e,
        ModelError::TensorMismatch {
            which: "encoder",
            ..
        }
    ));
    assert_clear(&e, &["64 values per batch row", "80 values per row"]);
}

#[test]
fn token_indices_declared_but_graph_takes_floats() {
    let e = refused(Variant::default(), |m| {
        m["encoding"]["input"] = json!("indices")
    });
    assert!(matches!(
        e,
        ModelError::TensorMismatch {
            which: "encoder",
            kind: "input",
            ..
        }
    ));
    assert_clear(&e, &["F32", "I64"]);
}

#[test]
fn steps_per_measure_disagrees_with_graphs() {
    let e = refused(Variant::default(), |m| {
        m["grid"]["steps_per_measure"] = json!(12)
    });
    assert_clear(&e, &["12 steps"]);
}

#[test]
fn fixed_batch_dimension() {
    let e = refused(
        Variant {
            fixed_batch: true,
            ..Variant::default()
        },
        |_| {},
    );
    assert!(matches!(e, ModelError::FixedBatch { .. }));
    assert_clear(&e, &["symbolic batch dimension", "[1, 16, 4]"]);
}

#[test]
fn graphs_built_for_another_latent_size() {
    let e = refused(
        Variant {
            latent: Some(8),
            ..Variant::default()
        },
        |_| {},
    );
    assert!(matches!(e, ModelError::TensorMismatch { .. }));
    assert_clear(&e, &["latent size 4"]);
}

#[test]
fn axis_dimension_beyond_latent() {
    let e = refused(Variant::default(), |m| m["axes"][0]["dimension"] = json!(7));
    assert!(matches!(e, ModelError::ManifestValue(_)));
    assert_clear(&e, &["axis 1", "dimension 7", "only 4"]);
}

#[test]
fn axis_for_an_unknown_attribute() {
    let e = refused(Variant::default(), |m| {
        m["axes"][1]["attribute"] = json!("sparkle")
    });
    assert_clear(&e, &["\"sparkle\"", "note_density"]);
}

#[test]
fn axis_with_both_dimension_and_direction() {
    let e = refused(Variant::default(), |m| {
        m["axes"][0]["direction"] = json!([1.0, 0.0, 0.0, 0.0])
    });
    assert_clear(&e, &["exactly one of"]);
}

#[test]
fn direction_of_wrong_length() {
    let e = refused(Variant::default(), |m| {
        m["axes"][1] = json!({ "attribute": "contour", "span": 1.0, "direction": [0.0, 1.0] });
    });
    assert_clear(&e, &["length 2", "latent_size is 4"]);
}

#[test]
fn hold_and_rest_tokens_clash() {
    let e = refused(Variant::default(), |m| {
        m["encoding"]["rest_token"] = json!(2)
    });
    assert_clear(&e, &["both 2"]);
}

#[test]
fn non_positive_span() {
    let e = refused(Variant::default(), |m| m["axes"][0]["span"] = json!(0.0));
    assert_clear(&e, &["span 0"]);
}

#[test]
fn nan_weights_are_caught_at_load() {
    let e = refused(
        Variant {
            nan_bias: true,
            ..Variant::default()
        },
        |_| {},
    );
    assert_eq!(e, ModelError::NonFiniteOutput { which: "decoder" });
    assert_clear(&e, &["decoder", "NaN"]);
}

#[test]
fn encoder_bytes_that_are_not_onnx() {
    let m = tiny_model::manifest_json().to_string();
    let e = ModelPackage::from_parts(
        &m,
        b"definitely not protobuf \xff\xff\xff".to_vec(),
        tiny_model::decoder_bytes(Variant::default()),
        ModelOrigin::Embedded,
    )
    .and_then(Engine::new)
    .err()
    .expect("garbage refused");
    assert!(
        matches!(
            e,
            ModelError::OnnxUnreadable {
                which: "encoder",
                ..
            }
        ),
        "{e:?}"
    );
    assert_clear(&e, &["encoder.onnx"]);
}

#[test]
fn missing_decoder_file_in_a_folder() {
    let dir = nudgebar_tests::scratch_dir("contract-missing-decoder");
    tiny_model::package().save(&dir).unwrap();
    std::fs::remove_file(dir.join("decoder.onnx")).unwrap();
    let e = ModelPackage::load(&dir).unwrap_err();
    assert!(matches!(e, ModelError::MissingFile { .. }));
    assert_clear(&e, &["decoder.onnx"]);
}

#[test]
fn a_file_instead_of_a_folder() {
    let dir = nudgebar_tests::scratch_dir("contract-file-not-folder");
    let file = dir.join("manifest.json");
    std::fs::write(&file, tiny_model::manifest_json().to_string()).unwrap();
    let e = ModelPackage::load(&file).unwrap_err();
    assert_clear(&e, &["not a folder"]);
}

#[test]
fn a_saved_package_loads_back_identically() {
    let dir = nudgebar_tests::scratch_dir("contract-roundtrip");
    let original = tiny_model::package();
    original.save(&dir).unwrap();
    let loaded = ModelPackage::load(&dir).unwrap();
    assert_eq!(loaded.manifest, original.manifest);
    assert_eq!(loaded.encoder, original.encoder);
    Engine::new(loaded).expect("loads");
}
