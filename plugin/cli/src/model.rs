//! Which model the command runs: a package folder, or the built-in demo model.

use nudgebar_engine::{Engine, ModelPackage};
use std::path::Path;

pub fn load(folder: Option<&Path>) -> Result<Engine, String> {
    let package = match folder {
        Some(dir) => ModelPackage::load(dir).map_err(|e| e.to_string())?,
        None => nudgebar_demo_model::package(),
    };
    Engine::new(package).map_err(|e| e.to_string())
}
