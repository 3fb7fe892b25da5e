//! The offline command `nudge`, run as a user would: vary the demo prompts
//! with the embedded demo model, read the written takes back with mido and
//! pretty_midi (PyPI, independent readers), and check that bad input gives
//! one clear line and a non-zero exit, never a panic.

use nudgebar_tests::cli::run;
use nudgebar_tests::{pyref, scratch_dir, workspace_root};
use std::path::Path;

fn prompt(name: &str) -> String {
    workspace_root()
        .join("presets/prompts")
        .join(name)
        .display()
        .to_string()
}

fn vary_json(prompt_name: &str, out: &Path, extra: &[&str]) -> serde_json::Value {
    let out_s = out.display().to_string();
    let p = prompt(prompt_name);
    let mut args = vec!["vary", p.as_str(), "--out", out_s.as_str(), "--json"];
    args.extend_from_slice(extra);
    let o = run(&args);
    assert!(
        o.status.success(),
        "nudge vary failed: {}",
        String::from_utf8_lossy(&o.stderr)
    );
    serde_json::from_slice(&o.stdout).expect("--json prints JSON")
}

#[test]
fn vary_writes_takes_that_independent_readers_agree_with() {
    let out = scratch_dir("cli-vary-readback");
    let v = vary_json(
        "lamp-climb.mid",
        &out,
        &["--takes", "4", "--slide", "note_density=0.7", "--seed", "5"],
    );
    let takes = v["variation"]["takes"].as_array().unwrap();
    assert!(!takes.is_empty() && takes.len() <= 4);
    let files = v["files"].as_array().unwrap();
    assert_eq!(files.len(), takes.len());
    // Takes keep the prompt's tempo.
    let prompt_bytes = std::fs::read(prompt("lamp-climb.mid")).unwrap();
    let tempo = nudgebar_music::midi_file::read_smf(&prompt_bytes)
        .unwrap()
        .tempo_us_per_quarter;
    let seconds_per_beat = tempo as f64 / 1e6;
    for (take, file) in takes.iter().zip(files) {
        let read = pyref::run_json("smf_read.py", &[file.as_str().unwrap()]);
        let mut want: Vec<(u64, f64, f64)> = take["phrase"]["notes"]
            .as_array()
            .unwrap()
            .iter()
            .map(|n| {
                let onset = n["onset"].as_f64().unwrap();
                let end = onset + n["duration"].as_f64().unwrap();
                (
                    n["pitch"].as_u64().unwrap(),
                    onset * seconds_per_beat,
                    end * seconds_per_beat,
                )
            })
            .collect();
        want.sort_by(|a, b| a.1.total_cmp(&b.1).then(a.0.cmp(&b.0)));
        for reader in ["mido", "pretty_midi"] {
            let got: Vec<(u64, f64, f64)> = read[reader]
                .as_array()
                .unwrap()
                .iter()
                .map(|n| {
                    (
                        n["pitch"].as_u64().unwrap(),
                        n["start"].as_f64().unwrap(),
                        n["end"].as_f64().unwrap(),
                    )
                })
                .collect();
            assert_eq!(
                got.len(),
                want.len(),
                "{reader} reads a different number of notes in {file}"
            );
            for (g, w) in got.iter().zip(&want) {
                assert_eq!(g.0, w.0, "{reader}: pitch");
                assert!(
                    (g.1 - w.1).abs() < 1e-6 && (g.2 - w.2).abs() < 1e-6,
                    "{reader}: {g:?} vs {w:?}"
                );
            }
        }
    }
}

#[test]
fn the_same_seed_gives_the_same_files_and_another_seed_does_not() {
    let read_all = |dir: &Path| -> Vec<Vec<u8>> {
        let mut files: Vec<_> = std::fs::read_dir(dir)
            .unwrap()
            .map(|e| e.unwrap().path())
            .collect();
        files.sort();
        files.iter().map(|f| std::fs::read(f).unwrap()).collect()
    };
    let (a, b, c) = (
        scratch_dir("cli-seed-a"),
        scratch_dir("cli-seed-b"),
        scratch_dir("cli-seed-c"),
    );
    vary_json("slack-tide.mid", &a, &["--seed", "11", "--spread", "0.8"]);
    vary_json("slack-tide.mid", &b, &["--seed", "11", "--spread", "0.8"]);
    vary_json("slack-tide.mid", &c, &["--seed", "12", "--spread", "0.8"]);
    assert_eq!(read_all(&a), read_all(&b));
    assert_ne!(read_all(&a), read_all(&c));
}

#[test]
fn the_density_slider_moves_measured_density_on_every_demo_prompt() {
    for name in [
        "slack-tide.mid",
        "gull-chatter.mid",
        "lamp-climb.mid",
        "lock-keeper.mid",
        "wide-estuary.mid",
    ] {
        let mean_density = |slide: &str| -> f64 {
            let out = scratch_dir("cli-density");
            let v = vary_json(
                name,
                &out,
                &["--slide", slide, "--takes", "4", "--spread", "0.2"],
            );
            let takes = v["variation"]["takes"].as_array().unwrap();
            takes
                .iter()
                .map(|t| t["attributes"]["note_density"].as_f64().unwrap())
                .sum::<f64>()
                / takes.len() as f64
        };
        let (low, high) = (
            mean_density("note_density=-1"),
            mean_density("note_density=1"),
        );
        assert!(
            high > low + 2.0,
            "{name}: density {low} at -1 vs {high} at +1"
        );
    }
}

#[test]
fn presets_load_and_flags_override_them() {
    let out = scratch_dir("cli-preset");
    let preset = workspace_root()
        .join("presets/fog-bell.json")
        .display()
        .to_string();
    let v = vary_json(
        "gull-chatter.mid",
        &out,
        &["--preset", &preset, "--takes", "2"],
    );
    assert_eq!(v["request"]["takes"], 2);
    let offsets = v["request"]["offsets"].as_array().unwrap();
    assert!(
        (offsets[0].as_f64().unwrap() + 0.6).abs() < 1e-6,
        "fog bell lowers density by 0.6: {offsets:?}"
    );
}

#[test]
fn inspect_prints_the_demo_contract() {
    let o = run(&["inspect", "--json"]);
    assert!(o.status.success());
    let v: serde_json::Value = serde_json::from_slice(&o.stdout).unwrap();
    assert_eq!(v["manifest"]["latent_size"], 32);
    let axes: Vec<&str> = v["manifest"]["axes"]
        .as_array()
        .unwrap()
        .iter()
        .map(|a| a["attribute"].as_str().unwrap())
        .collect();
    assert_eq!(
        axes,
        [
            "note_density",
            "pitch_range",
            "rhythmic_complexity",
            "contour"
        ]
    );
    let text = String::from_utf8(run(&["inspect"]).stdout).unwrap();
    assert!(
        text.contains("latent size 32") && text.contains("Density"),
        "{text}"
    );
}

#[test]
fn bad_input_gives_one_line_and_a_non_zero_exit() {
    let dir = scratch_dir("cli-bad-input");
    let garbage = dir.join("garbage.mid");
    std::fs::write(&garbage, b"MThd this is not really midi").unwrap();
    let not_a_model = dir.join("empty-model");
    std::fs::create_dir_all(&not_a_model).unwrap();
    let g = garbage.display().to_string();
    let m = not_a_model.display().to_string();
    let lamp = prompt("lamp-climb.mid");
    let cases: Vec<(Vec<&str>, &str)> = vec![
        (vec!["vary", "/no/such/file.mid"], "cannot read the prompt"),
        (vec!["vary", g.as_str()], "garbage.mid"),
        (
            vec!["vary", lamp.as_str(), "--slide", "density"],
            "ATTRIBUTE=VALUE",
        ),
        (
            vec!["vary", lamp.as_str(), "--slide", "sparkle=1"],
            "not an attribute",
        ),
        (
            vec!["vary", lamp.as_str(), "--slide", "mean_pitch=1"],
            "no axis for mean_pitch",
        ),
        (vec!["vary", lamp.as_str(), "--takes", "0"], "1 to 16 takes"),
        (
            vec!["vary", lamp.as_str(), "--model", m.as_str()],
            "manifest.json",
        ),
        (vec!["inspect", m.as_str()], "manifest.json"),
    ];
    for (args, says) in cases {
        let o = run(&args);
        let err = String::from_utf8_lossy(&o.stderr);
        assert_eq!(o.status.code(), Some(1), "{args:?}: {err}");
        assert!(
            !err.contains("panicked") && !err.contains("RUST_BACKTRACE"),
            "{args:?} panicked: {err}"
        );
        assert_eq!(
            err.trim_end().lines().count(),
            1,
            "{args:?}: not one line: {err}"
        );
        assert!(
            err.contains(says),
            "{args:?}: {err:?} does not say {says:?}"
        );
    }
}
