//! The Python reference tools (mido, pretty_midi, music21, onnx, onnxruntime)
//! live in a virtualenv under target/pyref, pinned by tests/py/requirements.txt.

use anyhow::{Context, Result};
use std::path::PathBuf;
use std::process::Command;

/// Creates or refreshes target/pyref when requirements.txt changed; returns
/// the interpreter's path.
pub fn ensure() -> Result<PathBuf> {
    let root = crate::root();
    let venv = root.join("target/pyref");
    let python = venv.join("bin/python");
    let reqs = root.join("tests/py/requirements.txt");
    let wanted = std::fs::read_to_string(&reqs).context("reading tests/py/requirements.txt")?;
    let stamp = venv.join("installed-requirements.txt");
    if python.exists() && std::fs::read_to_string(&stamp).ok().as_deref() == Some(wanted.as_str()) {
        return Ok(python);
    }
    eprintln!("xtask: installing the Python reference tools into target/pyref (once)…");
    let py = std::env::var("PYTHON").unwrap_or_else(|_| "python3".into());
    crate::run_cmd(Command::new(&py).args(["-m", "venv"]).arg(&venv))
        .with_context(|| format!("creating a virtualenv with `{py} -m venv` (install python3-venv?)"))?;
    crate::run_cmd(Command::new(&python).args(["-m", "pip", "install", "--quiet", "--disable-pip-version-check", "-r"]).arg(&reqs))
        .context("installing tests/py/requirements.txt")?;
    std::fs::write(&stamp, wanted)?;
    Ok(python)
}
