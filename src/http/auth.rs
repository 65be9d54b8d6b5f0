//! The bearer token of state-changing requests: `Authorization: Bearer <token>`, compared in constant
//! time. Reads need no token. Without a configured token every state-changing request is refused with a
//! message saying how to configure one.
use axum::async_trait;
use axum::extract::FromRequestParts;
use axum::http::header::AUTHORIZATION;
use axum::http::request::Parts;

use super::error::ApiError;
use super::state::AppState;

/// Proof that the request carried the configured token; take it as a handler argument.
#[derive(Debug, Clone, Copy)]
pub struct Authorized;

/// Equal bytes, in time that depends only on the lengths.
pub fn constant_time_eq(a: &[u8], b: &[u8]) -> bool {
    let mut diff = a.len() ^ b.len();
    for i in 0..a.len().max(b.len()) {
        let x = a.get(i).copied().unwrap_or(0);
        let y = b.get(i).copied().unwrap_or(0);
        diff |= usize::from(x ^ y);
    }
    diff == 0
}

/// Checks an `Authorization` header value against the expected token.
pub fn check(
    header: Option<&str>,
    expected: Option<&str>,
    token_source: &str,
) -> Result<Authorized, ApiError> {
    let Some(expected) = expected else {
        return Err(ApiError::unauthorized(format!(
            "changes are disabled: no HTTP token is configured; set one in {token_source} \
             ([http] token_env or token_file) and restart halotank"
        )));
    };
    let Some(header) = header else {
        return Err(ApiError::unauthorized(
            "this request changes state and needs `Authorization: Bearer <token>`",
        ));
    };
    let given = header
        .strip_prefix("Bearer ")
        .or_else(|| header.strip_prefix("bearer "))
        .map(str::trim)
        .unwrap_or("");
    if given.is_empty() || !constant_time_eq(given.as_bytes(), expected.as_bytes()) {
        return Err(ApiError::unauthorized(
            "the bearer token is not the configured one",
        ));
    }
    Ok(Authorized)
}

#[async_trait]
impl FromRequestParts<AppState> for Authorized {
    type Rejection = ApiError;

    async fn from_request_parts(parts: &mut Parts, state: &AppState) -> Result<Self, Self::Rejection> {
        let header = parts.headers.get(AUTHORIZATION).and_then(|v| v.to_str().ok());
        check(header, state.token(), state.token_source())
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn tokens_compare_whole() {
        assert!(constant_time_eq(b"abc", b"abc"));
        assert!(!constant_time_eq(b"abc", b"abd"));
        assert!(!constant_time_eq(b"abc", b"abcd"));
        assert!(!constant_time_eq(b"", b"a"));
        assert!(check(Some("Bearer abc"), Some("abc"), "x").is_ok());
        assert!(check(Some("Bearer abd"), Some("abc"), "x").is_err());
        assert!(check(Some("abc"), Some("abc"), "x").is_err());
        assert!(check(None, Some("abc"), "x").is_err());
        let none = check(
            Some("Bearer abc"),
            None,
            "environment variable HALOTANK_HTTP_TOKEN",
        )
        .unwrap_err();
        assert!(none.message.contains("HALOTANK_HTTP_TOKEN"), "{}", none.message);
    }
}
