//! `GET /healthz` (the process is up) and `GET /readyz` (broker connected and database writable).
use axum::extract::State;
use axum::http::StatusCode;
use axum::Json;
use serde_json::{json, Value};

use super::state::AppState;

/// `GET /healthz`.
pub async fn healthz() -> Json<Value> {
    Json(json!({"status": "up"}))
}

/// `GET /readyz`: 200 when the broker is connected and the writer's latest commit succeeded, else 503.
pub async fn readyz(State(state): State<AppState>) -> (StatusCode, Json<Value>) {
    let (broker, database) = state.live().read(|d| {
        (
            d.link.as_ref().is_some_and(|l| l.connected),
            d.writer.last_commit_ok,
        )
    });
    let ready = broker && database;
    let status = if ready {
        StatusCode::OK
    } else {
        StatusCode::SERVICE_UNAVAILABLE
    };
    (
        status,
        Json(json!({"ready": ready, "broker_connected": broker, "database_writable": database})),
    )
}
