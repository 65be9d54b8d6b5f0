//! Who may read without the token: requests from this machine (loopback) always; requests from other
//! hosts only with `[http] open_reads = true`. The page itself, its assets and the health probes stay
//! open, so a phone on the site LAN can load the page and unlock it with the token.
use std::net::{IpAddr, SocketAddr};

use axum::extract::connect_info::ConnectInfo;
use axum::extract::{Request, State};
use axum::http::header::AUTHORIZATION;
use axum::middleware::Next;
use axum::response::{IntoResponse, Response};

use super::auth;
use super::error::ApiError;
use super::state::AppState;

/// Whether `path` is data (the JSON API or the metrics) rather than the page, its assets or a probe.
fn is_data(path: &str) -> bool {
    path.starts_with("/api/") || path == "/metrics"
}

/// Whether a request may go on without a token check here (state-changing routes check theirs anyway).
pub fn open_without_token(peer: Option<IpAddr>, path: &str, open_reads: bool) -> bool {
    open_reads || !is_data(path) || peer.is_some_and(|ip| ip.is_loopback())
}

/// Middleware: data requests from other hosts need `Authorization: Bearer <token>` unless `open_reads`.
pub async fn check_reads(State(state): State<AppState>, request: Request, next: Next) -> Response {
    let peer = request
        .extensions()
        .get::<ConnectInfo<SocketAddr>>()
        .map(|ConnectInfo(addr)| addr.ip());
    if open_without_token(peer, request.uri().path(), state.open_reads()) {
        return next.run(request).await;
    }
    let header = request.headers().get(AUTHORIZATION).and_then(|v| v.to_str().ok());
    match auth::check(header, state.token(), state.token_source()) {
        Ok(_) => next.run(request).await,
        Err(err) => ApiError::unauthorized(format!(
            "reading from another host needs the token (the page's Unlock), or [http] open_reads = true: {}",
            err.message
        ))
        .into_response(),
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn only_data_from_other_hosts_needs_the_token() {
        let lan: IpAddr = "192.168.4.20".parse().unwrap();
        let here: IpAddr = "127.0.0.1".parse().unwrap();
        let here6: IpAddr = "::1".parse().unwrap();
        for path in ["/api/tanks", "/api/alerts", "/metrics"] {
            assert!(!open_without_token(Some(lan), path, false), "{path}");
            assert!(!open_without_token(None, path, false), "{path}");
            assert!(open_without_token(Some(lan), path, true), "{path}");
            assert!(open_without_token(Some(here), path, false), "{path}");
            assert!(open_without_token(Some(here6), path, false), "{path}");
        }
        for path in ["/", "/assets/app.js", "/healthz", "/readyz"] {
            assert!(open_without_token(Some(lan), path, false), "{path}");
        }
    }
}
