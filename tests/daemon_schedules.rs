//! End to end over the embedded broker: a schedule stored while the daemon runs is tracked within seconds
//! (retained setpoint, step-due reminder with the step's quantities), `halotank schedule step-done` (the
//! binary) moves the setpoint, a reading off the setpoint raises "off schedule", the published state carries
//! the progress, and after a restart the setpoint continues from the right step; with
//! `schedule_pause_on_critical` a critical alert pauses the schedule.
mod mqtt_support;

use std::path::Path;
use std::process::Command;
use std::time::Duration;

use chrono::{DateTime, SecondsFormat, TimeDelta, Utc};
use halotank::config;
use halotank::mqtt::EmbeddedBroker;
use halotank::planner::{make_plan, Method, PlanRequest, Ramp, RampShape, RateLimits};
use halotank::schedule::SchedulePlan;
use halotank::seawater::practical_salinity::conductivity_from_practical_salinity;
use halotank::storage::{Reader, ScheduleStore};
use mqtt_support::{unique, Peer};
use tokio::sync::watch;

const TANK: &str = "smolt-b2";
const RULES_OFF: [&str; 10] = [
    "salinity_optimum",
    "salinity_tolerance",
    "temperature_optimum",
    "temperature_tolerance",
    "salinity_rate",
    "probe_stale",
    "probe_spike",
    "probe_flat_line",
    "probe_inconsistent",
    "near_freezing",
];

fn config_text(addr: std::net::SocketAddr, db: &Path, topic: &str, prefix: &str) -> String {
    config_with(addr, db, topic, prefix, "", &RULES_OFF)
}

/// The configuration with `alerts` appended to `[alerts]` and the rules in `off` disabled.
fn config_with(
    addr: std::net::SocketAddr,
    db: &Path,
    topic: &str,
    prefix: &str,
    alerts: &str,
    off: &[&str],
) -> String {
    let mut text = format!(
        "[site]\nname = \"Kelpie Point Hatchery\"\n[broker]\nhost = \"{}\"\nport = {}\nclient_id = \"{}\"\n\
         [storage]\npath = \"{}\"\nflush_ms = 50\n[publish]\ntopic_prefix = \"{prefix}\"\n[http]\nbind = \"127.0.0.1:0\"\n\
         [[tanks]]\nid = \"{TANK}\"\nname = \"Smolt B2\"\nvolume_l = 1000\nspecies = \"atlantic_salmon_smolt\"\n\
         format = \"json\"\nconductivity_unit = \"mS/cm\"\n\
         [tanks.topics]\ncombined = \"{topic}\"\n\
         [tanks.json_keys]\nconductivity = \"conductivity\"\ntemperature = \"temperature\"\ntime = \"time\"\n\
         [alerts]\nschedule_band_sp = 0.5\n{alerts}\
         [alerts.rules.schedule_off]\nmin_duration_s = 0\n",
        addr.ip(),
        addr.port(),
        unique("halotank-sched"),
        db.display()
    );
    for rule in off {
        text.push_str(&format!("[alerts.rules.{rule}]\nenabled = false\n"));
    }
    text
}

/// 1,000 L from SP 30 to 20 by hourly exchanges with fresh water (SP 0.2) at 2 SP/h: five steps, the first
/// due at `start`.
fn plan_request(start: DateTime<Utc>) -> PlanRequest {
    PlanRequest {
        tank_volume_l: 1000.0,
        from_practical_salinity: 30.0,
        to_practical_salinity: 20.0,
        temperature_c: 12.0,
        start,
        interval_h: 1.0,
        method: Method::Exchange {
            source_practical_salinity: 0.2,
        },
        ramp: Ramp {
            shape: RampShape::LinearSalinity,
            rate: None,
        },
        holds: vec![],
        rate_limits: RateLimits {
            max_rate_sp_per_h: Some(2.0),
            ..RateLimits::default()
        },
        salinity_limits: None,
    }
}

async fn wait_until(what: &str, mut check: impl FnMut() -> bool) {
    for _ in 0..150 {
        if check() {
            return;
        }
        tokio::time::sleep(Duration::from_millis(100)).await;
    }
    panic!("timed out waiting for {what}");
}

fn open_alerts(db: &Path, kind: &str) -> Vec<halotank::alerts::AlertRecord> {
    Reader::open(db)
        .and_then(|r| r.alerts(true, None))
        .unwrap_or_default()
        .into_iter()
        .filter(|a| a.kind.as_str() == kind)
        .collect()
}

/// The next JSON publish on `topic` that satisfies `pred`.
async fn next_json(
    peer: &mut Peer,
    topic: &str,
    pred: impl Fn(&serde_json::Value) -> bool,
) -> serde_json::Value {
    let deadline = tokio::time::Instant::now() + Duration::from_secs(15);
    loop {
        let p = tokio::time::timeout_at(deadline, peer.next_publish())
            .await
            .unwrap_or_else(|_| panic!("no matching publish on {topic}"));
        if p.topic != topic {
            continue;
        }
        let Ok(json) = serde_json::from_slice::<serde_json::Value>(&p.payload) else {
            continue;
        };
        if pred(&json) {
            return json;
        }
    }
}

fn step_done(db: &Path, id: i64) {
    let out = Command::new(env!("CARGO_BIN_EXE_halotank"))
        .args(["schedule", "step-done", &id.to_string(), "--db"])
        .arg(db)
        .args(["--by", "ines"])
        .output()
        .unwrap();
    assert!(out.status.success(), "{}", String::from_utf8_lossy(&out.stderr));
}

#[tokio::test(flavor = "multi_thread", worker_threads = 2)]
async fn a_schedule_is_tracked_live_and_its_setpoint_survives_a_restart() {
    let broker = EmbeddedBroker::start().await.unwrap();
    let addr = broker.addr();
    let dir = tempfile::tempdir().unwrap();
    let db = dir.path().join("schedules.sqlite3");
    let topic = format!("{}/{TANK}/probe", unique("kelpie"));
    let text = config_text(addr, &db, &topic, &unique("halotank-e2e-sched"));
    let cfg = config::parse(&text, &dir.path().join("halotank.toml")).unwrap();
    let prefix = cfg.publish.topic_prefix.clone();
    let setpoint_topic = format!("{prefix}/tank/{TANK}/setpoint");
    let state_topic = format!("{prefix}/tank/{TANK}/state");

    let (stop, stop_rx) = watch::channel(false);
    let daemon = tokio::spawn(halotank::daemon::run(cfg.clone(), stop_rx));
    tokio::time::sleep(Duration::from_millis(1500)).await;
    let mut watcher = Peer::connect(addr, &unique("watcher"), true).await;
    watcher.subscribe(&format!("{prefix}/tank/{TANK}/#")).await;

    // Stored while the daemon runs, as `halotank schedule start` does; step 1 is due since 10 minutes.
    let start = Utc::now() - TimeDelta::minutes(10);
    let request = plan_request(start);
    let plan = SchedulePlan::from(&make_plan(&request).unwrap());
    let first_drain = plan.steps[0].drain_l.unwrap();
    let id = ScheduleStore::open(&db)
        .unwrap()
        .insert(TANK, start, &plan, &request)
        .unwrap()
        .id;

    let sp = next_json(&mut watcher, &setpoint_topic, |j| j["schedule_id"] == id).await;
    assert_eq!(sp["state"], "active");
    assert_eq!(
        (sp["step"].as_u64(), sp["steps_total"].as_u64()),
        (Some(0), Some(5))
    );
    assert!((sp["setpoint_practical_salinity"].as_f64().unwrap() - 30.0).abs() < 1e-9);
    assert!(sp["setpoint_osmolality_mOsm_kg"].as_f64().unwrap() > 800.0);
    assert_eq!(sp["next_step"]["step"], 1);
    assert_eq!(sp["next_step"]["overdue"], true);
    assert_eq!(sp["next_step_time"], sp["next_step"]["due"]);
    wait_until("the step-due reminder", || {
        !open_alerts(&db, "schedule_step_due").is_empty()
    })
    .await;
    let reminder = &open_alerts(&db, "schedule_step_due")[0];
    assert!(
        reminder.message.contains(&format!("drain {first_drain:.0} L")),
        "{}",
        reminder.message
    );

    // Step 1 done with the binary: the setpoint moves to SP 28 and the reminder clears.
    step_done(&db, id);
    let sp = next_json(&mut watcher, &setpoint_topic, |j| j["step"] == 1).await;
    assert!((sp["setpoint_practical_salinity"].as_f64().unwrap() - 28.0).abs() < 1e-9);
    assert_eq!(sp["next_step"]["step"], 2);
    wait_until("the reminder to clear", || {
        open_alerts(&db, "schedule_step_due").is_empty()
    })
    .await;

    // A reading 2.5 SP under the setpoint: off schedule; the published state carries the progress.
    let mut probe = Peer::connect(addr, &unique("probe"), true).await;
    let c = conductivity_from_practical_salinity(25.5, 12.0, 0.0).unwrap();
    let time = Utc::now().to_rfc3339_opts(SecondsFormat::Millis, true);
    let payload = format!("{{\"conductivity\": {c}, \"temperature\": 12.0, \"time\": \"{time}\"}}");
    probe.publish_acked(&topic, payload.as_bytes(), false).await;
    let state = next_json(&mut watcher, &state_topic, |j| !j["schedule"].is_null()).await;
    assert_eq!(state["schedule"]["schedule_id"], id);
    assert_eq!(state["schedule"]["steps_done"], 1);
    wait_until("the off-schedule alert", || {
        !open_alerts(&db, "schedule_off").is_empty()
    })
    .await;
    let off = &open_alerts(&db, "schedule_off")[0];
    assert!(
        off.message.contains("-2.50 SP off the acclimation schedule"),
        "{}",
        off.message
    );

    // Restart; step 2 is marked while the daemon is down.
    stop.send(true).unwrap();
    daemon.await.unwrap().unwrap();
    step_done(&db, id);
    let (stop, stop_rx) = watch::channel(false);
    let daemon = tokio::spawn(halotank::daemon::run(cfg, stop_rx));
    let sp = next_json(&mut watcher, &setpoint_topic, |j| j["step"] == 2).await;
    assert!((sp["setpoint_practical_salinity"].as_f64().unwrap() - 26.0).abs() < 1e-9);
    assert_eq!(sp["next_step"]["step"], 3);
    let stored = ScheduleStore::open(&db).unwrap().get(id).unwrap();
    assert_eq!(
        stored.steps_done.iter().map(|s| s.step).collect::<Vec<_>>(),
        vec![1, 2],
        "no step repeated or lost"
    );

    // Aborting ends the tracking: a final retained setpoint says so.
    let out = Command::new(env!("CARGO_BIN_EXE_halotank"))
        .args(["schedule", "abort", &id.to_string(), "--db"])
        .arg(&db)
        .output()
        .unwrap();
    assert!(out.status.success(), "{}", String::from_utf8_lossy(&out.stderr));
    let sp = next_json(&mut watcher, &setpoint_topic, |j| j["state"] == "aborted").await;
    assert!(sp["next_step"].is_null());
    stop.send(true).unwrap();
    daemon.await.unwrap().unwrap();
    broker.stop().await;
}

/// `schedule_pause_on_critical`: a reading outside the species' tolerance raises a critical alert and the
/// daemon pauses the tank's running schedule in the database.
#[tokio::test(flavor = "multi_thread", worker_threads = 2)]
async fn a_critical_alert_pauses_the_running_schedule() {
    let broker = EmbeddedBroker::start().await.unwrap();
    let addr = broker.addr();
    let dir = tempfile::tempdir().unwrap();
    let db = dir.path().join("pause.sqlite3");
    let topic = format!("{}/{TANK}/probe", unique("kelpie"));
    let off: Vec<&str> = RULES_OFF
        .into_iter()
        .filter(|r| *r != "salinity_tolerance")
        .collect();
    let text = config_with(
        addr,
        &db,
        &topic,
        &unique("halotank-e2e-pause"),
        "schedule_pause_on_critical = true\n[alerts.rules.salinity_tolerance]\nmin_duration_s = 0\n",
        &off,
    );
    let cfg = config::parse(&text, &dir.path().join("halotank.toml")).unwrap();
    let (stop, stop_rx) = watch::channel(false);
    let daemon = tokio::spawn(halotank::daemon::run(cfg, stop_rx));
    let start = Utc::now();
    let request = plan_request(start);
    let plan = SchedulePlan::from(&make_plan(&request).unwrap());
    let id = ScheduleStore::open(&db)
        .unwrap()
        .insert(TANK, start, &plan, &request)
        .unwrap()
        .id;
    // Let the daemon pick the schedule up, then send water above the smolt profile's tolerance.
    tokio::time::sleep(Duration::from_millis(3000)).await;
    let library = halotank::species::SpeciesLibrary::embedded().unwrap();
    let too_salty = library
        .get("atlantic_salmon_smolt")
        .unwrap()
        .salinity_tolerance
        .max
        + 3.0;
    let mut probe = Peer::connect(addr, &unique("probe"), true).await;
    let c = conductivity_from_practical_salinity(too_salty, 12.0, 0.0).unwrap();
    let time = Utc::now().to_rfc3339_opts(SecondsFormat::Millis, true);
    let payload = format!("{{\"conductivity\": {c}, \"temperature\": 12.0, \"time\": \"{time}\"}}");
    probe.publish_acked(&topic, payload.as_bytes(), false).await;
    wait_until("the critical alert", || {
        !open_alerts(&db, "salinity_tolerance").is_empty()
    })
    .await;
    wait_until("the schedule to be paused", || {
        ScheduleStore::open(&db)
            .map(|s| s.get(id).map(|s| s.state.name() == "paused").unwrap_or(false))
            .unwrap_or(false)
    })
    .await;
    stop.send(true).unwrap();
    daemon.await.unwrap().unwrap();
    broker.stop().await;
}
