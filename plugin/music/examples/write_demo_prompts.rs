//! Regenerates the demo prompt files in `presets/prompts/` (or in the folder
//! given as the first argument) from `nudgebar_music::demo_prompts`.
//!
//! `cargo run -p nudgebar-music --example write_demo_prompts`

use std::path::PathBuf;

fn main() {
    let dir = std::env::args_os()
        .nth(1)
        .map(PathBuf::from)
        .unwrap_or_else(|| PathBuf::from(env!("CARGO_MANIFEST_DIR")).join("../../presets/prompts"));
    match nudgebar_music::demo_prompts::write_all(&dir) {
        Ok(paths) => {
            for p in paths {
                println!("wrote {}", p.display());
            }
        }
        Err(e) => {
            eprintln!(
                "Could not write the demo prompts into {}: {e}",
                dir.display()
            );
            std::process::exit(1);
        }
    }
}
