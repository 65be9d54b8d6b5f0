//! The daemon end to end over real MQTT against the embedded broker (rumqttd in-process; no Mosquitto
//! needed): readings in all three payload formats through to SQLite rows and retained state, the
//! availability topic, a corpus of malformed payloads, redeliveries, unconfigured topics, and the built
//! binary's graceful stop on SIGTERM.
//!
//! Derived values are checked against `seawater::derive::derive_from_conductivity` of the inputs, and the
//! stored practical salinity also against the `gsw` crate (a port of the TEOS-10 GSW library,
//! `gsw_sp_from_c`) to 1e-8. Waits poll with deadlines; nothing sleeps a fixed time to "let it settle".

mod daemon_support;
mod mqtt_support;

use std::collections::BTreeMap;
use std::time::Duration;

use daemon_support::*;
use halotank::mqtt::EmbeddedBroker;
use halotank::storage::Reader;
use mqtt_support::{read_retained, unique, Peer};

/// Whole-test limit (each wait inside has its own deadline too).
const TEST_LIMIT: Duration = Duration::from_secs(90);

async fn within_limit<F: std::future::Future<Output = ()>>(test: F) {
    tokio::time::timeout(TEST_LIMIT, test)
        .await
        .expect("test exceeded its time limit");
}

/// Waits on `observer` (subscribed to the daemon's prefix) for the retained availability `online`.
async fn wait_for_online(observer: &mut Peer, site: &Site) {
    let status = site.status_topic();
    tokio::time::timeout(DEADLINE, async {
        loop {
            let p = observer.next_publish().await;
            if p.topic == status && p.payload.as_ref() == b"online" {
                return;
            }
        }
    })
    .await
    .expect("daemon never published `online`");
}

/// Publishes one JSON reading (fixed time) until it is stored: proves the daemon's subscription is live.
/// Republishing the same (tank, time, topic) is harmless: it is stored once.
async fn warm_up(peer: &mut Peer, site: &Site) -> u64 {
    let payload = json_payload(30.0, 10.0, past_time(0));
    let deadline = tokio::time::Instant::now() + DEADLINE;
    loop {
        peer.publish_acked(&site.json_topic(), payload.as_bytes(), false)
            .await;
        let poll_until = tokio::time::Instant::now() + Duration::from_millis(300);
        while tokio::time::Instant::now() < poll_until {
            if readings_count(&site.db) >= 1 {
                return 1;
            }
            tokio::time::sleep(Duration::from_millis(20)).await;
        }
        assert!(
            tokio::time::Instant::now() < deadline,
            "daemon never stored the warm-up reading"
        );
    }
}

async fn start_site(label: &str) -> (EmbeddedBroker, Site, Peer, Peer, InProcessDaemon) {
    mqtt_support::init_logging();
    let broker = EmbeddedBroker::start().await.unwrap();
    let site = Site::new(label, broker.addr(), &SiteOptions::default());
    let mut observer = Peer::connect(broker.addr(), &unique("observer"), true).await;
    observer.subscribe(&format!("{}/#", site.prefix)).await;
    let daemon = InProcessDaemon::start(&site);
    wait_for_online(&mut observer, &site).await;
    let mut probe = Peer::connect(broker.addr(), &unique("probe-sim"), true).await;
    warm_up(&mut probe, &site).await;
    (broker, site, observer, probe, daemon)
}

/// Waits until the state of every `(tank, time)` has arrived (in any order); returns each tank's JSON.
async fn wait_for_states(
    observer: &mut Peer,
    site: &Site,
    wanted: &[(&str, String)],
) -> std::collections::HashMap<String, serde_json::Value> {
    let mut found = std::collections::HashMap::new();
    tokio::time::timeout(DEADLINE, async {
        while found.len() < wanted.len() {
            let p = observer.next_publish().await;
            for (tank, time) in wanted {
                if p.topic == site.state_topic(tank) {
                    let v: serde_json::Value = serde_json::from_slice(&p.payload).unwrap();
                    if v["time"] == *time {
                        found.insert(tank.to_string(), v);
                    }
                }
            }
        }
    })
    .await
    .unwrap_or_else(|_| panic!("states seen {:?} of {wanted:?}", found.keys().collect::<Vec<_>>()));
    found
}

fn check_state_json(state: &serde_json::Value, tank: &str, c_ms_cm: f64, t_c: f64) {
    let want = expected_derived(c_ms_cm, t_c);
    assert_eq!(state["tank"], tank);
    assert_eq!(state["conductivity_mS_cm"].as_f64().unwrap(), c_ms_cm);
    assert_eq!(state["temperature_C"].as_f64().unwrap(), t_c);
    let got: halotank::seawater::Derived = serde_json::from_value(state.clone()).unwrap();
    assert_derived_eq(&got, &want, &format!("state of {tank}"));
}

/// Rows stored for `tank`, checked against the inputs `(reported conductivity, in-situ mS/cm, °C)`.
fn check_rows(site: &Site, tank: &str, unit: &str, inputs: &[(f64, f64, f64)]) {
    let rows = Reader::open(&site.db).unwrap().history(tank, None, None).unwrap();
    let rows: Vec<_> = rows.into_iter().filter(|r| r.time != past_time(0)).collect();
    assert_eq!(rows.len(), inputs.len(), "{tank}: rows stored");
    for (row, &(reported, c_ms_cm, t_c)) in rows.iter().zip(inputs) {
        let what = format!("{tank} at {}", row.time);
        assert_eq!(row.conductivity_reported, reported, "{what}");
        assert_eq!(row.conductivity_unit, unit, "{what}");
        assert!((row.conductivity_ms_cm - c_ms_cm).abs() < 1e-12, "{what}");
        assert_eq!(row.temperature_c, t_c, "{what}");
        assert_eq!(row.pressure_dbar, 0.0, "{what}");
        assert_derived_eq(&row.derived, &expected_derived(c_ms_cm, t_c), &what);
        // Independent reference: gsw crate (TEOS-10 GSW, gsw_sp_from_c), same tolerance as the PSS-78 tests.
        let gsw_sp = gsw::practical_salinity::sp_from_c(c_ms_cm, t_c, 0.0).unwrap();
        assert!(
            (row.derived.practical_salinity - gsw_sp).abs() <= 1e-8,
            "{what}: SP {} vs gsw {gsw_sp}",
            row.derived.practical_salinity
        );
    }
}

#[tokio::test(flavor = "multi_thread", worker_threads = 2)]
async fn three_payload_formats_are_stored_derived_and_published() {
    within_limit(async {
        let (broker, site, mut observer, mut probe, daemon) = start_site("formats").await;

        // Combined JSON, in mS/cm.
        let mut json_inputs = Vec::new();
        for i in 1..=5 {
            let (c, t) = (20.0 + 2.5 * f64::from(i), 8.0 + 0.5 * f64::from(i));
            let payload = json_payload(c, t, past_time(i64::from(i) * 1000));
            probe
                .publish_acked(&site.json_topic(), payload.as_bytes(), false)
                .await;
            json_inputs.push((c, c, t));
        }
        // SenML with conductivity in S/m (1 S/m = 10 mS/cm, SI).
        let mut senml_inputs = Vec::new();
        for i in 1..=5 {
            let (c_s_m, t) = (1.5 + 0.25 * f64::from(i), 20.0 + f64::from(i));
            let payload = senml_payload(c_s_m, t, past_time(i64::from(i) * 1000));
            probe
                .publish_acked(&site.senml_topic(), payload.as_bytes(), false)
                .await;
            senml_inputs.push((c_s_m, c_s_m * 10.0, t));
        }
        // Bare numbers: temperature first, then conductivity paired with it. A bare number's time is its
        // receipt, so each is stored before the next is sent (two in one millisecond would share a key).
        let mut number_inputs = Vec::new();
        for i in 1..=4u32 {
            let (c, t) = (0.25 + 0.125 * f64::from(i), 6.0 + f64::from(i));
            probe
                .publish_acked(&site.number_temp_topic(), t.to_string().as_bytes(), false)
                .await;
            probe
                .publish_acked(&site.number_ec_topic(), c.to_string().as_bytes(), false)
                .await;
            number_inputs.push((c, c, t));
            wait_for_readings(&site.db, 1 + 10 + u64::from(i)).await;
        }
        assert_eq!(wait_for_readings(&site.db, 15).await, 15);

        check_rows(&site, JSON_TANK, "mS/cm", &json_inputs);
        check_rows(&site, SENML_TANK, "S/m", &senml_inputs);
        check_rows(&site, NUMBER_TANK, "mS/cm", &number_inputs);

        // Retained state of each tank after its last reading.
        let number_rows = Reader::open(&site.db)
            .unwrap()
            .history(NUMBER_TANK, None, None)
            .unwrap();
        let wanted = [
            (JSON_TANK, rfc3339(past_time(5000))),
            (SENML_TANK, rfc3339(past_time(5000))),
            (NUMBER_TANK, rfc3339(number_rows.last().unwrap().time)),
        ];
        let states = wait_for_states(&mut observer, &site, &wanted).await;
        check_state_json(&states[JSON_TANK], JSON_TANK, json_inputs[4].1, json_inputs[4].2);
        check_state_json(
            &states[SENML_TANK],
            SENML_TANK,
            senml_inputs[4].1,
            senml_inputs[4].2,
        );
        check_state_json(
            &states[NUMBER_TANK],
            NUMBER_TANK,
            number_inputs[3].1,
            number_inputs[3].2,
        );
        // A client arriving later gets the same state, flagged retained.
        let retained = read_retained(broker.addr(), &site.state_topic(JSON_TANK)).await;
        assert!(retained.retain);
        let v: serde_json::Value = serde_json::from_slice(&retained.payload).unwrap();
        assert_eq!(v["time"], rfc3339(past_time(5000)));

        let online = read_retained(broker.addr(), &site.status_topic()).await;
        assert_eq!(online.payload.as_ref(), b"online");
        assert!(online.retain);

        let summary = daemon.stop().await;
        assert_eq!(summary.readings_stored, 15, "{summary:?}");
        assert_eq!(summary.rejected, 0, "{summary:?}");
        let offline = read_retained(broker.addr(), &site.status_topic()).await;
        assert_eq!(
            offline.payload.as_ref(),
            b"offline",
            "graceful stop must leave `offline`"
        );
        assert!(offline.retain);
        assert_eq!(readings_count(&site.db), 15, "nothing stored twice");
    })
    .await;
}

/// Malformed payloads and the reason code each must be counted under (rules in src/ingest/payload/).
fn malformed_corpus(site: &Site) -> Vec<(String, Vec<u8>, &'static str)> {
    let t = rfc3339(past_time(90_000));
    let bt = past_time(90_000).timestamp();
    let json = site.json_topic();
    let senml = site.senml_topic();
    let ec = site.number_ec_topic();
    let temp = site.number_temp_topic();
    let text = |topic: &str, s: &str, reason| (topic.to_string(), s.as_bytes().to_vec(), reason);
    let mut huge = br#"{"conductivity": 41.2, "temperature": 12.0, "pad": ""#.to_vec();
    huge.extend(std::iter::repeat_n(b'x', 10_000));
    huge.extend(br#""}"#);
    vec![
        // Conductivity before any temperature of the bare-number tank.
        text(&ec, "35.0", "no_temperature"),
        text(
            &json,
            r#"{"conductivity": 41.2, "temperature": 1"#,
            "malformed_json",
        ),
        text(
            &json,
            r#"{"conductivity": NaN, "temperature": 12.0}"#,
            "malformed_json",
        ),
        text(&json, r#"[41.2, 12.0]"#, "malformed_json"),
        text(
            &json,
            r#"{"conductivity": "NaN", "temperature": 12.0}"#,
            "non_finite",
        ),
        text(
            &json,
            r#"{"conductivity": "forty-one", "temperature": 12.0}"#,
            "not_numeric",
        ),
        text(
            &json,
            r#"{"conductivity": true, "temperature": 12.0}"#,
            "not_numeric",
        ),
        text(
            &json,
            r#"{"conductivity": [41.2], "temperature": 12.0}"#,
            "not_numeric",
        ),
        text(&json, r#"{"temperature": 12.0}"#, "missing_field"),
        text(
            &json,
            r#"{"conductivity": 41.2, "temperature": 12.0, "time": "yesterday"}"#,
            "bad_time",
        ),
        text(
            &json,
            &format!(r#"{{"conductivity": 41.2, "temperature": 95.0, "time": "{t}"}}"#),
            "implausible_temperature",
        ),
        text(
            &json,
            &format!(r#"{{"conductivity": 941.2, "temperature": 12.0, "time": "{t}"}}"#),
            "implausible_conductivity",
        ),
        (json.clone(), huge, "payload_too_large"),
        (json.clone(), vec![0xff, 0xfe, 0x00, 0x9c, 0x80, 0x41], "not_utf8"),
        text(
            &senml,
            r#"{"n":"conductivity","u":"S/m","v":4.1}"#,
            "senml_invalid",
        ),
        text(&senml, "[]", "senml_invalid"),
        text(
            &senml,
            &format!(r#"[{{"bn":"x:","bt":{bt},"n":"conductivity","u":"V","v":4.1}}]"#),
            "unknown_unit",
        ),
        text(&senml, r#"[{"bn":"x:","bt":1"#, "malformed_json"),
        text(&ec, "NaN", "non_finite"),
        text(&temp, "-inf", "non_finite"),
        text(&ec, "12,5", "not_numeric"),
        text(&temp, "warm", "not_numeric"),
        (ec.clone(), vec![0xc3, 0x28], "not_utf8"),
        (ec.clone(), vec![b'7'; 5000], "payload_too_large"),
    ]
}

#[tokio::test(flavor = "multi_thread", worker_threads = 2)]
async fn malformed_payloads_are_counted_by_reason_and_later_readings_stored() {
    within_limit(async {
        let (_broker, site, _observer, mut probe, daemon) = start_site("corpus").await;
        let corpus = malformed_corpus(&site);
        let mut expected: BTreeMap<String, u64> = BTreeMap::new();
        for (topic, payload, reason) in &corpus {
            probe.publish_acked(topic, payload, false).await;
            *expected.entry(reason.to_string()).or_default() += 1;
        }
        // Good readings after the corpus, one per format.
        let time = past_time(100_000);
        probe
            .publish_acked(
                &site.json_topic(),
                json_payload(44.0, 12.0, time).as_bytes(),
                false,
            )
            .await;
        probe
            .publish_acked(
                &site.senml_topic(),
                senml_payload(2.8, 24.0, time).as_bytes(),
                false,
            )
            .await;
        probe
            .publish_acked(&site.number_temp_topic(), b"9.5", false)
            .await;
        probe.publish_acked(&site.number_ec_topic(), b"0.42", false).await;
        wait_for_readings(&site.db, 4).await;
        let got = poll_until("every rejection stored", || {
            let got = rejections_by_reason(&site.db);
            (got.values().sum::<u64>() >= corpus.len() as u64).then_some(got)
        })
        .await;
        assert_eq!(got, expected, "rejections by reason");

        let reader = Reader::open(&site.db).unwrap();
        let json_rows = reader.history(JSON_TANK, Some(time), None).unwrap();
        assert_eq!(json_rows.len(), 1);
        assert_derived_eq(
            &json_rows[0].derived,
            &expected_derived(44.0, 12.0),
            "JSON after corpus",
        );
        let senml_rows = reader.history(SENML_TANK, Some(time), None).unwrap();
        assert_eq!(senml_rows.len(), 1);
        assert_derived_eq(
            &senml_rows[0].derived,
            &expected_derived(28.0, 24.0),
            "SenML after corpus",
        );
        let number_rows = reader.history(NUMBER_TANK, None, None).unwrap();
        assert_eq!(number_rows.len(), 1);
        assert_derived_eq(
            &number_rows[0].derived,
            &expected_derived(0.42, 9.5),
            "number after corpus",
        );

        let summary = daemon.stop().await;
        assert_eq!(summary.rejected, corpus.len() as u64, "{summary:?}");
        assert_eq!(summary.readings_stored, 4, "{summary:?}");
        let state = Reader::open(&site.db).unwrap().daemon_state().unwrap().unwrap();
        assert_eq!(state.rejected_count, corpus.len() as u64);
    })
    .await;
}

#[tokio::test(flavor = "multi_thread", worker_threads = 2)]
async fn redelivered_reading_stored_once_and_unconfigured_topic_ignored() {
    within_limit(async {
        let (_broker, site, _observer, mut probe, daemon) = start_site("redeliver").await;
        let time = past_time(7_000);
        let payload = json_payload(38.5, 14.0, time);
        for _ in 0..3 {
            probe
                .publish_acked(&site.json_topic(), payload.as_bytes(), false)
                .await;
        }
        // A valid-looking reading on a topic no tank owns, under the subscribed `<root>/#`.
        let stray = format!("{}/holding-x9/state", site.root);
        for _ in 0..2 {
            probe.publish_acked(&stray, payload.as_bytes(), false).await;
        }
        // A marker reading after them: once it is stored, everything before it has been handled.
        let marker = past_time(8_000);
        probe
            .publish_acked(
                &site.json_topic(),
                json_payload(39.0, 14.0, marker).as_bytes(),
                false,
            )
            .await;
        wait_for_readings(&site.db, 3).await;

        let reader = Reader::open(&site.db).unwrap();
        let same = reader.history(JSON_TANK, Some(time), Some(marker)).unwrap();
        assert_eq!(same.len(), 1, "a reading sent three times is stored once");
        assert_derived_eq(
            &same[0].derived,
            &expected_derived(38.5, 14.0),
            "redelivered reading",
        );
        assert_eq!(readings_count(&site.db), 3, "warm-up, redelivered, marker");
        let stray_rows = count(
            &site.db,
            &format!("SELECT COUNT(*) FROM readings WHERE source_topic = '{stray}'"),
        ) + count(
            &site.db,
            &format!("SELECT COUNT(*) FROM rejections WHERE topic = '{stray}'"),
        );
        assert_eq!(stray_rows, 0, "an unconfigured topic leaves no row");

        let summary = daemon.stop().await;
        assert_eq!(summary.ignored, 2, "{summary:?}");
        assert_eq!(summary.rejected, 0, "{summary:?}");
        assert!(
            summary.duplicates >= 2,
            "the two repeats are counted as duplicates: {summary:?}"
        );
        let state = Reader::open(&site.db).unwrap().daemon_state().unwrap().unwrap();
        assert_eq!(state.ignored_count, 2);
    })
    .await;
}

/// The built binary: `run` stores readings, and SIGTERM commits, publishes `offline` and exits 0.
#[tokio::test(flavor = "multi_thread", worker_threads = 2)]
async fn binary_stops_gracefully_on_sigterm() {
    within_limit(async {
        mqtt_support::init_logging();
        let broker = EmbeddedBroker::start().await.unwrap();
        let site = Site::new("sigterm", broker.addr(), &SiteOptions::default());
        let mut observer = Peer::connect(broker.addr(), &unique("observer"), true).await;
        observer.subscribe(&format!("{}/#", site.prefix)).await;
        let daemon = ChildDaemon::start(&site, 0);
        wait_for_online(&mut observer, &site).await;
        let mut probe = Peer::connect(broker.addr(), &unique("probe-sim"), true).await;
        warm_up(&mut probe, &site).await;
        for i in 1..=20 {
            let payload = json_payload(30.0 + f64::from(i) * 0.1, 11.0, past_time(i64::from(i) * 1000));
            probe
                .publish_acked(&site.json_topic(), payload.as_bytes(), false)
                .await;
        }
        // Stop while readings may still be on their way: what was taken is committed, the rest stays
        // with the broker (unacked) and arrives after a restart under the same client id.
        let status = daemon.terminate().await;
        assert!(status.success(), "exit status {status:?}");
        let offline = read_retained(broker.addr(), &site.status_topic()).await;
        assert_eq!(offline.payload.as_ref(), b"offline");
        let daemon = ChildDaemon::start(&site, 1);
        wait_for_online(&mut observer, &site).await;
        assert_eq!(wait_for_readings(&site.db, 21).await, 21);
        let status = daemon.terminate().await;
        assert!(status.success(), "exit status {status:?}");
        assert_eq!(readings_count(&site.db), 21, "nothing stored twice");
    })
    .await;
}

/// A payload larger than the MQTT client's packet cap (not only the ingest cap) must not wedge the
/// session: the readings after it are still stored.
#[tokio::test(flavor = "multi_thread", worker_threads = 2)]
async fn oversized_packet_does_not_block_later_readings() {
    within_limit(async {
        let (_broker, site, _observer, mut probe, daemon) = start_site("oversized").await;
        let mut huge = br#"{"conductivity": 41.2, "temperature": 12.0, "pad": ""#.to_vec();
        huge.extend(std::iter::repeat_n(b'x', 200_000));
        huge.extend(br#""}"#);
        // The test peer's own packet cap is 10 KiB; a plain client with a larger one sends the payload.
        let mut o = rumqttc::MqttOptions::new(unique("big-sender"), "127.0.0.1", _broker.addr().port());
        o.set_max_packet_size(1 << 20, 1 << 20);
        let (big, mut eventloop) = rumqttc::AsyncClient::new(o, 8);
        big.publish(site.json_topic(), rumqttc::QoS::AtLeastOnce, false, huge)
            .await
            .unwrap();
        tokio::time::timeout(DEADLINE, async {
            loop {
                if let rumqttc::Event::Incoming(rumqttc::Incoming::PubAck(_)) =
                    eventloop.poll().await.unwrap()
                {
                    break;
                }
            }
        })
        .await
        .expect("broker never acked the big publish");
        let time = past_time(50_000);
        probe
            .publish_acked(
                &site.json_topic(),
                json_payload(44.0, 12.0, time).as_bytes(),
                false,
            )
            .await;
        wait_for_readings(&site.db, 2).await;
        let reader = Reader::open(&site.db).unwrap();
        assert_eq!(reader.history(JSON_TANK, Some(time), None).unwrap().len(), 1);
        let rejected = poll_until("the oversized payload's rejection", || {
            let got = rejections_by_reason(&site.db);
            (!got.is_empty()).then_some(got)
        })
        .await;
        assert_eq!(rejected, BTreeMap::from([("payload_too_large".to_string(), 1)]));
        let summary = daemon.stop().await;
        assert_eq!(summary.rejected, 1, "{summary:?}");
    })
    .await;
}

/// Many tanks at once: every commit carries a state per tank; the acks must not queue behind the state
/// publishes (they once did, and the daemon crawled at one publish timeout per tank).
#[tokio::test(flavor = "multi_thread", worker_threads = 2)]
async fn many_tanks_at_full_speed_are_all_stored() {
    within_limit(async {
        mqtt_support::init_logging();
        let broker = EmbeddedBroker::start().await.unwrap();
        let options = SiteOptions {
            extra_tanks: 500,
            ..SiteOptions::default()
        };
        let site = Site::new("many-tanks", broker.addr(), &options);
        let mut observer = Peer::connect(broker.addr(), &unique("observer"), true).await;
        observer.subscribe(&format!("{}/#", site.prefix)).await;
        let daemon = InProcessDaemon::start(&site);
        wait_for_online(&mut observer, &site).await;
        let mut probe = Peer::connect(broker.addr(), &unique("probe-sim"), true).await;
        warm_up(&mut probe, &site).await;
        const READINGS: usize = 5_000;
        let messages = (0..READINGS)
            .map(|i| {
                let topic = format!("{}/bulk-{:04}/state", site.root, i % 500);
                (topic, json_payload(30.0, 12.0, past_time(1_000 + i as i64)))
            })
            .collect();
        let publisher = spawn_stream_to(broker.addr(), unique("bulk-pub"), messages);
        assert!(publisher.await.unwrap() >= READINGS as u64);
        assert_eq!(
            wait_for_readings(&site.db, 1 + READINGS as u64).await,
            1 + READINGS as u64
        );
        let summary = daemon.stop().await;
        assert_eq!(summary.readings_stored, 1 + READINGS as u64, "{summary:?}");
    })
    .await;
}
