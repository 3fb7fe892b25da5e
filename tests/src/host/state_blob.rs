//! Reading and writing the state blob a nice-plug plugin hands the host.
//!
//! nice-plug's CLAP wrapper (`ext_state_save` in nice-plug 0.4.2) writes an
//! 8-byte little-endian length, then that many bytes of JSON:
//! `{"version": …, "params": {id: value}, "fields": {name: "<JSON text>"}}`,
//! each persisted field being JSON text of its own. Tests read it to see
//! what a plugin saved, and write modified or broken blobs to see how it
//! loads them.

use super::plugin::HarnessError;
use serde_json::{Map, Value};

/// A parsed state blob.
#[derive(Debug, Clone, PartialEq)]
pub struct StateBlob {
    /// The whole JSON document, as saved.
    pub document: Value,
}

impl StateBlob {
    /// Parses a blob saved by a nice-plug plugin.
    pub fn parse(bytes: &[u8]) -> Result<StateBlob, HarnessError> {
        let err =
            |why: String| HarnessError(format!("the state blob is not nice-plug's format: {why}"));
        let (len, json) = bytes
            .split_at_checked(8)
            .ok_or_else(|| err(format!("{} bytes is too short", bytes.len())))?;
        let len = u64::from_le_bytes(len.try_into().expect("split at 8")) as usize;
        if len != json.len() {
            return Err(err(format!(
                "length prefix says {len} bytes, {} follow",
                json.len()
            )));
        }
        let document = serde_json::from_slice(json).map_err(|e| err(e.to_string()))?;
        Ok(StateBlob { document })
    }

    /// The blob's bytes again (length prefix + compact JSON, keys sorted).
    pub fn to_bytes(&self) -> Vec<u8> {
        let json = serde_json::to_vec(&self.document).expect("a Value always serializes");
        raw_blob(&json)
    }

    /// Saved parameter values by the plugin's parameter id string.
    pub fn params(&self) -> Map<String, Value> {
        self.document
            .get("params")
            .and_then(Value::as_object)
            .cloned()
            .unwrap_or_default()
    }

    /// A persisted field, decoded from its JSON text.
    pub fn field(&self, name: &str) -> Option<Value> {
        let text = self.document.get("fields")?.get(name)?.as_str()?;
        serde_json::from_str(text).ok()
    }

    /// Replaces a persisted field (encoded as JSON text, as nice-plug does).
    pub fn set_field(&mut self, name: &str, value: &Value) {
        self.set_field_text(name, &value.to_string());
    }

    /// Replaces a persisted field's raw text (which need not be valid JSON,
    /// to test how a plugin copes with a damaged field).
    pub fn set_field_text(&mut self, name: &str, text: &str) {
        let fields = self
            .document
            .as_object_mut()
            .expect("document is an object")
            .entry("fields")
            .or_insert_with(|| Value::Object(Map::new()));
        fields
            .as_object_mut()
            .expect("fields is an object")
            .insert(name.to_string(), Value::String(text.to_string()));
    }
}

/// Wraps arbitrary bytes in nice-plug's length prefix, so a test can hand the
/// plugin any payload (broken JSON, other formats) past the framing.
pub fn raw_blob(payload: &[u8]) -> Vec<u8> {
    let mut bytes = (payload.len() as u64).to_le_bytes().to_vec();
    bytes.extend_from_slice(payload);
    bytes
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn round_trips_and_edits_fields() {
        let json =
            br#"{"version":"0.1.0","params":{"takes":4.0},"fields":{"session":"{\"version\":1}"}}"#;
        let bytes = raw_blob(json);
        let mut blob = StateBlob::parse(&bytes).unwrap();
        // serde_json sorts object keys, so compare documents, not bytes.
        assert_eq!(StateBlob::parse(&blob.to_bytes()).unwrap(), blob);
        assert_eq!(blob.field("session").unwrap()["version"], 1);
        assert_eq!(blob.params()["takes"], 4.0);
        blob.set_field("session", &serde_json::json!({"version": 2}));
        assert_eq!(
            StateBlob::parse(&blob.to_bytes())
                .unwrap()
                .field("session")
                .unwrap()["version"],
            2
        );
    }

    #[test]
    fn a_wrong_length_prefix_is_refused() {
        let mut bytes = raw_blob(b"{}");
        bytes[0] = 3;
        assert!(StateBlob::parse(&bytes)
            .unwrap_err()
            .0
            .contains("length prefix"));
    }
}
