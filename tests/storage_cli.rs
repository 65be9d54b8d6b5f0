//! `halotank history` and `halotank status` run as the built binary against a database filled through the
//! storage API.
mod storage_support;

use std::path::Path;
use std::process::{Command, Output};

use chrono::{DateTime, Duration, DurationRound, Utc};
use halotank::storage::{spawn_writer, WriteItem, WriterSettings};
use serde_json::Value;
use storage_support::{at, daemon_state, reading_full, rejection, temp_db};

fn halotank(args: &[&str]) -> Output {
    Command::new(env!("CARGO_BIN_EXE_halotank"))
        .args(args)
        .output()
        .unwrap()
}

fn stdout(output: &Output) -> String {
    String::from_utf8(output.stdout.clone()).unwrap()
}

fn stderr(output: &Output) -> String {
    String::from_utf8(output.stderr.clone()).unwrap()
}

/// Stores readings, rejections and a daemon state, then stops the writer.
fn fill(path: &Path, readings: Vec<halotank::storage::ReadingRow>, state_at: DateTime<Utc>) {
    let (writer, _reports, join) = spawn_writer::<usize>(path, WriterSettings::default()).unwrap();
    for (i, row) in readings.into_iter().enumerate() {
        writer.blocking_send(WriteItem::Reading(row, i)).unwrap();
    }
    let t = at(2024, 5, 14, 5, 0, 0);
    for (i, reason) in ["payload_not_senml", "payload_not_senml", "unknown_tank"]
        .into_iter()
        .enumerate()
    {
        let row = rejection(t + Duration::seconds(i as i64), reason, b"{oops");
        writer.blocking_send(WriteItem::Rejection(row, 1000 + i)).unwrap();
    }
    // The broker has been unreachable for 90 minutes when the daemon last wrote its state.
    let outage_since = state_at - Duration::minutes(90);
    writer
        .blocking_send(WriteItem::DaemonState(daemon_state(
            state_at,
            false,
            outage_since,
        )))
        .unwrap();
    drop(writer);
    join.join().unwrap().unwrap();
}

fn two_smolt_readings() -> Vec<halotank::storage::ReadingRow> {
    vec![
        reading_full("smolt-b2", at(2024, 5, 14, 6, 0, 0), 28.5, 10.25, 820.5, 35.75),
        reading_full("smolt-b2", at(2024, 5, 14, 6, 0, 30), 28.25, 10.5, 812.0, 35.5),
        reading_full("oyster-d1", at(2024, 5, 14, 6, 0, 0), 33.0, 14.0, 990.0, 47.0),
    ]
}

#[test]
fn history_csv_has_the_exact_columns_and_values() {
    let db = temp_db();
    fill(&db.path, two_smolt_readings(), at(2024, 5, 14, 7, 0, 0));
    let db_arg = db.path.to_str().unwrap();
    let out = halotank(&["history", "--db", db_arg, "--tank", "smolt-b2"]);
    assert!(out.status.success(), "{}", stderr(&out));
    // Derived values are those built by hand in storage_support::derived.
    let expected = "\
time,conductivity_mS_cm,temperature_C,practical_salinity,absolute_salinity_g_kg,density_kg_m3,osmolality_mOsm_kg,osmotic_pressure_bar,freezing_point_C
2024-05-14T06:00:00.000Z,35.75,10.25,28.5,28.625,1020.5,820.5,22.25,-1.75
2024-05-14T06:00:30.000Z,35.5,10.5,28.25,28.375,1020.5,812.0,22.25,-1.75
";
    assert_eq!(stdout(&out), expected);
}

#[test]
fn history_filters_by_since_and_until() {
    let db = temp_db();
    fill(&db.path, two_smolt_readings(), at(2024, 5, 14, 7, 0, 0));
    let db_arg = db.path.to_str().unwrap();
    let out = halotank(&[
        "history",
        "--db",
        db_arg,
        "--tank",
        "smolt-b2",
        "--since",
        "2024-05-14T06:00:10Z",
        "--until",
        "2024-05-14T09:00:00+02:00",
    ]);
    assert!(out.status.success(), "{}", stderr(&out));
    let text = stdout(&out);
    let lines: Vec<&str> = text.lines().collect();
    assert_eq!(lines.len(), 2, "{text}");
    assert!(lines[1].starts_with("2024-05-14T06:00:30.000Z,"));

    // until is exclusive: 06:00:30 itself is left out.
    let out = halotank(&[
        "history",
        "--db",
        db_arg,
        "--tank",
        "smolt-b2",
        "--until",
        "2024-05-14T06:00:30Z",
    ]);
    assert_eq!(stdout(&out).lines().count(), 2);
}

#[test]
fn history_relative_since_counts_back_from_the_clock() {
    let db = temp_db();
    let now = Utc::now().duration_trunc(Duration::milliseconds(1)).unwrap();
    let readings = vec![
        reading_full("parr-a1", now - Duration::hours(3), 0.2, 8.0, 6.0, 0.35),
        reading_full("parr-a1", now - Duration::minutes(30), 0.3, 8.5, 9.0, 0.5),
    ];
    fill(&db.path, readings, now);
    let out = halotank(&[
        "history",
        "--db",
        db.path.to_str().unwrap(),
        "--tank",
        "parr-a1",
        "--since",
        "2h",
    ]);
    assert!(out.status.success(), "{}", stderr(&out));
    let text = stdout(&out);
    assert_eq!(text.lines().count(), 2, "{text}");
    assert!(text.lines().nth(1).unwrap().contains(",0.5,8.5,0.3,"), "{text}");
}

#[test]
fn history_json_uses_the_csv_names_as_keys() {
    let db = temp_db();
    fill(&db.path, two_smolt_readings(), at(2024, 5, 14, 7, 0, 0));
    let out = halotank(&[
        "history",
        "--db",
        db.path.to_str().unwrap(),
        "--tank",
        "oyster-d1",
        "--format",
        "json",
    ]);
    assert!(out.status.success(), "{}", stderr(&out));
    let json: Value = serde_json::from_str(&stdout(&out)).unwrap();
    let rows = json.as_array().unwrap();
    assert_eq!(rows.len(), 1);
    let two = halotank(&[
        "history",
        "--db",
        db.path.to_str().unwrap(),
        "--tank",
        "smolt-b2",
        "--format",
        "json",
    ]);
    let two: Value = serde_json::from_str(&stdout(&two)).unwrap();
    assert_eq!(two.as_array().unwrap().len(), 2);
    assert_eq!(two[1]["time"], "2024-05-14T06:00:30.000Z");
    let mut keys: Vec<&str> = rows[0].as_object().unwrap().keys().map(String::as_str).collect();
    keys.sort_unstable();
    let mut expected = vec![
        "time",
        "conductivity_mS_cm",
        "temperature_C",
        "practical_salinity",
        "absolute_salinity_g_kg",
        "density_kg_m3",
        "osmolality_mOsm_kg",
        "osmotic_pressure_bar",
        "freezing_point_C",
    ];
    expected.sort_unstable();
    assert_eq!(keys, expected);
    assert_eq!(rows[0]["time"], "2024-05-14T06:00:00.000Z");
    assert_eq!(rows[0]["practical_salinity"], 33.0);
    assert_eq!(rows[0]["osmolality_mOsm_kg"], 990.0);
}

#[test]
fn an_empty_range_of_a_known_tank_is_not_an_error() {
    let db = temp_db();
    fill(&db.path, two_smolt_readings(), at(2024, 5, 14, 7, 0, 0));
    let db_arg = db.path.to_str().unwrap();
    let since = ["--since", "2024-05-15T00:00:00Z"];
    let out = halotank(&[&["history", "--db", db_arg, "--tank", "smolt-b2"][..], &since].concat());
    assert!(out.status.success(), "{}", stderr(&out));
    assert_eq!(stdout(&out).lines().collect::<Vec<_>>(), [history_header()]);
    let json = [
        &[
            "history", "--db", db_arg, "--tank", "smolt-b2", "--format", "json",
        ][..],
        &since,
    ]
    .concat();
    let out = halotank(&json);
    assert!(out.status.success(), "{}", stderr(&out));
    assert_eq!(
        serde_json::from_str::<Value>(&stdout(&out)).unwrap(),
        serde_json::json!([])
    );
}

fn history_header() -> &'static str {
    "time,conductivity_mS_cm,temperature_C,practical_salinity,absolute_salinity_g_kg,density_kg_m3,\
     osmolality_mOsm_kg,osmotic_pressure_bar,freezing_point_C"
}

#[test]
fn history_of_an_unknown_tank_or_a_missing_database_fails_clearly() {
    let db = temp_db();
    fill(&db.path, two_smolt_readings(), at(2024, 5, 14, 7, 0, 0));
    let out = halotank(&["history", "--db", db.path.to_str().unwrap(), "--tank", "smolt-b9"]);
    assert!(!out.status.success());
    let err = stderr(&out);
    assert!(
        err.contains("smolt-b9") && err.contains("oyster-d1, smolt-b2"),
        "{err}"
    );
    assert!(out.stdout.is_empty());

    let missing = db.dir.path().join("nowhere.db");
    let out = halotank(&["history", "--db", missing.to_str().unwrap(), "--tank", "smolt-b2"]);
    assert!(!out.status.success());
    assert!(stderr(&out).contains("does not exist"), "{}", stderr(&out));
    assert!(!missing.exists(), "history must not create a database");

    let out = halotank(&[
        "history",
        "--db",
        db.path.to_str().unwrap(),
        "--tank",
        "smolt-b2",
        "--since",
        "2y",
    ]);
    assert!(!out.status.success());
    assert!(stderr(&out).contains("--since"), "{}", stderr(&out));
}

#[test]
fn status_json_has_tanks_rejections_and_the_broker_outage() {
    let db = temp_db();
    // State written 10 s ago, with the broker down for 90 minutes at that point.
    let state_at = Utc::now().duration_trunc(Duration::milliseconds(1)).unwrap() - Duration::seconds(10);
    fill(&db.path, two_smolt_readings(), state_at);
    let out = halotank(&["status", "--db", db.path.to_str().unwrap(), "--format", "json"]);
    assert!(out.status.success(), "{}", stderr(&out));
    let json: Value = serde_json::from_str(&stdout(&out)).unwrap();

    let tanks = json["tanks"].as_array().unwrap();
    assert_eq!(
        tanks
            .iter()
            .map(|t| t["tank_id"].as_str().unwrap())
            .collect::<Vec<_>>(),
        ["oyster-d1", "smolt-b2"]
    );
    let smolt = &tanks[1];
    assert_eq!(smolt["readings_stored"], 2);
    assert_eq!(smolt["readings_folded"], 0);
    let latest = &smolt["latest"];
    assert_eq!(latest["time"], "2024-05-14T06:00:30.000Z");
    assert!(latest["age_s"].as_f64().unwrap() > 0.0);
    assert_eq!(latest["conductivity_mS_cm"], 35.5);
    assert_eq!(latest["temperature_C"], 10.5);
    assert_eq!(latest["conductivity_unit"], "S/m");
    assert_eq!(latest["derived"]["practical_salinity"], 28.25);
    assert_eq!(latest["derived"]["osmolality_mOsm_kg"], 812.0);
    assert_eq!(latest["derived"]["freezing_point_C"], -1.75);
    assert_eq!(latest["derived"]["salinity_range"], "pss78");

    assert_eq!(json["rejections"]["total"], 3);
    let reasons = json["rejections"]["by_reason"].as_array().unwrap();
    assert_eq!(
        (reasons[0]["reason"].as_str(), reasons[0]["count"].as_u64()),
        (Some("payload_not_senml"), Some(2))
    );
    assert_eq!(
        (reasons[1]["reason"].as_str(), reasons[1]["count"].as_u64()),
        (Some("unknown_tank"), Some(1))
    );

    let daemon = &json["daemon"];
    assert_eq!(daemon["broker_connected"], false);
    let outage = daemon["broker_outage_s"].as_f64().unwrap();
    assert!(
        outage >= 90.0 * 60.0 + 10.0,
        "outage {outage} s is counted up to now, not to the last update"
    );
    assert_eq!(daemon["state_stale"], false);
    assert_eq!(daemon["reconnect_count"], 3);
    assert_eq!(
        (
            daemon["accepted_count"].as_u64(),
            daemon["rejected_count"].as_u64()
        ),
        (Some(1200), Some(7))
    );
    assert_eq!(json["schema_version"], halotank::storage::SCHEMA_VERSION);
}

#[test]
fn status_text_flags_the_outage_and_a_stale_daemon() {
    let db = temp_db();
    // State last written on 2024-05-14 07:00: long before the test clock, so it is stale.
    fill(&db.path, two_smolt_readings(), at(2024, 5, 14, 7, 0, 0));
    let out = halotank(&["status", "--db", db.path.to_str().unwrap()]);
    assert!(out.status.success(), "{}", stderr(&out));
    let text = stdout(&out);
    assert!(text.contains("broker: NOT CONNECTED"), "{text}");
    assert!(
        text.contains("WARNING: the daemon has not written its state"),
        "{text}"
    );
    assert!(text.contains("smolt-b2: 2 readings stored"), "{text}");
    assert!(text.contains("payload_not_senml: 2"), "{text}");
    assert!(text.contains("calibrated meter"), "{text}");
}

#[test]
fn status_of_a_missing_database_fails() {
    let db = temp_db();
    let out = halotank(&["status", "--db", db.path.to_str().unwrap()]);
    assert!(!out.status.success());
    assert!(stderr(&out).contains("does not exist"), "{}", stderr(&out));
}

#[test]
fn help_shows_examples() {
    for command in ["history", "status"] {
        let out = halotank(&[command, "--help"]);
        assert!(out.status.success());
        let text = stdout(&out);
        assert!(
            text.contains("Examples:") && text.contains(&format!("halotank {command} --db")),
            "{text}"
        );
    }
}
