//! Running the Python reference scripts.

use std::path::PathBuf;
use std::process::Command;

/// The reference interpreter: `$NUDGEBAR_PYTHON`, else `target/pyref/bin/python`.
///
/// A missing interpreter is a test failure, not a skip: a reference check
/// that silently does nothing would prove nothing.
pub fn python() -> PathBuf {
    if let Some(p) = std::env::var_os("NUDGEBAR_PYTHON") {
        return PathBuf::from(p);
    }
    let p = crate::workspace_root().join("target/pyref/bin/python");
    assert!(
        p.exists(),
        "the Python reference tools are not installed at {}; run `cargo xtask test` once (it creates them)",
        p.display()
    );
    p
}

/// Runs `tests/py/<script>` with `args` and returns its standard output.
/// Panics with the script's stderr when it fails.
pub fn run(script: &str, args: &[&str]) -> String {
    let path = crate::workspace_root().join("tests/py").join(script);
    let out = Command::new(python())
        .arg(&path)
        .args(args)
        .output()
        .unwrap_or_else(|e| panic!("could not start the reference Python for {script}: {e}"));
    assert!(
        out.status.success(),
        "{script} failed ({}):\n{}",
        out.status,
        String::from_utf8_lossy(&out.stderr)
    );
    String::from_utf8(out.stdout).expect("reference script printed UTF-8")
}

/// Runs a script that prints one JSON document and parses it.
pub fn run_json(script: &str, args: &[&str]) -> serde_json::Value {
    let text = run(script, args);
    serde_json::from_str(&text).unwrap_or_else(|e| panic!("{script} printed invalid JSON ({e}):\n{text}"))
}
