//! Robustness of the ingest core: arbitrary bytes never panic and keep the outcome invariants, and a
//! corpus of known-bad payloads each gives its documented reason.
use std::path::Path;
use std::sync::OnceLock;

use chrono::{DateTime, Utc};
use halotank::config::{self, Config};
use halotank::ingest::{IgnoreReason, IngestOutcome, Ingestor, RejectReason, PAYLOAD_PREFIX_BYTES};
use proptest::prelude::*;

fn example() -> Config {
    static EXAMPLE: OnceLock<Config> = OnceLock::new();
    EXAMPLE
        .get_or_init(|| {
            config::load(&Path::new(env!("CARGO_MANIFEST_DIR")).join("config/halotank.toml")).unwrap()
        })
        .clone()
}

fn topics(config: &Config) -> Vec<String> {
    config
        .tanks
        .iter()
        .flat_map(|t| t.topics.iter().map(|(_, b)| b.topic.clone()))
        .collect()
}

fn at(s: i64) -> DateTime<Utc> {
    DateTime::from_timestamp(1_743_573_600 + s, 0).unwrap()
}

/// The invariants every outcome must keep, whatever the payload.
fn check_invariants(config: &Config, ing: &Ingestor, topic: &str, payload: &[u8], outcome: &IngestOutcome) {
    let route = ing.route(topic).expect("configured topic");
    let limits = &config.ingest;
    match outcome {
        IngestOutcome::Ignored(reason) => {
            assert_eq!(*reason, IgnoreReason::EmptyPayload);
            assert!(payload.is_empty());
        }
        IngestOutcome::Rejected(r) => {
            assert!(!payload.is_empty());
            assert_eq!(r.topic, topic);
            assert_eq!(
                r.tank_id.as_deref(),
                Some(config.tanks[route.tank_index].id.as_str())
            );
            assert!(r.payload_prefix.len() <= PAYLOAD_PREFIX_BYTES);
            assert!(payload.starts_with(&r.payload_prefix));
            assert!(!r.detail.is_empty());
        }
        IngestOutcome::Accepted(readings) => {
            assert!(!readings.is_empty());
            for r in readings {
                assert_eq!(r.tank_index, route.tank_index);
                assert!(r.conductivity_ms_cm.is_finite());
                assert!((limits.conductivity_min_ms_cm..=limits.conductivity_max_ms_cm)
                    .contains(&r.conductivity_ms_cm));
                assert!((limits.temperature_min_c..=limits.temperature_max_c).contains(&r.temperature_c));
                assert!(r.reported_conductivity.is_finite());
            }
        }
        IngestOutcome::Buffered => assert!(!payload.is_empty()),
    }
}

proptest! {
    #![proptest_config(ProptestConfig::with_cases(2000))]

    #[test]
    fn arbitrary_bytes_never_panic(topic_index in 0usize..64, payload in proptest::collection::vec(any::<u8>(), 0..5000),
                                   offset_s in -1_000_000i64..1_000_000) {
        let config = example();
        let topics = topics(&config);
        let topic = &topics[topic_index % topics.len()];
        let mut ing = Ingestor::new(&config);
        let outcome = ing.handle(topic, &payload, at(offset_s));
        check_invariants(&config, &ing, topic, &payload, &outcome);
    }

    #[test]
    fn json_like_text_never_panics(topic_index in 0usize..64,
                                   text in r#"[\[\{]?("[a-z_]{0,12}" ?: ?(-?[0-9]{0,4}(\.[0-9]{0,3})?([eE][+-]?[0-9]{0,3})?|"[^"]{0,8}"|null|true|\[\]|\{\})[,]? ?){0,4}[\]\}]?"#) {
        let config = example();
        let topics = topics(&config);
        let topic = &topics[topic_index % topics.len()];
        let mut ing = Ingestor::new(&config);
        let outcome = ing.handle(topic, text.as_bytes(), at(0));
        check_invariants(&config, &ing, topic, text.as_bytes(), &outcome);
    }

    #[test]
    fn message_sequences_never_panic(messages in proptest::collection::vec(
        (0usize..64, proptest::collection::vec(any::<u8>(), 0..64), 0i64..600), 1..40)) {
        let config = example();
        let topics = topics(&config);
        let mut ing = Ingestor::new(&config);
        for (i, payload, s) in messages {
            let topic = &topics[i % topics.len()];
            let outcome = ing.handle(topic, &payload, at(s));
            check_invariants(&config, &ing, topic, &payload, &outcome);
        }
    }

    #[test]
    fn finite_combined_json_values_are_accepted_iff_plausible(c in -200.0f64..200.0, t in -20.0f64..80.0) {
        let config = example();
        let mut ing = Ingestor::new(&config);
        let payload = format!(r#"{{"conductivity": {c}, "temperature": {t}}}"#);
        let outcome = ing.handle("brannock/probes/smolt-t1/state", payload.as_bytes(), at(0));
        // serde_json's default float parsing may land 1 ulp from Rust's own; compare with what it reads.
        let c: f64 = serde_json::from_str(&c.to_string()).unwrap();
        let t: f64 = serde_json::from_str(&t.to_string()).unwrap();
        let plausible = (0.0..=100.0).contains(&c) && (-3.0..=45.0).contains(&t);
        match outcome {
            IngestOutcome::Accepted(r) => {
                prop_assert!(plausible);
                prop_assert_eq!(r[0].conductivity_ms_cm, c);
                prop_assert_eq!(r[0].temperature_c, t);
            }
            IngestOutcome::Rejected(r) => {
                prop_assert!(!plausible);
                prop_assert!(matches!(r.reason, RejectReason::ImplausibleConductivity | RejectReason::ImplausibleTemperature));
            }
            other => prop_assert!(false, "unexpected {:?}", other),
        }
    }
}

#[test]
fn corpus_of_bad_payloads_gives_the_expected_reasons() {
    use RejectReason::*;
    let smolt = "brannock/probes/smolt-t1/state";
    let shrimp = "brannock/probes/shrimp-n2/state";
    let parr_ec = "brannock/probes/parr-a/ec";
    let parr_temp = "brannock/probes/parr-a/temp";
    let oyster_c = "brannock/depuration/d1/conductivity";
    let huge = vec![b'7'; 1 << 20];
    let far_future = format!(
        r#"{{"conductivity": 21.4, "temperature": 9.1, "time": {}}}"#,
        at(3600).timestamp()
    );
    let corpus: Vec<(&str, &[u8], RejectReason)> = vec![
        // Truncated JSON and SenML.
        (smolt, br#"{"conductivity": 21.4, "temperature""#, MalformedJson),
        (
            smolt,
            br#"{"conductivity": 21.4, "temperature": 9.1"#,
            MalformedJson,
        ),
        (shrimp, br#"[{"n":"n2:cond","u":"S/m","v":2.3}"#, MalformedJson),
        // Huge payload.
        (smolt, &huge, PayloadTooLarge),
        (parr_ec, &huge, PayloadTooLarge),
        // NaN and infinity.
        (parr_temp, b"NaN", NonFinite),
        (parr_ec, b"Infinity", NonFinite),
        (parr_ec, b"-inf", NonFinite),
        (parr_ec, b"1e999", NonFinite),
        (
            smolt,
            br#"{"conductivity": "NaN", "temperature": 9.1}"#,
            NonFinite,
        ),
        (
            smolt,
            br#"{"conductivity": 21.4, "temperature": "Infinity"}"#,
            NonFinite,
        ),
        (
            smolt,
            br#"{"conductivity": NaN, "temperature": 9.1}"#,
            MalformedJson,
        ),
        // Wrong types.
        (
            smolt,
            br#"{"conductivity": "21.4", "temperature": 9.1}"#,
            NotNumeric,
        ),
        (
            smolt,
            br#"{"conductivity": [21.4], "temperature": 9.1}"#,
            NotNumeric,
        ),
        (
            smolt,
            br#"{"conductivity": {"v": 21.4}, "temperature": 9.1}"#,
            NotNumeric,
        ),
        (
            smolt,
            br#"{"conductivity": true, "temperature": 9.1}"#,
            NotNumeric,
        ),
        (smolt, br#"[21.4, 9.1]"#, MalformedJson),
        (smolt, b"21.4", MalformedJson),
        (parr_temp, b"true", NotNumeric),
        (parr_temp, b"8,4", NotNumeric),
        (parr_temp, br#"{"temperature": 8.4}"#, NotNumeric),
        (shrimp, br#"{"n":"n2:temp","u":"Cel","v":27.8}"#, SenmlInvalid),
        (shrimp, br#"[{"n":"n2:temp","u":"Cel","v":"27.8"}]"#, NotNumeric),
        (
            shrimp,
            br#"[{"bn":5,"n":"temp","u":"Cel","v":27.8}]"#,
            SenmlInvalid,
        ),
        (
            shrimp,
            br#"[{"n":"n2:temp","u":"Cel","v":27.8,"x_":1}]"#,
            SenmlInvalid,
        ),
        (shrimp, br#"[{"n":"n2:humidity","u":"%RH","v":80}]"#, SenmlInvalid),
        // Binary garbage.
        (smolt, &[0xff, 0xfe, 0x00, 0x80, 0x13], NotUtf8),
        (parr_ec, &[0xc3, 0x28], NotUtf8),
        (smolt, b"\x00\x01\x02\x03", MalformedJson),
        (parr_ec, b"\x00\x01\x02\x03", NotNumeric),
        (shrimp, b"\x1b[2J", MalformedJson),
        // Missing fields.
        (smolt, br#"{"conductivity": 21.4}"#, MissingField),
        (smolt, br#"{"temperature": 9.1}"#, MissingField),
        (smolt, br#"{}"#, MissingField),
        // Times.
        (
            smolt,
            br#"{"conductivity": 21.4, "temperature": 9.1, "time": "2025-13-40T00:00:00Z"}"#,
            BadTime,
        ),
        (
            smolt,
            br#"{"conductivity": 21.4, "temperature": 9.1, "time": 0}"#,
            BadTime,
        ),
        (
            smolt,
            br#"{"conductivity": 21.4, "temperature": 9.1, "time": 1743573600000}"#,
            BadTime,
        ),
        (smolt, far_future.as_bytes(), TimeInFuture),
        // Units and ranges.
        (shrimp, br#"[{"n":"n2:temp","u":"Far","v":80}]"#, UnknownUnit),
        (parr_temp, b"99", ImplausibleTemperature),
        (
            smolt,
            br#"{"conductivity": 250, "temperature": 9.1}"#,
            ImplausibleConductivity,
        ),
        // Pairing: conductivity before any temperature.
        (parr_ec, b"312.5", NoTemperature),
        (oyster_c, br#"[{"n":"d1:conductivity","v":44.0}]"#, NoTemperature),
    ];
    for (topic, payload, expected) in corpus {
        let mut ing = Ingestor::new(&example());
        match ing.handle(topic, payload, at(0)) {
            IngestOutcome::Rejected(r) => assert_eq!(
                r.reason,
                expected,
                "{topic} {:?}: {}",
                String::from_utf8_lossy(&payload[..payload.len().min(80)]),
                r.detail
            ),
            other => panic!(
                "{topic} {:?}: expected {expected}, got {other:?}",
                String::from_utf8_lossy(&payload[..payload.len().min(80)])
            ),
        }
    }
}
