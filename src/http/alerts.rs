//! `GET /api/alerts` (filters), `POST /api/alerts/{id}/ack` (token) and `GET /api/ack-requests/{id}`.
//!
//! An acknowledgement is recorded as a request in `alert_ack_requests`, exactly as `halotank ack` does;
//! the daemon applies it within its alert tick (about 2 s) and marks the request with the outcome.
use std::collections::HashMap;
use std::time::Duration;

use axum::body::Bytes;
use axum::extract::rejection::{BytesRejection, PathRejection, QueryRejection};
use axum::extract::{Path, Query, State};
use axum::http::StatusCode;
use axum::Json;
use chrono::Utc;
use serde::Deserialize;
use serde_json::{json, Value};

use super::auth::Authorized;
use super::body;
use super::error::{ApiError, ApiResult};
use super::params::{path_id, stamp, Params};
use super::state::AppState;
use crate::alerts::{AlertKind, AlertState};
use crate::storage::alerts::insert_ack_request;
use crate::storage::schema::open_for_writing;
use crate::storage::AlertFilter;

/// Alerts listed when `limit` is not given.
pub const DEFAULT_LIMIT: u64 = 200;
/// Most alerts one request lists.
pub const MAX_LIMIT: u64 = 1000;
/// Longest name of who acknowledges, characters.
pub const MAX_BY_CHARS: usize = 64;
/// Longest acknowledgement note, characters.
pub const MAX_NOTE_CHARS: usize = 500;

const SEVERITIES: [&str; 3] = ["info", "warning", "critical"];

/// `GET /api/alerts?state=open|all&tank=ID&kind=K&severity=S&since=T&limit=N`.
pub async fn list(
    State(state): State<AppState>,
    query: Result<Query<HashMap<String, String>>, QueryRejection>,
) -> ApiResult<Json<Value>> {
    let params = Params::new(query, &["state", "tank", "kind", "severity", "since", "limit"])?;
    let open_only = params.choice("state", &["open", "all"], "open")? == "open";
    let kind = match params.text("kind")? {
        None => None,
        Some(k) => Some(
            AlertKind::parse(k)
                .ok_or_else(|| {
                    let known: Vec<&str> = AlertKind::ALL.iter().map(|k| k.as_str()).collect();
                    ApiError::bad_request(format!("`kind={k}` is not one of {}", known.join(", ")))
                })?
                .as_str()
                .to_string(),
        ),
    };
    let severity = match params.text("severity")? {
        None => None,
        Some(_) => Some(params.choice("severity", &SEVERITIES, "warning")?.to_string()),
    };
    let filter = AlertFilter {
        open_only,
        tank: params.text("tank")?.map(str::to_string),
        kind,
        severity,
        raised_since: params.time("since")?,
        limit: params.integer("limit", 1, MAX_LIMIT, DEFAULT_LIMIT)? as u32,
    };
    let alerts = state.db().read(move |r| Ok(r.alerts_filtered(&filter)?)).await?;
    Ok(Json(json!({ "alerts": alerts })))
}

/// The body of an acknowledgement.
#[derive(Debug, Deserialize)]
#[serde(deny_unknown_fields)]
struct AckBody {
    by: String,
    #[serde(default)]
    note: Option<String>,
}

/// `POST /api/alerts/{id}/ack` with `{"by": "name", "note": "optional"}`.
pub async fn acknowledge(
    _auth: Authorized,
    State(state): State<AppState>,
    path: Result<Path<String>, PathRejection>,
    body: Result<Bytes, BytesRejection>,
) -> ApiResult<(StatusCode, Json<Value>)> {
    let id = path_id(path, "alert")? as u64;
    let body: AckBody = body::json(&body::bytes(body)?)?;
    let by = body.by.trim().to_string();
    if by.is_empty() || by.chars().count() > MAX_BY_CHARS {
        return Err(ApiError::bad_request(format!(
            "`by` must name who acknowledges, 1 to {MAX_BY_CHARS} characters"
        )));
    }
    let note = body.note.map(|n| n.trim().to_string()).filter(|n| !n.is_empty());
    if note.as_ref().is_some_and(|n| n.chars().count() > MAX_NOTE_CHARS) {
        return Err(ApiError::bad_request(format!(
            "`note` is longer than {MAX_NOTE_CHARS} characters"
        )));
    }
    let request_id = state
        .db()
        .change(move |path| {
            let conn = open_for_writing(path, Duration::from_secs(5))?;
            let record = crate::storage::alerts::select_alert(&conn, id)?
                .ok_or_else(|| ApiError::not_found(format!("no alert {id}")))?;
            match record.state {
                AlertState::Cleared => {
                    return Err(ApiError::conflict(format!("alert {id} is already cleared")))
                }
                AlertState::Acknowledged => {
                    let who = record.acknowledgement.as_ref();
                    return Err(ApiError::conflict(format!(
                        "alert {id} was already acknowledged{}",
                        who.map(|a| format!(" by {} at {}", a.by, stamp(a.at)))
                            .unwrap_or_default()
                    )));
                }
                AlertState::Raised | AlertState::ClearedUnacknowledged => {}
            }
            insert_ack_request(&conn, id, &by, note.as_deref(), Utc::now())
                .map_err(|e| ApiError::unavailable(format!("cannot record the acknowledgement request: {e}")))
        })
        .await?;
    Ok((
        StatusCode::ACCEPTED,
        Json(json!({ "request_id": request_id, "status": "pending" })),
    ))
}

/// `GET /api/ack-requests/{id}`: pending, acknowledged, or refused with the reason.
pub async fn ack_request(
    State(state): State<AppState>,
    path: Result<Path<String>, PathRejection>,
    query: Result<Query<HashMap<String, String>>, QueryRejection>,
) -> ApiResult<Json<Value>> {
    let id = path_id(path, "acknowledgement request")?;
    Params::new(query, &[])?;
    let status = state
        .db()
        .read(move |r| {
            r.ack_request(id)?
                .ok_or_else(|| ApiError::not_found(format!("no acknowledgement request {id}")))
        })
        .await?;
    let (outcome, reason) = match status.outcome.as_deref() {
        None => ("pending", None),
        Some(text) => match text.strip_prefix("refused: ") {
            Some(why) => ("refused", Some(why.to_string())),
            None => ("acknowledged", None),
        },
    };
    Ok(Json(json!({
        "request_id": status.request.id,
        "alert_id": status.request.alert_id,
        "by": status.request.by,
        "note": status.request.note,
        "requested_at": stamp(status.request.requested_at),
        "handled_at": status.handled_at.map(stamp),
        "status": outcome,
        "reason": reason,
        "outcome": status.outcome,
    })))
}
