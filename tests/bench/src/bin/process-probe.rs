//! Hosts the Nudgebar plugin in-process and plays one audio-thread scenario,
//! for callgrind to count (see `nudgebar_bench::probe`).
//!
//! Usage: process-probe <idle|capturing|auditioning|flood> <frames> <blocks> [model folder]

use nudgebar_bench::probe::{self, Scenario};
use std::path::PathBuf;

fn main() {
    let args: Vec<String> = std::env::args().skip(1).collect();
    let usage =
        "usage: process-probe <idle|capturing|auditioning|flood> <frames> <blocks> [model folder]";
    let (Some(scenario), Some(frames), Some(blocks)) = (
        args.first().and_then(|s| Scenario::from_key(s)),
        args.get(1).and_then(|s| s.parse::<u32>().ok()),
        args.get(2).and_then(|s| s.parse::<u32>().ok()),
    ) else {
        eprintln!("{usage}");
        std::process::exit(2);
    };
    let model = args.get(3).map(PathBuf::from);
    match probe::run(scenario, frames, blocks, model.as_deref()) {
        Ok(calls) => println!("measured_calls={calls}"),
        Err(e) => {
            eprintln!("process-probe {}: {e:#}", scenario.key());
            std::process::exit(1);
        }
    }
}
