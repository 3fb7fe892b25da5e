//! Projects saved by every released Nudgebar still open whole.
//!
//! `tests/fixtures/state/` holds one state blob per released session
//! version (`session-v<N>.json`: the JSON nice-plug wrote after its 8-byte
//! length prefix, exactly as the host stored it). Each is loaded into a
//! fresh instance of this build, which must keep every kept take note for
//! note, the prompt, and every parameter that still exists; saving it
//! again writes this build's version, and save → load → save is then
//! byte-identical. When a release changes the session format, add its
//! fixture with the ignored test at the bottom (and keep the old ones):
//! that is the migration test.

mod plugin_support;

use nudgebar_music::{Phrase, TimeSignature};
use nudgebar_tests::host::{raw_blob, StateBlob};
use plugin_support::*;
use serde_json::Value;
use std::path::PathBuf;

fn fixture_dir() -> PathBuf {
    nudgebar_tests::workspace_root().join("tests/fixtures/state")
}

/// Every committed fixture, oldest version first.
fn fixtures() -> Vec<(u64, PathBuf)> {
    let mut found: Vec<(u64, PathBuf)> = std::fs::read_dir(fixture_dir())
        .expect("tests/fixtures/state exists")
        .filter_map(|e| {
            let path = e.ok()?.path();
            let name = path.file_name()?.to_str()?;
            let version = name.strip_prefix("session-v")?.strip_suffix(".json")?;
            Some((version.parse().ok()?, path))
        })
        .collect();
    found.sort();
    found
}

/// The phrases of a saved session's kept takes, read straight from JSON.
fn phrases(session: &Value) -> Vec<(String, Phrase)> {
    session["kept"]
        .as_array()
        .expect("the fixture has kept takes")
        .iter()
        .map(|t| {
            (
                t["name"].as_str().expect("a kept take has a name").to_string(),
                serde_json::from_value(t["phrase"].clone()).expect("a kept take has a phrase"),
            )
        })
        .collect()
}

#[test]
fn every_released_session_version_opens_whole() {
    let found = fixtures();
    assert!(
        found.iter().any(|(v, _)| *v == 1),
        "the fixture of session version 1 is missing from {}",
        fixture_dir().display()
    );
    let current = nudgebar::state::STATE_VERSION;
    assert!(
        found.iter().any(|(v, _)| *v == current),
        "no fixture for this build's session version {current}: add one with \
         `cargo test -p nudgebar-tests --test plugin_state_versions -- --ignored`"
    );
    for (version, path) in found {
        let what = format!("session version {version} ({})", path.display());
        let json = std::fs::read(&path).unwrap();
        let saved = StateBlob::parse(&raw_blob(&json)).unwrap();
        let old_session = saved.field("session").expect("the fixture has a session");
        assert_eq!(old_session["version"], version, "{what}: file name and content agree");

        let mut plugin = nudgebar();
        plugin
            .load_state(&raw_blob(&json))
            .unwrap_or_else(|e| panic!("{what} does not load: {e}"));

        // Every kept take, note for note, under its name.
        let expected = phrases(&old_session);
        assert!(expected.len() >= 2, "{what}: the fixture keeps takes");
        let now = saved_session(&mut plugin);
        assert_eq!(phrases(&now), expected, "{what}: kept takes");
        // …and everything else they recorded (settings, shaping, latent
        // code, readouts): new fields default to empty and are not written.
        assert_eq!(now["kept"], old_session["kept"], "{what}: kept takes in full");
        // The prompt.
        let prompt: Phrase = serde_json::from_value(old_session["prompt"]["phrase"].clone()).unwrap();
        let prompt_now: Phrase = serde_json::from_value(now["prompt"]["phrase"].clone()).unwrap();
        assert_eq!(prompt_now, prompt, "{what}: prompt");
        assert!(!prompt.notes.is_empty(), "{what}: the fixture has a prompt");
        // Parameters this build still has keep their saved values.
        let params_now = StateBlob::parse(&plugin.save_state().unwrap())
            .unwrap()
            .params();
        for (id, value) in saved.params() {
            if let Some(v) = params_now.get(&id) {
                assert_eq!(v, &value, "{what}: parameter {id}");
            }
        }
        // Saved again in this build's version; stable from then on.
        assert_eq!(now["version"], current, "{what}: saved as the current version");
        let once = plugin.save_state().unwrap();
        let mut again = nudgebar();
        again.load_state(&once).unwrap();
        assert_eq!(again.save_state().unwrap(), once, "{what}: save → load → save");
    }
}

/// Writes the fixture for this build's session version: a session on the
/// built-in demo model with a captured ferry call at 104 BPM, the density
/// slider moved, the key set to D Dorian, and two takes kept. Run it once when a release changes the
/// session format, check the file in, and never rewrite an older one.
#[test]
#[ignore = "writes tests/fixtures/state/session-v<N>.json; run by hand for a new session version"]
fn write_the_fixture_for_this_session_version() {
    let ts = TimeSignature::FOUR_FOUR;
    let mut plugin = nudgebar();
    let ids = Ids::of(&mut plugin);
    let mut transport = nudgebar_tests::host::HostTransport::new(104.0, ts);
    transport.playing = true;
    let mut s = nudgebar_tests::host::Session::start(plugin, SAMPLE_RATE, BLOCK, transport).unwrap();
    set_text(&mut s, &ids.axes[0], "+0.40");
    // Shaped takes (from version 2 on, kept takes record their shaping).
    let key = param_by_id(&mut s.plugin, nudgebar::params::ids::KEY);
    let scale = param_by_id(&mut s.plugin, nudgebar::params::ids::SCALE);
    set_text(&mut s, &key, "D");
    set_text(&mut s, &scale, "Dorian");
    capture_bar_one(&mut s, &ids, &ferry_call(ts));
    wait_for_take_notes(&mut s, &ids);
    for (n, take) in ["2", "3"].into_iter().enumerate() {
        set_text(&mut s, &ids.selected, take);
        s.process_block(BLOCK).unwrap();
        pulse(&mut s, &ids.keep).unwrap();
        wait_for_kept(&mut s, n + 1);
    }
    let blob = s.plugin.save_state().unwrap();
    let version = nudgebar::state::STATE_VERSION;
    let path = fixture_dir().join(format!("session-v{version}.json"));
    assert!(
        !path.exists(),
        "{} exists: fixtures of released versions are never rewritten",
        path.display()
    );
    std::fs::create_dir_all(fixture_dir()).unwrap();
    std::fs::write(&path, &blob[8..]).unwrap();
    eprintln!("wrote {}", path.display());
}
