//! `GET /api/tanks/{id}/history?from=T&to=T&points=N`: a tank's salinity, osmolality and temperature over
//! a range, bucket-averaged to at most N points when the range holds more readings (see
//! [`crate::storage::history_series`]), with the planned setpoint line of any schedule overlapping it.
use std::collections::HashMap;

use axum::extract::rejection::{PathRejection, QueryRejection};
use axum::extract::{Path, Query, State};
use axum::Json;
use chrono::{DateTime, Duration, Utc};
use serde::Serialize;

use super::error::{ApiError, ApiResult};
use super::params::{path_text, stamp, Params};
use super::state::AppState;
use super::tanks::unknown_tank;
use crate::schedule::{timeline, Schedule, ScheduleState};
use crate::storage::SeriesPoint;

/// Points when `points` is not given.
pub const DEFAULT_POINTS: u64 = 1000;
/// Most points a request may ask for.
pub const MAX_POINTS: u64 = 5000;
/// Range when `from` is not given: this far back from `to`.
pub const DEFAULT_RANGE_H: i64 = 24;

#[derive(Debug, Serialize)]
struct Point {
    time: String,
    practical_salinity: f64,
    #[serde(rename = "osmolality_mOsm_kg")]
    osmolality_mosm_kg: f64,
    #[serde(rename = "temperature_C")]
    temperature_c: f64,
    #[serde(skip_serializing_if = "Option::is_none")]
    min_practical_salinity: Option<f64>,
    #[serde(skip_serializing_if = "Option::is_none")]
    max_practical_salinity: Option<f64>,
}

impl From<&SeriesPoint> for Point {
    fn from(p: &SeriesPoint) -> Self {
        Self {
            time: stamp(p.time),
            practical_salinity: p.practical_salinity,
            osmolality_mosm_kg: p.osmolality_mosm_kg,
            temperature_c: p.temperature_c,
            min_practical_salinity: p.min_practical_salinity,
            max_practical_salinity: p.max_practical_salinity,
        }
    }
}

/// One point of a planned setpoint line.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct SetpointPoint {
    /// The schedule the point belongs to (one line per schedule).
    pub schedule_id: i64,
    pub time: String,
    pub practical_salinity: f64,
}

#[derive(Debug, Serialize)]
struct Body {
    tank: String,
    from: String,
    to: String,
    downsampled: bool,
    points: Vec<Point>,
    #[serde(skip_serializing_if = "Vec::is_empty")]
    setpoint: Vec<SetpointPoint>,
}

/// `GET /api/tanks/{id}/history`.
pub async fn history(
    State(state): State<AppState>,
    path: Result<Path<String>, PathRejection>,
    query: Result<Query<HashMap<String, String>>, QueryRejection>,
) -> ApiResult<Json<serde_json::Value>> {
    let id = path_text(path)?;
    let params = Params::new(query, &["from", "to", "points"])?;
    if state.tank(&id).is_none() {
        return Err(unknown_tank(&id));
    }
    let now = Utc::now();
    let to = params.time("to")?.unwrap_or(now);
    let from = params
        .time("from")?
        .unwrap_or(to - Duration::hours(DEFAULT_RANGE_H));
    if from >= to {
        return Err(ApiError::bad_request(format!(
            "`from` ({}) must be before `to` ({})",
            stamp(from),
            stamp(to)
        )));
    }
    let points = params.integer("points", 1, MAX_POINTS, DEFAULT_POINTS)? as usize;
    let tank = id.clone();
    let (series, schedules) = state
        .db()
        .read(move |r| {
            let series = r.history_series(&tank, from, to, points)?;
            let schedules = r.schedules(Some(&tank))?;
            Ok((series, schedules))
        })
        .await?;
    let setpoint = schedules
        .iter()
        .flat_map(|s| setpoint_line(s, from, to, now))
        .collect();
    let body = Body {
        tank: id,
        from: stamp(from),
        to: stamp(to),
        downsampled: series.downsampled,
        points: series.points.iter().map(Point::from).collect(),
        setpoint,
    };
    serde_json::to_value(&body)
        .map(Json)
        .map_err(|e| ApiError::internal(format!("cannot write JSON: {e}")))
}

/// The planned setpoint of `schedule` as a line (on its moved timeline as at `now`), if the schedule's
/// span overlaps `from..to`: a step of an exchange or salt plan jumps at its due time; a flow-through
/// step ramps over its interval. An aborted schedule's line ends at the abort.
pub fn setpoint_line(
    schedule: &Schedule,
    from: DateTime<Utc>,
    to: DateTime<Utc>,
    now: DateTime<Utc>,
) -> Vec<SetpointPoint> {
    let plan = &schedule.plan;
    let due = timeline(schedule, now);
    let mut line: Vec<(DateTime<Utc>, f64)> = vec![(plan.start, plan.from_practical_salinity)];
    for (step, at) in plan.steps.iter().zip(&due) {
        line.push((*at, step.from_practical_salinity));
        let end = if plan.is_flow() {
            *at + Duration::milliseconds((step.duration_h * 3_600_000.0) as i64)
        } else {
            *at
        };
        line.push((end, step.setpoint_practical_salinity));
    }
    if let Some(last) = plan.steps.last().zip(due.last()) {
        let end = *last.1 + Duration::milliseconds((last.0.duration_h * 3_600_000.0) as i64);
        line.push((end, last.0.setpoint_practical_salinity));
    }
    if let ScheduleState::Aborted { at } = schedule.state {
        line.retain(|(t, _)| *t <= at);
    }
    let (Some(first), Some(last)) = (line.first(), line.last()) else {
        return Vec::new();
    };
    if last.0 < from || first.0 > to {
        return Vec::new();
    }
    line.into_iter()
        .map(|(t, sp)| SetpointPoint {
            schedule_id: schedule.id,
            time: stamp(t),
            practical_salinity: sp,
        })
        .collect()
}
