//! The demo model, compiled into the binary so Nudgebar's sliders do
//! something real on a fresh machine with no model installed.
//!
//! The files in `package/` are written by `cargo xtask train-demo-model`
//! (the trainer lives in `plugin/trainer`, so depending on this crate never
//! compiles candle); `REPORT.md` beside them has the training figures and
//! the steering proof.

use nudgebar_contract::{ModelOrigin, ModelPackage};

/// The manifest, as shipped.
pub const MANIFEST: &str = include_str!("../package/manifest.json");
/// The encoder: one-hot tokens `[batch, 16, 38]` → mean and log-variance `[batch, 32]`.
pub const ENCODER: &[u8] = include_bytes!("../package/encoder.onnx");
/// The decoder: latent code `[batch, 32]` → logits `[batch, 16, 38]`.
pub const DECODER: &[u8] = include_bytes!("../package/decoder.onnx");

/// The embedded package. Its manifest is checked by a test on every build,
/// so the parse cannot fail in a released binary.
pub fn package() -> ModelPackage {
    ModelPackage::from_parts(
        MANIFEST,
        ENCODER.to_vec(),
        DECODER.to_vec(),
        ModelOrigin::Embedded,
    )
    .expect("the embedded demo manifest parses (checked by this crate's tests)")
}

#[cfg(test)]
mod tests {
    #[test]
    fn the_embedded_manifest_parses_and_names_four_axes() {
        let p = super::package();
        assert_eq!(p.manifest.axes.len(), 4);
        assert_eq!(p.manifest.latent_size, 32);
        // Well under the 2 MB the issue allows for the whole package.
        assert!(super::ENCODER.len() + super::DECODER.len() + super::MANIFEST.len() < 2_000_000);
    }
}
