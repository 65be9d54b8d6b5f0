//! `ApiError`: every refusal of the API as `{"error": {"status": N, "message": "..."}}` with its status
//! code. Bad input is 400, never 500; a database that cannot be opened or is busy is 503.
use axum::http::StatusCode;
use axum::response::{IntoResponse, Response};
use axum::Json;
use serde_json::json;

use crate::storage::{ScheduleStoreError, StorageError};

/// An error answer of the API.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct ApiError {
    pub status: StatusCode,
    pub message: String,
}

impl ApiError {
    pub fn new(status: StatusCode, message: impl Into<String>) -> Self {
        Self {
            status,
            message: message.into(),
        }
    }

    /// 400: a parameter or body the caller must fix.
    pub fn bad_request(message: impl Into<String>) -> Self {
        Self::new(StatusCode::BAD_REQUEST, message)
    }

    /// 404: no such tank, alert, schedule or route.
    pub fn not_found(message: impl Into<String>) -> Self {
        Self::new(StatusCode::NOT_FOUND, message)
    }

    /// 409: the change conflicts with the current state.
    pub fn conflict(message: impl Into<String>) -> Self {
        Self::new(StatusCode::CONFLICT, message)
    }

    /// 401: the request needs the bearer token.
    pub fn unauthorized(message: impl Into<String>) -> Self {
        Self::new(StatusCode::UNAUTHORIZED, message)
    }

    /// 503: the database cannot be used right now.
    pub fn unavailable(message: impl Into<String>) -> Self {
        Self::new(StatusCode::SERVICE_UNAVAILABLE, message)
    }

    /// 500: a fault of halotank itself (never bad input).
    pub fn internal(message: impl Into<String>) -> Self {
        Self::new(StatusCode::INTERNAL_SERVER_ERROR, message)
    }
}

impl std::fmt::Display for ApiError {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        write!(f, "{} {}", self.status.as_u16(), self.message)
    }
}

impl IntoResponse for ApiError {
    fn into_response(self) -> Response {
        let body = json!({"error": {"status": self.status.as_u16(), "message": self.message}});
        let mut response = (self.status, Json(body)).into_response();
        if self.status == StatusCode::UNAUTHORIZED {
            // RFC 6750 §3: a refused bearer request names the scheme it expects.
            response.headers_mut().insert(
                axum::http::header::WWW_AUTHENTICATE,
                axum::http::HeaderValue::from_static("Bearer realm=\"halotank\""),
            );
        }
        response
    }
}

impl From<StorageError> for ApiError {
    fn from(err: StorageError) -> Self {
        match &err {
            StorageError::CorruptRow { .. } | StorageError::Spawn(_) => {
                tracing::error!(error = %err, "HTTP request failed on the database");
                Self::internal(err.to_string())
            }
            _ => Self::unavailable(format!("database unavailable: {err}")),
        }
    }
}

impl From<ScheduleStoreError> for ApiError {
    fn from(err: ScheduleStoreError) -> Self {
        match err {
            ScheduleStoreError::Storage(e) => e.into(),
            ScheduleStoreError::NotFound { id } => Self::not_found(format!("no schedule {id}")),
            e @ (ScheduleStoreError::Refused(_) | ScheduleStoreError::TankBusy { .. }) => {
                Self::conflict(e.to_string())
            }
            e @ ScheduleStoreError::Json { .. } => Self::internal(e.to_string()),
        }
    }
}

/// The result type of the API's handlers.
pub type ApiResult<T> = Result<T, ApiError>;
