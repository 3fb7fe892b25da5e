//! Kept takes out to Standard MIDI Files, on the worker thread.
//!
//! Where files go (documented in the README):
//! - `$NUDGEBAR_EXPORT_DIR` if set;
//! - otherwise `<data dir>/nudgebar/exports`, where the data dir is the
//!   platform's per-user one: `$XDG_DATA_HOME` or `~/.local/share` on Linux,
//!   `~/Library/Application Support` on macOS, `%APPDATA%` on Windows.
//!
//! One file per kept take, format 1, 480 ticks per quarter, at the tempo of
//! the prompt the take came from. An existing file with other content is
//! never overwritten: the new one gets a " (2)", " (3)"… suffix.

use crate::state::KeptTake;
use nudgebar_music::midi_file::write_smf;
use std::path::{Path, PathBuf};

/// Ticks per quarter note in exported files (a common DAW default).
pub const EXPORT_PPQ: u16 = 480;

/// Why an export failed, as a sentence.
#[derive(Debug)]
pub enum ExportError {
    NothingKept,
    Folder(PathBuf, std::io::Error),
    File(PathBuf, std::io::Error),
}

impl std::fmt::Display for ExportError {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        match self {
            ExportError::NothingKept => write!(f, "There are no kept takes to export yet; keep a take first."),
            ExportError::Folder(p, e) => write!(f, "The export folder {} cannot be created ({e}); set NUDGEBAR_EXPORT_DIR to a folder you can write to.", p.display()),
            ExportError::File(p, e) => write!(f, "{} could not be written ({e}); nothing is lost, the takes stay kept.", p.display()),
        }
    }
}

impl std::error::Error for ExportError {}

/// The per-user data folder Nudgebar uses (exports, user presets).
pub fn data_folder() -> PathBuf {
    dirs::data_dir()
        .unwrap_or_else(std::env::temp_dir)
        .join("nudgebar")
}

/// Where exports go (see the module docs).
pub fn export_folder() -> PathBuf {
    match std::env::var_os("NUDGEBAR_EXPORT_DIR") {
        Some(dir) if !dir.is_empty() => PathBuf::from(dir),
        _ => data_folder().join("exports"),
    }
}

/// Writes each kept take to `folder`; returns the files written.
pub fn export_kept(kept: &[KeptTake], folder: &Path) -> Result<Vec<PathBuf>, ExportError> {
    if kept.is_empty() {
        return Err(ExportError::NothingKept);
    }
    std::fs::create_dir_all(folder).map_err(|e| ExportError::Folder(folder.to_path_buf(), e))?;
    let mut written = Vec::with_capacity(kept.len());
    for take in kept {
        let tempo_us = (60_000_000.0 / take.tempo).round().clamp(1.0, 16_777_215.0) as u32;
        let bytes = write_smf(&[(&take.name, &take.phrase)], tempo_us, EXPORT_PPQ);
        let path = free_name(folder, &file_stem(&take.name), &bytes);
        std::fs::write(&path, &bytes).map_err(|e| ExportError::File(path.clone(), e))?;
        written.push(path);
    }
    Ok(written)
}

/// A file name from a take name: letters, digits, spaces, '-' and '_' kept,
/// anything else (path separators included) replaced.
fn file_stem(name: &str) -> String {
    let stem: String = name
        .chars()
        .map(|c| {
            if c.is_alphanumeric() || matches!(c, ' ' | '-' | '_') {
                c
            } else {
                '_'
            }
        })
        .collect::<String>()
        .trim()
        .chars()
        .take(80)
        .collect();
    if stem.is_empty() {
        "take".into()
    } else {
        stem
    }
}

/// `stem.mid`, or the first `stem (n).mid` that is free or already holds
/// exactly these bytes (so exporting twice does not make copies).
fn free_name(folder: &Path, stem: &str, bytes: &[u8]) -> PathBuf {
    for n in 1.. {
        let name = if n == 1 {
            format!("{stem}.mid")
        } else {
            format!("{stem} ({n}).mid")
        };
        let path = folder.join(name);
        match std::fs::read(&path) {
            Ok(existing) if existing == bytes => return path,
            Ok(_) => continue,
            Err(_) => return path,
        }
    }
    unreachable!("the loop above returns")
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn names_are_safe_file_names() {
        assert_eq!(file_stem("Take 3 · seed 17 (#2)"), "Take 3 _ seed 17 __2_");
        assert_eq!(file_stem("../../etc/passwd"), "______etc_passwd");
        assert_eq!(file_stem("///"), "___");
        assert_eq!(file_stem("  "), "take");
    }
}
