//! Instructions per `process()` call, counted by valgrind's callgrind
//! (instruction counts are repeatable where wall time on a shared machine
//! is not). Each scenario runs `process-probe` under callgrind in its own
//! process; only the probe's measured blocks are collected, and the
//! plugin's share is the inclusive cost of nice-plug's CLAP `process`.

use crate::probe::{blocks_for, Scenario, MEASURED_FN, PROCESS_FN};
use anyhow::{bail, ensure, Context, Result};
use serde::Serialize;
use std::path::Path;
use std::process::Command;

#[derive(Debug, Clone, Serialize)]
pub struct AudioRow {
    pub scenario: String,
    pub frames: u32,
    /// `process()` calls measured.
    pub calls: u32,
    /// Instructions inside the plugin's `process()`, all measured calls.
    pub instructions: u64,
    pub per_call: f64,
    pub per_frame: f64,
}

/// Runs one scenario under callgrind and reads its count.
pub fn measure(
    probe: &Path,
    scenario: Scenario,
    frames: u32,
    model: Option<&Path>,
    out_dir: &Path,
) -> Result<AudioRow> {
    std::fs::create_dir_all(out_dir)?;
    let out_file = out_dir.join(format!("callgrind.{}-{frames}.out", scenario.key()));
    let blocks = if scenario == Scenario::Flood {
        1
    } else {
        blocks_for(frames)
    };
    let mut cmd = Command::new("valgrind");
    cmd.args([
        "--tool=callgrind",
        "--collect-atstart=no",
        &format!("--toggle-collect={MEASURED_FN}"),
        &format!("--callgrind-out-file={}", out_file.display()),
    ])
    .arg(probe)
    .args([scenario.key(), &frames.to_string(), &blocks.to_string()]);
    if let Some(m) = model {
        cmd.arg(m);
    }
    let out = cmd
        .output()
        .context("running valgrind (is it installed? `apt-get install valgrind`)")?;
    ensure!(
        out.status.success(),
        "process-probe {} {frames} failed under callgrind ({}):\n{}",
        scenario.key(),
        out.status,
        tail(&String::from_utf8_lossy(&out.stderr), 30)
    );
    let calls: u32 = String::from_utf8_lossy(&out.stdout)
        .lines()
        .find_map(|l| l.strip_prefix("measured_calls=").map(|v| v.trim().parse()))
        .context("process-probe did not say how many calls it measured")??;
    let instructions = inclusive_cost(&out_file, PROCESS_FN)?;
    Ok(AudioRow {
        scenario: scenario.key().into(),
        frames,
        calls,
        instructions,
        per_call: instructions as f64 / calls as f64,
        per_frame: instructions as f64 / calls as f64 / frames as f64,
    })
}

/// The inclusive instruction count of `function` in a callgrind output
/// file, as `callgrind_annotate --inclusive=yes` reports it.
pub fn inclusive_cost(file: &Path, function: &str) -> Result<u64> {
    let out = Command::new("callgrind_annotate")
        .args(["--inclusive=yes", "--threshold=100"])
        .arg(file)
        .output()
        .context("running callgrind_annotate (part of valgrind)")?;
    ensure!(
        out.status.success(),
        "callgrind_annotate failed: {}",
        String::from_utf8_lossy(&out.stderr)
    );
    let text = String::from_utf8_lossy(&out.stdout);
    match parse_inclusive(&text, function) {
        Some(n) => Ok(n),
        None => bail!(
            "callgrind counted nothing in {function}; the measured blocks may not have reached the plugin (see {})",
            file.display()
        ),
    }
}

/// Finds `function`'s line in callgrind_annotate's table: the count is the
/// first column (with thousands separators); the name follows the first
/// `:` (the file before it is `???` when unknown; the name itself holds
/// `::`) and may be followed by ` [object]`.
pub fn parse_inclusive(text: &str, function: &str) -> Option<u64> {
    text.lines().find_map(|line| {
        let line = line.trim();
        let (count, rest) = line.split_once(char::is_whitespace)?;
        let name = rest.split_once(':').map_or(rest, |(_, n)| n);
        let name = name.split(" [").next()?.trim();
        (name == function)
            .then(|| count.replace(',', "").parse().ok())
            .flatten()
    })
}

fn tail(text: &str, lines: usize) -> String {
    let all: Vec<&str> = text.lines().collect();
    all[all.len().saturating_sub(lines)..].join("\n")
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn reads_the_inclusive_count_of_the_named_function() {
        // The shape of callgrind_annotate 3.19's table (--inclusive=yes).
        let text = "\
--------------------------------------------------------------------------------
Ir                  file:function
--------------------------------------------------------------------------------
5,047,312 (100.0%)  ???:nudgebar_bench::probe::measured_block [/x/process-probe]
3,001,000 ( 59.5%)  ???:nice_plug::wrapper::clap::wrapper::Wrapper<P>::process [/x/process-probe]
  120,000 (  2.4%)  ???:nice_plug::wrapper::clap::wrapper::Wrapper<P>::process::{{closure}} [/x/process-probe]
";
        assert_eq!(parse_inclusive(text, PROCESS_FN), Some(3_001_000));
        assert_eq!(parse_inclusive(text, MEASURED_FN), Some(5_047_312));
        assert_eq!(parse_inclusive(text, "missing"), None);
    }
}
