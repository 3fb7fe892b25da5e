//! `cargo xtask train-demo-model [--quick] [--steps N] [--corpus N] [--seed S] [--out DIR]`:
//! retrains the embedded demo model from scratch and rewrites
//! plugin/demo-model/package/ and plugin/demo-model/REPORT.md.
//!
//! The trainer is its own binary (in plugin/trainer) rather than code in
//! xtask, so that `cargo xtask test` and friends never compile candle.

use anyhow::Result;
use std::process::Command;

pub fn run(args: &[String]) -> Result<()> {
    let mut cmd = Command::new(std::env::var("CARGO").unwrap_or_else(|_| "cargo".into()));
    cmd.args([
        "run",
        "-p",
        "nudgebar-trainer",
        "--bin",
        "train-demo-model",
        "--",
    ])
    .args(args);
    crate::run_cmd(&mut cmd)
}
