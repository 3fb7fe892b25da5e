//! Finding (and building) the bundled `.clap` file a DAW would load.

use super::plugin::HarnessError;
use std::path::PathBuf;
use std::process::Command;
use std::sync::OnceLock;

/// The bundled CLAP plugin, built once per test process.
///
/// `$NUDGEBAR_CLAP` names a ready-made file to load instead (for testing an
/// installed or release build). Otherwise this runs
/// `cargo xtask bundle <crate_name>` — the debug bundle the README documents,
/// built alongside the test build (see `build`) — which rebuilds only what
/// changed, and returns
/// `target/bundled/<bundle_name>.clap`.
pub fn bundled_clap(crate_name: &str, bundle_name: &str) -> Result<PathBuf, HarnessError> {
    if let Some(path) = std::env::var_os("NUDGEBAR_CLAP") {
        return Ok(PathBuf::from(path));
    }
    static BUILT: OnceLock<Result<PathBuf, String>> = OnceLock::new();
    BUILT
        .get_or_init(|| build(crate_name, bundle_name))
        .clone()
        .map_err(HarnessError)
}

fn build(crate_name: &str, bundle_name: &str) -> Result<PathBuf, String> {
    let root = crate::workspace_root();
    let cargo = std::env::var_os("CARGO").unwrap_or_else(|| "cargo".into());
    // `--workspace --tests --lib`: the same packages and test targets as
    // `cargo test --workspace`, so cargo resolves the same dependency
    // features and reuses that build; `cargo build -p <crate>` alone
    // resolves fewer features and compiles the inference engine (tract)
    // again, about four minutes on two cores. `--lib` makes cargo write the
    // plugin's shared library, which the bundler copies.
    let how = format!("cargo xtask bundle {crate_name} --workspace --tests --lib");
    let out = Command::new(cargo)
        .args(["xtask", "bundle", crate_name, "--workspace", "--tests", "--lib"])
        .current_dir(&root)
        .output()
        .map_err(|e| format!("could not run `{how}` to build the plugin bundle: {e}"))?;
    if !out.status.success() {
        return Err(format!(
            "`{how}` failed ({}); run it by hand to see why:\n{}",
            out.status,
            String::from_utf8_lossy(&out.stderr)
        ));
    }
    let path = root
        .join("target/bundled")
        .join(format!("{bundle_name}.clap"));
    if !path.exists() {
        return Err(format!(
            "`{how}` succeeded but {} is missing (check bundler.toml's name)",
            path.display()
        ));
    }
    Ok(path)
}
