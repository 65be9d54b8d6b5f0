//! `GET /api/tanks` and `GET /api/tanks/{id}`: each tank's card (latest published state, age, stale,
//! open alerts, schedule progress, species limits), built from the live view without touching SQLite.
use std::collections::HashMap;

use axum::extract::rejection::{PathRejection, QueryRejection};
use axum::extract::{Path, Query, State};
use axum::http::header::CONTENT_TYPE;
use axum::response::{IntoResponse, Response};
use chrono::{DateTime, Utc};
use serde::Serialize;

use super::error::{ApiError, ApiResult};
use super::live::LiveData;
use super::params::{path_text, stamp, Params};
use super::state::{AppState, SpeciesSummary, TankInfo, TankLimits};
use crate::alerts::AlertRecord;
use crate::daemon::tank_state::TankState;
use crate::schedule::{progress, Progress};

/// An open alert as the card lists it.
#[derive(Debug, Serialize)]
pub struct AlertBrief<'a> {
    pub id: u64,
    pub kind: &'static str,
    pub severity: &'static str,
    pub state: &'static str,
    pub message: &'a str,
    pub raised_at: String,
}

impl<'a> From<&'a AlertRecord> for AlertBrief<'a> {
    fn from(r: &'a AlertRecord) -> Self {
        Self {
            id: r.id.0,
            kind: r.kind.as_str(),
            severity: r.severity.as_str(),
            state: r.state.as_str(),
            message: &r.message,
            raised_at: stamp(r.raised_at),
        }
    }
}

/// One tank's card.
#[derive(Debug, Serialize)]
pub struct TankCard<'a> {
    pub id: &'a str,
    pub name: &'a str,
    pub species: Option<&'a SpeciesSummary>,
    pub latest: Option<&'a TankState>,
    pub age_s: Option<f64>,
    /// No reading yet, or the latest is older than the tank's stale limit.
    pub stale: bool,
    pub open_alerts: Vec<AlertBrief<'a>>,
    pub schedule: Option<Progress>,
    pub limits: &'a TankLimits,
}

/// The cards of `tanks` as at `now`, from `data`.
fn cards<'a>(
    tanks: impl Iterator<Item = &'a TankInfo>,
    data: &'a LiveData,
    now: DateTime<Utc>,
) -> Vec<TankCard<'a>> {
    let mut alerts: HashMap<&str, Vec<&AlertRecord>> = HashMap::new();
    for record in data.alerts.values() {
        alerts.entry(record.tank.as_str()).or_default().push(record);
    }
    tanks
        .map(|tank| {
            let latest = data.tanks.get(&tank.id);
            let age_s = latest.map(|(t, _)| (now - *t).num_milliseconds() as f64 / 1000.0);
            TankCard {
                id: &tank.id,
                name: &tank.name,
                species: tank.species.as_ref(),
                latest: latest.map(|(_, s)| s),
                age_s,
                stale: age_s.is_none_or(|age| age > tank.stale_after_s),
                open_alerts: alerts
                    .get(tank.id.as_str())
                    .map(|list| list.iter().map(|r| AlertBrief::from(*r)).collect())
                    .unwrap_or_default(),
                schedule: data.schedules.get(&tank.id).map(|s| progress(s, now)),
                limits: &tank.limits,
            }
        })
        .collect()
}

fn json_response(bytes: Vec<u8>) -> Response {
    ([(CONTENT_TYPE, "application/json")], bytes).into_response()
}

fn to_json<T: Serialize>(value: &T) -> ApiResult<Vec<u8>> {
    serde_json::to_vec(value).map_err(|e| ApiError::internal(format!("cannot write JSON: {e}")))
}

/// `GET /api/tanks`.
pub async fn list(
    State(state): State<AppState>,
    query: Result<Query<HashMap<String, String>>, QueryRejection>,
) -> ApiResult<Response> {
    Params::new(query, &[])?;
    let now = Utc::now();
    #[derive(Serialize)]
    struct Body<'a> {
        generated_at: String,
        tanks: Vec<TankCard<'a>>,
    }
    let bytes = state.live().read(|data| {
        to_json(&Body {
            generated_at: stamp(now),
            tanks: cards(state.tanks().iter(), data, now),
        })
    })?;
    Ok(json_response(bytes))
}

/// `GET /api/tanks/{id}`.
pub async fn one(
    State(state): State<AppState>,
    path: Result<Path<String>, PathRejection>,
    query: Result<Query<HashMap<String, String>>, QueryRejection>,
) -> ApiResult<Response> {
    let id = path_text(path)?;
    Params::new(query, &[])?;
    let tank = state.tank(&id).ok_or_else(|| unknown_tank(&id))?;
    let now = Utc::now();
    let bytes = state.live().read(|data| {
        let card = cards(std::iter::once(tank), data, now);
        to_json(&card[0])
    })?;
    Ok(json_response(bytes))
}

/// 404 for a tank not in the configuration.
pub fn unknown_tank(id: &str) -> ApiError {
    ApiError::not_found(format!(
        "no tank `{id}` in the configuration (see GET /api/tanks)"
    ))
}
