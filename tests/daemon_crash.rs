//! Crash safety: the built binary is killed with SIGKILL part-way through a QoS 1 stream of 10,000
//! readings (distinct times) and restarted with the same configuration and client id; exactly 10,000
//! readings must end up stored (none lost: acks leave only after commit; none twice: redeliveries hit the
//! readings' unique key).
//!
//! Runs against the embedded broker in this test process (rumqttd keeps sessions in memory, so the broker
//! must outlive the daemon), and against Mosquitto when `HALOTANK_TEST_MQTT=host:port` is set.

mod daemon_support;
mod mqtt_support;

use std::net::SocketAddr;
use std::time::Duration;

use daemon_support::*;
use halotank::mqtt::EmbeddedBroker;

const READINGS: usize = 10_000;
/// Kill once at least this many are stored (well before the end of the stream).
const KILL_AFTER: u64 = 2_000;

async fn crash_and_restart(broker: SocketAddr, label: &str) {
    let site = Site::new(label, broker, &SiteOptions::default());
    // First run: subscribe (creates the persistent session), then the stream starts.
    let first = ChildDaemon::start(&site, 0);
    // The warm-up reading is republished until stored: proves the daemon's subscription is live (the same
    // time and topic each time, so it is stored once).
    let warm_id = format!("{}-warm", site.client_id);
    let mut attempts = 0;
    while readings_count(&site.db) == 0 {
        attempts += 1;
        assert!(
            attempts < 100,
            "daemon never stored the warm-up reading; log:\n{}",
            first.log_text()
        );
        let warm = vec![json_payload(30.0, 10.0, past_time(0))];
        spawn_stream(broker, warm_id.clone(), site.json_topic(), warm)
            .await
            .unwrap();
        tokio::time::sleep(Duration::from_millis(100)).await;
    }

    let payloads: Vec<String> = (0..READINGS)
        .map(|i| {
            let c = 25.0 + (i % 400) as f64 * 0.05;
            json_payload(c, 12.0, past_time(1_000 + i as i64))
        })
        .collect();
    let publisher_id = format!("{}-pub", site.client_id);
    let stream = spawn_stream(broker, publisher_id.clone(), site.json_topic(), payloads);
    wait_for_readings(&site.db, 1 + KILL_AFTER).await;
    first.kill9();
    let at_kill = readings_count(&site.db);
    eprintln!("{label}: killed with {at_kill} readings stored");
    assert!(
        at_kill < 1 + READINGS as u64,
        "the stream had already been stored when the daemon was killed; the test proved nothing"
    );

    let second = ChildDaemon::start(&site, 1);
    let acked = tokio::time::timeout(Duration::from_secs(120), stream)
        .await
        .expect("publisher did not finish")
        .unwrap();
    assert!(acked >= READINGS as u64);
    let stored = poll_until("every reading after the restart", || {
        let n = readings_count(&site.db);
        // The warm-up reading and the whole stream.
        (n > READINGS as u64).then_some(n)
    })
    .await;
    let status = second.terminate().await;
    assert!(status.success(), "second run exit {status:?}");
    assert_eq!(stored, 1 + READINGS as u64);
    let distinct = count(
        &site.db,
        &format!(
            "SELECT COUNT(DISTINCT time_ms) FROM readings WHERE time_ms >= {}",
            past_time(1_000).timestamp_millis()
        ),
    );
    assert_eq!(
        distinct, READINGS as u64,
        "every reading of the stream exactly once"
    );
    assert_eq!(readings_count(&site.db), 1 + READINGS as u64);
    for id in [&site.client_id, &warm_id, &publisher_id] {
        drop_session(broker, id).await;
    }
}

#[tokio::test(flavor = "multi_thread", worker_threads = 2)]
async fn sigkill_mid_stream_loses_nothing_embedded_broker() {
    mqtt_support::init_logging();
    let broker = EmbeddedBroker::start().await.unwrap();
    tokio::time::timeout(
        Duration::from_secs(240),
        crash_and_restart(broker.addr(), "crash-embedded"),
    )
    .await
    .expect("test exceeded its time limit");
}

#[tokio::test(flavor = "multi_thread", worker_threads = 2)]
async fn sigkill_mid_stream_loses_nothing_mosquitto() {
    let Some(broker) = mosquitto_from_env("sigkill_mid_stream_loses_nothing_mosquitto").await else {
        return;
    };
    tokio::time::timeout(
        Duration::from_secs(240),
        crash_and_restart(broker, "crash-mosquitto"),
    )
    .await
    .expect("test exceeded its time limit");
}
