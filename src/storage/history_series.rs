//! A tank's history over a time range as a chart series of at most N points: raw readings when they fit,
//! else equal-width time buckets averaged in SQL (with each bucket's salinity minimum and maximum), and
//! hours already folded by retention merged in from `readings_hourly`, weighted by their counts.
//!
//! Both tables are read by their `(tank_id, time)` keys, so a range costs one index range scan each.
use chrono::{DateTime, Utc};
use rusqlite::{params, Connection};

use super::codec::{ms_to_time, time_to_ms, HOUR_MS};
use super::error::StorageError;

/// Readings of a tank in a range (`?1` tank, `?2`..`?3` ms). Like the two below, it reads only the
/// `readings_chart` covering index (a test checks the query plan).
pub const COUNT_QUERY: &str =
    "SELECT COUNT(*) FROM readings WHERE tank_id = ?1 AND time_ms >= ?2 AND time_ms < ?3";

/// Bucket sums of a tank's readings (`?4` the bucket width, ms).
pub const BUCKET_QUERY: &str =
    "SELECT (time_ms - ?2) / ?4 AS b, COUNT(*), SUM(time_ms), SUM(practical_salinity), \
     MIN(practical_salinity), MAX(practical_salinity), SUM(osmolality_mosm_kg), SUM(temperature_c) \
     FROM readings WHERE tank_id = ?1 AND time_ms >= ?2 AND time_ms < ?3 GROUP BY b ORDER BY b";

/// A tank's readings one by one.
pub const RAW_QUERY: &str =
    "SELECT time_ms, practical_salinity, osmolality_mosm_kg, temperature_c FROM readings \
     WHERE tank_id = ?1 AND time_ms >= ?2 AND time_ms < ?3 ORDER BY time_ms, source_topic";

/// One point of the series: a reading, or the mean of a bucket.
#[derive(Debug, Clone, PartialEq)]
pub struct SeriesPoint {
    /// The reading's time, or the mean time of the bucket's readings.
    pub time: DateTime<Utc>,
    pub practical_salinity: f64,
    pub osmolality_mosm_kg: f64,
    pub temperature_c: f64,
    /// Lowest and highest practical salinity in the bucket (`None` for a raw reading).
    pub min_practical_salinity: Option<f64>,
    pub max_practical_salinity: Option<f64>,
    /// Readings behind the point.
    pub count: u64,
}

/// A range's series.
#[derive(Debug, Clone, PartialEq, Default)]
pub struct Series {
    pub points: Vec<SeriesPoint>,
    /// The points are bucket means (or hourly summaries), not single readings.
    pub downsampled: bool,
}

/// Running sums of one bucket.
#[derive(Debug, Clone, Copy)]
struct Bucket {
    count: f64,
    time_sum: f64,
    ps_sum: f64,
    osm_sum: f64,
    t_sum: f64,
    ps_min: f64,
    ps_max: f64,
}

impl Bucket {
    fn add(&mut self, other: &Bucket) {
        self.count += other.count;
        self.time_sum += other.time_sum;
        self.ps_sum += other.ps_sum;
        self.osm_sum += other.osm_sum;
        self.t_sum += other.t_sum;
        self.ps_min = self.ps_min.min(other.ps_min);
        self.ps_max = self.ps_max.max(other.ps_max);
    }

    fn point(&self) -> Result<SeriesPoint, StorageError> {
        let n = self.count.max(1.0);
        Ok(SeriesPoint {
            time: ms_to_time((self.time_sum / n).round() as i64)?,
            practical_salinity: self.ps_sum / n,
            osmolality_mosm_kg: self.osm_sum / n,
            temperature_c: self.t_sum / n,
            min_practical_salinity: Some(self.ps_min),
            max_practical_salinity: Some(self.ps_max),
            count: self.count as u64,
        })
    }
}

/// The series of `tank_id` over `from <= time < to` with at most `max_points` points (at least 1).
pub fn history_series(
    conn: &Connection,
    tank_id: &str,
    from: DateTime<Utc>,
    to: DateTime<Utc>,
    max_points: usize,
) -> Result<Series, StorageError> {
    let what = "query a history series";
    let (from_ms, to_ms) = (time_to_ms(from), time_to_ms(to));
    let max_points = max_points.max(1);
    let raw_count: i64 = conn
        .prepare_cached(COUNT_QUERY)
        .and_then(|mut s| s.query_row(params![tank_id, from_ms, to_ms], |r| r.get(0)))
        .map_err(StorageError::sqlite(what))?;
    let hourly = hourly_buckets(conn, tank_id, from_ms, to_ms)?;
    if hourly.is_empty() && raw_count as usize <= max_points {
        return raw_points(conn, tank_id, from_ms, to_ms);
    }
    let span = (to_ms - from_ms).max(1);
    let width = ((span + max_points as i64 - 1) / max_points as i64).max(1);
    let last = (span - 1) / width;
    let mut buckets: std::collections::BTreeMap<i64, Bucket> = std::collections::BTreeMap::new();
    let mut stmt = conn
        .prepare_cached(BUCKET_QUERY)
        .map_err(StorageError::sqlite(what))?;
    let rows = stmt
        .query_map(params![tank_id, from_ms, to_ms, width], |r| {
            Ok((
                r.get::<_, i64>(0)?,
                Bucket {
                    count: r.get::<_, i64>(1)? as f64,
                    time_sum: r.get::<_, f64>(2)?,
                    ps_sum: r.get(3)?,
                    ps_min: r.get(4)?,
                    ps_max: r.get(5)?,
                    osm_sum: r.get(6)?,
                    t_sum: r.get(7)?,
                },
            ))
        })
        .map_err(StorageError::sqlite(what))?;
    for row in rows {
        let (b, bucket) = row.map_err(StorageError::sqlite(what))?;
        merge(&mut buckets, b.clamp(0, last), &bucket);
    }
    for (hour_ms, bucket) in &hourly {
        let b = ((hour_ms + HOUR_MS / 2 - from_ms) / width).clamp(0, last);
        merge(&mut buckets, b, bucket);
    }
    let points = buckets
        .values()
        .map(Bucket::point)
        .collect::<Result<Vec<_>, _>>()?;
    Ok(Series {
        points,
        downsampled: true,
    })
}

fn merge(buckets: &mut std::collections::BTreeMap<i64, Bucket>, b: i64, bucket: &Bucket) {
    buckets
        .entry(b)
        .and_modify(|existing| existing.add(bucket))
        .or_insert(*bucket);
}

/// Hourly summaries whose hour starts in the range, as weighted buckets (time at the hour's middle).
fn hourly_buckets(
    conn: &Connection,
    tank_id: &str,
    from_ms: i64,
    to_ms: i64,
) -> Result<Vec<(i64, Bucket)>, StorageError> {
    let what = "query hourly summaries";
    let mut stmt = conn
        .prepare_cached(
            "SELECT hour_ms, count, practical_salinity_min, practical_salinity_mean, practical_salinity_max, \
                    osmolality_mosm_kg_mean, temperature_c_mean \
             FROM readings_hourly WHERE tank_id = ?1 AND hour_ms >= ?2 AND hour_ms < ?3 ORDER BY hour_ms",
        )
        .map_err(StorageError::sqlite(what))?;
    let rows = stmt
        .query_map(params![tank_id, from_ms, to_ms], |r| {
            let hour_ms: i64 = r.get(0)?;
            let n = r.get::<_, i64>(1)? as f64;
            Ok((
                hour_ms,
                Bucket {
                    count: n,
                    time_sum: (hour_ms + HOUR_MS / 2) as f64 * n,
                    ps_min: r.get(2)?,
                    ps_sum: r.get::<_, f64>(3)? * n,
                    ps_max: r.get(4)?,
                    osm_sum: r.get::<_, f64>(5)? * n,
                    t_sum: r.get::<_, f64>(6)? * n,
                },
            ))
        })
        .map_err(StorageError::sqlite(what))?;
    rows.map(|r| r.map_err(StorageError::sqlite(what))).collect()
}

fn raw_points(conn: &Connection, tank_id: &str, from_ms: i64, to_ms: i64) -> Result<Series, StorageError> {
    let what = "query reading history";
    let mut stmt = conn
        .prepare_cached(RAW_QUERY)
        .map_err(StorageError::sqlite(what))?;
    let rows = stmt
        .query_map(params![tank_id, from_ms, to_ms], |r| {
            Ok((r.get::<_, i64>(0)?, r.get(1)?, r.get(2)?, r.get(3)?))
        })
        .map_err(StorageError::sqlite(what))?;
    let mut points = Vec::new();
    for row in rows {
        let (ms, practical_salinity, osmolality_mosm_kg, temperature_c) =
            row.map_err(StorageError::sqlite(what))?;
        points.push(SeriesPoint {
            time: ms_to_time(ms)?,
            practical_salinity,
            osmolality_mosm_kg,
            temperature_c,
            min_practical_salinity: None,
            max_practical_salinity: None,
            count: 1,
        });
    }
    Ok(Series {
        points,
        downsampled: false,
    })
}
