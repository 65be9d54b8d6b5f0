//! Shared helpers for the storage tests: readings with hand-built derived values and a temporary database.
//!
//! The numbers below are made-up test data (the storage layer stores whatever it is given and does no
//! science); they are not claimed to be consistent seawater properties.
#![allow(dead_code)]

use std::path::PathBuf;

use chrono::{DateTime, TimeZone, Utc};
use halotank::seawater::practical_salinity::SalinityRange;
use halotank::seawater::Derived;
use halotank::storage::{DaemonStateRow, ReadingRow, RejectionRow};

/// A temporary directory holding `halotank.db`; the directory is removed on drop.
pub struct TempDb {
    pub dir: tempfile::TempDir,
    pub path: PathBuf,
}

pub fn temp_db() -> TempDb {
    let dir = tempfile::tempdir().unwrap();
    let path = dir.path().join("halotank.db");
    TempDb { dir, path }
}

/// A UTC time from its parts, to the millisecond.
pub fn at(y: i32, mo: u32, d: u32, h: u32, mi: u32, s: u32) -> DateTime<Utc> {
    Utc.with_ymd_and_hms(y, mo, d, h, mi, s).unwrap()
}

/// Hand-built derived values; every field distinct so a column mix-up shows.
pub fn derived(practical_salinity: f64, osmolality_mosm_kg: f64) -> Derived {
    Derived {
        practical_salinity,
        salinity_range: SalinityRange::Pss78,
        absolute_salinity_g_kg: practical_salinity + 0.125,
        density_kg_m3: 1020.5,
        osmotic_coefficient: 0.875,
        osmolality_mosm_kg,
        osmotic_pressure_bar: 22.25,
        solute_potential_bar: -22.25,
        water_potential_bar: -22.25,
        freezing_point_c: -1.75,
    }
}

/// A reading of `tank` at `time` with the given practical salinity, temperature, osmolality and conductivity.
pub fn reading_full(
    tank: &str,
    time: DateTime<Utc>,
    practical_salinity: f64,
    temperature_c: f64,
    osmolality_mosm_kg: f64,
    conductivity_ms_cm: f64,
) -> ReadingRow {
    ReadingRow {
        tank_id: tank.to_owned(),
        time,
        source_topic: format!("brannock/{tank}/probe-1"),
        conductivity_reported: conductivity_ms_cm / 10.0,
        conductivity_unit: "S/m".to_owned(),
        conductivity_ms_cm,
        temperature_c,
        pressure_dbar: 0.5,
        derived: derived(practical_salinity, osmolality_mosm_kg),
        tonicity: None,
    }
}

/// A reading with fixed values apart from tank and time.
pub fn reading(tank: &str, time: DateTime<Utc>) -> ReadingRow {
    reading_full(tank, time, 30.5, 10.25, 905.5, 38.5)
}

pub fn rejection(time: DateTime<Utc>, reason: &str, payload: &[u8]) -> RejectionRow {
    RejectionRow {
        time,
        topic: "brannock/smolt-b2/probe-1".to_owned(),
        tank_id: Some("smolt-b2".to_owned()),
        reason: reason.to_owned(),
        detail: format!("test rejection: {reason}"),
        payload_prefix: payload.to_vec(),
    }
}

pub fn daemon_state(updated_at: DateTime<Utc>, connected: bool, since: DateTime<Utc>) -> DaemonStateRow {
    DaemonStateRow {
        updated_at,
        started_at: at(2024, 5, 14, 0, 0, 0),
        broker_connected: connected,
        broker_state_since: since,
        reconnect_count: 3,
        accepted_count: 1200,
        rejected_count: 7,
        ignored_count: 2,
    }
}
