//! Steering beyond plain sliders, built from the engine's primitives
//! (prepare, encode, decode, read): key and scale masks, locked attributes,
//! target values searched along an axis, blends toward a kept take, and the
//! slider sweeps that measure how well an axis steers.

pub mod blend;
pub mod locks;
pub mod scale;
pub mod sweep;
pub mod target;

pub use blend::{interpolate, Blend, BlendStep, Interpolation};
pub use locks::{default_tolerance, Lock, LockedVariation, MAX_LOCK_ROUNDS};
pub use scale::{KeyScale, Scale};
pub use sweep::{slider_grid, spearman, steering, Steering, SweepPoint};
pub use target::{Outcome, Target, TargetResult, DEFAULT_BUDGET, MAX_BUDGET};
