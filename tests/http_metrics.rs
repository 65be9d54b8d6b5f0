//! `/metrics`, `/readyz` and `/api/tanks` of a real daemon fed over MQTT by the embedded broker: the
//! exposition parses by the format's rules, and the counters, the tank's last-reading age and the
//! writer's histograms move when readings arrive; a malformed payload shows as a rejection by reason.
mod daemon_support;
mod http_support;
mod mqtt_support;

use std::net::SocketAddr;
use std::time::Duration;

use daemon_support::*;
use halotank::daemon::{run_with, DaemonHooks};
use halotank::mqtt::EmbeddedBroker;
use http_support::{get, parse_exposition, Exposition};
use mqtt_support::{unique, Peer};
use tokio::sync::{oneshot, watch};

async fn metrics(addr: SocketAddr) -> Exposition {
    tokio::task::spawn_blocking(move || {
        let r = get(addr, "/metrics", &[]);
        assert_eq!(r.status, 200);
        parse_exposition(&r.body).unwrap_or_else(|e| panic!("{e}\n{}", r.body))
    })
    .await
    .unwrap()
}

/// Polls `/metrics` until `done` holds (counters reach the live view every state tick, 5 s).
async fn metrics_until(addr: SocketAddr, what: &str, done: impl Fn(&Exposition) -> bool) -> Exposition {
    let deadline = tokio::time::Instant::now() + DEADLINE;
    loop {
        let m = metrics(addr).await;
        if done(&m) {
            return m;
        }
        assert!(
            tokio::time::Instant::now() < deadline,
            "timed out waiting for {what}: {m:?}"
        );
        tokio::time::sleep(Duration::from_millis(200)).await;
    }
}

fn rejected_total(m: &Exposition) -> f64 {
    m.samples
        .iter()
        .filter(|s| s.name == "halotank_messages_rejected_total")
        .map(|s| s.value)
        .sum()
}

#[tokio::test(flavor = "multi_thread", worker_threads = 2)]
async fn counters_move_when_readings_arrive_through_the_daemon() {
    let broker = EmbeddedBroker::start().await.unwrap();
    let site = Site::new("http-metrics", broker.addr(), &SiteOptions::default());
    let (stop, stop_rx) = watch::channel(false);
    let (addr_tx, addr_rx) = oneshot::channel();
    let hooks = DaemonHooks {
        http_addr: Some(addr_tx),
    };
    let daemon = tokio::spawn(run_with(site.load_config(), stop_rx, hooks));
    let addr = tokio::time::timeout(DEADLINE, addr_rx).await.unwrap().unwrap();
    assert!(addr.ip().is_loopback() && addr.port() != 0);

    let before = metrics(addr).await;
    assert_eq!(before.value("halotank_readings_accepted_total", &[]), Some(0.0));
    assert_eq!(rejected_total(&before), 0.0);

    // Publish one reading until it is stored: the daemon's subscription is live from then on.
    let mut probe = Peer::connect(broker.addr(), &unique("http-probe"), true).await;
    let first = json_payload(36.0, 12.0, past_time(-60_000));
    let deadline = tokio::time::Instant::now() + DEADLINE;
    while readings_count(&site.db) < 1 {
        assert!(
            tokio::time::Instant::now() < deadline,
            "the daemon never stored a reading"
        );
        probe
            .publish_acked(&site.json_topic(), first.as_bytes(), false)
            .await;
        tokio::time::sleep(Duration::from_millis(200)).await;
    }
    // Nine more readings, then one payload that is not JSON.
    for i in 1..10 {
        let payload = json_payload(
            36.0 + 0.1 * f64::from(i),
            12.0,
            past_time(-60_000 + i64::from(i) * 1000),
        );
        probe
            .publish_acked(&site.json_topic(), payload.as_bytes(), false)
            .await;
    }
    probe
        .publish_acked(&site.json_topic(), b"not a reading", false)
        .await;

    let m = metrics_until(addr, "10 readings and 1 rejection counted", |m| {
        m.value("halotank_readings_accepted_total", &[]) == Some(10.0) && rejected_total(m) == 1.0
    })
    .await;
    assert_eq!(m.value("halotank_messages_accepted_total", &[]), Some(10.0));
    let age = m
        .value("halotank_tank_last_reading_age_seconds", &[("tank", JSON_TANK)])
        .expect("the tank's last-reading age");
    // The newest reading's own time is past_time(9 s - 60 s): one hour less 51 s before the test began.
    assert!((3549.0..3800.0).contains(&age), "{age}");
    let commits = m
        .value("halotank_writer_commit_latency_seconds_count", &[])
        .unwrap();
    assert!(commits >= 1.0, "{commits}");
    assert!(m.value("halotank_writer_batch_size_rows_sum", &[]).unwrap() >= 11.0);
    assert_eq!(m.value("halotank_mqtt_connected", &[]), Some(1.0));
    let reasons: Vec<&str> = m
        .samples
        .iter()
        .filter(|s| s.name == "halotank_messages_rejected_total")
        .map(|s| s.labels["reason"].as_str())
        .collect();
    assert_eq!(reasons.len(), 1, "{reasons:?}");
    let stored = rejections_by_reason(&site.db);
    assert_eq!(
        stored.get(reasons[0]),
        Some(&1),
        "the same reason as stored: {stored:?}"
    );

    let (ready, tanks) =
        tokio::task::spawn_blocking(move || (get(addr, "/readyz", &[]), get(addr, "/api/tanks", &[])))
            .await
            .unwrap();
    assert_eq!(ready.status, 200, "{}", ready.body);
    let tanks = tanks.json();
    let card = tanks["tanks"]
        .as_array()
        .unwrap()
        .iter()
        .find(|t| t["id"] == JSON_TANK)
        .unwrap()
        .clone();
    let want = expected_derived(36.9, 12.0);
    let sp = card["latest"]["practical_salinity"].as_f64().unwrap();
    assert!(
        (sp - want.practical_salinity).abs() < 1e-9,
        "{sp} vs {}",
        want.practical_salinity
    );

    probe.disconnect().await;
    stop.send_replace(true);
    let summary = tokio::time::timeout(DEADLINE, daemon)
        .await
        .unwrap()
        .unwrap()
        .unwrap();
    assert_eq!(summary.readings_stored, 10);
    // The server stopped with the daemon.
    let gone = tokio::task::spawn_blocking(move || std::net::TcpStream::connect(addr))
        .await
        .unwrap();
    assert!(
        gone.is_err(),
        "the HTTP port still accepts after the daemon stopped"
    );

    // Restarted with no new reading: the card and the age metric show the last stored reading.
    let (stop, stop_rx) = watch::channel(false);
    let (addr_tx, addr_rx) = oneshot::channel();
    let hooks = DaemonHooks {
        http_addr: Some(addr_tx),
    };
    let daemon = tokio::spawn(run_with(site.load_config(), stop_rx, hooks));
    let addr = tokio::time::timeout(DEADLINE, addr_rx).await.unwrap().unwrap();
    let tanks = tokio::task::spawn_blocking(move || get(addr, "/api/tanks", &[]))
        .await
        .unwrap()
        .json();
    let card = tanks["tanks"]
        .as_array()
        .unwrap()
        .iter()
        .find(|t| t["id"] == JSON_TANK)
        .unwrap()
        .clone();
    assert_eq!(card["latest"]["practical_salinity"].as_f64(), Some(sp), "{card}");
    assert_eq!(card["stale"], true);
    let m = metrics(addr).await;
    assert!(m
        .value("halotank_tank_last_reading_age_seconds", &[("tank", JSON_TANK)])
        .is_some());
    stop.send_replace(true);
    tokio::time::timeout(DEADLINE, daemon)
        .await
        .unwrap()
        .unwrap()
        .unwrap();
    broker.stop().await;
}
