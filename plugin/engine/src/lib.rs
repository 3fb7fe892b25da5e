//! Nudgebar's variation engine: the model contract (manifest + ONNX graphs),
//! inference with tract, latent steering and take making, with no plugin
//! framework in it so it builds and tests anywhere.
//!
//! Where things live:
//! - `manifest`, `package` (from the `nudgebar-contract` crate) and
//!   `graph_check`: the model contract and its checks against the graphs;
//! - `network`: one ONNX graph as an optimized tract plan with a reusable state;
//! - `fit`, `codec`: prompts into tensors and logits back into notes (hole guard);
//! - `engine`: the loaded model and its primitives (prepare, encode, decode, read);
//! - `variation`: takes from a prompt and slider values;
//! - `steer`: beyond plain sliders (key/scale masks, locks, target search,
//!   blends, slider sweeps); `derive_axes`: axes for a plain VAE from a corpus;
//! - `preset`: slider settings saved as JSON.

pub use nudgebar_contract::{manifest, package};

pub mod codec;
pub mod derive_axes;
pub mod engine;
pub mod error;
pub mod fit;
pub mod graph_check;
pub mod network;
pub mod preset;
pub mod steer;
pub mod variation;

pub use codec::{HoleReport, NoteChoice, PitchMask};
pub use engine::{Engine, Latents, Prepared};
pub use error::{EngineError, ModelError};
pub use manifest::{Axis, Manifest};
pub use package::{ModelIdentity, ModelOrigin, ModelPackage};
pub use variation::{Take, Variation, VariationRequest, MAX_TAKES};
