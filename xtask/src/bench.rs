//! `cargo xtask bench [engine] [audio] [drag]`: builds the bench crate in
//! release mode and runs its driver, which prints the tables and writes
//! target/bench/{table.md, bench.json}.
//!
//! The engine section needs onnxruntime (installed with the other Python
//! reference tools into target/pyref); the audio section needs valgrind.

use anyhow::{Context, Result};
use std::process::Command;

pub fn run(args: &[String]) -> Result<()> {
    let python = crate::pyref::ensure()?;
    let wants_audio = args.is_empty() || args.iter().any(|a| a == "audio");
    if wants_audio {
        Command::new("valgrind")
            .arg("--version")
            .output()
            .context("the audio section counts instructions with valgrind, which is not installed (Debian: `apt-get install valgrind`)")?;
    }
    crate::run_cmd(Command::new("cargo").args([
        "build",
        "--release",
        "-p",
        "nudgebar-bench",
        "--bins",
    ]))?;
    // Where cargo put it: $CARGO_TARGET_DIR if set, else the workspace's target/.
    let target = std::env::var_os("CARGO_TARGET_DIR")
        .map(std::path::PathBuf::from)
        .unwrap_or_else(|| crate::root().join("target"));
    crate::run_cmd(
        Command::new(target.join("release/bench"))
            .args(args)
            .env("NUDGEBAR_PYTHON", &python),
    )
}
