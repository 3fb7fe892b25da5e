//! What Nudgebar saves inside the host's project: the current prompt, the
//! kept takes and the chosen model folder, and the loader that reads them
//! back.
//!
//! The plugin stores the session as one persisted field (`"session"` in
//! nice-plug's state blob), JSON with a `version`. Loading never fails and
//! never panics: every part is read on its own, what cannot be read is
//! dropped, and a sentence saying what was dropped is kept in
//! [`SessionState::load_report`] for the editor to show.
//!
//! It lives here, apart from the plugin, so the loader can be fuzzed
//! (fuzz/fuzz_targets/session.rs) without building the plugin and the
//! inference engine; the plugin wraps it in a thread-safe cell
//! (plugin/shell/src/state.rs).

use crate::package::ModelIdentity;
use nudgebar_music::attributes::Readout;
use nudgebar_music::midi_file::DEFAULT_TEMPO_US_PER_QUARTER;
use nudgebar_music::{Note, Phrase, TimeSignature, MAX_MEASURES};
use serde::{Deserialize, Deserializer, Serialize};
use serde_json::Value;

/// The session format this build writes. Version history:
/// - 1: prompt, kept takes, model path.
/// - 2: kept takes also carry their latent code (`latent`) and how their
///   set was shaped (`settings.shaping`); both default to empty, so a
///   version-1 session reads as a version-2 one without them.
pub const STATE_VERSION: u64 = 2;

/// Most kept takes a session holds; older ones must be removed first. Caps
/// what a hostile blob can make the plugin hold.
pub const MAX_KEPT: usize = 256;

#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct SessionState {
    pub version: u64,
    /// The prompt the takes are made from.
    pub prompt: Option<SavedPrompt>,
    /// Takes the composer chose to keep, oldest first.
    pub kept: Vec<KeptTake>,
    /// The model package folder in use; `None` for the built-in demo model.
    pub model_path: Option<String>,
    /// What the last load had to drop or repair, as sentences. Not saved.
    #[serde(skip)]
    pub load_report: Vec<String>,
}

impl Default for SessionState {
    fn default() -> Self {
        Self {
            version: STATE_VERSION,
            prompt: None,
            kept: Vec::new(),
            model_path: None,
            load_report: Vec::new(),
        }
    }
}

/// A captured prompt.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct SavedPrompt {
    pub phrase: Phrase,
    /// Host tempo when it was captured (BPM), for exported files.
    pub tempo: f64,
}

/// The slider settings a take was made with: enough to make it again.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct TakeSettings {
    /// Slider value per model axis, by attribute key ("note_density", …).
    pub offsets: Vec<(String, f32)>,
    pub takes: usize,
    pub spread: f32,
    pub seed: u64,
    /// Which take of the request (0-based).
    pub index: usize,
    /// Key, holds, aim or blend the take's set was shaped with (absent in
    /// sessions from before shaping, and not written for plain takes).
    #[serde(default, skip_serializing_if = "Shaping::is_plain")]
    pub shaping: Shaping,
}

/// A take the composer kept.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct KeptTake {
    /// Shown in the editor and used for the exported file name.
    pub name: String,
    pub phrase: Phrase,
    pub settings: TakeSettings,
    /// The engine's noise stream for this take (with the settings and
    /// prompt it reproduces the take).
    pub stream: u64,
    pub model: ModelIdentity,
    /// Measured attributes of the take…
    pub attributes: Readout,
    /// …and their change from the prompt.
    pub change: Readout,
    /// Tempo of the prompt it came from (BPM).
    pub tempo: f64,
    /// The latent code(s) it was decoded from, so a blend can head for it
    /// (absent in older sessions: the blend then encodes its notes). f64,
    /// though the model computes in f32: a saved value too large for f32
    /// would load as infinity, save as `null` and lose the whole take.
    #[serde(default, skip_serializing_if = "Vec::is_empty")]
    pub latent: Vec<f64>,
}

/// How the set a kept take came from was shaped beyond the sliders: key,
/// holds, aim, blend, and what the plugin said about it. Empty for a take
/// made by the sliders alone, and then not written at all, so sessions
/// without shaping save as before.
#[derive(Debug, Clone, Default, PartialEq, Serialize, Deserialize)]
pub struct Shaping {
    /// The key the takes were kept in, e.g. "D Dorian".
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub key: Option<String>,
    /// Held attributes (by key, e.g. "pitch_range") and their tolerances.
    #[serde(default, skip_serializing_if = "Vec::is_empty")]
    pub holds: Vec<(String, f64)>,
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub aim: Option<AimRecord>,
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub blend: Option<BlendRecord>,
    /// The sentences the editor showed about the set.
    #[serde(default, skip_serializing_if = "Vec::is_empty")]
    pub report: Vec<String>,
}

impl Shaping {
    /// True for a take made by the sliders alone.
    pub fn is_plain(&self) -> bool {
        *self == Shaping::default()
    }
}

/// An aim: the target and how the search ended.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct AimRecord {
    /// Attribute key, e.g. "note_density".
    pub attribute: String,
    pub value: f64,
    pub tolerance: f64,
    /// "reached", "out_of_reach", "gap" or "budget_spent".
    pub outcome: String,
    /// What the aimed take measured.
    pub reached: Option<f64>,
    pub decodes: usize,
}

/// A blend: toward which kept take, how far, along which path.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct BlendRecord {
    /// The kept take's name when the blend was made.
    pub toward: String,
    /// 0 = the prompt, 1 = the kept take (f64 so no saved value can
    /// overflow into infinity on loading).
    pub amount: f64,
    /// "linear" or "spherical".
    pub path: String,
}

impl SessionState {
    /// Reads a session from JSON text, keeping what is readable. Never fails.
    pub fn load_lenient(text: &str) -> SessionState {
        match serde_json::from_str::<Value>(text) {
            Ok(value) => SessionState::from_value(value),
            Err(e) => SessionState {
                load_report: vec![format!(
                    "The saved session could not be read at all ({e}); starting with an empty one."
                )],
                ..SessionState::default()
            },
        }
    }

    /// Reads a session from parsed JSON, part by part.
    pub fn from_value(value: Value) -> SessionState {
        let mut report = Vec::new();
        let Value::Object(map) = value else {
            return SessionState {
                load_report: vec![
                    "The saved session was not a Nudgebar session; starting with an empty one."
                        .to_string(),
                ],
                ..SessionState::default()
            };
        };
        match map.get("version").and_then(Value::as_u64) {
            // Every older version is a subset of this one (new fields have
            // defaults); it loads whole and is saved as the current version.
            Some(1..=STATE_VERSION) => {}
            Some(v) if v > STATE_VERSION => report.push(format!(
                "This session was saved by a newer Nudgebar (session version {v}); what this version understands was loaded, and saving will write version {STATE_VERSION}."
            )),
            other => report.push(format!(
                "The saved session has an unknown version ({}); what could be read was loaded.",
                other.map(|v| v.to_string()).unwrap_or_else(|| "none".into())
            )),
        }

        let prompt = match map.get("prompt") {
            None | Some(Value::Null) => None,
            Some(v) => {
                match SavedPrompt::deserialize(v) {
                    Ok(p) => match clean_phrase(&p.phrase) {
                        Some((phrase, dropped)) => {
                            if dropped > 0 {
                                report.push(format!("{dropped} unreadable note(s) were dropped from the saved prompt."));
                            }
                            Some(SavedPrompt {
                                phrase,
                                tempo: clean_tempo(p.tempo),
                            })
                        }
                        None => {
                            report.push("The saved prompt had an impossible length or time signature and was dropped; capture a new one.".into());
                            None
                        }
                    },
                    Err(e) => {
                        report.push(format!("The saved prompt could not be read ({e}) and was dropped; capture a new one."));
                        None
                    }
                }
            }
        };

        let mut kept = Vec::new();
        match map.get("kept") {
            None | Some(Value::Null) => {}
            Some(Value::Array(items)) => {
                for (i, item) in items.iter().enumerate() {
                    if kept.len() == MAX_KEPT {
                        report.push(format!("Only the first {MAX_KEPT} kept takes were loaded; {} more were dropped.", items.len() - MAX_KEPT));
                        break;
                    }
                    match KeptTake::deserialize(item) {
                        Ok(t) => match clean_phrase(&t.phrase) {
                            Some((phrase, dropped)) => {
                                if dropped > 0 {
                                    report.push(format!("Kept take {} (\"{}\"): {dropped} unreadable note(s) dropped.", i + 1, t.name));
                                }
                                let (settings, repaired) = clean_settings(t.settings.clone());
                                if repaired {
                                    report.push(format!("Kept take {} (\"{}\"): slider settings beyond range were reset.", i + 1, t.name));
                                }
                                kept.push(KeptTake { phrase, tempo: clean_tempo(t.tempo), settings, ..t });
                            }
                            None => report.push(format!("Kept take {} (\"{}\") had an impossible length or time signature and was dropped.", i + 1, t.name)),
                        },
                        Err(e) => report.push(format!("Kept take {} could not be read ({e}) and was dropped.", i + 1)),
                    }
                }
            }
            Some(_) => {
                report.push("The list of kept takes could not be read and was dropped.".into())
            }
        }

        let model_path = match map.get("model_path") {
            None | Some(Value::Null) => None,
            Some(Value::String(s)) if !s.is_empty() && s.len() <= 4096 => Some(s.clone()),
            Some(_) => {
                report.push(
                    "The saved model folder could not be read; the built-in demo model is used."
                        .into(),
                );
                None
            }
        };

        SessionState {
            version: STATE_VERSION,
            prompt,
            kept,
            model_path,
            load_report: report,
        }
    }
}

impl<'de> Deserialize<'de> for SessionState {
    fn deserialize<D: Deserializer<'de>>(deserializer: D) -> Result<Self, D::Error> {
        // Through a JSON value so a damaged part never fails the whole.
        let value = Value::deserialize(deserializer)?;
        Ok(SessionState::from_value(value))
    }
}

/// Checks a phrase read from a blob and rebuilds it from its valid notes.
/// `None` when the phrase itself (length, metre) is impossible.
fn clean_phrase(p: &Phrase) -> Option<(Phrase, usize)> {
    let ts = TimeSignature::new(p.time_signature.numerator, p.time_signature.denominator).ok()?;
    if p.measures == 0 || p.measures > MAX_MEASURES {
        return None;
    }
    let good = |n: &&Note| {
        n.pitch <= 127
            && (1..=127).contains(&n.velocity)
            && n.onset.is_finite()
            && n.duration.is_finite()
            && n.onset >= 0.0
            && n.duration > 0.0
    };
    let notes: Vec<Note> = p.notes.iter().filter(good).copied().collect();
    let mut dropped = p.notes.len() - notes.len();
    let phrase = Phrase::new(ts, p.measures, notes);
    dropped += p.notes.len() - dropped - phrase.notes.len();
    Some((phrase, dropped))
}

/// JSON numbers beyond f32's range arrive as infinity, which saves as
/// `null` and would lose the whole take on the next load; such settings are
/// reset (a slider value dropped, the spread set to 0). Returns whether any was.
fn clean_settings(mut s: TakeSettings) -> (TakeSettings, bool) {
    let before = s.offsets.len();
    s.offsets.retain(|(_, v)| v.is_finite());
    let mut repaired = s.offsets.len() != before;
    if !s.spread.is_finite() {
        s.spread = 0.0;
        repaired = true;
    }
    (s, repaired)
}

fn clean_tempo(t: f64) -> f64 {
    if t.is_finite() && (1.0..=1000.0).contains(&t) {
        t
    } else {
        // The Standard MIDI File default (500,000 µs per quarter, 120 BPM),
        // also what the plugin's clock assumes when a host gives no tempo.
        60_000_000.0 / DEFAULT_TEMPO_US_PER_QUARTER as f64
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    fn take(name: &str) -> KeptTake {
        KeptTake {
            name: name.into(),
            phrase: Phrase::new(
                TimeSignature::FOUR_FOUR,
                1,
                vec![Note::new(60, 0.0, 1.0, 90), Note::new(67, 2.5, 0.5, 70)],
            ),
            settings: TakeSettings {
                offsets: vec![("note_density".into(), 0.25)],
                takes: 4,
                spread: 0.5,
                seed: 9,
                index: 2,
                shaping: Shaping::default(),
            },
            latent: Vec::new(),
            stream: 42,
            model: ModelIdentity {
                name: "demo".into(),
                fingerprint: "00ff".into(),
            },
            attributes: Readout::of(&Phrase::empty(TimeSignature::FOUR_FOUR, 1)),
            change: Readout::of(&Phrase::empty(TimeSignature::FOUR_FOUR, 1)),
            tempo: 96.0,
        }
    }

    fn session() -> SessionState {
        SessionState {
            prompt: Some(SavedPrompt {
                phrase: take("p").phrase,
                tempo: 96.0,
            }),
            kept: vec![take("Lamp climb"), take("Net mender")],
            model_path: Some("/models/wren".into()),
            ..SessionState::default()
        }
    }

    #[test]
    fn save_load_save_is_identical() {
        let first = serde_json::to_string(&session()).unwrap();
        let loaded: SessionState = serde_json::from_str(&first).unwrap();
        assert!(loaded.load_report.is_empty(), "{:?}", loaded.load_report);
        assert_eq!(loaded, session());
        assert_eq!(serde_json::to_string(&loaded).unwrap(), first);
    }

    #[test]
    fn a_damaged_take_is_dropped_and_the_rest_kept() {
        let mut v = serde_json::to_value(session()).unwrap();
        v["kept"][0]["phrase"] = Value::String("garbage".into());
        v["kept"][1]["phrase"]["notes"][0]["pitch"] = 200.into();
        let loaded = SessionState::from_value(v);
        assert_eq!(loaded.kept.len(), 1);
        assert_eq!(loaded.kept[0].name, "Net mender");
        assert_eq!(
            loaded.kept[0].phrase.notes.len(),
            1,
            "the out-of-range note is dropped"
        );
        assert!(loaded.prompt.is_some());
        assert_eq!(loaded.load_report.len(), 2, "{:?}", loaded.load_report);
        assert!(loaded.load_report[0].contains("Kept take 1"));
    }

    #[test]
    fn impossible_phrases_and_foreign_values_never_panic() {
        let mut v = serde_json::to_value(session()).unwrap();
        v["prompt"]["phrase"]["measures"] = 0.into();
        v["kept"] = 5.into();
        v["model_path"] = Value::Bool(true);
        v["version"] = 7.into();
        let loaded = SessionState::from_value(v);
        assert!(loaded.prompt.is_none() && loaded.kept.is_empty() && loaded.model_path.is_none());
        assert_eq!(loaded.load_report.len(), 4, "{:?}", loaded.load_report);
        assert!(loaded.load_report[0].contains("newer Nudgebar"));
        for text in ["", "null", "[]", "{\"kept\":[{}]}", "{\"version\":1,\"prompt\":{\"phrase\":{\"time_signature\":{\"numerator\":4,\"denominator\":3},\"measures\":1,\"notes\":[]},\"tempo\":1e308}}"] {
            let s = SessionState::load_lenient(text);
            assert!(s.prompt.is_none() && s.kept.is_empty());
            assert!(!s.load_report.is_empty(), "{text:?} should be reported");
        }
    }

    #[test]
    fn shaped_takes_round_trip_and_older_takes_load_without_shaping() {
        let mut shaped = take("Aimed climb");
        shaped.latent = vec![0.5, -1.25, 3.0e-8, 2.0];
        shaped.settings.shaping = Shaping {
            key: Some("D Dorian".into()),
            holds: vec![("pitch_range".into(), 2.0)],
            aim: Some(AimRecord {
                attribute: "note_density".into(),
                value: 7.0,
                tolerance: 0.5,
                outcome: "reached".into(),
                reached: Some(7.0),
                decodes: 5,
            }),
            blend: Some(BlendRecord {
                toward: "Take 1 · seed 1 (#1)".into(),
                amount: 0.4,
                path: "spherical".into(),
            }),
            report: vec!["Reached note density 7.0 for a target of 7.0.".into()],
        };
        let state = SessionState {
            kept: vec![take("Plain"), shaped],
            ..SessionState::default()
        };
        let text = serde_json::to_string(&state).unwrap();
        let loaded: SessionState = serde_json::from_str(&text).unwrap();
        assert!(loaded.load_report.is_empty(), "{:?}", loaded.load_report);
        assert_eq!(loaded, state);
        assert_eq!(serde_json::to_string(&loaded).unwrap(), text);
        // A plain take writes neither field, so it saves as before shaping.
        let plain = serde_json::to_value(&state.kept[0]).unwrap();
        assert!(plain.get("latent").is_none() && plain["settings"].get("shaping").is_none());
        // A session from before shaping (no such fields) loads them empty.
        let old = serde_json::to_value(session()).unwrap();
        let loaded = SessionState::from_value(old);
        assert!(loaded.load_report.is_empty());
        assert!(loaded
            .kept
            .iter()
            .all(|k| k.latent.is_empty() && k.settings.shaping.is_plain()));
    }

    #[test]
    fn an_older_version_loads_without_complaint_and_saves_as_current() {
        let mut v = serde_json::to_value(session()).unwrap();
        v["version"] = 1.into();
        let loaded = SessionState::from_value(v);
        assert!(loaded.load_report.is_empty(), "{:?}", loaded.load_report);
        assert_eq!(loaded.kept.len(), 2);
        assert_eq!(loaded.version, STATE_VERSION);
        let v0 = serde_json::json!({"version": 0, "kept": []});
        assert!(SessionState::from_value(v0).load_report[0].contains("unknown version"));
    }
}
