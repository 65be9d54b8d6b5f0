//! The `Host` check: the server answers only requests addressed to an IP address, `localhost` or a name in
//! `[http] allowed_hosts`. A web page elsewhere could otherwise point its own domain name at 127.0.0.1 (DNS
//! rebinding) and read the unauthenticated API from inside the operator's browser.
use axum::extract::{Request, State};
use axum::http::{header, StatusCode};
use axum::middleware::Next;
use axum::response::{IntoResponse, Response};

use super::error::ApiError;
use super::state::AppState;

/// The host part of a `Host` header value, lower case, without port or IPv6 brackets.
fn host_name(value: &str) -> String {
    let value = value.trim();
    let host = match value.strip_prefix('[') {
        Some(rest) => rest.split(']').next().unwrap_or(rest),
        None => value.rsplit_once(':').map_or(value, |(h, port)| {
            if port.chars().all(|c| c.is_ascii_digit()) {
                h
            } else {
                value
            }
        }),
    };
    host.trim_end_matches('.').to_ascii_lowercase()
}

/// Whether a request with this `Host` header may be answered. No header (HTTP/1.0 tools) is allowed: a
/// browser always sends one.
pub fn host_allowed(header_value: Option<&str>, allowed: &[String]) -> bool {
    let Some(value) = header_value else {
        return true;
    };
    let host = host_name(value);
    host == "localhost"
        || host.ends_with(".localhost")
        || host.parse::<std::net::IpAddr>().is_ok()
        || allowed.contains(&host)
}

/// Middleware: refuses a request for another host with 421 and a JSON message naming the setting.
pub async fn check_host(State(state): State<AppState>, request: Request, next: Next) -> Response {
    let value = request
        .headers()
        .get(header::HOST)
        .map(|v| v.to_str().unwrap_or("\u{fffd}"));
    if host_allowed(value, state.allowed_hosts()) {
        return next.run(request).await;
    }
    let shown: String = value.unwrap_or("").chars().take(100).collect();
    ApiError::new(
        StatusCode::MISDIRECTED_REQUEST,
        format!(
            "this server does not answer for host `{shown}`; use its IP address, or add the name to \
             [http] allowed_hosts"
        ),
    )
    .into_response()
}

#[cfg(test)]
mod tests {
    use super::*;

    fn allowed(v: &str) -> bool {
        host_allowed(Some(v), &["tanks.kelpie.lan".to_string()])
    }

    #[test]
    fn ip_addresses_localhost_and_configured_names_pass() {
        for ok in [
            "127.0.0.1:8480",
            "127.0.0.1",
            "[::1]:8480",
            "[::1]",
            "192.168.4.20:8480",
            "localhost:8480",
            "LOCALHOST",
            "tanks.kelpie.lan:8480",
            "Tanks.Kelpie.LAN.",
        ] {
            assert!(allowed(ok), "{ok}");
        }
        assert!(host_allowed(None, &[]));
    }

    #[test]
    fn other_names_are_refused() {
        for bad in [
            "evil.example:8480",
            "evil.example",
            "127.0.0.1.evil.example",
            "tanks.kelpie.lan.evil.example",
            "",
            "\u{fffd}",
        ] {
            assert!(!allowed(bad), "{bad}");
        }
    }
}
