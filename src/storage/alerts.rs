//! The `alerts` and `alert_ack_requests` tables: upsert of alert records (one row per alert id, rewritten
//! at each event), reads for restore and `halotank alerts`, and acknowledgement requests from the CLI.
//!
//! Each row keeps the columns people query plus `record_json`, the whole [`AlertRecord`], which is what
//! restore reads back.
use chrono::{DateTime, Utc};
use rusqlite::{params, Connection, OptionalExtension};

use super::codec::{ms_to_time, time_to_ms};
use super::error::StorageError;
use crate::alerts::AlertRecord;

const UPSERT_ALERT: &str = r#"INSERT INTO alerts (
    id, tank, kind, severity, state, raised_at_ms, observed_at_ms, last_notified_at_ms, notify_count,
    cleared_at_ms, ack_by, ack_at_ms, ack_note, message, value, "limit", record_json
) VALUES (?1, ?2, ?3, ?4, ?5, ?6, ?7, ?8, ?9, ?10, ?11, ?12, ?13, ?14, ?15, ?16, ?17)
ON CONFLICT (id) DO UPDATE SET
    tank = excluded.tank, kind = excluded.kind, severity = excluded.severity, state = excluded.state,
    raised_at_ms = excluded.raised_at_ms, observed_at_ms = excluded.observed_at_ms,
    last_notified_at_ms = excluded.last_notified_at_ms, notify_count = excluded.notify_count,
    cleared_at_ms = excluded.cleared_at_ms, ack_by = excluded.ack_by, ack_at_ms = excluded.ack_at_ms,
    ack_note = excluded.ack_note, message = excluded.message, value = excluded.value,
    "limit" = excluded."limit", record_json = excluded.record_json"#;

/// One acknowledgement asked for from the command line, waiting for the daemon (or applied directly).
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct AckRequest {
    pub id: i64,
    pub alert_id: u64,
    pub by: String,
    pub note: Option<String>,
    pub requested_at: DateTime<Utc>,
}

/// Writes an alert record (insert or overwrite by id).
pub fn upsert_alert(conn: &Connection, record: &AlertRecord) -> rusqlite::Result<()> {
    let json =
        serde_json::to_string(record).map_err(|e| rusqlite::Error::ToSqlConversionFailure(Box::new(e)))?;
    let ack = record.acknowledgement.as_ref();
    let finite = |x: Option<f64>| x.filter(|v| v.is_finite());
    let mut stmt = conn.prepare_cached(UPSERT_ALERT)?;
    stmt.execute(params![
        i64::try_from(record.id.0).unwrap_or(i64::MAX),
        record.tank,
        record.kind.as_str(),
        record.severity.as_str(),
        record.state.as_str(),
        time_to_ms(record.raised_at),
        time_to_ms(record.observed_at),
        time_to_ms(record.last_notified_at),
        record.notify_count,
        record.cleared_at.map(time_to_ms),
        ack.map(|a| a.by.as_str()),
        ack.map(|a| time_to_ms(a.at)),
        ack.and_then(|a| a.note.as_deref()),
        record.message,
        finite(record.value),
        finite(record.limit),
        json,
    ])?;
    Ok(())
}

/// Marks an acknowledgement request handled, with what came of it (`acknowledged`, or the refusal).
pub fn mark_ack_request_handled(
    conn: &Connection,
    id: i64,
    handled_at: DateTime<Utc>,
    outcome: &str,
) -> rusqlite::Result<()> {
    conn.prepare_cached(
        "UPDATE alert_ack_requests SET handled_at_ms = ?2, outcome = ?3 WHERE id = ?1 AND handled_at_ms IS NULL",
    )?
    .execute(params![id, time_to_ms(handled_at), outcome])?;
    Ok(())
}

/// Records an acknowledgement request; returns its id.
pub fn insert_ack_request(
    conn: &Connection,
    alert_id: u64,
    by: &str,
    note: Option<&str>,
    requested_at: DateTime<Utc>,
) -> rusqlite::Result<i64> {
    conn.prepare_cached(
        "INSERT INTO alert_ack_requests (alert_id, by, note, requested_at_ms) VALUES (?1, ?2, ?3, ?4)",
    )?
    .execute(params![
        i64::try_from(alert_id).unwrap_or(i64::MAX),
        by,
        note,
        time_to_ms(requested_at)
    ])?;
    Ok(conn.last_insert_rowid())
}

/// Acknowledgement requests not handled yet, oldest first.
pub fn pending_ack_requests(conn: &Connection) -> Result<Vec<AckRequest>, StorageError> {
    let what = "read acknowledgement requests";
    let mut stmt = conn
        .prepare_cached(
            "SELECT id, alert_id, by, note, requested_at_ms FROM alert_ack_requests \
             WHERE handled_at_ms IS NULL ORDER BY id",
        )
        .map_err(StorageError::sqlite(what))?;
    let rows = stmt
        .query_map([], |row| {
            Ok((
                row.get::<_, i64>(0)?,
                row.get::<_, i64>(1)?,
                row.get::<_, String>(2)?,
                row.get::<_, Option<String>>(3)?,
                row.get::<_, i64>(4)?,
            ))
        })
        .map_err(StorageError::sqlite(what))?;
    let mut out = Vec::new();
    for row in rows {
        let (id, alert_id, by, note, ms) = row.map_err(StorageError::sqlite(what))?;
        out.push(AckRequest {
            id,
            alert_id: u64::try_from(alert_id).map_err(|_| StorageError::CorruptRow {
                what: format!("negative alert id {alert_id}"),
            })?,
            by,
            note,
            requested_at: ms_to_time(ms)?,
        });
    }
    Ok(out)
}

/// Alerts, newest id first: only open ones (`state != 'cleared'`) if `open_only`, only one tank if given.
pub fn select_alerts(
    conn: &Connection,
    open_only: bool,
    tank: Option<&str>,
) -> Result<Vec<AlertRecord>, StorageError> {
    let filter = AlertFilter {
        open_only,
        tank: tank.map(str::to_owned),
        limit: u32::MAX,
        ..AlertFilter::default()
    };
    select_alerts_filtered(conn, &filter)
}

/// One alert by id.
pub fn select_alert(conn: &Connection, id: u64) -> Result<Option<AlertRecord>, StorageError> {
    let what = "read an alert";
    let json: Option<String> = conn
        .query_row(
            "SELECT record_json FROM alerts WHERE id = ?1",
            [i64::try_from(id).unwrap_or(i64::MAX)],
            |row| row.get(0),
        )
        .optional()
        .map_err(StorageError::sqlite(what))?;
    json.map(|j| parse_record(&j)).transpose()
}

/// The highest alert id ever stored (0 when none).
pub fn max_alert_id(conn: &Connection) -> Result<u64, StorageError> {
    let max: Option<i64> = conn
        .query_row("SELECT MAX(id) FROM alerts", [], |row| row.get(0))
        .map_err(StorageError::sqlite("read the highest alert id"))?;
    Ok(max.and_then(|m| u64::try_from(m).ok()).unwrap_or(0))
}

fn parse_record(json: &str) -> Result<AlertRecord, StorageError> {
    serde_json::from_str(json).map_err(|e| StorageError::CorruptRow {
        what: format!("alert record: {e}"),
    })
}

/// Which alerts to list (every filter optional); newest id first, at most `limit`.
#[derive(Debug, Clone, Default, PartialEq, Eq)]
pub struct AlertFilter {
    /// Only open alerts (`state != 'cleared'`).
    pub open_only: bool,
    pub tank: Option<String>,
    /// Kind code (`salinity_optimum`, ...).
    pub kind: Option<String>,
    /// Severity code (`info`, `warning`, `critical`).
    pub severity: Option<String>,
    /// Only alerts raised at or after this time.
    pub raised_since: Option<DateTime<Utc>>,
    pub limit: u32,
}

/// Alerts matching `filter`, newest id first.
pub fn select_alerts_filtered(
    conn: &Connection,
    filter: &AlertFilter,
) -> Result<Vec<AlertRecord>, StorageError> {
    let what = "read alerts";
    let mut stmt = conn
        .prepare_cached(
            "SELECT record_json FROM alerts WHERE (?1 = 0 OR state <> 'cleared') AND (?2 IS NULL OR tank = ?2) \
             AND (?3 IS NULL OR kind = ?3) AND (?4 IS NULL OR severity = ?4) AND (?5 IS NULL OR raised_at_ms >= ?5) \
             ORDER BY id DESC LIMIT ?6",
        )
        .map_err(StorageError::sqlite(what))?;
    let rows = stmt
        .query_map(
            params![
                filter.open_only,
                filter.tank,
                filter.kind,
                filter.severity,
                filter.raised_since.map(time_to_ms),
                filter.limit
            ],
            |row| row.get::<_, String>(0),
        )
        .map_err(StorageError::sqlite(what))?;
    let mut out = Vec::new();
    for row in rows {
        let json = row.map_err(StorageError::sqlite(what))?;
        out.push(parse_record(&json)?);
    }
    Ok(out)
}

/// One acknowledgement request with what came of it.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct AckRequestStatus {
    pub request: AckRequest,
    /// When the daemon (or the command line) handled it; `None` while pending.
    pub handled_at: Option<DateTime<Utc>>,
    /// `acknowledged ...` or `refused: <why>`.
    pub outcome: Option<String>,
}

/// One acknowledgement request by id.
pub fn select_ack_request(conn: &Connection, id: i64) -> Result<Option<AckRequestStatus>, StorageError> {
    let what = "read an acknowledgement request";
    let row = conn
        .query_row(
            "SELECT id, alert_id, by, note, requested_at_ms, handled_at_ms, outcome FROM alert_ack_requests \
             WHERE id = ?1",
            [id],
            |row| {
                Ok((
                    row.get::<_, i64>(0)?,
                    row.get::<_, i64>(1)?,
                    row.get::<_, String>(2)?,
                    row.get::<_, Option<String>>(3)?,
                    row.get::<_, i64>(4)?,
                    row.get::<_, Option<i64>>(5)?,
                    row.get::<_, Option<String>>(6)?,
                ))
            },
        )
        .optional()
        .map_err(StorageError::sqlite(what))?;
    let Some((id, alert_id, by, note, requested_ms, handled_ms, outcome)) = row else {
        return Ok(None);
    };
    Ok(Some(AckRequestStatus {
        request: AckRequest {
            id,
            alert_id: u64::try_from(alert_id).map_err(|_| StorageError::CorruptRow {
                what: format!("negative alert id {alert_id}"),
            })?,
            by,
            note,
            requested_at: ms_to_time(requested_ms)?,
        },
        handled_at: handled_ms.map(ms_to_time).transpose()?,
        outcome,
    }))
}
