//! Presets in the plugin: the factory set (the JSON files in the repo's
//! `presets/`, compiled in so they exist on any machine) and the user's own,
//! saved as files of the same format in `<data dir>/nudgebar/presets`
//! (`$NUDGEBAR_PRESET_DIR` overrides it; see `export.rs` for the data dir).
//!
//! Applying a preset means setting parameters, which only the host (through
//! the editor's parameter setter) may do; this module says which values to
//! set and leaves the setting to the caller.

use crate::export::data_folder;
use crate::params::{ids, AxisBinding, NudgebarParams, AXIS_SLOTS, NAMED_AXES};
use nudgebar_engine::preset::{Preset, PresetError};
use nudgebar_music::attributes::Attribute;
use std::path::{Path, PathBuf};

/// The factory presets, as shipped in `presets/`.
const FACTORY: [(&str, &str); 6] = [
    (
        "fog-bell.json",
        include_str!("../../../presets/fog-bell.json"),
    ),
    (
        "harbour-lights.json",
        include_str!("../../../presets/harbour-lights.json"),
    ),
    (
        "low-water.json",
        include_str!("../../../presets/low-water.json"),
    ),
    (
        "net-mender.json",
        include_str!("../../../presets/net-mender.json"),
    ),
    (
        "open-sea.json",
        include_str!("../../../presets/open-sea.json"),
    ),
    ("squall.json", include_str!("../../../presets/squall.json")),
];

/// The factory presets, parsed. They are checked by a test, so a broken one
/// never ships; should one fail anyway it is left out, not fatal.
pub fn factory() -> Vec<Preset> {
    FACTORY
        .iter()
        .filter_map(|(file, json)| Preset::parse(json, file).ok())
        .collect()
}

/// Where user presets live.
pub fn user_folder() -> PathBuf {
    match std::env::var_os("NUDGEBAR_PRESET_DIR") {
        Some(dir) if !dir.is_empty() => PathBuf::from(dir),
        _ => data_folder().join("presets"),
    }
}

/// The user's presets (good and bad, by file name).
pub fn user_presets(folder: &Path) -> Vec<(PathBuf, Result<Preset, PresetError>)> {
    Preset::load_folder(folder)
}

/// Saves a preset into `folder` as `<name>.json`; returns the file.
pub fn save_user_preset(preset: &Preset, folder: &Path) -> std::io::Result<PathBuf> {
    std::fs::create_dir_all(folder)?;
    let stem: String = preset
        .name
        .chars()
        .map(|c| {
            if c.is_alphanumeric() || c == '-' || c == ' ' {
                c
            } else {
                '_'
            }
        })
        .collect();
    let path = folder.join(format!(
        "{}.json",
        stem.trim().replace(' ', "-").to_lowercase()
    ));
    std::fs::write(&path, preset.to_json())?;
    Ok(path)
}

/// The current settings as a preset. `axes` are the loaded model's axis
/// attributes (so spare sliders are saved under their real attribute).
pub fn preset_from_params(params: &NudgebarParams, axes: &[Attribute], name: &str) -> Preset {
    let steering = params.steering();
    let binding = AxisBinding::for_axes(axes);
    let mut preset = Preset::new(name);
    for (slot, axis) in binding.slots.iter().enumerate() {
        let attribute = match axis {
            Some(a) => axes[*a],
            None => match NAMED_AXES.get(slot) {
                Some(a) => *a,
                None => continue,
            },
        };
        // To the slider's 0.01 step, so a saved preset reads as it was set.
        let v = (steering.offsets[slot] * 100.0).round() / 100.0;
        if v != 0.0 {
            preset.offsets.insert(attribute.key().to_string(), v);
        }
    }
    for (slot, hold) in params.hold_params().iter().enumerate() {
        let Some(a) = binding.slots[slot].map(|i| axes[i]) else {
            continue;
        };
        if hold.value() && !preset.holds.iter().any(|k| k == a.key()) {
            preset.holds.push(a.key().to_string());
        }
    }
    preset.takes = steering.takes;
    preset.spread = (steering.spread * 100.0).round() / 100.0;
    preset.seed = steering.seed;
    preset
}

/// Parameter values (by parameter id, plain units) that apply `preset` to a
/// model with these axes. Every slider is set — to 0 where the preset is
/// silent — so applying a preset fully replaces the previous settings.
pub fn param_values(preset: &Preset, axes: &[Attribute]) -> Vec<(&'static str, f32)> {
    let binding = AxisBinding::for_axes(axes);
    let mut out = Vec::with_capacity(2 * AXIS_SLOTS + 3);
    for slot in 0..AXIS_SLOTS {
        let attribute = match binding.slots[slot] {
            Some(a) => Some(axes[a]),
            None => NAMED_AXES.get(slot).copied(),
        };
        out.push((ids::AXES[slot], attribute.map_or(0.0, |a| preset.offset(a))));
    }
    // Holds too are fully replaced: on where the preset holds the slot's
    // attribute, off elsewhere.
    for slot in 0..AXIS_SLOTS {
        let held = binding.slots[slot]
            .map(|a| axes[a])
            .is_some_and(|a| preset.holds.iter().any(|k| k == a.key()));
        out.push((ids::HOLDS[slot], if held { 1.0 } else { 0.0 }));
    }
    out.push((ids::TAKES, preset.takes as f32));
    out.push((ids::SPREAD, preset.spread));
    out.push((ids::SEED, preset.seed as f32));
    out
}

#[cfg(test)]
mod tests {
    use super::*;
    use nice_plug::prelude::Params;

    #[test]
    fn every_factory_preset_parses() {
        assert_eq!(factory().len(), FACTORY.len());
        // And the files on disk are the ones compiled in.
        let dir = Path::new(env!("CARGO_MANIFEST_DIR")).join("../../presets");
        let on_disk = Preset::load_folder(&dir);
        assert_eq!(on_disk.len(), FACTORY.len());
        for (path, preset) in on_disk {
            assert!(preset.is_ok(), "{}: {:?}", path.display(), preset);
        }
    }

    #[test]
    fn presets_round_trip_through_the_parameters() {
        let axes = [
            Attribute::NoteDensity,
            Attribute::PitchRange,
            Attribute::RhythmicComplexity,
            Attribute::Contour,
            Attribute::MeanPitch,
        ];
        let params = NudgebarParams::default();
        for preset in factory() {
            let values = param_values(&preset, &axes);
            // Apply by id through nice-plug's parameter pointers.
            for (id, ptr, _) in params.param_map() {
                if let Some((_, v)) = values.iter().find(|(i, _)| *i == id) {
                    unsafe { ptr._internal_set_normalized_value(ptr.preview_normalized(*v)) };
                }
            }
            let back = preset_from_params(&params, &axes, &preset.name);
            assert_eq!(back.offsets, preset.offsets, "{}", preset.name);
            assert_eq!(back.holds, preset.holds, "{}", preset.name);
            assert_eq!(
                (back.takes, back.spread, back.seed),
                (preset.takes, preset.spread, preset.seed)
            );
        }
    }

    #[test]
    fn user_presets_are_saved_where_they_are_listed() {
        let dir = std::env::temp_dir().join(format!("nudgebar-presets-{}", std::process::id()));
        let mut p = Preset::new("My Ferry/Call");
        p.offsets.insert("contour".into(), 0.5);
        let file = save_user_preset(&p, &dir).unwrap();
        assert_eq!(file.file_name().unwrap(), "my-ferry_call.json");
        let listed = user_presets(&dir);
        assert_eq!(listed.len(), 1);
        assert_eq!(listed[0].1.as_ref().unwrap(), &p);
        std::fs::remove_dir_all(&dir).unwrap();
    }
}
