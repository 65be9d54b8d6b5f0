//! The statements that write rows (prepared and cached per connection), and the check a reading must pass
//! before it is written.
use rusqlite::{params, Connection};

use super::codec::{count_to_sql, salinity_range_code, time_to_ms, tonicity_code, water_movement_code};
use super::rows::{DaemonStateRow, ReadingRow, RejectionRow, PAYLOAD_PREFIX_MAX_BYTES};

const INSERT_READING: &str = "INSERT OR IGNORE INTO readings (
    tank_id, time_ms, source_topic, conductivity_reported, conductivity_unit, conductivity_ms_cm,
    temperature_c, pressure_dbar, practical_salinity, salinity_range, absolute_salinity_g_kg, density_kg_m3,
    osmotic_coefficient, osmolality_mosm_kg, osmotic_pressure_bar, solute_potential_bar, water_potential_bar,
    freezing_point_c, species, osmotic_strategy, tonicity, plasma_osmolality_mosm_kg, isosmotic_band_mosm_kg,
    gradient_mosm_kg, water_potential_difference_bar, isosmotic_practical_salinity, water_movement,
    tonicity_message
) VALUES (?1, ?2, ?3, ?4, ?5, ?6, ?7, ?8, ?9, ?10, ?11, ?12, ?13, ?14, ?15, ?16, ?17, ?18,
    ?19, ?20, ?21, ?22, ?23, ?24, ?25, ?26, ?27, ?28)";

const INSERT_REJECTION: &str =
    "INSERT INTO rejections (time_ms, topic, tank_id, reason, detail, payload_prefix)
    VALUES (?1, ?2, ?3, ?4, ?5, ?6)";

const UPSERT_DAEMON_STATE: &str = "INSERT INTO daemon_state (
    id, updated_ms, started_ms, broker_connected, broker_state_since_ms, reconnect_count,
    accepted_count, rejected_count, ignored_count
) VALUES (1, ?1, ?2, ?3, ?4, ?5, ?6, ?7, ?8)
ON CONFLICT (id) DO UPDATE SET
    updated_ms = excluded.updated_ms, started_ms = excluded.started_ms,
    broker_connected = excluded.broker_connected, broker_state_since_ms = excluded.broker_state_since_ms,
    reconnect_count = excluded.reconnect_count, accepted_count = excluded.accepted_count,
    rejected_count = excluded.rejected_count, ignored_count = excluded.ignored_count";

/// Stable rejection code for a reading the writer refused to store (see [`reading_problem`]).
pub const INVALID_READING_REASON: &str = "storage_invalid_reading";

/// Why a reading cannot be stored as it is, or `None` if it can.
///
/// SQLite stores NaN as NULL, which a NOT NULL column refuses; one such row must not wedge a whole batch.
pub fn reading_problem(row: &ReadingRow) -> Option<String> {
    if row.tank_id.is_empty() {
        return Some("empty tank id".to_owned());
    }
    let d = &row.derived;
    let numbers = [
        ("conductivity_reported", row.conductivity_reported),
        ("conductivity_ms_cm", row.conductivity_ms_cm),
        ("temperature_c", row.temperature_c),
        ("pressure_dbar", row.pressure_dbar),
        ("practical_salinity", d.practical_salinity),
        ("absolute_salinity_g_kg", d.absolute_salinity_g_kg),
        ("density_kg_m3", d.density_kg_m3),
        ("osmotic_coefficient", d.osmotic_coefficient),
        ("osmolality_mosm_kg", d.osmolality_mosm_kg),
        ("osmotic_pressure_bar", d.osmotic_pressure_bar),
        ("solute_potential_bar", d.solute_potential_bar),
        ("water_potential_bar", d.water_potential_bar),
        ("freezing_point_c", d.freezing_point_c),
    ];
    numbers
        .iter()
        .find(|(_, value)| !value.is_finite())
        .map(|(name, value)| format!("{name} = {value} is not a finite number"))
}

/// The rejection that stands in for a reading the writer could not store.
pub fn rejection_for_invalid(row: &ReadingRow, problem: String) -> RejectionRow {
    RejectionRow {
        time: row.time,
        topic: row.source_topic.clone(),
        tank_id: Some(row.tank_id.clone()).filter(|t| !t.is_empty()),
        reason: INVALID_READING_REASON.to_owned(),
        detail: problem,
        payload_prefix: Vec::new(),
    }
}

/// Inserts a reading; `Ok(false)` if a reading with the same (tank, time, topic) was already stored.
pub fn insert_reading(conn: &Connection, row: &ReadingRow) -> rusqlite::Result<bool> {
    let d = &row.derived;
    let t = row.tonicity.as_ref();
    // Non-finite optional numbers are stored as NULL (SQLite does so for NaN anyway).
    let finite = |x: Option<f64>| x.filter(|v| v.is_finite());
    let mut stmt = conn.prepare_cached(INSERT_READING)?;
    let changed = stmt.execute(params![
        row.tank_id,
        time_to_ms(row.time),
        row.source_topic,
        row.conductivity_reported,
        row.conductivity_unit,
        row.conductivity_ms_cm,
        row.temperature_c,
        row.pressure_dbar,
        d.practical_salinity,
        salinity_range_code(d.salinity_range),
        d.absolute_salinity_g_kg,
        d.density_kg_m3,
        d.osmotic_coefficient,
        d.osmolality_mosm_kg,
        d.osmotic_pressure_bar,
        d.solute_potential_bar,
        d.water_potential_bar,
        d.freezing_point_c,
        t.map(|t| t.species.as_str()),
        t.map(|t| t.osmotic_strategy.as_str()),
        t.and_then(|t| t.tonicity).map(tonicity_code),
        finite(t.and_then(|t| t.plasma_osmolality_mosm_kg)),
        finite(t.map(|t| t.isosmotic_band_mosm_kg)),
        finite(t.and_then(|t| t.gradient_mosm_kg)),
        finite(t.and_then(|t| t.water_potential_difference_bar)),
        finite(t.and_then(|t| t.isosmotic_practical_salinity)),
        t.map(|t| water_movement_code(t.water_movement)),
        t.map(|t| t.message.as_str()),
    ])?;
    Ok(changed == 1)
}

/// Inserts a rejection, keeping at most [`PAYLOAD_PREFIX_MAX_BYTES`] of its payload.
pub fn insert_rejection(conn: &Connection, row: &RejectionRow) -> rusqlite::Result<()> {
    let prefix = &row.payload_prefix[..row.payload_prefix.len().min(PAYLOAD_PREFIX_MAX_BYTES)];
    let mut stmt = conn.prepare_cached(INSERT_REJECTION)?;
    stmt.execute(params![
        time_to_ms(row.time),
        row.topic,
        row.tank_id,
        row.reason,
        row.detail,
        prefix
    ])?;
    Ok(())
}

/// Writes the daemon's state row (there is only one).
pub fn upsert_daemon_state(conn: &Connection, state: &DaemonStateRow) -> rusqlite::Result<()> {
    let mut stmt = conn.prepare_cached(UPSERT_DAEMON_STATE)?;
    stmt.execute(params![
        time_to_ms(state.updated_at),
        time_to_ms(state.started_at),
        state.broker_connected,
        time_to_ms(state.broker_state_since),
        count_to_sql(state.reconnect_count),
        count_to_sql(state.accepted_count),
        count_to_sql(state.rejected_count),
        count_to_sql(state.ignored_count),
    ])?;
    Ok(())
}
