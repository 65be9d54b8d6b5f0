//! The HTTP adapter: the page, the JSON API, `/metrics`, `/healthz` and `/readyz`, served by axum on the
//! daemon's tokio runtime.
//!
//! - [`live`]: the in-memory view the daemon keeps up to date (tank states, alerts, schedules, link,
//!   counters, writer statistics); `/api/tanks` and `/metrics` read only this.
//! - [`state`]: `AppState`, shared by the handlers; [`db`]: SQLite off the async workers.
//! - [`router`]: the routes; [`auth`]: the bearer token of state-changing routes; [`error`]: JSON errors;
//!   [`params`] and [`body`]: checked query parameters, path ids and JSON bodies (400 with a reason).
//! - [`histogram`]: the fixed-bucket histograms of `/metrics`.
//! - [`tanks`], [`history`], [`alerts`], [`schedules`], [`plan`], [`metrics`], [`health`], [`assets`]:
//!   one file per group of routes.
//!
//! Reads from this machine need no token (the server binds to loopback by default); reads from other hosts
//! need it unless `[http] open_reads` ([`read_access`]); every state-changing route needs
//! `Authorization: Bearer <token>`.
pub mod alerts;
pub mod assets;
pub mod auth;
pub mod body;
pub mod db;
pub mod error;
pub mod health;
pub mod histogram;
pub mod history;
pub mod host;
pub mod live;
pub mod metrics;
pub mod params;
pub mod plan;
pub mod read_access;
pub mod router;
pub mod schedules;
pub mod state;
pub mod tanks;

use std::net::SocketAddr;

use thiserror::Error;
use tokio::net::TcpListener;
use tokio::sync::watch;
use tokio::task::JoinHandle;

pub use error::ApiError;
pub use live::{LiveData, LiveView, WriterStats};
pub use state::AppState;

/// Why the server could not start.
#[derive(Debug, Error)]
pub enum HttpError {
    #[error(
        "cannot listen for HTTP on {addr}: {source}; change [http] bind (port 0 picks a free one) or set \
         [http] enabled = false"
    )]
    Bind {
        addr: SocketAddr,
        #[source]
        source: std::io::Error,
    },
}

/// A running server.
#[derive(Debug)]
pub struct HttpServer {
    /// The address it listens on (the real port when the configuration said 0).
    pub addr: SocketAddr,
    /// Ends after `shutdown` turns true and open requests have finished.
    pub task: JoinHandle<()>,
}

/// Binds `bind` and serves the API on the current runtime until `shutdown` turns true (or its sender
/// is dropped), then stops accepting and lets open requests finish.
pub async fn serve(
    bind: SocketAddr,
    state: AppState,
    mut shutdown: watch::Receiver<bool>,
) -> Result<HttpServer, HttpError> {
    let listener = TcpListener::bind(bind)
        .await
        .map_err(|source| HttpError::Bind { addr: bind, source })?;
    let addr = listener
        .local_addr()
        .map_err(|source| HttpError::Bind { addr: bind, source })?;
    if !addr.ip().is_loopback() {
        if state.open_reads() {
            tracing::warn!(%addr, "HTTP server listens beyond loopback with [http] open_reads: reads from any host need no token");
        } else {
            tracing::info!(%addr, "HTTP server listens beyond loopback: reads from other hosts need the token");
        }
    }
    let app = router::router(state);
    let task = tokio::spawn(async move {
        let stop = async move {
            while !*shutdown.borrow_and_update() {
                if shutdown.changed().await.is_err() {
                    break;
                }
            }
        };
        let service = app.into_make_service_with_connect_info::<SocketAddr>();
        if let Err(err) = axum::serve(listener, service).with_graceful_shutdown(stop).await {
            tracing::error!(error = %err, "HTTP server stopped with an error");
        }
    });
    tracing::info!(%addr, "HTTP server listening");
    Ok(HttpServer { addr, task })
}
