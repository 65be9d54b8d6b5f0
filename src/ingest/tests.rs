//! Tests of the ingest pipeline as a whole, on the shipped example configuration.
use std::path::Path;

use chrono::{DateTime, Utc};

use super::*;
use crate::config::{self, Config};
use crate::seawater::{ConductivityUnit, ProbeMode};

fn example() -> Config {
    config::load(&Path::new(env!("CARGO_MANIFEST_DIR")).join("config/halotank.toml")).unwrap()
}

/// 2025-04-02T06:00:00Z plus `s` seconds.
fn at(s: i64) -> DateTime<Utc> {
    DateTime::from_timestamp(1_743_573_600 + s, 0).unwrap()
}

fn accepted(outcome: IngestOutcome) -> Vec<AcceptedReading> {
    match outcome {
        IngestOutcome::Accepted(r) => r,
        other => panic!("expected Accepted, got {other:?}"),
    }
}

fn rejected(outcome: IngestOutcome) -> Rejection {
    match outcome {
        IngestOutcome::Rejected(r) => r,
        other => panic!("expected Rejected, got {other:?}"),
    }
}

#[test]
fn combined_json_is_accepted_with_its_own_time() {
    let mut ing = Ingestor::new(&example());
    let r = accepted(ing.handle(
        "brannock/probes/smolt-t1/state",
        br#"{"conductivity": 21.4, "temperature": 9.1, "time": "2025-04-02T05:59:30Z"}"#,
        at(0),
    ));
    assert_eq!(r.len(), 1);
    let r = &r[0];
    assert_eq!((r.tank_id.as_str(), r.tank_index), ("smolt-t1", 1));
    assert_eq!(r.time, at(-30));
    assert_eq!(r.received_at, at(0));
    assert_eq!(r.topic, "brannock/probes/smolt-t1/state");
    assert_eq!(
        (r.reported_conductivity, r.reported_unit),
        (21.4, ConductivityUnit::MilliSiemensPerCm)
    );
    assert_eq!(
        (r.conductivity_ms_cm, r.temperature_c, r.temperature_time),
        (21.4, 9.1, at(-30))
    );
    assert_eq!(r.probe_mode, ProbeMode::InSitu);
    assert_eq!(r.pressure_dbar, 0.0);
}

#[test]
fn custom_keys_and_unix_seconds_and_probe_depth() {
    let mut ing = Ingestor::new(&example());
    let payload = format!(
        r#"{{"cond_ms": 52.7, "water_c": 11.2, "ts": {}}}"#,
        at(-5).timestamp()
    );
    let r = accepted(ing.handle("brannock/probes/sea-hold-4/state", payload.as_bytes(), at(0)));
    assert_eq!(
        (r[0].time, r[0].conductivity_ms_cm, r[0].temperature_c),
        (at(-5), 52.7, 11.2)
    );
    assert_eq!(r[0].pressure_dbar, 0.04);
}

#[test]
fn separate_number_topics_pair_and_undo_specific_conductance() {
    let mut ing = Ingestor::new(&example());
    assert_eq!(
        ing.handle("brannock/probes/parr-a/temp", b"8.4\n", at(0)),
        IngestOutcome::Buffered
    );
    assert_eq!(ing.latest_temperature(0).unwrap().temperature_c, 8.4);
    let r = accepted(ing.handle("brannock/probes/parr-a/ec", b" 312.5 ", at(10)));
    // Worked by hand: 312.5 uS/cm = 0.3125 mS/cm at 25 °C; in situ at 8.4 °C with alpha 2 %/°C:
    // 0.3125 × (1 + 0.02 × (8.4 − 25)) = 0.3125 × 0.668 = 0.20875 mS/cm.
    assert!((r[0].conductivity_ms_cm - 0.20875).abs() < 1e-12);
    assert_eq!(
        (r[0].reported_conductivity, r[0].reported_unit),
        (312.5, ConductivityUnit::MicroSiemensPerCm)
    );
    assert_eq!(
        (r[0].temperature_c, r[0].temperature_time, r[0].time),
        (8.4, at(0), at(10))
    );
}

#[test]
fn conductivity_without_a_recent_temperature_is_rejected() {
    let mut ing = Ingestor::new(&example());
    let r = rejected(ing.handle("brannock/probes/parr-a/ec", b"312.5", at(0)));
    assert_eq!(r.reason, RejectReason::NoTemperature);
    assert_eq!(r.tank_id.as_deref(), Some("parr-a"));
    assert!(r.detail.contains("none has arrived yet"), "{}", r.detail);

    assert_eq!(
        ing.handle("brannock/probes/parr-a/temp", b"8.4", at(0)),
        IngestOutcome::Buffered
    );
    // 60 s apart is still paired (temperature_max_age_s = 60); 61 s is not.
    assert!(matches!(
        ing.handle("brannock/probes/parr-a/ec", b"312.5", at(60)),
        IngestOutcome::Accepted(_)
    ));
    let r = rejected(ing.handle("brannock/probes/parr-a/ec", b"312.5", at(61)));
    assert_eq!(r.reason, RejectReason::NoTemperature);
    assert!(r.detail.contains("the newest is from"), "{}", r.detail);
}

#[test]
fn late_older_temperature_does_not_replace_a_newer_one() {
    let mut ing = Ingestor::new(&example());
    let t =
        |v: &str, time: DateTime<Utc>| format!(r#"{{"temperature": {v}, "time": "{}"}}"#, time.to_rfc3339());
    let topic = "brannock/quarantine/q1/temperature";
    assert_eq!(
        ing.handle(topic, t("12.0", at(100)).as_bytes(), at(100)),
        IngestOutcome::Buffered
    );
    assert_eq!(
        ing.handle(topic, t("30.0", at(10)).as_bytes(), at(101)),
        IngestOutcome::Buffered
    );
    let latest = ing.latest_temperature(5).unwrap();
    assert_eq!((latest.temperature_c, latest.time), (12.0, at(100)));
}

#[test]
fn senml_combined_pack_converts_siemens_per_metre() {
    let mut ing = Ingestor::new(&example());
    let pack = format!(
        r#"[{{"bn":"nursery-n2:","bt":{},"n":"conductivity","u":"S/m","v":2.35}},{{"n":"temp","u":"Cel","v":27.8}}]"#,
        at(-2).timestamp()
    );
    let r = accepted(ing.handle("brannock/probes/shrimp-n2/state", pack.as_bytes(), at(0)));
    assert_eq!(r.len(), 1);
    // 1 S/m = 10 mS/cm (SI).
    assert!((r[0].conductivity_ms_cm - 23.5).abs() < 1e-12);
    assert_eq!(
        (r[0].reported_conductivity, r[0].reported_unit),
        (2.35, ConductivityUnit::SiemensPerMetre)
    );
    assert_eq!((r[0].temperature_c, r[0].time), (27.8, at(-2)));
}

#[test]
fn senml_records_pair_with_the_nearest_temperature_of_the_pack() {
    let mut ing = Ingestor::new(&example());
    let pack = format!(
        r#"[{{"bn":"n2:","bt":{}}},
            {{"n":"temp","u":"Cel","v":27.0,"t":-30}},{{"n":"cond","u":"S/m","v":2.30,"t":-30}},
            {{"n":"temp","u":"Cel","v":28.0,"t":0}},{{"n":"cond","u":"S/m","v":2.40,"t":0}}]"#,
        at(0).timestamp()
    );
    let r = accepted(ing.handle("brannock/probes/shrimp-n2/state", pack.as_bytes(), at(0)));
    assert_eq!(r.len(), 2);
    assert_eq!((r[0].time, r[0].temperature_c), (at(-30), 27.0));
    assert_eq!((r[1].time, r[1].temperature_c), (at(0), 28.0));
    // The newest temperature is kept for later packs.
    assert_eq!(ing.latest_temperature(2).unwrap().temperature_c, 28.0);
}

#[test]
fn senml_conductivity_topic_pairs_with_a_number_temperature_topic() {
    let mut ing = Ingestor::new(&example());
    assert_eq!(
        ing.handle("brannock/depuration/d1/temperature", b"10.5", at(0)),
        IngestOutcome::Buffered
    );
    let pack = br#"[{"n":"d1:conductivity","v":44.0,"t":-5}]"#;
    let r = accepted(ing.handle("brannock/depuration/d1/conductivity", pack, at(3)));
    assert_eq!(
        (r[0].time, r[0].conductivity_ms_cm, r[0].temperature_c),
        (at(-2), 44.0, 10.5)
    );
}

#[test]
fn a_rejected_message_leaves_the_pairing_state_alone() {
    let mut ing = Ingestor::new(&example());
    // Valid temperature, implausible conductivity (20 S/m = 200 mS/cm): the whole pack is refused.
    let bad = br#"[{"n":"n2:temp","u":"Cel","v":27.8},{"n":"n2:cond","u":"S/m","v":20}]"#;
    let r = rejected(ing.handle("brannock/probes/shrimp-n2/state", bad, at(0)));
    assert_eq!(r.reason, RejectReason::ImplausibleConductivity);
    assert_eq!(ing.latest_temperature(2), None);
    let only_conductivity = br#"[{"n":"n2:cond","u":"S/m","v":2.3}]"#;
    let r = rejected(ing.handle("brannock/probes/shrimp-n2/state", only_conductivity, at(1)));
    assert_eq!(r.reason, RejectReason::NoTemperature);
}

#[test]
fn ignored_messages() {
    let mut ing = Ingestor::new(&example());
    assert_eq!(
        ing.handle("brannock/probes/unknown-tank/state", b"{}", at(0)),
        IngestOutcome::Ignored(IgnoreReason::UnconfiguredTopic)
    );
    assert_eq!(
        ing.handle("brannock/probes/smolt-t1/state", b"", at(0)),
        IngestOutcome::Ignored(IgnoreReason::EmptyPayload)
    );
}

#[test]
fn size_encoding_time_and_range_checks() {
    let mut ing = Ingestor::new(&example());
    let topic = "brannock/probes/smolt-t1/state";
    let huge = vec![b' '; 4097];
    let r = rejected(ing.handle(topic, &huge, at(0)));
    assert_eq!(r.reason, RejectReason::PayloadTooLarge);
    assert_eq!(r.payload_prefix.len(), PAYLOAD_PREFIX_BYTES);
    assert_eq!(r.topic, topic);

    let r = rejected(ing.handle(topic, b"{\"conductivity\": 1, \xff}", at(0)));
    assert_eq!(r.reason, RejectReason::NotUtf8);

    // A UTF-8 byte-order mark is dropped.
    let bom = "\u{feff}{\"conductivity\": 21.4, \"temperature\": 9.1}".as_bytes();
    assert!(matches!(
        ing.handle(topic, bom, at(0)),
        IngestOutcome::Accepted(_)
    ));

    // Reading time up to max_future_skew_s = 300 after receipt is accepted; beyond is refused.
    let future = |s: i64| {
        format!(
            r#"{{"conductivity": 21.4, "temperature": 9.1, "time": {}}}"#,
            at(s).timestamp()
        )
    };
    assert!(matches!(
        ing.handle(topic, future(300).as_bytes(), at(0)),
        IngestOutcome::Accepted(_)
    ));
    assert_eq!(
        rejected(ing.handle(topic, future(301).as_bytes(), at(0))).reason,
        RejectReason::TimeInFuture
    );

    let r = rejected(ing.handle(topic, br#"{"conductivity": 21.4, "temperature": 46}"#, at(0)));
    assert_eq!(r.reason, RejectReason::ImplausibleTemperature);
    let r = rejected(ing.handle(topic, br#"{"conductivity": -0.1, "temperature": 9}"#, at(0)));
    assert_eq!(r.reason, RejectReason::ImplausibleConductivity);
    let r = rejected(ing.handle(topic, br#"{"conductivity": 100.5, "temperature": 9}"#, at(0)));
    assert_eq!(r.reason, RejectReason::ImplausibleConductivity);
}

#[test]
fn in_situ_conductivity_is_checked_after_compensation() {
    // A specific-conductance probe reporting 95 mS/cm at 25 °C reads 95 × (1 + 0.019 × 15) = 122.1 mS/cm
    // in situ at 40 °C: beyond the plausible 100 mS/cm, though the reported value was within it.
    let mut ing = Ingestor::new(&example());
    let t = "brannock/quarantine/q1/temperature";
    let c = "brannock/quarantine/q1/conductivity";
    assert_eq!(
        ing.handle(t, br#"{"temperature": 40}"#, at(0)),
        IngestOutcome::Buffered
    );
    let r = rejected(ing.handle(c, br#"{"conductivity": 95}"#, at(1)));
    assert_eq!(r.reason, RejectReason::ImplausibleConductivity);
    assert!(r.detail.contains("in-situ"), "{}", r.detail);
}

#[test]
fn subscriptions_of_the_example_drop_topics_covered_by_the_extra_filter() {
    assert_eq!(
        subscriptions(&example()),
        vec![
            "brannock/probes/#",
            "brannock/depuration/d1/conductivity",
            "brannock/depuration/d1/temperature",
            "brannock/quarantine/q1/conductivity",
            "brannock/quarantine/q1/temperature",
        ]
    );
}

#[test]
fn subscriptions_drop_duplicates_and_covered_entries() {
    let text = r#"
[site]
name = "Brannock Sound Hatchery"
[broker]
host = "h"
[storage]
path = "x.sqlite3"
[ingest]
subscribe = ["a/+/state", "a/+/state", "a/#"]
[[tanks]]
id = "one"
name = "One"
volume_l = 1
[tanks.topics]
combined = "a/one/state"
[[tanks]]
id = "two"
name = "Two"
volume_l = 1
[tanks.topics]
conductivity = "b/two/c"
temperature = "b/two/t"
"#;
    let c = config::parse(text, Path::new("t.toml")).unwrap();
    assert_eq!(subscriptions(&c), vec!["a/#", "b/two/c", "b/two/t"]);
    let mut ing = Ingestor::new(&c);
    // A topic under an extra filter that no tank owns.
    assert_eq!(
        ing.handle("a/q/state", b"1", at(0)),
        IngestOutcome::Ignored(IgnoreReason::UnconfiguredTopic)
    );
}
