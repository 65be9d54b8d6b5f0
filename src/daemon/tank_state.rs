//! The derived state of one tank as published (retained) on `<prefix>/tank/<id>/state`.
use chrono::{DateTime, SecondsFormat, Utc};
use serde::Serialize;

use crate::schedule::Progress;
use crate::seawater::Derived;
use crate::species::TonicityState;
use crate::storage::ReadingRow;

/// The JSON published for a tank after its reading has been committed.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct TankState {
    pub tank: String,
    pub name: String,
    pub time: String,
    #[serde(rename = "conductivity_mS_cm")]
    pub conductivity_ms_cm: f64,
    #[serde(rename = "temperature_C")]
    pub temperature_c: f64,
    pub pressure_dbar: f64,
    #[serde(flatten)]
    pub derived: Derived,
    /// The water against the tank's species (`null` when the tank names no species).
    pub tonicity: Option<TonicityState>,
    /// The progress of the tank's open acclimation schedule (`null` when it has none).
    pub schedule: Option<Progress>,
}

impl TankState {
    /// The state a committed reading gives its tank, with its schedule's progress.
    pub fn from_row(name: &str, row: &ReadingRow, schedule: Option<Progress>) -> Self {
        Self {
            tank: row.tank_id.clone(),
            name: name.to_string(),
            time: rfc3339(row.time),
            conductivity_ms_cm: row.conductivity_ms_cm,
            temperature_c: row.temperature_c,
            pressure_dbar: row.pressure_dbar,
            derived: row.derived,
            tonicity: row.tonicity.clone(),
            schedule,
        }
    }
}

/// Topic of a tank's published state.
pub fn state_topic(prefix: &str, tank_id: &str) -> String {
    format!("{prefix}/tank/{tank_id}/state")
}

fn rfc3339(time: DateTime<Utc>) -> String {
    time.to_rfc3339_opts(SecondsFormat::Millis, true)
}
