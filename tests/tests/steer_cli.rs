//! The steering subcommands of `nudge`, run as a user would on the demo
//! model and the Wrenmouth prompts: `aim` (target mode; its take read back
//! with mido and pretty_midi from PyPI), `vary --key --lock`, `report`
//! (with a package carrying hole rates) and `derive-axes`.

use nudgebar_engine::steer::KeyScale;
use nudgebar_engine::ModelPackage;
use nudgebar_tests::cli::run;
use nudgebar_tests::{pyref, scratch_dir};

fn ok_json(args: &[&str]) -> serde_json::Value {
    let o = run(args);
    assert!(
        o.status.success(),
        "nudge {args:?} failed: {}",
        String::from_utf8_lossy(&o.stderr)
    );
    serde_json::from_slice(&o.stdout).expect("--json prints JSON")
}

const PROMPT: &str = "presets/prompts/lamp-climb.mid";

#[test]
fn aim_writes_a_take_that_measures_the_target() {
    let dir = scratch_dir("steer_cli_aim");
    let out = dir.join("aimed.mid").display().to_string();
    let v = ok_json(&[
        "aim",
        PROMPT,
        "--target",
        "note_density=10",
        "--tolerance",
        "0",
        "--out",
        &out,
        "--json",
    ]);
    let r = &v["result"];
    assert_eq!(r["outcome"], "reached", "{r}");
    assert_eq!(r["reached"], 10.0);
    assert!(r["decodes"].as_u64().unwrap() <= 16);
    // Independent readers count the notes in the written file.
    let read = pyref::run_json("smf_read.py", &[&out]);
    assert_eq!(read["mido"].as_array().unwrap().len(), 10);
    assert_eq!(read["pretty_midi"].as_array().unwrap().len(), 10);

    let o = run(&["aim", PROMPT, "--target", "mean_pitch=60", "--out", &out]);
    assert!(!o.status.success());
    let err = String::from_utf8_lossy(&o.stderr);
    assert!(
        err.contains("no axis for mean pitch") && err.lines().count() == 1,
        "{err}"
    );
}

#[test]
fn vary_with_key_and_lock_keeps_both() {
    let dir = scratch_dir("steer_cli_vary");
    let out = dir.display().to_string();
    let v = ok_json(&[
        "vary",
        PROMPT,
        "--key",
        "D dorian",
        "--lock",
        "pitch_range=3",
        "--slide",
        "note_density=0.5",
        "--takes",
        "4",
        "--spread",
        "1",
        "--out",
        &out,
        "--json",
    ]);
    let key = KeyScale::parse("D dorian").unwrap();
    let var = &v["variation"];
    let range = var["prompt_attributes"]["pitch_range"].as_f64().unwrap();
    let takes = var["takes"].as_array().unwrap();
    assert!(!takes.is_empty());
    for t in takes {
        for n in t["phrase"]["notes"].as_array().unwrap() {
            assert!(key.contains(n["pitch"].as_u64().unwrap() as u8), "{n}");
        }
        assert!((t["attributes"]["pitch_range"].as_f64().unwrap() - range).abs() <= 3.0);
    }
    let o = run(&["vary", PROMPT, "--key", "D bebop", "--out", &out]);
    assert!(!o.status.success());
    assert!(String::from_utf8_lossy(&o.stderr).contains("not a scale Nudgebar knows"));
}

#[test]
fn report_writes_figures_page_and_a_package_with_hole_rates() {
    let dir = scratch_dir("steer_cli_report");
    let (out, pkg) = (dir.join("report"), dir.join("package"));
    let o = run(&[
        "report",
        "--out",
        &out.display().to_string(),
        "--package-out",
        &pkg.display().to_string(),
        "--points",
        "7",
    ]);
    assert!(o.status.success(), "{}", String::from_utf8_lossy(&o.stderr));
    let report: serde_json::Value =
        serde_json::from_str(&std::fs::read_to_string(out.join("report.json")).unwrap()).unwrap();
    let page = std::fs::read_to_string(out.join("report.html")).unwrap();
    assert!(page.starts_with("<!DOCTYPE html>") && page.contains("<svg"));
    let axes = report["axes"].as_array().unwrap();
    // The loaded package carries each axis's measured hole rate, slider point by point.
    let package = ModelPackage::load(&pkg).unwrap();
    for (spec, figures) in package.manifest.axes.iter().zip(axes) {
        let want: Vec<f32> = figures["hole_rate"]
            .as_array()
            .unwrap()
            .iter()
            .map(|h| h.as_f64().unwrap() as f32)
            .collect();
        assert_eq!(want.len(), 7);
        assert_eq!(spec.hole_rate, want, "{}", spec.attribute);
    }
}

#[test]
fn derive_axes_needs_a_corpus_and_says_so() {
    let dir = scratch_dir("steer_cli_derive");
    let out = dir.join("derived").display().to_string();
    // Five prompts are fewer than the 8 phrases an axis needs.
    let o = run(&["derive-axes", "presets/prompts", "--out", &out]);
    assert!(!o.status.success());
    let err = String::from_utf8_lossy(&o.stderr);
    assert!(
        err.contains("no axis could be derived") && err.contains("at least 8"),
        "{err}"
    );
    let empty = dir.join("empty");
    std::fs::create_dir_all(&empty).unwrap();
    let o = run(&["derive-axes", &empty.display().to_string(), "--out", &out]);
    assert!(String::from_utf8_lossy(&o.stderr).contains("no readable .mid files"));
}

#[test]
fn blend_makes_in_between_takes_from_vary_json() {
    let dir = scratch_dir("steer_cli_blend");
    let takes = dir.join("takes").display().to_string();
    let v = ok_json(&[
        "vary",
        PROMPT,
        "--slide",
        "note_density=0.8",
        "--takes",
        "2",
        "--out",
        &takes,
        "--json",
    ]);
    let json = dir.join("vary.json");
    std::fs::write(&json, v.to_string()).unwrap();
    let (json, out) = (
        json.display().to_string(),
        dir.join("blend").display().to_string(),
    );
    let o = run(&[
        "blend",
        PROMPT,
        "--from",
        &json,
        "--take",
        "2",
        "--steps",
        "3",
        "--spherical",
        "--out",
        &out,
    ]);
    assert!(o.status.success(), "{}", String::from_utf8_lossy(&o.stderr));
    for i in 1..=3 {
        let f = dir
            .join(format!("blend/blend-{i:02}.mid"))
            .display()
            .to_string();
        let read = pyref::run_json("smf_read.py", &[&f]);
        assert!(
            !read["mido"].as_array().unwrap().is_empty(),
            "blend {i} is silent"
        );
    }
    let o = run(&[
        "blend", PROMPT, "--from", &json, "--take", "3", "--out", &out,
    ]);
    assert!(String::from_utf8_lossy(&o.stderr).contains("holds takes 1 to 2"));
}
