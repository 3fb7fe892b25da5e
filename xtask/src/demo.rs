//! `cargo xtask demo`: the main job on the built-in demo model — vary a
//! demo prompt from presets/prompts/ with a factory preset, write the takes
//! under target/demo-takes/ and print what each take measures.
//!
//! Extra arguments go to `nudge vary` (e.g. `--slide contour=-0.8`).

use anyhow::Result;
use std::process::Command;

pub fn run(extra: &[String]) -> Result<()> {
    let mut args: Vec<String> = [
        "run",
        "--quiet",
        "-p",
        "nudgebar-cli",
        "--bin",
        "nudge",
        "--",
        "vary",
        "presets/prompts/lamp-climb.mid",
    ]
    .iter()
    .map(|s| s.to_string())
    .collect();
    if !extra.iter().any(|a| a == "--preset") {
        args.extend(["--preset".into(), "presets/harbour-lights.json".into()]);
    }
    if !extra.iter().any(|a| a == "--out") {
        args.extend(["--out".into(), "target/demo-takes".into()]);
    }
    args.extend(extra.iter().cloned());
    crate::run_cmd(Command::new("cargo").args(&args))
}
