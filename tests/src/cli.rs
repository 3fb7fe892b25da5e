//! Running the offline command `nudge` from tests, as a user would.

use std::path::PathBuf;
use std::process::{Command, Output};
use std::sync::OnceLock;

/// Builds `nudge` once per test process (debug, like the rest of the suite)
/// and returns its path.
pub fn nudge() -> PathBuf {
    static BUILT: OnceLock<PathBuf> = OnceLock::new();
    BUILT
        .get_or_init(|| {
            let root = crate::workspace_root();
            let cargo = std::env::var_os("CARGO").unwrap_or_else(|| "cargo".into());
            let status = Command::new(cargo)
                // `--workspace --tests`: the packages and test targets of
                // `cargo test --workspace`, so the dependency features (and
                // so the compiled inference engine) are the test build's;
                // `-p nudgebar-cli` alone would compile tract once more.
                .args(["build", "--quiet", "--workspace", "--tests", "--bin", "nudge"])
                .current_dir(&root)
                .status()
                .expect("run cargo build");
            assert!(status.success(), "building nudge failed");
            root.join("target/debug/nudge")
        })
        .clone()
}

/// Runs `nudge` with `args` from the workspace root.
pub fn run(args: &[&str]) -> Output {
    Command::new(nudge())
        .args(args)
        .current_dir(crate::workspace_root())
        .output()
        .expect("run nudge")
}
