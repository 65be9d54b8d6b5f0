//! Retention: old readings fold into hourly min/mean/max rows (merging with existing ones) and are deleted.
mod storage_support;

use std::time::Duration;

use halotank::storage::retention::apply;
use halotank::storage::schema::open_for_writing;
use halotank::storage::{spawn_writer, Reader, RetentionSettings, WriteItem, WriterSettings};
use storage_support::{at, reading_full, rejection, temp_db};

fn close(a: f64, b: f64) -> bool {
    (a - b).abs() < 1e-9
}

fn settings() -> WriterSettings {
    WriterSettings {
        flush_rows: 1000,
        flush_ms: 3_600_000,
        ..WriterSettings::default()
    }
}

const WEEK: RetentionSettings = RetentionSettings {
    readings_days: 7,
    rejections_days: None,
};

#[test]
fn old_readings_fold_into_hourly_rows_and_merge_with_later_passes() {
    let db = temp_db();
    let (writer, _reports, join) = spawn_writer::<u32>(&db.path, settings()).unwrap();
    let tank = "smolt-b2";
    // Hour 2024-05-01 10:00 UTC: practical salinity, temperature °C, osmolality mOsm/kg, conductivity mS/cm.
    let hour_10 = [
        reading_full(tank, at(2024, 5, 1, 10, 5, 0), 30.0, 10.0, 900.0, 40.0),
        reading_full(tank, at(2024, 5, 1, 10, 20, 0), 31.5, 11.0, 930.0, 41.0),
        reading_full(tank, at(2024, 5, 1, 10, 50, 0), 29.4, 12.0, 870.0, 39.0),
    ];
    let hour_11 = reading_full(tank, at(2024, 5, 1, 11, 0, 0), 28.0, 9.5, 850.0, 37.0);
    let other_tank = reading_full("oyster-d1", at(2024, 5, 1, 10, 30, 0), 33.0, 14.0, 990.0, 47.0);
    let just_before_cutoff = reading_full(tank, at(2024, 5, 2, 9, 59, 59), 30.0, 10.0, 900.0, 40.0);
    let just_after_cutoff = reading_full(tank, at(2024, 5, 2, 10, 15, 0), 30.0, 10.0, 900.0, 40.0);
    let rows =
        hour_10
            .iter()
            .cloned()
            .chain([hour_11, other_tank, just_before_cutoff, just_after_cutoff.clone()]);
    for (i, row) in rows.enumerate() {
        writer.blocking_send(WriteItem::Reading(row, i as u32)).unwrap();
    }

    // now 2024-05-09 10:30, 7 days back is 2024-05-02 10:30, rounded down to the hour: cutoff 10:00.
    let now = at(2024, 5, 9, 10, 30, 0);
    let report = writer.blocking_run_retention(now, WEEK).unwrap();
    assert_eq!(report.readings_cutoff, at(2024, 5, 2, 10, 0, 0));
    assert_eq!(report.readings_folded, 6);
    assert_eq!(
        report.hourly_rows_written, 4,
        "smolt 10h, smolt 11h, smolt 05-02 09h, oyster 10h"
    );

    let reader = Reader::open(&db.path).unwrap();
    assert_eq!(reader.history(tank, None, None).unwrap(), vec![just_after_cutoff]);
    let hourly = reader.hourly(tank, None, None).unwrap();
    assert_eq!(hourly.len(), 3);
    let h10 = &hourly[0];
    assert_eq!((h10.hour_start, h10.count), (at(2024, 5, 1, 10, 0, 0), 3));
    // Hand-computed: salinity min 29.4, max 31.5, mean (30.0 + 31.5 + 29.4) / 3 = 90.9 / 3 = 30.3;
    // temperature mean (10 + 11 + 12) / 3 = 11; osmolality (900 + 930 + 870) / 3 = 900;
    // conductivity (40 + 41 + 39) / 3 = 40.
    assert!(close(h10.practical_salinity.min, 29.4) && close(h10.practical_salinity.max, 31.5));
    assert!(
        close(h10.practical_salinity.mean, 30.3),
        "{}",
        h10.practical_salinity.mean
    );
    assert!(
        close(h10.temperature_c.min, 10.0)
            && close(h10.temperature_c.mean, 11.0)
            && close(h10.temperature_c.max, 12.0)
    );
    assert!(close(h10.osmolality_mosm_kg.min, 870.0) && close(h10.osmolality_mosm_kg.mean, 900.0));
    assert!(close(h10.osmolality_mosm_kg.max, 930.0));
    assert!(close(h10.conductivity_ms_cm.min, 39.0) && close(h10.conductivity_ms_cm.mean, 40.0));
    assert!(close(h10.conductivity_ms_cm.max, 41.0));
    let h11 = &hourly[1];
    assert_eq!((h11.hour_start, h11.count), (at(2024, 5, 1, 11, 0, 0), 1));
    assert!(close(h11.practical_salinity.min, 28.0) && close(h11.practical_salinity.mean, 28.0));
    assert_eq!(hourly[2].hour_start, at(2024, 5, 2, 9, 0, 0));
    assert_eq!(reader.hourly("oyster-d1", None, None).unwrap().len(), 1);

    // Late readings for the already-folded hour 10: they merge into the existing hourly row.
    let late = [
        reading_full(tank, at(2024, 5, 1, 10, 55, 0), 32.0, 9.0, 950.0, 42.0),
        reading_full(tank, at(2024, 5, 1, 10, 56, 0), 28.0, 13.0, 850.0, 38.0),
    ];
    for (i, row) in late.into_iter().enumerate() {
        writer
            .blocking_send(WriteItem::Reading(row, 100 + i as u32))
            .unwrap();
    }
    let report = writer.blocking_run_retention(now, WEEK).unwrap();
    assert_eq!((report.readings_folded, report.hourly_rows_written), (2, 1));
    let h10 = &reader.hourly(tank, None, Some(at(2024, 5, 1, 11, 0, 0))).unwrap()[0];
    assert_eq!(h10.count, 5);
    // Hand-computed merge: salinity min 28.0, max 32.0, mean (90.9 + 32.0 + 28.0) / 5 = 150.9 / 5 = 30.18;
    // temperature (33 + 9 + 13) / 5 = 11, min 9, max 13; osmolality (2700 + 950 + 850) / 5 = 900;
    // conductivity (120 + 42 + 38) / 5 = 40, min 38, max 42.
    assert!(close(h10.practical_salinity.min, 28.0) && close(h10.practical_salinity.max, 32.0));
    assert!(
        close(h10.practical_salinity.mean, 30.18),
        "{}",
        h10.practical_salinity.mean
    );
    assert!(
        close(h10.temperature_c.min, 9.0)
            && close(h10.temperature_c.mean, 11.0)
            && close(h10.temperature_c.max, 13.0)
    );
    assert!(close(h10.osmolality_mosm_kg.mean, 900.0) && close(h10.osmolality_mosm_kg.min, 850.0));
    assert!(close(h10.osmolality_mosm_kg.max, 950.0));
    assert!(close(h10.conductivity_ms_cm.mean, 40.0) && close(h10.conductivity_ms_cm.min, 38.0));
    assert!(close(h10.conductivity_ms_cm.max, 42.0));

    let counts = reader.reading_counts().unwrap();
    let smolt = counts.iter().find(|c| c.tank_id == tank).unwrap();
    assert_eq!((smolt.raw_readings, smolt.folded_readings), (1, 7));
    assert!(
        reader.tank_known("oyster-d1").unwrap(),
        "a tank with only hourly rows is still known"
    );
    assert!(reader
        .latest_per_tank()
        .unwrap()
        .iter()
        .all(|r| r.tank_id != "oyster-d1"));

    drop(writer);
    join.join().unwrap().unwrap();
}

#[test]
fn a_second_pass_with_nothing_old_changes_nothing() {
    let db = temp_db();
    let mut conn = open_for_writing(&db.path, Duration::from_secs(5)).unwrap();
    let now = at(2024, 5, 9, 10, 30, 0);
    let first = apply(&mut conn, now, &WEEK).unwrap();
    assert_eq!(
        (
            first.readings_folded,
            first.hourly_rows_written,
            first.rejections_deleted
        ),
        (0, 0, 0)
    );
}

#[test]
fn old_rejections_are_deleted_only_when_asked() {
    let db = temp_db();
    let (writer, _reports, join) = spawn_writer::<u32>(&db.path, settings()).unwrap();
    writer
        .blocking_send(WriteItem::Rejection(
            rejection(at(2024, 4, 1, 0, 0, 0), "old_reason", b""),
            1,
        ))
        .unwrap();
    writer
        .blocking_send(WriteItem::Rejection(
            rejection(at(2024, 5, 9, 0, 0, 0), "new_reason", b""),
            2,
        ))
        .unwrap();
    let now = at(2024, 5, 9, 10, 30, 0);
    assert_eq!(
        writer
            .blocking_run_retention(now, WEEK)
            .unwrap()
            .rejections_deleted,
        0
    );
    let thirty_days = RetentionSettings {
        readings_days: 7,
        rejections_days: Some(30),
    };
    assert_eq!(
        writer
            .blocking_run_retention(now, thirty_days)
            .unwrap()
            .rejections_deleted,
        1
    );
    let reasons = Reader::open(&db.path)
        .unwrap()
        .rejection_counts_by_reason()
        .unwrap();
    assert_eq!(
        reasons.iter().map(|r| r.reason.as_str()).collect::<Vec<_>>(),
        ["new_reason"]
    );
    drop(writer);
    join.join().unwrap().unwrap();
}
