//! Read-only queries on their own connections: readers never block the writer (WAL) and never write.
use std::path::{Path, PathBuf};
use std::time::Duration;

use chrono::{DateTime, Utc};
use rusqlite::types::Type;
use rusqlite::OptionalExtension;
use rusqlite::{params, Connection, Row};
use serde::Serialize;

use super::codec::{
    count_from_sql, ms_to_time, salinity_range_from_code, time_to_ms, tonicity_from_code,
    water_movement_from_code,
};
use super::error::StorageError;
use super::rows::{DaemonStateRow, HourlyRow, HourlyStats, ReadingRow};
use super::schema::open_for_reading;
use crate::seawater::Derived;
use crate::species::{OsmoticStrategy, TonicityState};

/// How long a reader waits on a lock (rare in WAL mode: only during recovery).
const READER_BUSY_TIMEOUT: Duration = Duration::from_secs(2);

const READING_COLUMNS: &str = "tank_id, time_ms, source_topic, conductivity_reported, conductivity_unit,
    conductivity_ms_cm, temperature_c, pressure_dbar, practical_salinity, salinity_range,
    absolute_salinity_g_kg, density_kg_m3, osmotic_coefficient, osmolality_mosm_kg, osmotic_pressure_bar,
    solute_potential_bar, water_potential_bar, freezing_point_c, species, osmotic_strategy, tonicity,
    plasma_osmolality_mosm_kg, isosmotic_band_mosm_kg, gradient_mosm_kg, water_potential_difference_bar,
    isosmotic_practical_salinity, water_movement, tonicity_message";

/// Readings stored for one tank: raw rows, and readings already folded into hourly summaries.
#[derive(Debug, Clone, PartialEq, Eq, Serialize)]
pub struct TankReadingCount {
    pub tank_id: String,
    pub raw_readings: u64,
    pub folded_readings: u64,
}

/// How many rejections carry one reason code, and when the last one happened.
#[derive(Debug, Clone, PartialEq, Eq, Serialize)]
pub struct ReasonCount {
    pub reason: String,
    pub count: u64,
    pub last_time: DateTime<Utc>,
}

/// A read-only connection to a halotank database.
pub struct Reader {
    conn: Connection,
    path: PathBuf,
}

impl Reader {
    /// Opens an existing database read-only; a missing file or a foreign schema is an error.
    pub fn open(path: &Path) -> Result<Self, StorageError> {
        let conn = open_for_reading(path, READER_BUSY_TIMEOUT)?;
        Ok(Self {
            conn,
            path: path.to_path_buf(),
        })
    }

    /// Alerts, newest first (see [`super::alerts::select_alerts`]).
    pub fn alerts(
        &self,
        open_only: bool,
        tank: Option<&str>,
    ) -> Result<Vec<crate::alerts::AlertRecord>, StorageError> {
        super::alerts::select_alerts(&self.conn, open_only, tank)
    }

    /// The highest alert id ever stored (0 when none).
    pub fn max_alert_id(&self) -> Result<u64, StorageError> {
        super::alerts::max_alert_id(&self.conn)
    }

    /// Acknowledgement requests not handled yet.
    pub fn pending_ack_requests(&self) -> Result<Vec<super::AckRequest>, StorageError> {
        super::alerts::pending_ack_requests(&self.conn)
    }

    /// Alerts matching a filter, newest first (see [`super::alerts::select_alerts_filtered`]).
    pub fn alerts_filtered(
        &self,
        filter: &super::AlertFilter,
    ) -> Result<Vec<crate::alerts::AlertRecord>, StorageError> {
        super::alerts::select_alerts_filtered(&self.conn, filter)
    }

    /// One alert by id.
    pub fn alert(&self, id: u64) -> Result<Option<crate::alerts::AlertRecord>, StorageError> {
        super::alerts::select_alert(&self.conn, id)
    }

    /// One acknowledgement request and its outcome.
    pub fn ack_request(&self, id: i64) -> Result<Option<super::AckRequestStatus>, StorageError> {
        super::alerts::select_ack_request(&self.conn, id)
    }

    /// A tank's history as a series of at most `max_points` points (see [`super::history_series`]).
    pub fn history_series(
        &self,
        tank_id: &str,
        from: DateTime<Utc>,
        to: DateTime<Utc>,
        max_points: usize,
    ) -> Result<super::Series, StorageError> {
        super::history_series::history_series(&self.conn, tank_id, from, to, max_points)
    }

    /// Stored schedules (of one tank, if given), oldest first.
    pub fn schedules(
        &self,
        tank_id: Option<&str>,
    ) -> Result<Vec<crate::schedule::Schedule>, super::ScheduleStoreError> {
        super::schedules::list_on(&self.conn, tank_id)
    }

    /// One stored schedule.
    pub fn schedule(&self, id: i64) -> Result<crate::schedule::Schedule, super::ScheduleStoreError> {
        super::schedules::get_in(&self.conn, id)
    }

    /// The database file this reader reads.
    pub fn path(&self) -> &Path {
        &self.path
    }

    /// One tank's raw readings with `since <= time < until` (either bound optional), oldest first.
    pub fn history(
        &self,
        tank_id: &str,
        since: Option<DateTime<Utc>>,
        until: Option<DateTime<Utc>>,
    ) -> Result<Vec<ReadingRow>, StorageError> {
        let mut rows = Vec::new();
        self.history_for_each(tank_id, since, until, |row| {
            rows.push(row);
            Ok::<(), StorageError>(())
        })?;
        Ok(rows)
    }

    /// Like [`history`](Self::history), but hands each row to `each` as it is read (constant memory).
    pub fn history_for_each<E: From<StorageError>>(
        &self,
        tank_id: &str,
        since: Option<DateTime<Utc>>,
        until: Option<DateTime<Utc>>,
        mut each: impl FnMut(ReadingRow) -> Result<(), E>,
    ) -> Result<(), E> {
        let what = "query reading history";
        let sql = format!(
            "SELECT {READING_COLUMNS} FROM readings WHERE tank_id = ?1 AND time_ms >= ?2 AND time_ms < ?3 \
             ORDER BY time_ms, source_topic"
        );
        let since_ms = since.map_or(i64::MIN, time_to_ms);
        let until_ms = until.map_or(i64::MAX, time_to_ms);
        let mut stmt = self
            .conn
            .prepare_cached(&sql)
            .map_err(StorageError::sqlite(what))?;
        let rows = stmt
            .query_map(params![tank_id, since_ms, until_ms], reading_from_row)
            .map_err(StorageError::sqlite(what))?;
        for row in rows {
            each(row.map_err(StorageError::sqlite(what))?)?;
        }
        Ok(())
    }

    /// Runs `read` inside one read transaction, so every query in it sees the same committed state.
    pub fn snapshot<T>(
        &self,
        read: impl FnOnce(&Self) -> Result<T, StorageError>,
    ) -> Result<T, StorageError> {
        self.conn
            .execute_batch("BEGIN")
            .map_err(StorageError::sqlite("begin read snapshot"))?;
        let result = read(self);
        // Ending a read-only transaction cannot lose anything; report a failure only if `read` succeeded.
        let end = self
            .conn
            .execute_batch("COMMIT")
            .map_err(StorageError::sqlite("end read snapshot"));
        let value = result?;
        end?;
        Ok(value)
    }

    /// Every tank with raw readings or hourly summaries, sorted.
    pub fn tanks(&self) -> Result<Vec<String>, StorageError> {
        let mut tanks = self.distinct_tanks("readings")?;
        tanks.extend(self.distinct_tanks("readings_hourly")?);
        tanks.sort();
        tanks.dedup();
        Ok(tanks)
    }

    /// Whether any reading (raw or folded) was ever stored for this tank.
    pub fn tank_known(&self, tank_id: &str) -> Result<bool, StorageError> {
        let sql = "SELECT EXISTS (SELECT 1 FROM readings WHERE tank_id = ?1)
                   OR EXISTS (SELECT 1 FROM readings_hourly WHERE tank_id = ?1)";
        self.conn
            .query_row(sql, params![tank_id], |row| row.get(0))
            .map_err(StorageError::sqlite("look up tank"))
    }

    /// The newest raw reading of each tank that has one, sorted by tank.
    pub fn latest_per_tank(&self) -> Result<Vec<ReadingRow>, StorageError> {
        let mut latest = Vec::new();
        for tank in self.distinct_tanks("readings")? {
            latest.extend(self.latest_for_tank(&tank)?);
        }
        Ok(latest)
    }

    /// One tank's newest raw reading, if it has one.
    pub fn latest_for_tank(&self, tank_id: &str) -> Result<Option<ReadingRow>, StorageError> {
        let what = "query a tank's latest reading";
        let sql = format!(
            "SELECT {READING_COLUMNS} FROM readings WHERE tank_id = ?1 \
             ORDER BY time_ms DESC, source_topic DESC LIMIT 1"
        );
        let mut stmt = self
            .conn
            .prepare_cached(&sql)
            .map_err(StorageError::sqlite(what))?;
        stmt.query_row(params![tank_id], reading_from_row)
            .optional()
            .map_err(StorageError::sqlite(what))
    }

    /// Raw and folded reading counts per tank, sorted by tank.
    pub fn reading_counts(&self) -> Result<Vec<TankReadingCount>, StorageError> {
        let what = "count readings";
        let mut raw_stmt = self
            .conn
            .prepare_cached("SELECT COUNT(*) FROM readings WHERE tank_id = ?1")
            .map_err(StorageError::sqlite(what))?;
        let mut folded_stmt = self
            .conn
            .prepare_cached("SELECT COALESCE(SUM(count), 0) FROM readings_hourly WHERE tank_id = ?1")
            .map_err(StorageError::sqlite(what))?;
        let mut counts = Vec::new();
        for tank_id in self.tanks()? {
            let raw: i64 = raw_stmt
                .query_row(params![tank_id], |r| r.get(0))
                .map_err(StorageError::sqlite(what))?;
            let folded: i64 = folded_stmt
                .query_row(params![tank_id], |r| r.get(0))
                .map_err(StorageError::sqlite(what))?;
            counts.push(TankReadingCount {
                tank_id,
                raw_readings: count_from_sql(raw)?,
                folded_readings: count_from_sql(folded)?,
            });
        }
        Ok(counts)
    }

    /// Stored rejections grouped by reason code, most frequent first.
    pub fn rejection_counts_by_reason(&self) -> Result<Vec<ReasonCount>, StorageError> {
        let what = "count rejections";
        let mut stmt = self
            .conn
            .prepare_cached(
                "SELECT reason, COUNT(*), MAX(time_ms) FROM rejections GROUP BY reason \
                 ORDER BY COUNT(*) DESC, reason",
            )
            .map_err(StorageError::sqlite(what))?;
        let rows = stmt
            .query_map([], |row| {
                Ok((
                    row.get::<_, String>(0)?,
                    row.get::<_, i64>(1)?,
                    row.get::<_, i64>(2)?,
                ))
            })
            .map_err(StorageError::sqlite(what))?;
        rows.map(|row| {
            let (reason, count, last_ms) = row.map_err(StorageError::sqlite(what))?;
            Ok(ReasonCount {
                reason,
                count: count_from_sql(count)?,
                last_time: ms_to_time(last_ms)?,
            })
        })
        .collect()
    }

    /// The daemon's last written state, if it ever wrote one.
    pub fn daemon_state(&self) -> Result<Option<DaemonStateRow>, StorageError> {
        let what = "read daemon state";
        let mut stmt = self
            .conn
            .prepare_cached(
                "SELECT updated_ms, started_ms, broker_connected, broker_state_since_ms, reconnect_count,
                        accepted_count, rejected_count, ignored_count
                 FROM daemon_state WHERE id = 1",
            )
            .map_err(StorageError::sqlite(what))?;
        let mut rows = stmt.query([]).map_err(StorageError::sqlite(what))?;
        let Some(row) = rows.next().map_err(StorageError::sqlite(what))? else {
            return Ok(None);
        };
        let int = |i: usize| row.get::<_, i64>(i).map_err(StorageError::sqlite(what));
        Ok(Some(DaemonStateRow {
            updated_at: ms_to_time(int(0)?)?,
            started_at: ms_to_time(int(1)?)?,
            broker_connected: int(2)? != 0,
            broker_state_since: ms_to_time(int(3)?)?,
            reconnect_count: count_from_sql(int(4)?)?,
            accepted_count: count_from_sql(int(5)?)?,
            rejected_count: count_from_sql(int(6)?)?,
            ignored_count: count_from_sql(int(7)?)?,
        }))
    }

    /// One tank's hourly summaries with `since <= hour start < until`, oldest first.
    pub fn hourly(
        &self,
        tank_id: &str,
        since: Option<DateTime<Utc>>,
        until: Option<DateTime<Utc>>,
    ) -> Result<Vec<HourlyRow>, StorageError> {
        let what = "query hourly summaries";
        let mut stmt = self
            .conn
            .prepare_cached(
                "SELECT tank_id, hour_ms, count,
                        practical_salinity_min, practical_salinity_mean, practical_salinity_max,
                        temperature_c_min, temperature_c_mean, temperature_c_max,
                        osmolality_mosm_kg_min, osmolality_mosm_kg_mean, osmolality_mosm_kg_max,
                        conductivity_ms_cm_min, conductivity_ms_cm_mean, conductivity_ms_cm_max
                 FROM readings_hourly WHERE tank_id = ?1 AND hour_ms >= ?2 AND hour_ms < ?3 ORDER BY hour_ms",
            )
            .map_err(StorageError::sqlite(what))?;
        let since_ms = since.map_or(i64::MIN, time_to_ms);
        let until_ms = until.map_or(i64::MAX, time_to_ms);
        let rows = stmt
            .query_map(params![tank_id, since_ms, until_ms], |row| {
                let stats = |first: usize| -> rusqlite::Result<HourlyStats> {
                    Ok(HourlyStats {
                        min: row.get(first)?,
                        mean: row.get(first + 1)?,
                        max: row.get(first + 2)?,
                    })
                };
                Ok((
                    row.get::<_, String>(0)?,
                    row.get::<_, i64>(1)?,
                    row.get::<_, i64>(2)?,
                    [stats(3)?, stats(6)?, stats(9)?, stats(12)?],
                ))
            })
            .map_err(StorageError::sqlite(what))?;
        rows.map(|row| {
            let (tank_id, hour_ms, count, [ps, t, osm, c]) = row.map_err(StorageError::sqlite(what))?;
            Ok(HourlyRow {
                tank_id,
                hour_start: ms_to_time(hour_ms)?,
                count: count_from_sql(count)?,
                practical_salinity: ps,
                temperature_c: t,
                osmolality_mosm_kg: osm,
                conductivity_ms_cm: c,
            })
        })
        .collect()
    }

    /// Distinct tank ids of a table keyed by tank first, by index skip-scan (one probe per tank, not per row).
    fn distinct_tanks(&self, table: &'static str) -> Result<Vec<String>, StorageError> {
        let what = "list tanks";
        let sql = format!(
            "WITH RECURSIVE t(tank_id) AS (
                 SELECT MIN(tank_id) FROM {table}
                 UNION ALL
                 SELECT (SELECT MIN(tank_id) FROM {table} WHERE tank_id > t.tank_id) FROM t
                 WHERE t.tank_id IS NOT NULL
             )
             SELECT tank_id FROM t WHERE tank_id IS NOT NULL"
        );
        let mut stmt = self
            .conn
            .prepare_cached(&sql)
            .map_err(StorageError::sqlite(what))?;
        let rows = stmt
            .query_map([], |row| row.get::<_, String>(0))
            .map_err(StorageError::sqlite(what))?;
        rows.map(|r| r.map_err(StorageError::sqlite(what))).collect()
    }
}

/// Builds a reading from a row selected with [`READING_COLUMNS`]; bad codes or times are conversion errors.
fn reading_from_row(row: &Row<'_>) -> rusqlite::Result<ReadingRow> {
    let conversion = |index: usize, kind: Type, err: StorageError| {
        rusqlite::Error::FromSqlConversionFailure(index, kind, Box::new(err))
    };
    let time_ms: i64 = row.get(1)?;
    let range_code: String = row.get(9)?;
    let osmolality_mosm_kg: f64 = row.get(13)?;
    Ok(ReadingRow {
        tonicity: tonicity_from_columns(row, osmolality_mosm_kg)?,
        tank_id: row.get(0)?,
        time: ms_to_time(time_ms).map_err(|e| conversion(1, Type::Integer, e))?,
        source_topic: row.get(2)?,
        conductivity_reported: row.get(3)?,
        conductivity_unit: row.get(4)?,
        conductivity_ms_cm: row.get(5)?,
        temperature_c: row.get(6)?,
        pressure_dbar: row.get(7)?,
        derived: Derived {
            practical_salinity: row.get(8)?,
            salinity_range: salinity_range_from_code(&range_code)
                .map_err(|e| conversion(9, Type::Text, e))?,
            absolute_salinity_g_kg: row.get(10)?,
            density_kg_m3: row.get(11)?,
            osmotic_coefficient: row.get(12)?,
            osmolality_mosm_kg,
            osmotic_pressure_bar: row.get(14)?,
            solute_potential_bar: row.get(15)?,
            water_potential_bar: row.get(16)?,
            freezing_point_c: row.get(17)?,
        },
    })
}

/// The tonicity columns (18..=27 of [`READING_COLUMNS`]) back into a [`TonicityState`]; `None` when the
/// reading was stored without a species.
fn tonicity_from_columns(row: &Row<'_>, water_mosm_kg: f64) -> rusqlite::Result<Option<TonicityState>> {
    let conversion = |index: usize, err: StorageError| {
        rusqlite::Error::FromSqlConversionFailure(index, Type::Text, Box::new(err))
    };
    let Some(species) = row.get::<_, Option<String>>(18)? else {
        return Ok(None);
    };
    let strategy_code: String = row.get(19)?;
    let osmotic_strategy = OsmoticStrategy::parse(&strategy_code).ok_or_else(|| {
        conversion(
            19,
            StorageError::CorruptRow {
                what: format!("unknown osmotic strategy `{strategy_code}`"),
            },
        )
    })?;
    let tonicity = match row.get::<_, Option<String>>(20)? {
        Some(code) => Some(tonicity_from_code(&code).map_err(|e| conversion(20, e))?),
        None => None,
    };
    let movement_code: String = row.get(26)?;
    Ok(Some(TonicityState {
        species,
        osmotic_strategy,
        tonicity,
        water_osmolality_mosm_kg: water_mosm_kg,
        plasma_osmolality_mosm_kg: row.get(21)?,
        isosmotic_band_mosm_kg: row.get::<_, Option<f64>>(22)?.unwrap_or(f64::NAN),
        gradient_mosm_kg: row.get(23)?,
        water_potential_difference_bar: row.get(24)?,
        isosmotic_practical_salinity: row.get(25)?,
        water_movement: water_movement_from_code(&movement_code).map_err(|e| conversion(26, e))?,
        message: row.get::<_, Option<String>>(27)?.unwrap_or_default(),
    }))
}
