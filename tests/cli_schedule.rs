//! `halotank schedule` run as the built binary on a temporary database created by `storage::schema`:
//! start, list, show (JSON), step-done, pause, resume, abort, and one open schedule per tank.
mod storage_support;

use std::path::Path;
use std::process::{Command, Output};
use std::time::Duration as StdDuration;

use chrono::{Duration, SubsecRound, Utc};
use halotank::planner::CAUTION;
use halotank::storage::schema::open_for_writing;
use halotank::storage::{spawn_writer, WriteItem, WriterSettings};
use serde_json::Value;
use storage_support::{reading_full, temp_db};

fn halotank(args: &[&str]) -> Output {
    Command::new(env!("CARGO_BIN_EXE_halotank"))
        .args(args)
        .output()
        .unwrap()
}

fn ok(args: &[&str]) -> String {
    let out = halotank(args);
    assert!(
        out.status.success(),
        "{args:?} failed: {}",
        String::from_utf8_lossy(&out.stderr)
    );
    String::from_utf8(out.stdout).unwrap()
}

fn refused(args: &[&str]) -> String {
    let out = halotank(args);
    assert!(!out.status.success(), "{args:?} should have failed");
    String::from_utf8(out.stderr).unwrap()
}

fn json(args: &[&str]) -> Value {
    serde_json::from_str(&ok(args)).unwrap()
}

/// Creates the database through the schema module and stores one reading of SP 6.5 for `parr-a1`.
fn database_with_reading(path: &Path) {
    drop(open_for_writing(path, StdDuration::from_secs(1)).unwrap());
    let (writer, _reports, join) = spawn_writer::<usize>(path, WriterSettings::default()).unwrap();
    let time = Utc::now().trunc_subsecs(0) - Duration::minutes(10);
    writer
        .blocking_send(WriteItem::Reading(
            reading_full("parr-a1", time, 6.5, 11.0, 190.0, 11.5),
            0,
        ))
        .unwrap();
    drop(writer);
    join.join().unwrap().unwrap();
}

const PLANNING: &[&str] = &[
    "--to",
    "12.5",
    "--temperature",
    "11",
    "--method",
    "exchange",
    "--source-salinity",
    "34",
    "--interval",
    "2h",
    "--max-rate",
    "1/h",
];

#[test]
fn schedule_round_trip() {
    let db = temp_db();
    database_with_reading(&db.path);
    let d = db.path.to_str().unwrap();
    let config = db.dir.path().join("halotank.toml");
    std::fs::write(
        &config,
        "[site]\nname = \"Brannock Sound Hatchery\"\n\n[broker]\nhost = \"mqtt.brannock.example\"\n\n\
         [storage]\npath = \"halotank.db\"\n\n[[tanks]]\nid = \"parr-a1\"\nname = \"Parr A1\"\nvolume_l = 1500\n[tanks.topics]\ncombined = \"brannock/parr-a1/state\"\n",
    )
    .unwrap();
    let c = config.to_str().unwrap();

    // Start without --from (latest stored reading) and without --volume (the configuration file).
    let mut start = vec![
        "schedule", "start", "--db", d, "--tank", "parr-a1", "--config", c, "--format", "json",
    ];
    start.extend_from_slice(PLANNING);
    let started = json(&start);
    let id = started["schedule"]["id"].as_i64().unwrap();
    let plan = &started["schedule"]["plan"];
    assert_eq!(plan["from_practical_salinity"], 6.5);
    assert_eq!(plan["assumptions"]["tank_volume_L"], 1500.0);
    // SP 6.5 to 12.5 at 1 SP/h in 2 h steps: three steps of 2 SP.
    let steps = plan["steps"].as_array().unwrap();
    assert_eq!(steps.len(), 3);
    assert_eq!(started["caution"], CAUTION);
    assert_eq!(plan["caution"], CAUTION);

    // A second open schedule on the same tank is refused with a clear message.
    let mut again = vec![
        "schedule", "start", "--db", d, "--tank", "parr-a1", "--volume", "1500", "--from", "6.5",
    ];
    again.extend_from_slice(PLANNING);
    let err = refused(&again);
    assert!(
        err.contains(&format!("tank parr-a1 already has schedule {id} (active)")),
        "{err}"
    );

    let listed = json(&["schedule", "list", "--db", d, "--format", "json"]);
    let items = listed["schedules"].as_array().unwrap();
    assert_eq!(items.len(), 1);
    assert_eq!(items[0]["tank_id"], "parr-a1");
    assert_eq!(items[0]["state"]["state"], "active");
    assert_eq!(listed["caution"], CAUTION);
    let text = ok(&["schedule", "list", "--db", d, "--tank", "parr-a1"]);
    assert!(
        text.contains("parr-a1") && text.contains("step 0/3") && text.contains("caution:"),
        "{text}"
    );
    assert!(ok(&["schedule", "list", "--db", d, "--tank", "smolt-b2"]).contains("no schedules"));

    let id_s = id.to_string();
    let step = ok(&["schedule", "step-done", &id_s, "--db", d, "--by", "ines"]);
    assert!(
        step.contains("step 1 done by ines") && step.contains("drain"),
        "{step}"
    );
    // Repeats and skips are refused.
    assert!(
        refused(&["schedule", "step-done", &id_s, "--db", d, "--step", "1"]).contains("already marked done")
    );
    assert!(refused(&["schedule", "step-done", &id_s, "--db", d, "--step", "3"]).contains("out of order"));

    let shown = json(&["schedule", "show", &id_s, "--db", d, "--format", "json"]);
    assert_eq!(shown["progress"]["steps_done"], 1);
    assert_eq!(shown["progress"]["steps_total"], 3);
    assert_eq!(shown["progress"]["steps_ahead"], 0);
    assert_eq!(shown["progress"]["next_step"]["step"], 2);
    let held = steps[0]["setpoint_practical_salinity"].as_f64().unwrap();
    assert_eq!(
        shown["progress"]["setpoint_practical_salinity"].as_f64().unwrap(),
        held
    );
    assert_eq!(shown["schedule"]["steps_done"][0]["by"], "ines");
    assert_eq!(shown["due"].as_array().unwrap().len(), 3);
    // Six hours on with step 2 not done, the schedule is behind.
    let later = (Utc::now() + Duration::hours(6)).to_rfc3339();
    let behind = json(&[
        "schedule", "show", &id_s, "--db", d, "--format", "json", "--at", &later,
    ]);
    assert_eq!(behind["progress"]["steps_ahead"], -2);
    assert_eq!(behind["progress"]["next_step"]["overdue"], true);
    let text = ok(&["schedule", "show", &id_s, "--db", d]);
    assert!(
        text.contains("1 of 3 steps done") && text.contains("expected finish") && text.contains("caution:")
    );

    // `status` shows the open schedule's progress too.
    let status = ok(&["status", "--db", d]);
    assert!(
        status.contains(&format!(
            "{id} on tank parr-a1: active, step 1 of 3 done (on time)"
        )) && status.contains("next: step 2 to SP"),
        "{status}"
    );
    let status = json(&["status", "--db", d, "--format", "json"]);
    assert_eq!(status["schedules"][0]["steps_done"], 1);

    assert!(ok(&["schedule", "pause", &id_s, "--db", d]).contains("paused"));
    assert!(refused(&["schedule", "step-done", &id_s, "--db", d]).contains("resume it first"));
    assert!(refused(&["schedule", "pause", &id_s, "--db", d]).contains("is paused"));
    let shown = json(&["schedule", "show", &id_s, "--db", d, "--format", "json"]);
    assert_eq!(shown["schedule"]["state"]["state"], "paused");
    assert!(ok(&["schedule", "resume", &id_s, "--db", d]).contains("resumed"));
    let step = ok(&["schedule", "step-done", &id_s, "--db", d, "--step", "2"]);
    assert!(step.contains("step 2 done"), "{step}");
    assert!(ok(&["schedule", "abort", &id_s, "--db", d]).contains("aborted"));
    assert!(refused(&["schedule", "resume", &id_s, "--db", d]).contains("is aborted"));
    let shown = json(&["schedule", "show", &id_s, "--db", d, "--format", "json"]);
    assert_eq!(shown["progress"]["state"], "aborted");
    assert_eq!(shown["progress"]["steps_done"], 2);
    assert!(shown["progress"]["expected_finish"].is_null());

    // The tank is free again.
    let again = json(&[&again[..], &["--format", "json"]].concat());
    assert_ne!(again["schedule"]["id"].as_i64().unwrap(), id);
    assert!(refused(&["schedule", "show", "999", "--db", d]).contains("no schedule 999"));
}

#[test]
fn start_without_a_reading_or_volume_says_what_to_give() {
    let db = temp_db();
    drop(open_for_writing(&db.path, StdDuration::from_secs(1)).unwrap());
    let d = db.path.to_str().unwrap();
    let mut args = vec![
        "schedule", "start", "--db", d, "--tank", "parr-a1", "--volume", "1500",
    ];
    args.extend_from_slice(PLANNING);
    assert!(refused(&args).contains("has no stored reading"));
    let mut args = vec!["schedule", "start", "--db", d, "--tank", "parr-a1", "--from", "6"];
    args.extend_from_slice(PLANNING);
    assert!(refused(&args).contains("give --volume"));
    let missing = db.dir.path().join("missing.db");
    let m = missing.to_str().unwrap();
    assert!(refused(&["schedule", "list", "--db", m]).contains("does not exist"));
    assert!(!missing.exists());
    let help = ok(&["schedule", "start", "--help"]);
    assert!(help.contains("Examples") && help.contains("--source-salinity"));
}
