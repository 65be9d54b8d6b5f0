//! End to end over the embedded broker: a tank driven out of its salinity tolerance raises exactly one
//! critical alert, which clears but stays open until acknowledged; `halotank ack` (the binary) is picked up
//! by the running daemon; after a restart an open alert is reloaded, not raised again.
mod mqtt_support;

use std::path::Path;
use std::process::Command;
use std::time::Duration;

use chrono::{SecondsFormat, TimeDelta, Utc};
use halotank::config;
use halotank::mqtt::EmbeddedBroker;
use halotank::seawater::practical_salinity::conductivity_from_practical_salinity;
use halotank::species::SpeciesLibrary;
use halotank::storage::Reader;
use mqtt_support::{unique, Peer};
use tokio::sync::watch;

const SPECIES: &str = "pacific_oyster";
const RULES_OFF: [&str; 10] = [
    "salinity_optimum",
    "temperature_optimum",
    "temperature_tolerance",
    "salinity_rate",
    "probe_stale",
    "probe_spike",
    "probe_flat_line",
    "probe_inconsistent",
    "near_freezing",
    "schedule_off",
];

fn config_text(addr: std::net::SocketAddr, db: &Path, topic: &str, prefix: &str) -> String {
    let mut text = format!(
        "[site]\nname = \"Kelpie Point Hatchery\"\n[broker]\nhost = \"{}\"\nport = {}\nclient_id = \"{}\"\n\
         [storage]\npath = \"{}\"\nflush_ms = 50\n[publish]\ntopic_prefix = \"{prefix}\"\n\
         [http]\nbind = \"127.0.0.1:0\"\n\
         [[tanks]]\nid = \"oyster-e1\"\nname = \"Oyster E1\"\nvolume_l = 400\nspecies = \"{SPECIES}\"\n\
         format = \"json\"\nconductivity_unit = \"mS/cm\"\n\
         [tanks.topics]\ncombined = \"{topic}\"\n\
         [tanks.json_keys]\nconductivity = \"conductivity\"\ntemperature = \"temperature\"\ntime = \"time\"\n\
         [alerts.rules.salinity_tolerance]\nmin_duration_s = 0\nclear_after_s = 0\nrenotify_s = 0\n",
        addr.ip(),
        addr.port(),
        unique("halotank-e2e"),
        db.display()
    );
    for rule in RULES_OFF {
        text.push_str(&format!("[alerts.rules.{rule}]\nenabled = false\n"));
    }
    text
}

struct Probe {
    peer: Peer,
    topic: String,
    next: chrono::DateTime<Utc>,
}

impl Probe {
    async fn send(&mut self, practical_salinity: f64, count: usize) {
        for _ in 0..count {
            let c = conductivity_from_practical_salinity(practical_salinity, 15.0, 0.0).unwrap();
            let time = self.next.to_rfc3339_opts(SecondsFormat::Millis, true);
            let payload = format!("{{\"conductivity\": {c}, \"temperature\": 15.0, \"time\": \"{time}\"}}");
            self.peer
                .publish_acked(&self.topic, payload.as_bytes(), false)
                .await;
            self.next += TimeDelta::seconds(10);
        }
    }
}

async fn wait_until(what: &str, mut check: impl FnMut() -> bool) {
    for _ in 0..100 {
        if check() {
            return;
        }
        tokio::time::sleep(Duration::from_millis(100)).await;
    }
    panic!("timed out waiting for {what}");
}

fn alerts(db: &Path, open: bool) -> Vec<halotank::alerts::AlertRecord> {
    Reader::open(db)
        .and_then(|r| r.alerts(open, None))
        .unwrap_or_default()
}

#[tokio::test(flavor = "multi_thread", worker_threads = 2)]
async fn out_of_tolerance_raises_once_clears_waits_for_ack_and_survives_a_restart() {
    let broker = EmbeddedBroker::start().await.unwrap();
    excursion_scenario(broker.addr()).await;
    broker.stop().await;
}

/// The same over Mosquitto (set `HALOTANK_TEST_MQTT=host:port`; `.ci/run` does).
#[tokio::test(flavor = "multi_thread", worker_threads = 2)]
async fn out_of_tolerance_over_mosquitto() {
    let Some(addr) = std::env::var("HALOTANK_TEST_MQTT")
        .ok()
        .and_then(|a| a.parse().ok())
    else {
        eprintln!("skipped: set HALOTANK_TEST_MQTT=host:port to run this test against Mosquitto");
        return;
    };
    excursion_scenario(addr).await;
}

/// Drives one tank out of its species' tolerance and back, acknowledges, then restarts with an open alert.
async fn excursion_scenario(addr: std::net::SocketAddr) {
    let library = SpeciesLibrary::embedded().unwrap();
    let profile = library.get(SPECIES).unwrap();
    let inside = (profile.salinity_optimum.min + profile.salinity_optimum.max) / 2.0;
    let outside = if profile.salinity_tolerance.min > 2.0 {
        profile.salinity_tolerance.min / 2.0
    } else {
        profile.salinity_tolerance.max + 3.0
    };
    let dir = tempfile::tempdir().unwrap();
    let db = dir.path().join("e2e.sqlite3");
    let topic = format!("{}/oyster-e1/probe", unique("kelpie"));
    let text = config_text(addr, &db, &topic, &unique("halotank-e2e-alerts"));
    let cfg = config::parse(&text, &dir.path().join("halotank.toml")).unwrap();

    let (stop, stop_rx) = watch::channel(false);
    let daemon = tokio::spawn(halotank::daemon::run(cfg.clone(), stop_rx));
    tokio::time::sleep(Duration::from_millis(1500)).await;
    let prefix = cfg.publish.topic_prefix.clone();
    let mut watcher = Peer::connect(addr, &unique("watcher"), true).await;
    watcher.subscribe(&format!("{prefix}/#")).await;
    let mut probe = Probe {
        peer: Peer::connect(addr, &unique("probe"), true).await,
        topic,
        next: Utc::now() - TimeDelta::hours(1),
    };

    probe.send(inside, 3).await;
    probe.send(outside, 4).await;
    wait_until("one open alert", || alerts(&db, true).len() == 1).await;
    probe.send(inside, 4).await;
    wait_until("the alert to clear", || {
        alerts(&db, true)
            .first()
            .is_some_and(|a| a.state.as_str() == "cleared_unacknowledged")
    })
    .await;
    let all = alerts(&db, false);
    assert_eq!(all.len(), 1, "{all:?}");

    // Published: the raise on the tank's alert topic, the retained summary, and tonicity in the state.
    let (mut raised, mut summary, mut tonicity) = (false, false, false);
    while !(raised && summary && tonicity) {
        let p = tokio::time::timeout(Duration::from_secs(5), watcher.next_publish())
            .await
            .expect("publishes");
        // The daemon's status topic carries plain text; only JSON payloads are looked at.
        let Ok(json) = serde_json::from_slice::<serde_json::Value>(&p.payload) else {
            continue;
        };
        if p.topic == format!("{prefix}/tank/oyster-e1/alert") && json["event"] == "raised" {
            assert_eq!(json["alert"]["kind"], "salinity_tolerance");
            raised = true;
        } else if p.topic == format!("{prefix}/alerts") && json["open_count"] == 1 {
            summary = true;
        } else if p.topic == format!("{prefix}/tank/oyster-e1/state") {
            assert_eq!(json["tonicity"]["species"], SPECIES);
            tonicity = true;
        }
    }
    assert_eq!(all[0].kind.as_str(), "salinity_tolerance");
    assert_eq!(all[0].severity.as_str(), "critical");

    // Acknowledge with the binary while the daemon runs; the daemon applies it within a few seconds.
    let out = Command::new(env!("CARGO_BIN_EXE_halotank"))
        .args(["ack", "--db"])
        .arg(&db)
        .args([
            &all[0].id.0.to_string(),
            "--by",
            "Tess",
            "--note",
            "salinity restored",
        ])
        .output()
        .unwrap();
    assert!(out.status.success(), "{}", String::from_utf8_lossy(&out.stderr));
    assert!(String::from_utf8_lossy(&out.stdout).contains("running daemon"));
    wait_until("the daemon to apply the acknowledgement", || {
        alerts(&db, true).is_empty()
    })
    .await;
    let acked = &alerts(&db, false)[0];
    assert_eq!(acked.state.as_str(), "cleared");
    assert_eq!(acked.acknowledgement.as_ref().unwrap().by, "Tess");

    // A second excursion left open across a restart.
    probe.send(outside, 3).await;
    wait_until("a second open alert", || alerts(&db, true).len() == 1).await;
    let open_before = alerts(&db, true);
    stop.send(true).unwrap();
    daemon.await.unwrap().unwrap();

    let (stop, stop_rx) = watch::channel(false);
    let daemon = tokio::spawn(halotank::daemon::run(cfg, stop_rx));
    tokio::time::sleep(Duration::from_millis(1500)).await;
    probe.send(outside, 3).await;
    tokio::time::sleep(Duration::from_millis(1500)).await;
    assert_eq!(alerts(&db, true), open_before, "restored, not raised again");
    assert_eq!(alerts(&db, false).len(), 2);
    stop.send(true).unwrap();
    daemon.await.unwrap().unwrap();
}

#[test]
fn a_tank_naming_an_unknown_species_refuses_the_start() {
    let dir = tempfile::tempdir().unwrap();
    let addr: std::net::SocketAddr = "127.0.0.1:1883".parse().unwrap();
    let text = config_text(
        addr,
        &dir.path().join("x.sqlite3"),
        "kelpie/e1/probe",
        "halotank/kelpie",
    )
    .replace(SPECIES, "kraken_larva");
    let cfg = config::parse(&text, &dir.path().join("halotank.toml")).unwrap();
    let err = halotank::daemon::tank_profiles(&cfg).unwrap_err();
    let shown = format!("{err:#}");
    assert!(
        shown.contains("oyster-e1") && shown.contains("kraken_larva"),
        "{shown}"
    );
    assert!(shown.contains("not in the species library"), "{shown}");
}
