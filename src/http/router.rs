//! Every route of the server, the JSON 404/405 answers, the request counter (and debug log line) and the
//! body size cap.
use axum::extract::{DefaultBodyLimit, Request, State};
use axum::middleware::{self, Next};
use axum::response::{IntoResponse, Response};
use axum::routing::{get, post};
use axum::Router;

use super::error::ApiError;
use super::state::AppState;
use super::{alerts, assets, health, history, host, metrics, plan, read_access, schedules, tanks};

/// Largest request body accepted, bytes.
pub const MAX_BODY_BYTES: usize = 64 * 1024;

/// The application's router.
pub fn router(state: AppState) -> Router {
    Router::new()
        .route("/", get(assets::index))
        .route("/assets/:file", get(assets::asset))
        .route("/healthz", get(health::healthz))
        .route("/readyz", get(health::readyz))
        .route("/metrics", get(metrics::metrics))
        .route("/api/tanks", get(tanks::list))
        .route("/api/tanks/:id", get(tanks::one))
        .route("/api/tanks/:id/history", get(history::history))
        .route("/api/alerts", get(alerts::list))
        .route("/api/alerts/:id/ack", post(alerts::acknowledge))
        .route("/api/ack-requests/:id", get(alerts::ack_request))
        .route("/api/plan", post(plan::plan))
        .route("/api/schedules", get(schedules::list).post(schedules::start))
        .route("/api/schedules/:id", get(schedules::show))
        .route("/api/schedules/:id/pause", post(schedules::pause))
        .route("/api/schedules/:id/resume", post(schedules::resume))
        .route("/api/schedules/:id/abort", post(schedules::abort))
        .route("/api/schedules/:id/step-done", post(schedules::step_done))
        .fallback(not_found)
        .method_not_allowed_fallback(method_not_allowed)
        .layer(DefaultBodyLimit::max(MAX_BODY_BYTES))
        .layer(middleware::from_fn_with_state(
            state.clone(),
            read_access::check_reads,
        ))
        .layer(middleware::from_fn_with_state(state.clone(), host::check_host))
        .layer(middleware::from_fn_with_state(state.clone(), count_responses))
        .with_state(state)
}

async fn not_found() -> ApiError {
    ApiError::not_found("no such route (see the README's HTTP API section)")
}

async fn method_not_allowed() -> ApiError {
    ApiError::new(
        axum::http::StatusCode::METHOD_NOT_ALLOWED,
        "this route does not take that method",
    )
}

async fn count_responses(State(state): State<AppState>, request: Request, next: Next) -> Response {
    let (method, path) = (request.method().clone(), request.uri().path().to_string());
    let response = next.run(request).await.into_response();
    let status = response.status().as_u16();
    state.live().count_response(status);
    tracing::debug!(%method, %path, status, "HTTP request");
    response
}
