//! Nudgebar's model contract and the data it saves, with no inference in
//! it: the manifest schema (`manifest`), reading model packages with size
//! caps (`package`), the errors a refused package gives (`error`), and the
//! take (`take`). The engine checks these against the ONNX graphs; parsers
//! here build in seconds, which keeps the fuzz targets cheap.

pub mod error;
pub mod manifest;
pub mod package;
pub mod take;

pub use error::ModelError;
pub use manifest::{Axis, Manifest};
pub use package::{ModelIdentity, ModelOrigin, ModelPackage};
pub use take::Take;
