//! Schedules: list, show, start from a plan form (token), pause, resume, abort and mark a step done
//! (token), through the same stores and transitions as `halotank schedule`. Each change also updates
//! the live view, so `/api/tanks` shows it at once.
use std::collections::HashMap;

use axum::body::Bytes;
use axum::extract::rejection::{BytesRejection, PathRejection, QueryRejection};
use axum::extract::{Path, Query, State};
use axum::http::StatusCode;
use axum::Json;
use chrono::{SubsecRound, Utc};
use serde::Deserialize;
use serde_json::{json, Value};

use super::alerts::MAX_BY_CHARS;
use super::auth::Authorized;
use super::body;
use super::error::{ApiError, ApiResult};
use super::params::{path_id, Params};
use super::plan::{request_for_form, PlanForm};
use super::state::AppState;
use super::tanks::unknown_tank;
use crate::planner::{make_plan, CAUTION};
use crate::schedule::{Schedule, SchedulePlan, ScheduleReport, ScheduleSummary};
use crate::storage::ScheduleStore;

fn report(schedule: &Schedule) -> ApiResult<Json<Value>> {
    serde_json::to_value(ScheduleReport::at(schedule, Utc::now()))
        .map(Json)
        .map_err(|e| ApiError::internal(format!("cannot write JSON: {e}")))
}

/// `GET /api/schedules?tank=ID&state=open|all` (default all).
pub async fn list(
    State(state): State<AppState>,
    query: Result<Query<HashMap<String, String>>, QueryRejection>,
) -> ApiResult<Json<Value>> {
    let params = Params::new(query, &["tank", "state"])?;
    let open_only = params.choice("state", &["open", "all"], "all")? == "open";
    let tank = params.text("tank")?.map(str::to_string);
    let schedules = state
        .db()
        .read(move |r| Ok(r.schedules(tank.as_deref())?))
        .await?;
    let now = Utc::now();
    let items: Vec<ScheduleSummary<'_>> = schedules
        .iter()
        .filter(|s| !open_only || s.state.is_open())
        .map(|s| ScheduleSummary::at(s, now))
        .collect();
    Ok(Json(json!({ "schedules": items, "caution": CAUTION })))
}

/// `GET /api/schedules/{id}`.
pub async fn show(
    State(state): State<AppState>,
    path: Result<Path<String>, PathRejection>,
    query: Result<Query<HashMap<String, String>>, QueryRejection>,
) -> ApiResult<Json<Value>> {
    let id = path_id(path, "schedule")?;
    Params::new(query, &[])?;
    let schedule = state.db().read(move |r| Ok(r.schedule(id)?)).await?;
    report(&schedule)
}

#[derive(Debug, Deserialize)]
#[serde(deny_unknown_fields)]
struct StartBody {
    tank: String,
    plan: PlanForm,
    #[serde(default)]
    by: Option<String>,
}

fn check_by(by: Option<&str>) -> ApiResult<String> {
    let by = by.map(str::trim).unwrap_or("staff");
    if by.is_empty() || by.chars().count() > MAX_BY_CHARS {
        return Err(ApiError::bad_request(format!(
            "`by` must be 1 to {MAX_BY_CHARS} characters"
        )));
    }
    Ok(by.to_string())
}

/// `POST /api/schedules` with `{"tank": ID, "plan": PlanForm, "by"?}`: 201 and the schedule.
pub async fn start(
    _auth: Authorized,
    State(state): State<AppState>,
    body: Result<Bytes, BytesRejection>,
) -> ApiResult<(StatusCode, Json<Value>)> {
    let mut body: StartBody = body::json(&body::bytes(body)?)?;
    let by = check_by(body.by.as_deref())?;
    if state.tank(&body.tank).is_none() {
        return Err(unknown_tank(&body.tank));
    }
    match &body.plan.tank {
        Some(t) if *t != body.tank => {
            return Err(ApiError::bad_request(format!(
                "`plan.tank` ({t}) differs from `tank` ({}); leave it out",
                body.tank
            )))
        }
        _ => body.plan.tank = Some(body.tank.clone()),
    }
    let now = Utc::now().trunc_subsecs(3);
    let request = request_for_form(&state, &body.plan, now).await?;
    let plan = make_plan(&request).map_err(|e| ApiError::bad_request(e.to_string()))?;
    let tank = body.tank.clone();
    let schedule = state
        .db()
        .change(move |path| {
            let mut store = ScheduleStore::open_existing(path)?;
            Ok(store.insert(&tank, now, &SchedulePlan::from(&plan), &request)?)
        })
        .await?;
    tracing::info!(schedule = schedule.id, tank = %schedule.tank_id, %by, "schedule started over HTTP");
    state.live().set_schedule(&schedule);
    Ok((StatusCode::CREATED, report(&schedule)?))
}

#[derive(Debug, Default, Deserialize)]
#[serde(deny_unknown_fields)]
struct ByBody {
    #[serde(default)]
    by: Option<String>,
}

#[derive(Debug, Deserialize)]
#[serde(deny_unknown_fields)]
struct StepDoneBody {
    step: usize,
    by: String,
}

/// Which change a `POST /api/schedules/{id}/{action}` asks for.
#[derive(Debug, Clone, Copy)]
enum Action {
    Pause,
    Resume,
    Abort,
}

async fn change(
    state: AppState,
    id: i64,
    body: Result<Bytes, BytesRejection>,
    action: Action,
) -> ApiResult<Json<Value>> {
    let body = body::bytes(body)?;
    let parsed: ByBody = if body.is_empty() {
        ByBody::default()
    } else {
        body::json(&body)?
    };
    let by = check_by(parsed.by.as_deref())?;
    let now = Utc::now().trunc_subsecs(3);
    let schedule = state
        .db()
        .change(move |path| {
            let mut store = ScheduleStore::open_existing(path)?;
            Ok(match action {
                Action::Pause => store.pause(id, now)?,
                Action::Resume => store.resume(id, now)?,
                Action::Abort => store.abort(id, now)?,
            })
        })
        .await?;
    tracing::info!(schedule = id, ?action, %by, "schedule changed over HTTP");
    state.live().set_schedule(&schedule);
    report(&schedule)
}

/// `POST /api/schedules/{id}/pause`.
pub async fn pause(
    _auth: Authorized,
    State(state): State<AppState>,
    path: Result<Path<String>, PathRejection>,
    body: Result<Bytes, BytesRejection>,
) -> ApiResult<Json<Value>> {
    let id = path_id(path, "schedule")?;
    change(state, id, body, Action::Pause).await
}

/// `POST /api/schedules/{id}/resume`.
pub async fn resume(
    _auth: Authorized,
    State(state): State<AppState>,
    path: Result<Path<String>, PathRejection>,
    body: Result<Bytes, BytesRejection>,
) -> ApiResult<Json<Value>> {
    let id = path_id(path, "schedule")?;
    change(state, id, body, Action::Resume).await
}

/// `POST /api/schedules/{id}/abort`.
pub async fn abort(
    _auth: Authorized,
    State(state): State<AppState>,
    path: Result<Path<String>, PathRejection>,
    body: Result<Bytes, BytesRejection>,
) -> ApiResult<Json<Value>> {
    let id = path_id(path, "schedule")?;
    change(state, id, body, Action::Abort).await
}

/// `POST /api/schedules/{id}/step-done` with `{"step": n, "by": "name"}`.
pub async fn step_done(
    _auth: Authorized,
    State(state): State<AppState>,
    path: Result<Path<String>, PathRejection>,
    body: Result<Bytes, BytesRejection>,
) -> ApiResult<Json<Value>> {
    let id = path_id(path, "schedule")?;
    let body: StepDoneBody = body::json(&body::bytes(body)?)?;
    let by = check_by(Some(&body.by))?;
    if body.step == 0 {
        return Err(ApiError::bad_request("`step` counts from 1"));
    }
    let now = Utc::now().trunc_subsecs(3);
    let step = body.step;
    let schedule = state
        .db()
        .change(move |path| {
            let mut store = ScheduleStore::open_existing(path)?;
            Ok(store.mark_step_done(id, Some(step), now, &by)?.0)
        })
        .await?;
    state.live().set_schedule(&schedule);
    report(&schedule)
}
