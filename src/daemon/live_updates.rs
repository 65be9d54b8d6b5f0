//! The daemon's side of the HTTP server: starts it with the daemon (when `[http] enabled`), and keeps its
//! live view in step: tank states after commits (in the acker), alert events, the broker link, the
//! counters and writer health every state tick, and each tank's open schedule read back from the
//! database every few seconds (schedules change from the CLI and the API).
use std::net::SocketAddr;
use std::path::PathBuf;
use std::time::Duration;

use anyhow::Context;
use tokio::sync::{oneshot, watch};

use super::acker::Pending;
use super::counters::Counters;
use crate::config::Config;
use crate::http::{self, AppState, HttpServer, LiveView};
use crate::mqtt::ConnectionState;
use crate::species::{SpeciesLibrary, SpeciesProfile};
use crate::storage::{Reader, WriterHandle};

/// How often open schedules are read back from the database.
const SCHEDULE_REFRESH: Duration = Duration::from_secs(5);
/// How long open HTTP requests may take to finish at shutdown.
const HTTP_STOP_TIMEOUT: Duration = Duration::from_secs(5);

/// The live view and, when enabled, the server reading it.
pub struct Live {
    pub view: LiveView,
    server: Option<HttpServer>,
    stop: watch::Sender<bool>,
}

impl Live {
    /// Creates the view and starts the server (binding `[http] bind`); `addr` hears the bound address.
    pub async fn start(
        config: &Config,
        profiles: &[Option<SpeciesProfile>],
        addr: Option<oneshot::Sender<SocketAddr>>,
    ) -> anyhow::Result<Self> {
        let view = LiveView::new();
        let (stop, stop_rx) = watch::channel(false);
        if !config.http.enabled {
            tracing::info!("HTTP server disabled ([http] enabled = false)");
            return Ok(Self {
                view,
                server: None,
                stop,
            });
        }
        let token = config
            .http
            .resolve_token()
            .context("cannot read the HTTP token")?;
        if token.is_none() {
            tracing::warn!(
                source = %config.http.describe_token_source(),
                "no HTTP token configured: changes over HTTP (acknowledge, schedules) are refused"
            );
        }
        let library = match &config.site.species_library {
            Some(path) => SpeciesLibrary::load(path)
                .with_context(|| format!("cannot load the species library {}", path.display()))?,
            None => SpeciesLibrary::embedded().context("the built-in species library is invalid")?,
        };
        let state = AppState::new(config, profiles, library, view.clone(), token);
        let server = http::serve(config.http.bind, state, stop_rx.clone()).await?;
        if let Some(tx) = addr {
            let _ = tx.send(server.addr);
        }
        tokio::spawn(refresh_schedules(
            view.clone(),
            config.storage.path.clone(),
            stop_rx,
        ));
        Ok(Self {
            view,
            server: Some(server),
            stop,
        })
    }

    /// Every state tick: the link, the counters and the writer's health.
    pub fn on_state_tick(&self, link: &ConnectionState, counters: &Counters, writer: &WriterHandle<Pending>) {
        self.view.set_link(link);
        self.view.set_counters(counters);
        self.view
            .set_writer_health(!writer.last_commit_failed(), writer.failed_commit_attempts());
    }

    /// Stops the server, letting open requests finish (bounded).
    pub async fn stop(self) {
        let _ = self.stop.send(true);
        if let Some(server) = self.server {
            if tokio::time::timeout(HTTP_STOP_TIMEOUT, server.task)
                .await
                .is_err()
            {
                tracing::warn!("HTTP requests still open at shutdown were dropped");
            }
        }
    }
}

/// Reads the open schedules into the view every [`SCHEDULE_REFRESH`] until `stop`.
async fn refresh_schedules(view: LiveView, db: PathBuf, mut stop: watch::Receiver<bool>) {
    let mut tick = tokio::time::interval(SCHEDULE_REFRESH);
    loop {
        tokio::select! {
            _ = tick.tick() => {}
            changed = stop.changed() => {
                if changed.is_err() || *stop.borrow() {
                    return;
                }
                continue;
            }
        }
        let path = db.clone();
        let read = tokio::task::spawn_blocking(move || Reader::open(&path).map(|r| r.schedules(None))).await;
        match read {
            Ok(Ok(Ok(schedules))) => view.set_open_schedules(schedules),
            Ok(Ok(Err(err))) => tracing::debug!(error = %err, "cannot read schedules for the HTTP view"),
            Ok(Err(err)) => tracing::debug!(error = %err, "cannot open the database for the HTTP view"),
            Err(_) => {}
        }
    }
}
