//! Nudgebar's model contract and the data it saves, with no inference in
//! it: the manifest schema (`manifest`), reading model packages with size
//! caps (`package`), the errors a refused package gives (`error`), the
//! take (`take`), and the session a project saves with its loader
//! (`session`). The engine checks these against the ONNX graphs; parsers
//! here build in seconds, which keeps the fuzz targets cheap.

pub mod error;
pub mod manifest;
pub mod package;
pub mod session;
pub mod take;

pub use error::ModelError;
pub use manifest::{Axis, Manifest};
pub use package::{ModelIdentity, ModelOrigin, ModelPackage};
pub use take::Take;
