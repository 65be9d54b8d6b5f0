//! Retention: readings older than the retention period are folded into hourly summaries (kept forever)
//! and deleted, in one transaction; old rejections may be deleted too. `now` is passed in.
use chrono::{DateTime, Utc};
use rusqlite::{params, Connection, TransactionBehavior};

use super::codec::{floor_hour_ms, ms_to_time, time_to_ms, DAY_MS, HOUR_MS};
use super::error::StorageError;

/// How long raw rows are kept.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub struct RetentionSettings {
    /// Raw readings older than this many days (rounded down to a whole UTC hour) are folded and deleted.
    pub readings_days: u32,
    /// Rejections older than this many days are deleted; `None` keeps them forever.
    pub rejections_days: Option<u32>,
}

/// What one retention pass did.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct RetentionReport {
    /// Readings before this time were folded.
    pub readings_cutoff: DateTime<Utc>,
    /// Raw readings folded into hourly rows and deleted.
    pub readings_folded: u64,
    /// Hourly rows created or merged into.
    pub hourly_rows_written: u64,
    pub rejections_deleted: u64,
}

/// The summarised quantities: (readings column, hourly column prefix).
const METRICS: [(&str, &str); 4] = [
    ("practical_salinity", "practical_salinity"),
    ("temperature_c", "temperature_c"),
    ("osmolality_mosm_kg", "osmolality_mosm_kg"),
    ("conductivity_ms_cm", "conductivity_ms_cm"),
];

/// `INSERT .. SELECT .. ON CONFLICT DO UPDATE` folding readings before ?1 into readings_hourly.
///
/// `INDEXED BY readings_by_time`: left to itself SQLite satisfies the `GROUP BY tank_id` by scanning a
/// whole (tank_id, time) index, every reading of the database, to fold the few before the cutoff; on a
/// month of 1,000 tanks that held the writer (and so ingest) for longer than a minute.
///
/// On conflict the counts add, min and max combine, and means combine weighted by count. SQLite evaluates
/// every SET expression against the row as it was before the update, so `count` there is the old count.
fn fold_sql() -> String {
    let mut columns = vec!["tank_id".to_owned(), "hour_ms".to_owned(), "count".to_owned()];
    let mut selects = vec![
        "tank_id".to_owned(),
        format!("time_ms - (((time_ms % {HOUR_MS}) + {HOUR_MS}) % {HOUR_MS}) AS hour"),
        "COUNT(*)".to_owned(),
    ];
    let mut updates = vec!["count = count + excluded.count".to_owned()];
    for (source, prefix) in METRICS {
        columns.extend([
            format!("{prefix}_min"),
            format!("{prefix}_mean"),
            format!("{prefix}_max"),
        ]);
        selects.extend([
            format!("MIN({source})"),
            format!("AVG({source})"),
            format!("MAX({source})"),
        ]);
        updates.push(format!("{prefix}_min = MIN({prefix}_min, excluded.{prefix}_min)"));
        updates.push(format!(
            "{prefix}_mean = ({prefix}_mean * count + excluded.{prefix}_mean * excluded.count) \
             / (count + excluded.count)"
        ));
        updates.push(format!("{prefix}_max = MAX({prefix}_max, excluded.{prefix}_max)"));
    }
    format!(
        "INSERT INTO readings_hourly ({}) SELECT {} FROM readings INDEXED BY readings_by_time \
         WHERE time_ms < ?1 GROUP BY tank_id, hour \
         ON CONFLICT (tank_id, hour_ms) DO UPDATE SET {}",
        columns.join(", "),
        selects.join(", "),
        updates.join(", ")
    )
}

/// Folds and deletes readings (and optionally rejections) older than the retention periods before `now`.
pub fn apply(
    conn: &mut Connection,
    now: DateTime<Utc>,
    settings: &RetentionSettings,
) -> Result<RetentionReport, StorageError> {
    let now_ms = time_to_ms(now);
    let cutoff_ms = floor_hour_ms(now_ms.saturating_sub(i64::from(settings.readings_days) * DAY_MS));
    let readings_cutoff = ms_to_time(cutoff_ms)?;
    let tx = conn
        .transaction_with_behavior(TransactionBehavior::Immediate)
        .map_err(StorageError::sqlite("begin retention"))?;
    let hourly_rows_written = tx
        .execute(&fold_sql(), params![cutoff_ms])
        .map_err(StorageError::sqlite("fold readings into hourly summaries"))?;
    let readings_folded = tx
        .execute("DELETE FROM readings WHERE time_ms < ?1", params![cutoff_ms])
        .map_err(StorageError::sqlite("delete folded readings"))?;
    let rejections_deleted = match settings.rejections_days {
        None => 0,
        Some(days) => {
            let rejection_cutoff_ms = now_ms.saturating_sub(i64::from(days) * DAY_MS);
            tx.execute(
                "DELETE FROM rejections WHERE time_ms < ?1",
                params![rejection_cutoff_ms],
            )
            .map_err(StorageError::sqlite("delete old rejections"))?
        }
    };
    tx.commit().map_err(StorageError::sqlite("commit retention"))?;
    let report = RetentionReport {
        readings_cutoff,
        readings_folded: count_from_usize(readings_folded),
        hourly_rows_written: count_from_usize(hourly_rows_written),
        rejections_deleted: count_from_usize(rejections_deleted),
    };
    tracing::info!(?report, "retention pass done");
    Ok(report)
}

fn count_from_usize(value: usize) -> u64 {
    u64::try_from(value).unwrap_or(u64::MAX)
}

#[cfg(test)]
mod tests {
    use super::*;

    /// The fold reads only the readings before the cutoff, through the time index (a full scan of a month
    /// of readings held the writer for over a minute).
    #[test]
    fn the_fold_searches_the_time_index() {
        let dir = tempfile::tempdir().unwrap();
        let conn = super::super::schema::open_for_writing(
            &dir.path().join("r.db"),
            std::time::Duration::from_secs(1),
        )
        .unwrap();
        let mut stmt = conn
            .prepare(&format!("EXPLAIN QUERY PLAN {}", fold_sql()))
            .unwrap();
        let plan: Vec<String> = stmt
            .query_map(params![0i64], |r| r.get::<_, String>(3))
            .unwrap()
            .map(Result::unwrap)
            .collect();
        assert!(
            plan.iter()
                .any(|l| l.contains("SEARCH readings USING INDEX readings_by_time")),
            "{plan:?}"
        );
    }
}
