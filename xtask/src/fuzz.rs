//! `cargo xtask fuzz [--seconds N] [--target NAME]…`: runs each libFuzzer
//! target in `fuzz/` for N seconds (60 by default), starting from the
//! committed seed corpus in `fuzz/corpus/<target>/`.
//!
//! New inputs libFuzzer finds go to `fuzz/target/corpus/<target>/` (ignored
//! by git), so a run never edits the committed seeds; a crash stops the task
//! with cargo-fuzz's report and the input saved under `fuzz/artifacts/`.
//!
//! cargo-fuzz needs nightly-only compiler flags (`-Zsanitizer=address`).
//! Only the stable toolchain exists here and no other can be fetched, so the
//! task sets `RUSTC_BOOTSTRAP=1`, which lets the stable compiler accept them;
//! the address-sanitizer runtime ships with the stable standard library.

use anyhow::{bail, Context, Result};
use std::process::Command;

/// Every fuzz target, as named in fuzz/Cargo.toml.
const TARGETS: &[&str] = &["manifest", "midi_file", "session"];
const DEFAULT_SECONDS: u64 = 60;

pub fn run(args: &[String]) -> Result<()> {
    let (seconds, targets) = parse_args(args)?;
    ensure_cargo_fuzz()?;
    let root = crate::root();
    // One build for all targets first, so its time is reported apart from fuzzing.
    let started = std::time::Instant::now();
    crate::run_cmd(fuzz_command().arg("build"))?;
    println!(
        "xtask fuzz: built {} targets in {:.0} s",
        TARGETS.len(),
        started.elapsed().as_secs_f64()
    );
    for target in targets {
        let found = root.join("fuzz/target/corpus").join(target);
        std::fs::create_dir_all(&found).with_context(|| format!("creating {}", found.display()))?;
        let seeds = root.join("fuzz/corpus").join(target);
        println!("xtask fuzz: {target} for {seconds} s");
        crate::run_cmd(
            fuzz_command()
                .args(["run", target])
                .arg(&found)
                .arg(&seeds)
                .arg("--")
                .arg(format!("-max_total_time={seconds}"))
                .arg("-print_final_stats=1"),
        )
        .with_context(|| {
            format!("fuzz target {target} failed; the input that broke it is under fuzz/artifacts/{target}/")
        })?;
    }
    Ok(())
}

fn parse_args(args: &[String]) -> Result<(u64, Vec<&'static str>)> {
    let mut seconds = DEFAULT_SECONDS;
    let mut targets = Vec::new();
    let mut it = args.iter();
    while let Some(arg) = it.next() {
        match arg.as_str() {
            "--seconds" => {
                let value = it.next().context("--seconds needs a number")?;
                seconds = value
                    .parse()
                    .with_context(|| format!("--seconds {value}: not a whole number"))?;
            }
            "--target" => {
                let name = it.next().context("--target needs a name")?;
                let Some(known) = TARGETS.iter().find(|t| *t == name) else {
                    bail!("no fuzz target `{name}`; targets: {}", TARGETS.join(", "));
                };
                targets.push(*known);
            }
            other => bail!(
                "unknown argument `{other}`; usage: cargo xtask fuzz [--seconds N] [--target NAME]"
            ),
        }
    }
    if targets.is_empty() {
        targets = TARGETS.to_vec();
    }
    Ok((seconds, targets))
}

fn fuzz_command() -> Command {
    let mut cmd = Command::new("cargo");
    cmd.arg("fuzz").env("RUSTC_BOOTSTRAP", "1");
    cmd
}

/// cargo-fuzz is a cargo subcommand from crates.io; install it the first time.
fn ensure_cargo_fuzz() -> Result<()> {
    let present = Command::new("cargo")
        .args(["fuzz", "--version"])
        .output()
        .map(|o| o.status.success())
        .unwrap_or(false);
    if !present {
        println!("xtask fuzz: installing cargo-fuzz (once)");
        crate::run_cmd(Command::new("cargo").args(["install", "cargo-fuzz", "--locked"]))?;
    }
    Ok(())
}
