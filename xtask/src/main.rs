//! `cargo xtask <task>`: the project's developer and user tasks.
//!
//! Each task lives in its own module; this file only dispatches.

mod bench;
mod demo;
mod fuzz;
mod pyref;
mod test;
mod train;

use anyhow::Result;
use std::path::PathBuf;

const USAGE: &str = "usage: cargo xtask <task>

tasks:
  test                 install the Python reference tools (once) and run every test
  demo                 vary a preset prompt with the embedded demo model and print the takes
  train-demo-model     train the demo model from scratch and write plugin/demo-model/
  fuzz [--seconds N]   run each libFuzzer target in fuzz/ for N seconds (default 60) from the seed corpus
  bench [engine|audio|drag]  time the engine against onnxruntime and the FLOP bound, count process()
                       instructions with callgrind, drag a slider; table in target/bench/table.md
  bundle <crate> [...] build CLAP and VST3 bundles into target/bundled/ (e.g. `bundle nudgebar --release`)
";

fn main() {
    let mut args = std::env::args().skip(1);
    let task = args.next().unwrap_or_default();
    let rest: Vec<String> = args.collect();
    let result = match task.as_str() {
        "test" => test::run(&rest),
        "bench" => bench::run(&rest),
        "demo" => demo::run(&rest),
        "fuzz" => fuzz::run(&rest),
        "train-demo-model" => train::run(&rest),
        "bundle" => bundle(&rest),
        "" | "help" | "--help" | "-h" => {
            print!("{USAGE}");
            Ok(())
        }
        other => Err(anyhow::anyhow!("unknown task `{other}`\n\n{USAGE}")),
    };
    if let Err(e) = result {
        eprintln!("xtask {task}: {e:#}");
        std::process::exit(1);
    }
}

/// Bundling is nice-plug-xtask's job; we only forward to it.
pub fn bundle(args: &[String]) -> Result<()> {
    let mut all = vec!["bundle".to_string()];
    all.extend(args.iter().cloned());
    nice_plug_xtask::main_with_args("cargo xtask", all)
}

/// The workspace root: xtask's manifest folder's parent.
pub fn root() -> PathBuf {
    PathBuf::from(env!("CARGO_MANIFEST_DIR")).parent().expect("xtask has a parent").to_path_buf()
}

/// Runs a command in the workspace root, failing with its name if it fails.
pub fn run_cmd(cmd: &mut std::process::Command) -> Result<()> {
    let status = cmd.current_dir(root()).status()?;
    anyhow::ensure!(status.success(), "{:?} failed ({status})", cmd);
    Ok(())
}
