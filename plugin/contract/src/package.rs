//! A model package: a folder with `manifest.json` and the encoder and
//! decoder ONNX files it names. Reading a package only reads bytes and
//! checks the manifest; `Engine::new` checks the graphs and builds plans.

use crate::error::ModelError;
use crate::manifest::Manifest;
use serde::{Deserialize, Serialize};
use std::io::Read;
use std::path::{Path, PathBuf};

/// The manifest's file name inside a package folder.
pub const MANIFEST_FILE: &str = "manifest.json";
/// Manifests are small; anything larger is not one.
pub const MAX_MANIFEST_BYTES: u64 = 1 << 20;
/// Cap on each ONNX file, checked before reading, so a wrong path (a sample
/// library, a video) cannot make the worker allocate without bound.
pub const MAX_ONNX_BYTES: u64 = 256 << 20;

/// Where a package came from, for display and for the plugin's saved state.
#[derive(Debug, Clone, PartialEq, Eq, Serialize, Deserialize)]
pub enum ModelOrigin {
    /// Compiled into the binary.
    Embedded,
    /// A folder on disk.
    Folder(PathBuf),
}

/// Which model made a take: enough to tell later whether the same model is loaded.
#[derive(Debug, Clone, PartialEq, Eq, Serialize, Deserialize)]
pub struct ModelIdentity {
    pub name: String,
    /// FNV-1a 64 of manifest, encoder and decoder bytes, in hex. Not
    /// cryptographic: it only tells models apart.
    pub fingerprint: String,
}

#[derive(Debug, Clone)]
pub struct ModelPackage {
    pub manifest: Manifest,
    pub encoder: Vec<u8>,
    pub decoder: Vec<u8>,
    pub origin: ModelOrigin,
    identity: ModelIdentity,
}

impl ModelPackage {
    /// Reads a package folder.
    pub fn load(folder: &Path) -> Result<ModelPackage, ModelError> {
        let meta = std::fs::metadata(folder)
            .map_err(|e| ModelError::FolderUnreadable(folder.to_path_buf(), e.to_string()))?;
        if !meta.is_dir() {
            return Err(ModelError::FolderUnreadable(
                folder.to_path_buf(),
                "it is a file, not a folder; choose the folder that holds manifest.json".into(),
            ));
        }
        let manifest_bytes = read_capped(folder, MANIFEST_FILE, MAX_MANIFEST_BYTES, "a manifest")?;
        let json = String::from_utf8(manifest_bytes).map_err(|_| ModelError::ManifestSyntax {
            file: MANIFEST_FILE.into(),
            line: 0,
            column: 0,
            detail: "the file is not UTF-8 text".into(),
        })?;
        let manifest = Manifest::parse(&json, MANIFEST_FILE)?;
        let encoder = read_capped(
            folder,
            &manifest.encoder.file,
            MAX_ONNX_BYTES,
            "an ONNX model",
        )?;
        let decoder = read_capped(
            folder,
            &manifest.decoder.file,
            MAX_ONNX_BYTES,
            "an ONNX model",
        )?;
        Ok(Self::assemble(
            manifest,
            &json,
            encoder,
            decoder,
            ModelOrigin::Folder(folder.to_path_buf()),
        ))
    }

    /// Builds a package from bytes already in memory (the embedded demo model, tests).
    pub fn from_parts(
        manifest_json: &str,
        encoder: Vec<u8>,
        decoder: Vec<u8>,
        origin: ModelOrigin,
    ) -> Result<ModelPackage, ModelError> {
        let manifest = Manifest::parse(manifest_json, MANIFEST_FILE)?;
        for (bytes, file) in [
            (&encoder, &manifest.encoder.file),
            (&decoder, &manifest.decoder.file),
        ] {
            if bytes.len() as u64 > MAX_ONNX_BYTES {
                return Err(ModelError::FileTooLarge {
                    file: file.clone(),
                    size: bytes.len() as u64,
                    limit: MAX_ONNX_BYTES,
                    what: "an ONNX model",
                });
            }
        }
        Ok(Self::assemble(
            manifest,
            manifest_json,
            encoder,
            decoder,
            origin,
        ))
    }

    fn assemble(
        manifest: Manifest,
        json: &str,
        encoder: Vec<u8>,
        decoder: Vec<u8>,
        origin: ModelOrigin,
    ) -> ModelPackage {
        let mut hash = Fnv1a::default();
        hash.write(json.as_bytes());
        hash.write(&encoder);
        hash.write(&decoder);
        let identity = ModelIdentity {
            name: manifest.name.clone(),
            fingerprint: format!("{:016x}", hash.0),
        };
        ModelPackage {
            manifest,
            encoder,
            decoder,
            origin,
            identity,
        }
    }

    pub fn identity(&self) -> &ModelIdentity {
        &self.identity
    }

    /// Writes the package into `folder` (created if needed).
    pub fn save(&self, folder: &Path) -> std::io::Result<()> {
        std::fs::create_dir_all(folder)?;
        std::fs::write(folder.join(MANIFEST_FILE), self.manifest.to_json())?;
        std::fs::write(folder.join(&self.manifest.encoder.file), &self.encoder)?;
        std::fs::write(folder.join(&self.manifest.decoder.file), &self.decoder)
    }
}

fn read_capped(
    folder: &Path,
    file: &str,
    limit: u64,
    what: &'static str,
) -> Result<Vec<u8>, ModelError> {
    let path = folder.join(file);
    let meta = match std::fs::metadata(&path) {
        Ok(m) => m,
        Err(e) if e.kind() == std::io::ErrorKind::NotFound => {
            // A link whose target is gone still exists as a link: say that,
            // not "missing", so the user looks at the link.
            if std::fs::symlink_metadata(&path).is_ok_and(|m| m.file_type().is_symlink()) {
                return Err(ModelError::FolderUnreadable(
                    path,
                    "it is a link to a file that no longer exists".into(),
                ));
            }
            return Err(ModelError::MissingFile {
                folder: folder.to_path_buf(),
                file: file.to_string(),
            });
        }
        Err(e) => return Err(ModelError::FolderUnreadable(path, e.to_string())),
    };
    // Only regular files: opening a named pipe blocks until someone writes
    // to it, and a device such as /dev/zero never ends, so either would
    // hang the worker; both report a length of 0, which passes the cap.
    if meta.is_dir() {
        return Err(ModelError::FolderUnreadable(
            path,
            "it is a folder, not a file".into(),
        ));
    }
    if !meta.is_file() {
        return Err(ModelError::FolderUnreadable(
            path,
            "it is not a regular file (a pipe, socket or device), so it cannot hold a model".into(),
        ));
    }
    if meta.len() > limit {
        return Err(ModelError::FileTooLarge {
            file: file.to_string(),
            size: meta.len(),
            limit,
            what,
        });
    }
    // Read at most one byte past the cap, in case the file grew after it was measured.
    let mut bytes = Vec::with_capacity(meta.len() as usize);
    std::fs::File::open(&path)
        .and_then(|f| f.take(limit + 1).read_to_end(&mut bytes))
        .map_err(|e| ModelError::FolderUnreadable(path.clone(), e.to_string()))?;
    if bytes.len() as u64 > limit {
        return Err(ModelError::FileTooLarge {
            file: file.to_string(),
            size: bytes.len() as u64,
            limit,
            what,
        });
    }
    Ok(bytes)
}

/// FNV-1a, 64-bit (Fowler, Noll, Vo; parameters from the IETF draft
/// draft-eastlake-fnv). A handful of lines, so no dependency for it.
struct Fnv1a(u64);

impl Default for Fnv1a {
    fn default() -> Self {
        Fnv1a(0xcbf2_9ce4_8422_2325)
    }
}

impl Fnv1a {
    fn write(&mut self, bytes: &[u8]) {
        for &b in bytes {
            self.0 ^= b as u64;
            self.0 = self.0.wrapping_mul(0x0000_0100_0000_01b3);
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn fnv1a_matches_published_test_vectors() {
        // Test vectors from the FNV reference page (isthe.com/chongo/tech/comp/fnv):
        // FNV-1a 64 of "" and of "a".
        let mut h = Fnv1a::default();
        h.write(b"");
        assert_eq!(h.0, 0xcbf29ce484222325);
        let mut h = Fnv1a::default();
        h.write(b"a");
        assert_eq!(h.0, 0xaf63dc4c8601ec8c);
    }
}
