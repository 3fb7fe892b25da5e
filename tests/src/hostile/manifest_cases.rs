//! Hostile manifests: wrong versions, schema and values, broken JSON, and
//! absurd declared (or on-disk) sizes.

use super::edit::*;
use super::{Case, Category, Input};
use nudgebar_engine::package::{MAX_MANIFEST_BYTES, MAX_ONNX_BYTES};
use serde_json::json;
use std::path::Path;

pub(super) fn manifests() -> Vec<Case> {
    use Category::Manifest as C;
    vec![
        Case {
            name: "manifest version 0",
            category: C,
            input: edited_manifest(|m| m["version"] = json!(0)),
            expect: refused("UnsupportedVersion", &["version 0", "version 1"]),
        },
        Case {
            name: "manifest without a version",
            category: C,
            input: edited_manifest(|m| {
                m.as_object_mut().unwrap().remove("version");
            }),
            expect: refused("UnsupportedVersion", &["(missing)"]),
        },
        Case {
            name: "version written as text",
            category: C,
            input: edited_manifest(|m| m["version"] = json!("1")),
            expect: refused("UnsupportedVersion", &["manifest version"]),
        },
        Case {
            name: "a JSON array instead of an object",
            category: C,
            input: manifest_text("[1, 2, 3]".into()),
            expect: refused("NotAManifest", &["nudgebar.model"]),
        },
        Case {
            name: "unknown encoding kind",
            category: C,
            input: edited_manifest(|m| m["encoding"]["kind"] = json!("waveform")),
            expect: refused("ManifestField", &["waveform"]),
        },
        Case {
            name: "misspelt field",
            category: C,
            input: edited_manifest(|m| {
                let v = m.as_object_mut().unwrap().remove("latent_size").unwrap();
                m["latent_sise"] = v;
            }),
            expect: refused("ManifestField", &["latent_sise"]),
        },
        Case {
            name: "pitch beyond MIDI's 127",
            category: C,
            input: edited_manifest(|m| m["encoding"]["highest_pitch"] = json!(200)),
            expect: refused("ManifestValue", &["200", "0..=127"]),
        },
        Case {
            name: "encoder file outside the package folder",
            category: C,
            input: edited_manifest(|m| m["encoder"]["file"] = json!("../../encoder.onnx")),
            expect: refused("ManifestValue", &["../../encoder.onnx", "plain file name"]),
        },
        Case {
            name: "time signature 4/5",
            category: C,
            input: edited_manifest(|m| m["grid"]["time_signature"]["denominator"] = json!(5)),
            expect: refused("ManifestValue", &["time signature", "4/5"]),
        },
        Case {
            name: "zero direction vector",
            category: C,
            input: edited_manifest(|m| {
                m["axes"][1] = json!({ "attribute": "contour", "span": 1.0, "direction": [0.0, 0.0, 0.0, 0.0] })
            }),
            expect: refused("ManifestValue", &["axis 2", "zero"]),
        },
        Case {
            // Found by the manifest fuzz target: a number too large for f32
            // parsed as infinity, and the manifest could not be saved back.
            name: "hole rate too large for f32",
            category: C,
            input: edited_manifest(|m| m["axes"][0]["hole_rate"] = json!([0.0, 4.4e66])),
            expect: refused("ManifestValue", &["axis 1", "hole_rate", "0 to 1"]),
        },
        Case {
            name: "piano-roll threshold of 1.5",
            category: C,
            input: edited_manifest(
                |m| m["encoding"] = json!({ "kind": "piano_roll", "lowest_pitch": 60, "highest_pitch": 63, "threshold": 1.5, "cells": "onsets" }),
            ),
            expect: refused("ManifestValue", &["threshold", "1.5"]),
        },
        Case {
            name: "manifest starting with a byte-order mark",
            category: C,
            input: manifest_text(format!("\u{feff}{}", manifest())),
            expect: refused("ManifestSyntax", &["manifest.json", "line 1"]),
        },
        Case {
            name: "JSON nested 100 000 deep",
            category: C,
            input: manifest_text(format!(
                "{{\"format\": {}{}}}",
                "[".repeat(100_000),
                "]".repeat(100_000)
            )),
            expect: refused("ManifestSyntax", &["manifest.json", "recursion limit"]),
        },
    ]
}

pub(super) fn absurd_sizes(scratch: &Path) -> Vec<Case> {
    use Category::AbsurdSizes as C;
    let sparse_onnx = package_folder(scratch, "sparse-encoder");
    std::fs::OpenOptions::new()
        .write(true)
        .open(sparse_onnx.join("encoder.onnx"))
        .and_then(|f| f.set_len(MAX_ONNX_BYTES + 1))
        .expect("make a sparse encoder file");
    let sparse_manifest = package_folder(scratch, "sparse-manifest");
    std::fs::OpenOptions::new()
        .write(true)
        .open(sparse_manifest.join("manifest.json"))
        .and_then(|f| f.set_len(MAX_MANIFEST_BYTES * 64))
        .expect("make a sparse manifest");
    vec![
        Case {
            name: "latent_size of a billion",
            category: C,
            input: edited_manifest(|m| m["latent_size"] = json!(1_000_000_000u64)),
            expect: refused("ManifestValue", &["latent_size is 1000000000"]),
        },
        Case {
            name: "a million steps per measure",
            category: C,
            input: edited_manifest(|m| m["grid"]["steps_per_measure"] = json!(1_000_000)),
            expect: refused("ManifestValue", &["1000000 steps per measure"]),
        },
        Case {
            name: "steps per measure × measures overflows",
            category: C,
            input: edited_manifest(|m| {
                m["grid"]["steps_per_measure"] = json!(u64::MAX / 2);
                m["grid"]["measures"] = json!(4);
            }),
            expect: refused("ManifestValue", &["steps per measure over 4 measures"]),
        },
        Case {
            name: "300 measures (beyond a byte)",
            category: C,
            input: edited_manifest(|m| m["grid"]["measures"] = json!(300)),
            expect: refused("ManifestField", &["300"]),
        },
        Case {
            name: "a direction vector with 10^5 entries",
            category: C,
            input: edited_manifest(|m| {
                m["axes"][1] =
                    json!({ "attribute": "contour", "span": 1.0, "direction": vec![0.5; 100_000] })
            }),
            expect: refused("ManifestValue", &["length 100000", "latent_size is 4"]),
        },
        Case {
            name: "initializer claiming 2^40 values",
            category: C,
            input: edited_encoder(|m| initializer(m, "w").dims = vec![1 << 20, 1 << 20]),
            expect: refused("OnnxUnreadable", &["encoder.onnx"]),
        },
        Case {
            name: "initializer dims whose product overflows",
            category: C,
            input: edited_encoder(|m| initializer(m, "w").dims = vec![1 << 40, 1 << 40, 1 << 40]),
            expect: refused("OnnxUnreadable", &["encoder.onnx"]),
        },
        Case {
            name: "encoder file one byte over the 256 MiB cap (sparse)",
            category: C,
            input: Input::Folder(sparse_onnx),
            expect: refused(
                "FileTooLarge",
                &["encoder.onnx", "268435457 bytes", "limit"],
            ),
        },
        Case {
            name: "a 64 MiB manifest (sparse)",
            category: C,
            input: Input::Folder(sparse_manifest),
            expect: refused("FileTooLarge", &["manifest.json", "limit"]),
        },
    ]
}
