//! The model report: for a model package and a set of prompts, how well
//! each axis steers its attribute (Spearman ρ over a slider sweep), what
//! else each axis moves (the attribute-change matrix), where along each
//! slider the decoder misbehaves (hole rate), and a 2-D map of one
//! attribute over an axis and another latent dimension with the holes
//! marked. Written as JSON (the figures, with the raw sweeps they come
//! from) and as one self-contained HTML page with inline SVG plots.
//!
//! - `measure`: runs the sweeps and computes the figures;
//! - `plots`: the SVG charts;
//! - `html`: the page around them.

pub mod html;
pub mod measure;
pub mod plots;

pub use measure::{measure, AxisFigures, ChangeMatrix, LatentMap, ModelReport, ReportOptions};
