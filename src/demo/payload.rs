//! The good payloads of each simulated probe format: bare numbers, JSON objects and SenML packs.
//!
//! Values are rounded to what such a probe would print (see [`round_to`]). Times are RFC 3339 strings
//! or Unix seconds, whichever the format carries.
use chrono::{DateTime, SecondsFormat, Utc};
use serde_json::{json, Map, Value};

/// How a JSON probe writes its reading time.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum TimeStyle {
    /// An RFC 3339 string such as `2025-04-02T06:00:00Z`.
    Rfc3339,
    /// Unix seconds as a JSON number.
    UnixSeconds,
}

/// `value` rounded to `decimals` decimal places.
pub fn round_to(value: f64, decimals: i32) -> f64 {
    let scale = 10f64.powi(decimals);
    (value * scale).round() / scale
}

/// Unix seconds of a time, with its fraction.
pub fn unix_seconds(time: DateTime<Utc>) -> f64 {
    time.timestamp() as f64 + f64::from(time.timestamp_subsec_millis()) / 1000.0
}

/// The JSON value of a time in a style.
pub fn time_value(time: DateTime<Utc>, style: TimeStyle) -> Value {
    match style {
        TimeStyle::Rfc3339 => Value::String(time.to_rfc3339_opts(SecondsFormat::AutoSi, true)),
        TimeStyle::UnixSeconds if time.timestamp_subsec_millis() == 0 => json!(time.timestamp()),
        TimeStyle::UnixSeconds => json!(unix_seconds(time)),
    }
}

/// A bare decimal number with a fixed number of decimals, e.g. `312.5`.
pub fn bare_number(value: f64, decimals: usize) -> Vec<u8> {
    format!("{value:.decimals$}").into_bytes()
}

/// A JSON object from key/value pairs, keys in the given order.
pub fn json_object(pairs: &[(&str, Value)]) -> Value {
    let mut map = Map::new();
    for (key, value) in pairs {
        map.insert((*key).to_string(), value.clone());
    }
    Value::Object(map)
}

/// A SenML pack (RFC 8428) of one conductivity record in S/m and one temperature record in Cel, with
/// the base name `base_name` and base time in Unix seconds.
pub fn senml_pack(base_name: &str, time: DateTime<Utc>, conductivity_s_m: f64, temperature_c: f64) -> Value {
    json!([
        {"bn": base_name, "bt": time_value(time, TimeStyle::UnixSeconds), "n": "conductivity", "u": "S/m",
         "v": conductivity_s_m},
        {"n": "temp", "u": "Cel", "v": temperature_c}
    ])
}

/// A JSON value as payload bytes.
pub fn to_bytes(value: &Value) -> Vec<u8> {
    value.to_string().into_bytes()
}

#[cfg(test)]
mod tests {
    use super::*;

    fn t(s: &str) -> DateTime<Utc> {
        DateTime::parse_from_rfc3339(s).unwrap().with_timezone(&Utc)
    }

    #[test]
    fn payload_shapes() {
        assert_eq!(bare_number(312.46, 1), b"312.5");
        assert_eq!(round_to(41.72349, 3), 41.723);
        let time = t("2025-04-02T06:00:00Z");
        assert_eq!(
            time_value(time, TimeStyle::Rfc3339),
            json!("2025-04-02T06:00:00Z")
        );
        assert_eq!(time_value(time, TimeStyle::UnixSeconds), json!(1_743_573_600));
        assert_eq!(
            time_value(t("2025-04-02T06:00:00.250Z"), TimeStyle::UnixSeconds),
            json!(1_743_573_600.25)
        );
        let object = json_object(&[("cond_ms", json!(52.7)), ("water_c", json!(11.2))]);
        assert_eq!(to_bytes(&object), br#"{"cond_ms":52.7,"water_c":11.2}"#);
        assert_eq!(
            to_bytes(&senml_pack("shrimp-n2:", time, 2.35, 27.8)),
            br#"[{"bn":"shrimp-n2:","bt":1743573600,"n":"conductivity","u":"S/m","v":2.35},{"n":"temp","u":"Cel","v":27.8}]"#
        );
    }
}
