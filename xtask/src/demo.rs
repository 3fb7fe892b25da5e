//! `cargo xtask demo`: the main job on the built-in model, from a fresh clone.

use anyhow::Result;

pub fn run(_args: &[String]) -> Result<()> {
    anyhow::bail!("the demo task is not wired up yet")
}
