//! Presets: named slider settings saved as JSON, shared by the plugin and
//! the offline command.
//!
//! ```json
//! {
//!   "format": "nudgebar.preset",
//!   "version": 1,
//!   "name": "Gull chatter",
//!   "description": "Busier, more syncopated calls.",
//!   "offsets": { "note_density": 0.8, "rhythmic_complexity": 0.6 },
//!   "takes": 6,
//!   "spread": 0.6,
//!   "seed": 11
//! }
//! ```
//!
//! `offsets` are slider values (−1…1) keyed by attribute (see
//! `nudgebar_music::attributes::Attribute::key`), not by slider position, so
//! a preset means the same on any model that has an axis for the attribute;
//! attributes the model has no axis for are ignored. Missing attributes are 0.
//!
//! `holds` (optional) lists attributes kept near the prompt's value (locks
//! at [`crate::steer::default_tolerance`]), e.g. `["note_density"]` for
//! "wider, but as busy". The other shaping settings stay out of presets on
//! purpose: a key's tonic, an aim's value and a blend's kept take belong to
//! one prompt or project, not to a reusable slider setting.

use crate::variation::{VariationRequest, MAX_TAKES};
use nudgebar_music::attributes::Attribute;
use serde::{Deserialize, Serialize};
use std::collections::BTreeMap;
use std::path::{Path, PathBuf};

pub const PRESET_FORMAT: &str = "nudgebar.preset";
pub const PRESET_VERSION: u32 = 1;
/// Presets are a few hundred bytes; refuse anything large before reading it.
pub const MAX_PRESET_BYTES: u64 = 64 * 1024;

#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct Preset {
    pub format: String,
    pub version: u32,
    pub name: String,
    #[serde(default)]
    pub description: String,
    /// Slider value per attribute key.
    #[serde(default)]
    pub offsets: BTreeMap<String, f32>,
    /// Attributes held near the prompt's value, by key.
    #[serde(default, skip_serializing_if = "Vec::is_empty")]
    pub holds: Vec<String>,
    pub takes: usize,
    pub spread: f32,
    pub seed: u64,
}

/// Why a preset was refused, as a sentence naming the file.
#[derive(Debug, Clone, PartialEq, thiserror::Error)]
pub enum PresetError {
    #[error("The preset {0} cannot be read: {1}.")]
    Unreadable(PathBuf, String),
    #[error("The preset {file} is {size} bytes; presets are small JSON files (at most {MAX_PRESET_BYTES} bytes). Is this the right file?")]
    TooLarge { file: String, size: u64 },
    #[error(
        "The preset {file} is not valid preset JSON (line {line}, column {column}): {detail}."
    )]
    Syntax {
        file: String,
        line: usize,
        column: usize,
        detail: String,
    },
    #[error("{file} is not a Nudgebar preset: its \"format\" is \"{found}\", expected \"{PRESET_FORMAT}\".")]
    NotAPreset { file: String, found: String },
    #[error(
        "The preset {file} has version {found}, but this Nudgebar reads version {PRESET_VERSION}."
    )]
    Version { file: String, found: u32 },
    #[error("The preset {file} sets \"{key}\", which is not an attribute Nudgebar knows (known: {known}).")]
    UnknownAttribute {
        file: String,
        key: String,
        known: String,
    },
    #[error("The preset {file} sets {what} to {value}; it must be {range}.")]
    OutOfRange {
        file: String,
        what: String,
        value: String,
        range: &'static str,
    },
}

impl Preset {
    /// A preset with the given name and everything at rest.
    pub fn new(name: &str) -> Preset {
        let d = VariationRequest::default();
        Preset {
            format: PRESET_FORMAT.into(),
            version: PRESET_VERSION,
            name: name.into(),
            description: String::new(),
            offsets: BTreeMap::new(),
            holds: Vec::new(),
            takes: d.takes,
            spread: d.spread,
            seed: d.seed,
        }
    }

    /// Parses and checks a preset; `file` names it in errors.
    pub fn parse(json: &str, file: &str) -> Result<Preset, PresetError> {
        // Format first, so a foreign JSON file gets the clearer message.
        if let Ok(serde_json::Value::Object(map)) = serde_json::from_str::<serde_json::Value>(json)
        {
            match map.get("format").and_then(|f| f.as_str()) {
                Some(PRESET_FORMAT) => {}
                other => {
                    return Err(PresetError::NotAPreset {
                        file: file.into(),
                        found: other.unwrap_or("(missing)").into(),
                    })
                }
            }
            if let Some(v) = map.get("version").and_then(|v| v.as_u64()) {
                if v != PRESET_VERSION as u64 {
                    return Err(PresetError::Version {
                        file: file.into(),
                        found: v.min(u32::MAX as u64) as u32,
                    });
                }
            }
        }
        let preset: Preset = serde_json::from_str(json).map_err(|e| PresetError::Syntax {
            file: file.into(),
            line: e.line(),
            column: e.column(),
            detail: e.to_string(),
        })?;
        preset.check(file)?;
        Ok(preset)
    }

    fn check(&self, file: &str) -> Result<(), PresetError> {
        let out = |what: String, value: String, range| {
            Err(PresetError::OutOfRange {
                file: file.into(),
                what,
                value,
                range,
            })
        };
        let unknown = |key: &str| PresetError::UnknownAttribute {
            file: file.into(),
            key: key.to_string(),
            known: Attribute::ALL
                .iter()
                .map(|a| a.key())
                .collect::<Vec<_>>()
                .join(", "),
        };
        for (key, value) in &self.offsets {
            if Attribute::from_key(key).is_none() {
                return Err(unknown(key));
            }
            if !(value.is_finite() && (-1.0..=1.0).contains(value)) {
                return out(
                    format!("the \"{key}\" slider"),
                    value.to_string(),
                    "between -1 and 1",
                );
            }
        }
        for (i, key) in self.holds.iter().enumerate() {
            if Attribute::from_key(key).is_none() {
                return Err(unknown(key));
            }
            if self.holds[..i].contains(key) {
                return out(
                    "holds".into(),
                    format!("{key:?} twice"),
                    "a list of distinct attributes",
                );
            }
        }
        if !(1..=MAX_TAKES).contains(&self.takes) {
            return out("takes".into(), self.takes.to_string(), "1 to 16");
        }
        if !(self.spread.is_finite() && (0.0..=2.0).contains(&self.spread)) {
            return out("spread".into(), self.spread.to_string(), "between 0 and 2");
        }
        if self.seed > 99_999 {
            return out(
                "seed".into(),
                self.seed.to_string(),
                "0 to 99999 (the plugin's seed range)",
            );
        }
        if self.name.trim().is_empty() || self.name.len() > 200 {
            return out(
                "name".into(),
                format!("{:?}", self.name),
                "1 to 200 characters",
            );
        }
        Ok(())
    }

    /// Reads and checks a preset file.
    pub fn load(path: &Path) -> Result<Preset, PresetError> {
        let unreadable =
            |e: std::io::Error| PresetError::Unreadable(path.to_path_buf(), e.to_string());
        let size = std::fs::metadata(path).map_err(unreadable)?.len();
        if size > MAX_PRESET_BYTES {
            return Err(PresetError::TooLarge {
                file: path.display().to_string(),
                size,
            });
        }
        let text = std::fs::read_to_string(path).map_err(unreadable)?;
        Preset::parse(&text, &path.display().to_string())
    }

    /// Every `*.json` preset in a folder, by file name; unreadable ones come
    /// back as errors next to the good ones. A missing folder has none.
    pub fn load_folder(folder: &Path) -> Vec<(PathBuf, Result<Preset, PresetError>)> {
        let Ok(entries) = std::fs::read_dir(folder) else {
            return Vec::new();
        };
        let mut files: Vec<PathBuf> = entries
            .filter_map(|e| e.ok().map(|e| e.path()))
            .filter(|p| p.is_file() && p.extension().is_some_and(|x| x == "json"))
            .collect();
        files.sort();
        files
            .into_iter()
            .map(|p| {
                let r = Preset::load(&p);
                (p, r)
            })
            .collect()
    }

    /// Pretty JSON, as the files in `presets/` are written.
    pub fn to_json(&self) -> String {
        let mut s = serde_json::to_string_pretty(self).expect("a preset always serializes");
        s.push('\n');
        s
    }

    /// The slider value for an attribute (0 when the preset leaves it alone).
    pub fn offset(&self, attribute: Attribute) -> f32 {
        self.offsets.get(attribute.key()).copied().unwrap_or(0.0)
    }

    /// The preset's holds as locks at the default tolerance.
    pub fn locks(&self) -> Vec<crate::steer::Lock> {
        self.holds
            .iter()
            .filter_map(|k| Attribute::from_key(k))
            .map(|attribute| crate::steer::Lock {
                attribute,
                tolerance: crate::steer::default_tolerance(attribute),
            })
            .collect()
    }

    /// A request for a model whose axes control `axes`, in axis order.
    pub fn request(&self, axes: &[Attribute]) -> VariationRequest {
        VariationRequest {
            offsets: axes.iter().map(|a| self.offset(*a)).collect(),
            takes: self.takes,
            spread: self.spread,
            seed: self.seed,
            ..VariationRequest::default()
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    fn good() -> Preset {
        let mut p = Preset::new("Slack tide");
        p.offsets.insert("note_density".into(), -0.5);
        p.offsets.insert("contour".into(), 0.25);
        p
    }

    #[test]
    fn round_trips_and_maps_to_axes() {
        let p = good();
        let back = Preset::parse(&p.to_json(), "test").unwrap();
        assert_eq!(back, p);
        let r = back.request(&[
            Attribute::Contour,
            Attribute::PitchRange,
            Attribute::NoteDensity,
        ]);
        assert_eq!(r.offsets, vec![0.25, 0.0, -0.5]);
    }

    #[test]
    fn bad_presets_say_what_is_wrong() {
        let cases: Vec<(String, &str)> = vec![
            ("{".into(), "line 1"),
            (r#"{"format":"other"}"#.into(), "not a Nudgebar preset"),
            (
                good().to_json().replace("\"version\": 1", "\"version\": 2"),
                "version 2",
            ),
            (
                good().to_json().replace("note_density", "loudness"),
                "loudness",
            ),
            (good().to_json().replace("-0.5", "3.0"), "between -1 and 1"),
            (
                good().to_json().replace("\"takes\": 4", "\"takes\": 40"),
                "1 to 16",
            ),
            (
                good()
                    .to_json()
                    .replace("\"seed\": 1", "\"seed\": 1, \"extra\": 2"),
                "extra",
            ),
            (
                good()
                    .to_json()
                    .replace("\"takes\"", "\"holds\": [\"loudness\"], \"takes\""),
                "loudness",
            ),
            (
                good().to_json().replace(
                    "\"takes\"",
                    "\"holds\": [\"contour\", \"contour\"], \"takes\"",
                ),
                "twice",
            ),
        ];
        for (json, needle) in cases {
            let e = Preset::parse(&json, "p.json").unwrap_err().to_string();
            assert!(e.contains(needle), "{e:?} should mention {needle:?}");
            assert!(e.contains("p.json"), "{e:?} should name the file");
        }
    }
}
