//! The model manifest parser (`nudgebar_contract::Manifest::parse`) on
//! arbitrary bytes: it must return a manifest or a `ModelError`, never panic,
//! and whatever it accepts must survive its own checks again after a
//! write/read round trip.
#![no_main]

use libfuzzer_sys::fuzz_target;
use nudgebar_contract::Manifest;

fuzz_target!(|data: &[u8]| {
    // The package loader refuses non-UTF-8 manifests before parsing.
    let Ok(text) = std::str::from_utf8(data) else {
        return;
    };
    match Manifest::parse(text, "manifest.json") {
        Ok(manifest) => {
            // Accepted manifests resolve their axes to unit vectors of the
            // declared latent size (the engine relies on both).
            for axis in manifest.resolved_axes() {
                assert_eq!(axis.direction.len(), manifest.latent_size);
                let norm: f32 = axis.direction.iter().map(|x| x * x).sum::<f32>().sqrt();
                assert!((norm - 1.0).abs() < 1e-3, "axis direction not unit: {norm}");
            }
            let again = Manifest::parse(&manifest.to_json(), "manifest.json")
                .expect("a manifest we accepted must accept its own JSON");
            assert_eq!(again, manifest);
        }
        Err(e) => assert!(!e.to_string().is_empty()),
    }
});
