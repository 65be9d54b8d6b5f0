//! Request bodies: the bytes (a body over the size cap is a JSON 413) and their JSON, every parse failure
//! a 400 naming what is wrong.
use axum::body::Bytes;
use axum::extract::rejection::BytesRejection;
use axum::http::StatusCode;

use super::error::{ApiError, ApiResult};
use super::router::MAX_BODY_BYTES;

/// The body's bytes.
pub fn bytes(body: Result<Bytes, BytesRejection>) -> ApiResult<Bytes> {
    body.map_err(|e| {
        if e.status() == StatusCode::PAYLOAD_TOO_LARGE {
            ApiError::new(
                StatusCode::PAYLOAD_TOO_LARGE,
                format!("the body is larger than {} KiB", MAX_BODY_BYTES / 1024),
            )
        } else {
            ApiError::bad_request(format!("cannot read the body: {}", e.body_text()))
        }
    })
}

/// Parses a JSON body.
pub fn json<T: serde::de::DeserializeOwned>(body: &Bytes) -> ApiResult<T> {
    if body.is_empty() {
        return Err(ApiError::bad_request("the request needs a JSON body"));
    }
    serde_json::from_slice(body).map_err(|e| ApiError::bad_request(format!("bad JSON body: {e}")))
}
