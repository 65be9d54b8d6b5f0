//! The live table's rows: each configured tank with its newest reading, aged against the right clock.
//!
//! Pure: configuration, newest readings and both clocks in, rows out. A reading from a probe that sends
//! its own time is aged against the simulated clock; one whose time is its receipt (bare numbers, or
//! JSON without a time key) is aged against the real clock, since that is what stamped it.
use chrono::{DateTime, Utc};

use super::table::{reading_age, TankRow};
use crate::config::{Config, PayloadFormat, TankConfig};

/// A tank's newest stored reading, as the table needs it.
#[derive(Debug, Clone, PartialEq)]
pub struct LatestReading {
    pub tank_id: String,
    /// The reading's time as stored.
    pub time: DateTime<Utc>,
    pub practical_salinity: Option<f64>,
    pub temperature_c: f64,
    /// In-situ conductivity, mS/cm.
    pub conductivity_ms_cm: f64,
    pub osmolality_mosm_kg: Option<f64>,
}

/// True when the tank's reading times are receipt times (the payload carries no time).
pub fn stamped_on_receipt(tank: &TankConfig) -> bool {
    let conductivity_format = tank
        .topics
        .conductivity
        .as_ref()
        .or(tank.topics.combined.as_ref())
        .map(|b| b.format);
    match conductivity_format {
        Some(PayloadFormat::Number) => true,
        Some(PayloadFormat::Json) => tank.json_keys.time.is_none(),
        Some(PayloadFormat::Senml) | None => false,
    }
}

/// One row per configured tank, in configuration order; tanks without a reading are `waiting`.
pub fn tank_rows(
    config: &Config,
    latest: &[LatestReading],
    simulated_now: DateTime<Utc>,
    real_now: DateTime<Utc>,
) -> Vec<TankRow> {
    config
        .tanks
        .iter()
        .map(|tank| {
            let reading = latest.iter().find(|r| r.tank_id == tank.id);
            let now = if stamped_on_receipt(tank) {
                real_now
            } else {
                simulated_now
            };
            TankRow {
                id: tank.id.clone(),
                name: tank.name.clone(),
                practical_salinity: reading.and_then(|r| r.practical_salinity),
                temperature_c: reading.map(|r| r.temperature_c),
                conductivity_ms_cm: reading.map(|r| r.conductivity_ms_cm),
                osmolality_mosm_kg: reading.and_then(|r| r.osmolality_mosm_kg),
                age: reading.map(|r| reading_age(r.time, now)),
                expected_interval_s: tank.expected_interval_s,
            }
        })
        .collect()
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::demo::config::demo_config;
    use crate::demo::table::row_state;
    use chrono::TimeDelta;

    #[test]
    fn rows_follow_the_configuration_and_age_against_the_clock_that_stamped_them() {
        let config = demo_config().unwrap();
        let real_now = DateTime::from_timestamp(1_743_573_600, 0).unwrap();
        let simulated_now = real_now - TimeDelta::minutes(20);
        let reading = |id: &str, time| LatestReading {
            tank_id: id.into(),
            time,
            practical_salinity: Some(12.5),
            temperature_c: 28.0,
            conductivity_ms_cm: 23.1,
            osmolality_mosm_kg: Some(380.0),
        };
        let latest = [
            // Bare numbers: stamped on receipt, by the real clock.
            reading("parr-a", real_now - TimeDelta::seconds(2)),
            // SenML with its own (simulated) time.
            reading("shrimp-n2", simulated_now - TimeDelta::seconds(50)),
            // Old: more than three intervals (3 × 120 s) behind the simulated clock.
            reading("sea-hold-4", simulated_now - TimeDelta::seconds(400)),
        ];
        let rows = tank_rows(&config, &latest, simulated_now, real_now);
        let ids: Vec<&str> = rows.iter().map(|r| r.id.as_str()).collect();
        assert_eq!(
            ids,
            [
                "parr-a",
                "smolt-t1",
                "shrimp-n2",
                "sea-hold-4",
                "oyster-d1",
                "quarantine-q1"
            ]
        );
        assert_eq!(rows[0].age, Some(TimeDelta::seconds(2)));
        assert_eq!(rows[2].age, Some(TimeDelta::seconds(50)));
        assert_eq!(rows[2].osmolality_mosm_kg, Some(380.0));
        let states: Vec<&str> = rows.iter().map(row_state).collect();
        assert_eq!(states, ["ok", "waiting", "ok", "STALE", "waiting", "waiting"]);
        assert!(stamped_on_receipt(&config.tanks[0]));
        assert!(config.tanks[1..].iter().all(|t| !stamped_on_receipt(t)));
    }
}
