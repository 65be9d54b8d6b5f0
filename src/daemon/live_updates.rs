//! The daemon's side of the HTTP server: starts it with the daemon (when `[http] enabled`), and keeps its
//! live view in step: tank states after commits (in the acker), alert events, the broker link, the
//! counters and writer health every state tick, and each tank's open schedule as the schedule tracker
//! last read it back from the database (every alert tick; schedules change from the CLI and the API).
use std::net::SocketAddr;
use std::time::Duration;

use anyhow::Context;
use tokio::sync::{oneshot, watch};

use super::acker::Pending;
use super::counters::Counters;
use crate::config::Config;
use crate::http::{self, AppState, HttpServer, LiveView};
use crate::mqtt::ConnectionState;
use crate::species::{SpeciesLibrary, SpeciesProfile};
use crate::storage::WriterHandle;

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

    /// After each schedule poll: the tracker's open schedules.
    pub fn on_schedules(&self, tracker: &crate::schedule::ScheduleTracker) {
        self.view
            .set_open_schedules(tracker.schedules().cloned().collect());
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

/// Puts each configured tank's last stored reading in the view (before any new one arrives).
pub fn seed_tank_states(view: &LiveView, config: &Config, rows: Vec<crate::storage::ReadingRow>) {
    for row in rows {
        if let Some(tank) = config.tanks.iter().find(|t| t.id == row.tank_id) {
            view.set_tank_state(
                row.time,
                super::tank_state::TankState::from_row(&tank.name, &row, None),
            );
        }
    }
}
