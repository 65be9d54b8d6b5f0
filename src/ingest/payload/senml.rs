//! SenML packs (RFC 8428, JSON representation) carrying conductivity and temperature records.
//!
//! Resolution follows RFC 8428 §4: base fields (`bn`, `bt`, `bu`, `bv`) apply to their record and every
//! later one until replaced (§4.1); the name is `bn` + `n` (§4.5.1), the unit `u` else `bu` (§4.5.2),
//! the time `bt` + `t` where results below 2^28 are seconds relative to the time of receipt (§4.5.3),
//! and the value `bv` + `v` (§4.5.4). A label ending in `_` is a must-understand extension halotank does
//! not know, so the pack is refused (§4.4). Records without a numeric value (only base fields, or `vs`,
//! `vb`, `vd`, `s` on other records) are skipped.
//!
//! Which record is which (halotank's rule):
//! - by unit: `S/m` (the registered SenML unit), also `mS/cm` and `uS/cm`: conductivity;
//!   `Cel` (or `K`, converted): temperature;
//! - without a unit, by the resolved name's ending (case-insensitive): `conductivity` or `cond`:
//!   conductivity in the tank's configured unit; `temperature` or `temp`: temperature in °C;
//! - a unit and a name ending that disagree: `senml_invalid`; a name ending of either quantity with an
//!   other unit: `unknown_unit`; anything else (humidity, battery, ...) is skipped.
//!
//! On a per-quantity topic only that quantity's records are read. A pack with none is `senml_invalid`.
use chrono::{DateTime, Utc};
use serde_json::{Map, Value};

use super::time::from_unix_seconds;
use super::{finite, Expect, PayloadError, Quantity, Sample};
use crate::ingest::outcome::RejectReason;
use crate::seawater::ConductivityUnit;

/// Times below 2^28 s are relative to "now" (RFC 8428 §4.5.3).
pub const RELATIVE_TIME_LIMIT_S: f64 = 268_435_456.0;

/// Absolute Kelvin offset of the Celsius scale (SI definition).
const KELVIN_OFFSET: f64 = 273.15;

/// One record after base-field resolution (RFC 8428 §4.6), before classification.
#[derive(Debug, Clone, PartialEq)]
pub struct ResolvedRecord {
    /// Index of the record in the pack.
    pub index: usize,
    /// `bn` + `n`.
    pub name: String,
    /// `u`, else `bu`.
    pub unit: Option<String>,
    /// `bv` + `v`; `None` for records without a numeric value.
    pub value: Option<f64>,
    /// True when the record has a string, boolean or data value instead of `v`.
    pub has_other_value: bool,
    /// Absolute time, Unix seconds.
    pub time_s: f64,
}

/// Parses a SenML pack into the samples a topic carries.
pub fn parse(text: &str, received_at: DateTime<Utc>, expect: Expect) -> Result<Vec<Sample>, PayloadError> {
    let records = resolve(text, received_at)?;
    let mut samples = Vec::new();
    for record in &records {
        let Some((quantity, unit)) = classify(record)? else {
            continue;
        };
        if !expect.wants(quantity) {
            continue;
        }
        let what = format!("record {} (`{}`)", record.index, record.name);
        let Some(value) = record.value else {
            if record.has_other_value {
                return Err(PayloadError::new(
                    RejectReason::NotNumeric,
                    format!("{what} has a string, boolean or data value, not `v`"),
                ));
            }
            continue;
        };
        let value = finite(value, &what)?;
        let (value, conductivity_unit) = match unit {
            RecordUnit::Conductivity(u) => (value, u),
            RecordUnit::Celsius => (value, None),
            RecordUnit::Kelvin => (value - KELVIN_OFFSET, None),
        };
        samples.push(Sample {
            quantity,
            value,
            conductivity_unit,
            time: Some(from_unix_seconds(record.time_s).map_err(|e| PayloadError {
                detail: format!("{what}: {}", e.detail),
                ..e
            })?),
        });
    }
    if samples.is_empty() {
        let wanted = match expect {
            Expect::Both => "conductivity or temperature",
            Expect::Conductivity => "conductivity",
            Expect::Temperature => "temperature",
        };
        return Err(PayloadError::new(
            RejectReason::SenmlInvalid,
            format!("the pack has no {wanted} record with a numeric value"),
        ));
    }
    Ok(samples)
}

/// Resolves every record of a pack (RFC 8428 §4.6). Times relative per §4.5.3 are made absolute
/// against `now`.
pub fn resolve(text: &str, now: DateTime<Utc>) -> Result<Vec<ResolvedRecord>, PayloadError> {
    let invalid = |detail: String| PayloadError::new(RejectReason::SenmlInvalid, detail);
    let pack: Value = serde_json::from_str(text)
        .map_err(|e| PayloadError::new(RejectReason::MalformedJson, format!("not JSON: {e}")))?;
    let Value::Array(items) = pack else {
        return Err(invalid("a SenML pack is a JSON array of records".to_string()));
    };
    if items.is_empty() {
        return Err(invalid("the pack is empty".to_string()));
    }
    let now_s = now.timestamp() as f64 + f64::from(now.timestamp_subsec_nanos()) * 1e-9;
    let mut base_name = String::new();
    let mut base_time = 0.0;
    let mut base_unit: Option<String> = None;
    let mut base_value = 0.0;
    let mut resolved = Vec::with_capacity(items.len());
    for (index, item) in items.iter().enumerate() {
        let Value::Object(record) = item else {
            return Err(invalid(format!("record {index} is not a JSON object")));
        };
        if let Some(label) = record.keys().find(|k| k.ends_with('_')) {
            return Err(invalid(format!(
                "record {index} has must-understand label `{label}` (RFC 8428 §4.4) that halotank does not know"
            )));
        }
        let field = Fields { record, index };
        if let Some(bn) = field.string("bn")? {
            base_name = bn.to_string();
        }
        if let Some(bt) = field.number("bt")? {
            base_time = bt;
        }
        if let Some(bu) = field.string("bu")? {
            base_unit = Some(bu.to_string());
        }
        if let Some(bv) = field.number("bv")? {
            base_value = bv;
        }
        field.number("bver")?;
        let name = format!("{base_name}{}", field.string("n")?.unwrap_or(""));
        check_name(&name).map_err(|m| invalid(format!("record {index}: {m}")))?;
        let unit = field
            .string("u")?
            .map(str::to_string)
            .or_else(|| base_unit.clone());
        let value = match record.get("v") {
            None => None,
            Some(Value::Number(n)) => n.as_f64().map(|v| base_value + v),
            Some(other) => {
                return Err(PayloadError::new(
                    RejectReason::NotNumeric,
                    format!("record {index}: `v` must be a number, found {other}"),
                ));
            }
        };
        let has_other_value = ["vs", "vb", "vd"].iter().any(|k| record.contains_key(*k));
        let mut time_s = base_time + field.number("t")?.unwrap_or(0.0);
        if time_s < RELATIVE_TIME_LIMIT_S {
            time_s += now_s;
        }
        resolved.push(ResolvedRecord {
            index,
            name,
            unit,
            value,
            has_other_value,
            time_s,
        });
    }
    Ok(resolved)
}

struct Fields<'a> {
    record: &'a Map<String, Value>,
    index: usize,
}

impl Fields<'_> {
    fn string(&self, key: &str) -> Result<Option<&str>, PayloadError> {
        match self.record.get(key) {
            None => Ok(None),
            Some(Value::String(s)) => Ok(Some(s)),
            Some(other) => Err(PayloadError::new(
                RejectReason::SenmlInvalid,
                format!("record {}: `{key}` must be a string, found {other}", self.index),
            )),
        }
    }

    fn number(&self, key: &str) -> Result<Option<f64>, PayloadError> {
        match self.record.get(key) {
            None => Ok(None),
            Some(Value::Number(n)) => Ok(n.as_f64()),
            Some(other) => Err(PayloadError::new(
                RejectReason::SenmlInvalid,
                format!("record {}: `{key}` must be a number, found {other}", self.index),
            )),
        }
    }
}

/// RFC 8428 §4.5.1: a resolved name uses `A-Z a-z 0-9 - : . / _` and starts with a letter or digit.
fn check_name(name: &str) -> Result<(), String> {
    let Some(first) = name.chars().next() else {
        return Err("the record has no name (`bn` + `n` is empty)".to_string());
    };
    if !first.is_ascii_alphanumeric() {
        return Err(format!("name `{name}` must start with a letter or digit"));
    }
    if let Some(bad) = name
        .chars()
        .find(|c| !(c.is_ascii_alphanumeric() || matches!(c, '-' | ':' | '.' | '/' | '_')))
    {
        return Err(format!(
            "name `{name}` contains `{bad}`, not allowed in SenML names"
        ));
    }
    Ok(())
}

#[derive(Debug, Clone, Copy, PartialEq)]
enum RecordUnit {
    /// Conductivity in this unit, or the tank's unit when `None`.
    Conductivity(Option<ConductivityUnit>),
    Celsius,
    Kelvin,
}

fn quantity_by_name(name: &str) -> Option<Quantity> {
    let name = name.to_ascii_lowercase();
    if name.ends_with("conductivity") || name.ends_with("cond") {
        Some(Quantity::Conductivity)
    } else if name.ends_with("temperature") || name.ends_with("temp") {
        Some(Quantity::Temperature)
    } else {
        None
    }
}

fn quantity_by_unit(unit: &str) -> Option<(Quantity, RecordUnit)> {
    match unit {
        "Cel" => Some((Quantity::Temperature, RecordUnit::Celsius)),
        "K" => Some((Quantity::Temperature, RecordUnit::Kelvin)),
        other => ConductivityUnit::parse(other)
            .map(|u| (Quantity::Conductivity, RecordUnit::Conductivity(Some(u)))),
    }
}

/// Applies the documented rule; `None` for records that are neither quantity.
fn classify(record: &ResolvedRecord) -> Result<Option<(Quantity, RecordUnit)>, PayloadError> {
    let by_name = quantity_by_name(&record.name);
    match (record.unit.as_deref(), by_name) {
        (None, None) => Ok(None),
        (None, Some(Quantity::Conductivity)) => {
            Ok(Some((Quantity::Conductivity, RecordUnit::Conductivity(None))))
        }
        (None, Some(Quantity::Temperature)) => Ok(Some((Quantity::Temperature, RecordUnit::Celsius))),
        (Some(unit), by_name) => match (quantity_by_unit(unit), by_name) {
            (Some((q, u)), None) => Ok(Some((q, u))),
            (Some((q, u)), Some(n)) if q == n => Ok(Some((q, u))),
            (Some(_), Some(n)) => Err(PayloadError::new(
                RejectReason::SenmlInvalid,
                format!(
                    "record {}: name `{}` says {} but unit `{unit}` says otherwise",
                    record.index,
                    record.name,
                    match n {
                        Quantity::Conductivity => "conductivity",
                        Quantity::Temperature => "temperature",
                    }
                ),
            )),
            (None, Some(_)) => Err(PayloadError::new(
                RejectReason::UnknownUnit,
                format!(
                    "record {} (`{}`): unit `{unit}` is not S/m, mS/cm, uS/cm, Cel or K",
                    record.index, record.name
                ),
            )),
            (None, None) => Ok(None),
        },
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    fn now() -> DateTime<Utc> {
        DateTime::from_timestamp(1_743_573_600, 0).unwrap()
    }

    // The packs below are the examples of RFC 8428 §5.1 (recalled from the RFC, from memory).

    #[test]
    fn rfc8428_5_1_1_single_datapoint() {
        // §5.1.1: one temperature without a time: "roughly now".
        let pack = r#"[{"n":"urn:dev:ow:10e2073a01080063","u":"Cel","v":23.1}]"#;
        let s = parse(pack, now(), Expect::Temperature).unwrap();
        assert_eq!(s.len(), 1);
        assert_eq!((s[0].quantity, s[0].value), (Quantity::Temperature, 23.1));
        assert_eq!(s[0].time, Some(now()));
        // The same pack carries no conductivity.
        let e = parse(pack, now(), Expect::Conductivity).unwrap_err();
        assert_eq!(e.reason, RejectReason::SenmlInvalid);
    }

    #[test]
    fn rfc8428_5_1_2_multiple_datapoints_resolve_as_in_5_1_4() {
        // §5.1.2 pack, whose resolved form the RFC gives in §5.1.4: names bn + n, unit bu where no u,
        // times bt + t.
        let pack = r#"[
            {"bn":"urn:dev:ow:10e2073a0108006:","bt":1.276020076001e+09,"bu":"A","bver":5,
             "n":"voltage","u":"V","v":120.1},
            {"n":"current","t":-5,"v":1.2},
            {"n":"current","t":-4,"v":1.3},
            {"n":"current","t":-3,"v":1.4},
            {"n":"current","t":-2,"v":1.5},
            {"n":"current","t":-1,"v":1.6},
            {"n":"current","v":1.7}
        ]"#;
        let records = resolve(pack, now()).unwrap();
        assert_eq!(records.len(), 7);
        assert_eq!(records[0].name, "urn:dev:ow:10e2073a0108006:voltage");
        assert_eq!(records[0].unit.as_deref(), Some("V"));
        assert_eq!(records[0].value, Some(120.1));
        assert!((records[0].time_s - 1_276_020_076.001).abs() < 1e-6);
        let expected = [
            (1.2, -5.0),
            (1.3, -4.0),
            (1.4, -3.0),
            (1.5, -2.0),
            (1.6, -1.0),
            (1.7, 0.0),
        ];
        for (record, (value, dt)) in records[1..].iter().zip(expected) {
            assert_eq!(record.name, "urn:dev:ow:10e2073a0108006:current");
            assert_eq!(record.unit.as_deref(), Some("A"));
            assert_eq!(record.value, Some(value));
            assert!((record.time_s - (1_276_020_076.001 + dt)).abs() < 1e-6);
        }
        // Volts and amperes are neither quantity: nothing usable for halotank.
        assert_eq!(
            parse(pack, now(), Expect::Both).unwrap_err().reason,
            RejectReason::SenmlInvalid
        );
    }

    #[test]
    fn rfc8428_5_1_3_multiple_measurements_base_unit_and_relative_offsets() {
        // §5.1.3 (humidity with location): `bu` "%RH" applies until `u` overrides it.
        let pack = r#"[
            {"bn":"urn:dev:ow:10e2073a01080063","bt":1.320067464e+09,"bu":"%RH","v":20},
            {"u":"lon","v":24.30621},
            {"u":"lat","v":60.07965},
            {"t":60,"v":20.3},
            {"u":"%EL","t":150,"v":98}
        ]"#;
        let records = resolve(pack, now()).unwrap();
        assert_eq!(records[0].unit.as_deref(), Some("%RH"));
        assert_eq!(records[1].unit.as_deref(), Some("lon"));
        assert_eq!(records[3].unit.as_deref(), Some("%RH"));
        assert!((records[3].time_s - 1_320_067_524.0).abs() < 1e-6);
        assert!((records[4].time_s - 1_320_067_614.0).abs() < 1e-6);
        assert!(records.iter().all(|r| r.name == "urn:dev:ow:10e2073a01080063"));
    }

    #[test]
    fn rfc8428_5_1_5_multiple_data_types_use_only_numeric_temperature() {
        // §5.1.5: a temperature plus string, boolean and data values; only `temp` is read.
        let pack = r#"[
            {"bn":"urn:dev:ow:10e2073a01080063:","n":"temp","u":"Cel","v":23.1},
            {"n":"label","vs":"Machine Room"},
            {"n":"open","vb":false},
            {"n":"nfc-reader","vd":"aGkgCg"}
        ]"#;
        let s = parse(pack, now(), Expect::Both).unwrap();
        assert_eq!(s.len(), 1);
        assert_eq!((s[0].quantity, s[0].value), (Quantity::Temperature, 23.1));
    }

    #[test]
    fn relative_times_per_4_5_3() {
        // t = -30 with no bt: 30 s before receipt; bt below 2^28 is relative too.
        let pack =
            r#"[{"n":"tank:cond","u":"S/m","v":4.2,"t":-30},{"bt":-10,"n":"tank:temp","u":"Cel","v":11}]"#;
        let s = parse(pack, now(), Expect::Both).unwrap();
        assert_eq!(s[0].time.unwrap().timestamp(), 1_743_573_570);
        assert_eq!(s[1].time.unwrap().timestamp(), 1_743_573_590);
        assert_eq!(s[0].conductivity_unit, Some(ConductivityUnit::SiemensPerMetre));
        // 2^28 and above are absolute Unix times.
        let pack = r#"[{"n":"x:cond","u":"S/m","v":4.2,"t":268435456}]"#;
        assert_eq!(
            parse(pack, now(), Expect::Both).unwrap()[0]
                .time
                .unwrap()
                .timestamp(),
            268_435_456
        );
    }

    #[test]
    fn base_value_adds_to_value() {
        let pack =
            r#"[{"bn":"n2:","bv":2.0,"n":"conductivity","u":"S/m","v":0.35},{"n":"temp","bv":0,"v":27.8}]"#;
        let s = parse(pack, now(), Expect::Both).unwrap();
        assert!((s[0].value - 2.35).abs() < 1e-12);
        assert_eq!(s[1].value, 27.8);
    }

    #[test]
    fn classification_by_name_and_unit() {
        // Name only: conductivity in the tank's unit, temperature in °C.
        let s = parse(
            r#"[{"n":"d1/Conductivity","v":48.0},{"n":"d1/temperature","v":9.5}]"#,
            now(),
            Expect::Both,
        )
        .unwrap();
        assert_eq!(
            (s[0].quantity, s[0].conductivity_unit),
            (Quantity::Conductivity, None)
        );
        assert_eq!(s[1].quantity, Quantity::Temperature);
        // Kelvin converts.
        let s = parse(
            r#"[{"n":"probe","u":"K","v":284.15}]"#,
            now(),
            Expect::Temperature,
        )
        .unwrap();
        assert!((s[0].value - 11.0).abs() < 1e-9);
        // mS/cm and uS/cm are accepted though not registered SenML units.
        let s = parse(
            r#"[{"n":"probe","u":"uS/cm","v":312}]"#,
            now(),
            Expect::Conductivity,
        )
        .unwrap();
        assert_eq!(s[0].conductivity_unit, Some(ConductivityUnit::MicroSiemensPerCm));
        // Disagreement, and a known quantity in an unknown unit.
        let e = parse(r#"[{"n":"x:temp","u":"S/m","v":4}]"#, now(), Expect::Both).unwrap_err();
        assert_eq!(e.reason, RejectReason::SenmlInvalid);
        let e = parse(r#"[{"n":"x:temp","u":"Far","v":50}]"#, now(), Expect::Both).unwrap_err();
        assert_eq!(e.reason, RejectReason::UnknownUnit);
        let e = parse(
            r#"[{"n":"x:conductivity","u":"mS/m","v":50}]"#,
            now(),
            Expect::Both,
        )
        .unwrap_err();
        assert_eq!(e.reason, RejectReason::UnknownUnit);
        // Per-quantity topics skip the other quantity.
        let s = parse(
            r#"[{"n":"a:cond","u":"S/m","v":4},{"n":"a:temp","u":"Cel","v":9}]"#,
            now(),
            Expect::Temperature,
        )
        .unwrap();
        assert_eq!((s.len(), s[0].quantity), (1, Quantity::Temperature));
    }

    #[test]
    fn invalid_packs() {
        use RejectReason::*;
        let reason = |p: &str| parse(p, now(), Expect::Both).unwrap_err().reason;
        assert_eq!(reason(r#"{"n":"a:temp","v":1}"#), SenmlInvalid);
        assert_eq!(reason("[]"), SenmlInvalid);
        assert_eq!(reason("[1, 2]"), SenmlInvalid);
        assert_eq!(reason(r#"[{"n":"a:temp","v":1,"ext_":3}]"#), SenmlInvalid);
        assert_eq!(reason(r#"[{"u":"Cel","v":1}]"#), SenmlInvalid);
        assert_eq!(reason(r#"[{"n":"_a:temp","u":"Cel","v":1}]"#), SenmlInvalid);
        assert_eq!(reason(r#"[{"n":"a temp","u":"Cel","v":1}]"#), SenmlInvalid);
        assert_eq!(reason(r#"[{"bn":5,"n":"a:temp","v":1}]"#), SenmlInvalid);
        assert_eq!(reason(r#"[{"n":"a:temp","bt":"now","v":1}]"#), SenmlInvalid);
        assert_eq!(reason(r#"[{"n":"a:temp","v":"12.5"}]"#), NotNumeric);
        assert_eq!(reason(r#"[{"n":"a:temp","vs":"12.5"}]"#), NotNumeric);
        assert_eq!(reason(r#"[{"n":"a:temp","v":1e308,"bv":1e308}]"#), NonFinite);
        assert_eq!(reason(r#"[{"n":"a:temp","v":1"#), MalformedJson);
        // An absolute time at or before 1970 cannot come from 2^28 ≤ t; a huge one is out of range.
        assert_eq!(reason(r#"[{"n":"a:temp","v":1,"t":1e15}]"#), BadTime);
    }
}
