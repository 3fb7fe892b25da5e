//! `cargo xtask test`: the one command that runs the whole suite.

use anyhow::Result;
use std::process::Command;

pub fn run(extra: &[String]) -> Result<()> {
    let python = crate::pyref::ensure()?;
    crate::run_cmd(
        Command::new("cargo")
            .args(["test", "--workspace"])
            .args(extra)
            .env("NUDGEBAR_PYTHON", &python),
    )
}
