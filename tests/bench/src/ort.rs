//! The reference runtime: the same batches run by onnxruntime (PyPI, one
//! intra-op thread) through `tests/py/ort_bench.py`, in the same bench run,
//! on the same input bytes, with the same calls per round.
//!
//! The script stays running and answers one round at a time, so the bench
//! alternates a Nudgebar round with an onnxruntime round: on a shared
//! machine both then see the same background load, and the ratio of their
//! best rounds is fair even when absolute times wander.

use crate::timing::{summarize, Timing, ROUNDS};
use anyhow::{anyhow, ensure, Context, Result};
use std::io::{BufRead, BufReader, Write};
use std::path::{Path, PathBuf};
use std::process::{Child, ChildStdin, ChildStdout, Command, Stdio};

/// One batch to time in onnxruntime.
#[derive(Debug, Clone)]
pub struct OrtCase {
    pub name: String,
    pub model: PathBuf,
    pub input_name: String,
    pub input: Vec<f32>,
    pub shape: Vec<usize>,
    /// Calls per round (the same as Nudgebar's for the row).
    pub iterations: u32,
}

/// A running onnxruntime reference with its cases loaded.
pub struct OrtServer {
    child: Child,
    stdin: ChildStdin,
    stdout: BufReader<ChildStdout>,
    dir: PathBuf,
    pub version: String,
    cases: Vec<OrtCase>,
}

impl OrtServer {
    /// Writes the inputs and the spec, starts the script and waits until
    /// its sessions are built.
    pub fn start(python: &Path, dir: &Path, cases: Vec<OrtCase>) -> Result<OrtServer> {
        std::fs::create_dir_all(dir)?;
        let mut spec = Vec::new();
        for (i, c) in cases.iter().enumerate() {
            let input_file = dir.join(format!("case{i}.input.f32"));
            std::fs::write(&input_file, f32_bytes(&c.input))?;
            spec.push(serde_json::json!({
                "name": c.name,
                "model": c.model,
                "input_name": c.input_name,
                "input_file": input_file,
                "shape": c.shape,
                "output_file": dir.join(format!("case{i}.output.f32")),
                "iterations": c.iterations,
            }));
        }
        let spec_file = dir.join("spec.json");
        std::fs::write(&spec_file, serde_json::json!({ "cases": spec }).to_string())?;
        let script = crate::root().join("tests/py/ort_bench.py");
        let mut child = Command::new(python)
            .arg(&script)
            .arg(&spec_file)
            .stdin(Stdio::piped())
            .stdout(Stdio::piped())
            .stderr(Stdio::inherit())
            .spawn()
            .with_context(|| {
                format!(
                    "starting {} for the onnxruntime reference",
                    python.display()
                )
            })?;
        let stdin = child.stdin.take().context("the reference's stdin")?;
        let stdout = BufReader::new(child.stdout.take().context("the reference's stdout")?);
        let mut server = OrtServer {
            child,
            stdin,
            stdout,
            dir: dir.to_path_buf(),
            version: String::new(),
            cases,
        };
        let ready = server.read_line()?;
        server.version = ready
            .strip_prefix("ready ")
            .ok_or_else(|| anyhow!("the onnxruntime reference did not start: {ready:?}"))?
            .trim()
            .to_string();
        Ok(server)
    }

    fn read_line(&mut self) -> Result<String> {
        let mut line = String::new();
        let n = self.stdout.read_line(&mut line)?;
        ensure!(
            n > 0,
            "the onnxruntime reference stopped (see its error above)"
        );
        Ok(line)
    }

    fn ask(&mut self, command: &str) -> Result<String> {
        writeln!(self.stdin, "{command}")?;
        self.stdin.flush()?;
        self.read_line()
    }

    /// One round of case `i`: per-call time in µs.
    pub fn round(&mut self, i: usize) -> Result<f64> {
        let answer = self.ask(&format!("round {i}"))?;
        answer
            .trim()
            .parse()
            .with_context(|| format!("the reference answered {answer:?} to a round"))
    }

    /// Case `i`'s first output as onnxruntime computed it.
    pub fn output(&mut self, i: usize) -> Result<Vec<f32>> {
        self.ask(&format!("output {i}"))?;
        let bytes = std::fs::read(self.dir.join(format!("case{i}.output.f32")))?;
        Ok(bytes
            .chunks_exact(4)
            .map(|b| f32::from_le_bytes([b[0], b[1], b[2], b[3]]))
            .collect())
    }

    /// Alternates `ROUNDS` rounds of `ours` (one round of the case's
    /// iterations, returning per-call µs) with rounds of case `i` in
    /// onnxruntime. Returns (Nudgebar, onnxruntime).
    pub fn interleave(
        &mut self,
        i: usize,
        mut ours: impl FnMut(u32) -> f64,
    ) -> Result<(Timing, Timing)> {
        let n = self.cases[i].iterations;
        let (mut a, mut b) = (Vec::new(), Vec::new());
        for _ in 0..ROUNDS {
            a.push(ours(n));
            b.push(self.round(i)?);
        }
        Ok((summarize(n, a), summarize(n, b)))
    }
}

impl Drop for OrtServer {
    fn drop(&mut self) {
        let _ = writeln!(self.stdin, "quit");
        let _ = self.stdin.flush();
        let _ = self.child.wait();
    }
}

fn f32_bytes(v: &[f32]) -> Vec<u8> {
    v.iter().flat_map(|x| x.to_le_bytes()).collect()
}

/// Largest absolute difference between two outputs (∞ if their sizes differ).
pub fn max_abs_diff(a: &[f32], b: &[f32]) -> f32 {
    if a.len() != b.len() {
        return f32::INFINITY;
    }
    a.iter()
        .zip(b)
        .map(|(x, y)| (x - y).abs())
        .fold(0.0, f32::max)
}
