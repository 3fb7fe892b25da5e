//! `cargo xtask test`: the one command that runs the whole suite — every
//! crate's tests (with the pinned Python reference tools), then each fuzz
//! target for a short, fixed time from its committed seed corpus.
//!
//! `NUDGEBAR_FUZZ_SECONDS` sets the fuzzing time per target (60 by default;
//! 0 skips fuzzing). Extra arguments go to `cargo test`.

use anyhow::Result;
use std::process::Command;

pub fn run(extra: &[String]) -> Result<()> {
    let python = crate::pyref::ensure()?;
    crate::run_cmd(
        Command::new("cargo")
            .args(["test", "--workspace"])
            .args(extra)
            .env("NUDGEBAR_PYTHON", &python),
    )?;
    let seconds = std::env::var("NUDGEBAR_FUZZ_SECONDS").unwrap_or_else(|_| "60".into());
    if seconds.trim() != "0" {
        crate::fuzz::run(&["--seconds".to_string(), seconds])?;
    }
    Ok(())
}
