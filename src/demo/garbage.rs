//! The broken payloads a faulty probe sends now and then, one kind per fault seen on real links:
//! a message cut short, NaN, a number sent as text, binary noise, and an oversized message.
//!
//! Each kind is built from the good JSON object the probe would have sent, so the rest of the message
//! looks ordinary. Every kind must be refused by the ingest core with [`GarbageKind::expected_reason`].
use serde_json::Value;

use crate::ingest::RejectReason;

/// Size of an oversized payload, bytes: above the demo's `ingest.max_payload_bytes` (4096) and below
/// the MQTT clients' packet limits.
pub const OVERSIZED_BYTES: usize = 6000;

/// One kind of broken payload.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash, PartialOrd, Ord)]
pub enum GarbageKind {
    /// The JSON object cut off half-way.
    Truncated,
    /// The conductivity sent as the text `"NaN"`.
    NanValue,
    /// The conductivity sent as text with its unit, e.g. `"41.7 mS/cm"`.
    WrongType,
    /// Bytes that are not UTF-8.
    Binary,
    /// A valid object padded past the size limit.
    Oversized,
}

impl GarbageKind {
    /// Every kind.
    pub const ALL: [GarbageKind; 5] = [
        Self::Truncated,
        Self::NanValue,
        Self::WrongType,
        Self::Binary,
        Self::Oversized,
    ];

    /// The kind for a uniform deviate in [0, 1) (each kind equally likely).
    pub fn pick(u: f64) -> Self {
        let i = ((u * Self::ALL.len() as f64) as usize).min(Self::ALL.len() - 1);
        Self::ALL[i]
    }

    /// What the ingest core calls this fault.
    pub fn expected_reason(self) -> RejectReason {
        match self {
            Self::Truncated => RejectReason::MalformedJson,
            Self::NanValue => RejectReason::NonFinite,
            Self::WrongType => RejectReason::NotNumeric,
            Self::Binary => RejectReason::NotUtf8,
            Self::Oversized => RejectReason::PayloadTooLarge,
        }
    }

    /// Short name for the demo's output.
    pub fn as_str(self) -> &'static str {
        match self {
            Self::Truncated => "truncated",
            Self::NanValue => "nan",
            Self::WrongType => "wrong_type",
            Self::Binary => "binary",
            Self::Oversized => "oversized",
        }
    }

    /// The broken payload made from the good JSON object `good`, whose conductivity is under
    /// `conductivity_key`; `bits` supplies the binary noise.
    pub fn payload(self, good: &Value, conductivity_key: &str, bits: u64) -> Vec<u8> {
        match self {
            Self::Truncated => {
                let text = good.to_string();
                // Cut at a character boundary strictly inside the object: the closing brace is always lost.
                let mut cut = text.len() / 2;
                while !text.is_char_boundary(cut) {
                    cut -= 1;
                }
                text.as_bytes()[..cut].to_vec()
            }
            Self::NanValue => with_conductivity(good, conductivity_key, Value::String("NaN".into())),
            Self::WrongType => {
                let shown = good
                    .get(conductivity_key)
                    .and_then(Value::as_f64)
                    .map_or_else(|| "41.7".to_string(), |v| format!("{v}"));
                with_conductivity(good, conductivity_key, Value::String(format!("{shown} mS/cm")))
            }
            Self::Binary => {
                // 0xFF never occurs in UTF-8 (RFC 3629 §1), so the payload cannot be text.
                let mut bytes = vec![0xFF, 0xFE, 0x00];
                bytes.extend_from_slice(&bits.to_le_bytes());
                bytes.extend_from_slice(&(!bits).to_be_bytes());
                bytes
            }
            Self::Oversized => {
                let mut object = good.clone();
                let base = object.to_string().len();
                let pad = OVERSIZED_BYTES.saturating_sub(base + 16);
                if let Value::Object(map) = &mut object {
                    map.insert("debug".into(), Value::String("#".repeat(pad)));
                }
                let mut bytes = object.to_string().into_bytes();
                if bytes.len() < OVERSIZED_BYTES {
                    // Not an object (does not happen for the demo's probes): pad with spaces, still JSON.
                    bytes.resize(OVERSIZED_BYTES, b' ');
                }
                bytes
            }
        }
    }
}

fn with_conductivity(good: &Value, key: &str, value: Value) -> Vec<u8> {
    let mut object = good.clone();
    if let Value::Object(map) = &mut object {
        map.insert(key.to_string(), value);
    }
    object.to_string().into_bytes()
}

#[cfg(test)]
mod tests {
    use super::*;
    use serde_json::json;

    #[test]
    fn every_kind_is_broken_the_way_it_says() {
        let good = json!({"conductivity": 41.723, "temperature": 11.02, "time": "2025-04-02T06:00:00Z"});
        for kind in GarbageKind::ALL {
            let bytes = kind.payload(&good, "conductivity", 0x0123_4567_89AB_CDEF);
            let parsed = std::str::from_utf8(&bytes)
                .ok()
                .and_then(|s| serde_json::from_str::<Value>(s).ok());
            match kind {
                GarbageKind::Truncated => assert!(parsed.is_none() && bytes.len() < good.to_string().len()),
                GarbageKind::NanValue => assert_eq!(parsed.unwrap()["conductivity"], json!("NaN")),
                GarbageKind::WrongType => assert_eq!(parsed.unwrap()["conductivity"], json!("41.723 mS/cm")),
                GarbageKind::Binary => assert!(std::str::from_utf8(&bytes).is_err()),
                GarbageKind::Oversized => {
                    assert!(bytes.len() >= OVERSIZED_BYTES);
                    assert_eq!(parsed.unwrap()["conductivity"], json!(41.723));
                }
            }
        }
        assert_eq!(GarbageKind::pick(0.0), GarbageKind::Truncated);
        assert_eq!(GarbageKind::pick(0.999_999), GarbageKind::Oversized);
    }
}
