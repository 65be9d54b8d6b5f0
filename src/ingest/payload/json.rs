//! JSON object payloads with configurable keys: `{"conductivity": 52.7, "temperature": 11.2, "time": ...}`.
//!
//! Rules: the payload is one JSON object (RFC 8259). A key starting with `/` is a JSON Pointer
//! (RFC 6901) into nested objects. Values are JSON numbers; a string, boolean, array or object is
//! `not_numeric`, except strings spelling NaN or infinity, which are `non_finite` (JSON itself has no
//! such numbers). A missing or `null` value is `missing_field`. The time, when its key is present, is an
//! RFC 3339 string or Unix seconds (a number). On a per-quantity topic only that quantity's key is read.
use serde_json::Value;

use super::time::{from_rfc3339, from_unix_seconds};
use super::{finite, names_non_finite, Expect, PayloadError, Quantity, Sample};
use crate::config::JsonKeys;
use crate::ingest::outcome::RejectReason;

/// Parses a JSON object payload into samples sharing the object's time.
pub fn parse(text: &str, keys: &JsonKeys, expect: Expect) -> Result<Vec<Sample>, PayloadError> {
    let value: Value = serde_json::from_str(text)
        .map_err(|e| PayloadError::new(RejectReason::MalformedJson, format!("not JSON: {e}")))?;
    if !value.is_object() {
        return Err(PayloadError::new(
            RejectReason::MalformedJson,
            format!("expected a JSON object, found {}", kind_of(&value)),
        ));
    }
    let time = match keys
        .time
        .as_deref()
        .and_then(|key| lookup(&value, key).map(|v| (key, v)))
    {
        None => None,
        Some((key, Value::Number(n))) => {
            let seconds = n.as_f64().ok_or_else(|| {
                PayloadError::new(
                    RejectReason::BadTime,
                    format!("`{key}`: {n} is not a usable number"),
                )
            })?;
            Some(from_unix_seconds(seconds)?)
        }
        Some((_, Value::String(s))) => Some(from_rfc3339(s)?),
        Some((key, other)) => {
            return Err(PayloadError::new(
                RejectReason::BadTime,
                format!(
                    "`{key}` must be an RFC 3339 string or Unix seconds, found {}",
                    kind_of(other)
                ),
            ));
        }
    };
    let mut samples = Vec::with_capacity(2);
    for (quantity, key) in [
        (Quantity::Conductivity, keys.conductivity.as_str()),
        (Quantity::Temperature, keys.temperature.as_str()),
    ] {
        if !expect.wants(quantity) {
            continue;
        }
        let value = number(&value, key)?;
        samples.push(Sample {
            quantity,
            value,
            conductivity_unit: None,
            time,
        });
    }
    Ok(samples)
}

fn lookup<'a>(value: &'a Value, key: &str) -> Option<&'a Value> {
    if key.starts_with('/') {
        value.pointer(key)
    } else {
        value.get(key)
    }
}

fn number(value: &Value, key: &str) -> Result<f64, PayloadError> {
    match lookup(value, key) {
        None | Some(Value::Null) => Err(PayloadError::new(
            RejectReason::MissingField,
            format!("no value for key `{key}`"),
        )),
        Some(Value::Number(n)) => {
            let v = n
                .as_f64()
                .ok_or_else(|| PayloadError::new(RejectReason::NotNumeric, format!("`{key}`: {n}")))?;
            finite(v, &format!("`{key}`"))
        }
        Some(Value::String(s)) if names_non_finite(s) => Err(PayloadError::new(
            RejectReason::NonFinite,
            format!("`{key}` is \"{s}\""),
        )),
        Some(other) => Err(PayloadError::new(
            RejectReason::NotNumeric,
            format!("`{key}` must be a JSON number, found {}", kind_of(other)),
        )),
    }
}

fn kind_of(value: &Value) -> &'static str {
    match value {
        Value::Null => "null",
        Value::Bool(_) => "a boolean",
        Value::Number(_) => "a number",
        Value::String(_) => "a string",
        Value::Array(_) => "an array",
        Value::Object(_) => "an object",
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    fn keys() -> JsonKeys {
        JsonKeys {
            conductivity: "conductivity".into(),
            temperature: "temperature".into(),
            time: Some("time".into()),
        }
    }

    fn reason(text: &str, expect: Expect) -> RejectReason {
        parse(text, &keys(), expect).unwrap_err().reason
    }

    #[test]
    fn combined_object_with_rfc3339_time() {
        let s = parse(
            r#"{"conductivity": 52.7, "temperature": 11.2, "time": "2025-04-02T06:00:00+01:00"}"#,
            &keys(),
            Expect::Both,
        )
        .unwrap();
        assert_eq!(s.len(), 2);
        assert_eq!((s[0].quantity, s[0].value), (Quantity::Conductivity, 52.7));
        assert_eq!((s[1].quantity, s[1].value), (Quantity::Temperature, 11.2));
        assert_eq!(s[0].time.unwrap().to_rfc3339(), "2025-04-02T05:00:00+00:00");
        assert_eq!(s[0].time, s[1].time);
    }

    #[test]
    fn unix_seconds_time_and_absent_time() {
        let s = parse(
            r#"{"conductivity": 1, "temperature": 2, "time": 1743573600.5}"#,
            &keys(),
            Expect::Both,
        )
        .unwrap();
        assert_eq!(s[0].time.unwrap().timestamp_millis(), 1_743_573_600_500);
        let s = parse(r#"{"conductivity": 1, "temperature": 2}"#, &keys(), Expect::Both).unwrap();
        assert_eq!(s[0].time, None);
    }

    #[test]
    fn per_quantity_topics_read_only_their_key() {
        let s = parse(r#"{"conductivity": 48.1}"#, &keys(), Expect::Conductivity).unwrap();
        assert_eq!(s.len(), 1);
        assert_eq!(s[0].quantity, Quantity::Conductivity);
        let s = parse(
            r#"{"temperature": 12.5, "conductivity": "n/a"}"#,
            &keys(),
            Expect::Temperature,
        )
        .unwrap();
        assert_eq!((s.len(), s[0].value), (1, 12.5));
    }

    #[test]
    fn json_pointer_keys_reach_nested_values() {
        let keys = JsonKeys {
            conductivity: "/probe/ec".into(),
            temperature: "/probe/t".into(),
            time: Some("/meta/at".into()),
        };
        let s = parse(
            r#"{"probe": {"ec": 30.2, "t": 14.0}, "meta": {"at": "2025-04-02T06:00:00Z"}}"#,
            &keys,
            Expect::Both,
        )
        .unwrap();
        assert_eq!((s[0].value, s[1].value), (30.2, 14.0));
    }

    #[test]
    fn each_fault_has_its_reason() {
        use RejectReason::*;
        assert_eq!(
            reason(r#"{"conductivity": 52.7, "temperature""#, Expect::Both),
            MalformedJson
        );
        assert_eq!(reason("[52.7, 11.2]", Expect::Both), MalformedJson);
        assert_eq!(reason("52.7", Expect::Both), MalformedJson);
        assert_eq!(
            reason(r#"{"conductivity": NaN, "temperature": 1}"#, Expect::Both),
            MalformedJson
        );
        assert_eq!(
            reason(r#"{"conductivity": 1e999, "temperature": 1}"#, Expect::Both),
            MalformedJson
        );
        assert_eq!(reason(r#"{"conductivity": 52.7}"#, Expect::Both), MissingField);
        assert_eq!(
            reason(r#"{"conductivity": null, "temperature": 1}"#, Expect::Both),
            MissingField
        );
        assert_eq!(
            reason(r#"{"conductivity": "52.7", "temperature": 1}"#, Expect::Both),
            NotNumeric
        );
        assert_eq!(
            reason(r#"{"conductivity": true, "temperature": 1}"#, Expect::Both),
            NotNumeric
        );
        assert_eq!(
            reason(r#"{"conductivity": [1], "temperature": 1}"#, Expect::Both),
            NotNumeric
        );
        assert_eq!(
            reason(r#"{"conductivity": "NaN", "temperature": 1}"#, Expect::Both),
            NonFinite
        );
        assert_eq!(
            reason(r#"{"conductivity": 1, "temperature": "-Infinity"}"#, Expect::Both),
            NonFinite
        );
        assert_eq!(
            reason(
                r#"{"conductivity": 1, "temperature": 1, "time": "yesterday"}"#,
                Expect::Both
            ),
            BadTime
        );
        assert_eq!(
            reason(
                r#"{"conductivity": 1, "temperature": 1, "time": 0}"#,
                Expect::Both
            ),
            BadTime
        );
        assert_eq!(
            reason(
                r#"{"conductivity": 1, "temperature": 1, "time": -1}"#,
                Expect::Both
            ),
            BadTime
        );
        assert_eq!(
            reason(
                r#"{"conductivity": 1, "temperature": 1, "time": true}"#,
                Expect::Both
            ),
            BadTime
        );
    }
}
